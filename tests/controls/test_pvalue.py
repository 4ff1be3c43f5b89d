"""Tests for the p-value functions of the random-label control.

Reference values come from /work/shared/REFERENCES.md (sections 3, 4 and 13); each
check names its outside source in a comment.
"""

from __future__ import annotations

import json
import math
import statistics

import numpy as np
import pytest
from scipy import integrate, stats
from sklearn.datasets import make_classification
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import permutation_test_score

from foldwall.controls import (
    SequentialStop,
    null_summary,
    permutation_pvalue,
)
from foldwall.exceptions import DataError, RunError, SpecError

# --------------------------------------------------------------------------------------
# permutation_pvalue
# --------------------------------------------------------------------------------------


def test_pvalue_matches_sklearn_permutation_test_score_on_noise():
    # Source: scikit-learn 1.9.1 permutation_test_score; settings and values from
    # REFERENCES §3c (verified there): score 0.575, C = 59, p = 0.300 = 60/200.
    X = np.random.default_rng(5).standard_normal((40, 5))
    y = np.repeat([0, 1], 20)
    score, perm_scores, sk_p = permutation_test_score(
        LogisticRegression(), X, y, cv=5, n_permutations=199, random_state=0
    )
    ours = permutation_pvalue(score, perm_scores)
    assert ours == sk_p
    # REFERENCES §3c: C = 59 of 199, p = 60/200 (rounded check, rel=1e-2)
    assert int(np.sum(perm_scores >= score)) == 59
    assert ours == pytest.approx(0.300, rel=1e-2)


def test_pvalue_matches_sklearn_permutation_test_score_on_signal():
    # Source: scikit-learn 1.9.1 permutation_test_score; REFERENCES §3c informative
    # setting: C = 0, p = 0.01 = 1/(99 + 1), the smallest attainable value.
    X, y = make_classification(
        n_samples=60, n_features=5, n_informative=2, random_state=0
    )
    score, perm_scores, sk_p = permutation_test_score(
        LogisticRegression(), X, y, cv=5, n_permutations=99, random_state=0
    )
    ours = permutation_pvalue(score, perm_scores)
    assert ours == sk_p
    assert ours == pytest.approx(0.01, rel=1e-2)


@pytest.mark.parametrize(
    ("b", "m", "expected"), [(0, 99, 0.01), (4, 999, 0.005), (3, 19, 0.2)]
)
def test_pvalue_is_phipson_smyth_b_plus_one_over_m_plus_one(b, m, expected):
    # Source: Phipson & Smyth (2010), p = (b + 1)/(m + 1); the three (b, m, p) triples
    # are the check values of REFERENCES §3a.
    observed = 0.7
    null = np.concatenate([np.full(b, 0.9), np.full(m - b, 0.4)])
    np.random.default_rng(0).shuffle(null)
    assert permutation_pvalue(observed, null) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(("b", "m"), [(0, 99), (4, 999), (3, 19), (12, 50)])
def test_pvalue_equals_phipson_smyth_binomial_integral(b, m):
    # Source: Phipson & Smyth (2010): (b + 1)/(m + 1) = integral_0^1 F_Bin(b; m, q) dq,
    # evaluated with scipy.integrate.quad and scipy.stats.binom.cdf (REFERENCES §3a).
    integral, _ = integrate.quad(lambda q: stats.binom.cdf(b, m, q), 0.0, 1.0)
    null = np.concatenate([np.full(b, 1.0), np.full(m - b, 0.0)])
    assert permutation_pvalue(0.5, null) == pytest.approx(integral, rel=1e-6)


def test_pvalue_counts_ties_as_at_least_as_good():
    # Source: scikit-learn's rule np.sum(permutation_scores >= score) (REFERENCES §3c)
    # and Ojala & Garriga (2010) Definition 1 (error <=): ties count against the model.
    assert permutation_pvalue(0.5, [0.5, 0.5, 0.1, 0.2]) == pytest.approx(3 / 5)
    assert permutation_pvalue(
        0.5, [0.5, 0.5, 0.9, 0.8], greater_is_better=False
    ) == pytest.approx(3 / 5)


def test_pvalue_lower_is_better_counts_null_errors_at_most_observed():
    # Source: Ojala & Garriga (2010) test 1, Definition 1 (REFERENCES §3b):
    # p = (#{D': e(D') <= e(D)} + 1)/(k + 1) with e an error.
    errors_null = [0.30, 0.45, 0.50, 0.20, 0.55, 0.48, 0.52, 0.25, 0.60]
    observed_error = 0.28
    # by hand: 0.20 and 0.25 are <= 0.28, so b = 2 of k = 9, p = 3/10
    assert permutation_pvalue(
        observed_error, errors_null, greater_is_better=False
    ) == pytest.approx(0.3)
    # the same data read as scores (greater is better) gives b = 7 (every null
    # score >= 0.28 except 0.20 and 0.25), p = 8/10
    assert permutation_pvalue(observed_error, errors_null) == pytest.approx(0.8)


def test_pvalue_lower_is_better_equals_negated_scores():
    # Source: scikit-learn scorers negate errors (neg_* scorers); the error rule of
    # Ojala & Garriga (2010) must then agree with the score rule of REFERENCES §3c.
    rng = np.random.default_rng(11)
    null = rng.normal(size=57).round(1)  # rounding makes ties likely
    for observed in (-1.0, 0.0, 0.3, 1.7):
        assert permutation_pvalue(observed, null, greater_is_better=False) == (
            permutation_pvalue(-observed, -null)
        )


def test_pvalue_rejects_nan_null_scores_and_says_how_many():
    with pytest.raises(DataError, match=r"2 of 5 null scores are NaN"):
        permutation_pvalue(0.5, [0.1, np.nan, 0.3, np.nan, 0.2])


@pytest.mark.parametrize(
    ("observed", "null", "match"),
    [
        (float("nan"), [0.1, 0.2], "observed score is NaN"),
        (0.5, [], "no null scores"),
        (0.5, [[0.1, 0.2], [0.3, 0.4]], "1-d"),
        ("high", [0.1], "must be a real number"),
    ],
)
def test_pvalue_rejects_bad_inputs(observed, null, match):
    with pytest.raises(DataError, match=match):
        permutation_pvalue(observed, null)


def test_pvalue_rejects_non_bool_direction():
    with pytest.raises(SpecError, match="greater_is_better must be True or False"):
        permutation_pvalue(0.5, [0.1], greater_is_better="yes")


# --------------------------------------------------------------------------------------
# SequentialStop
# --------------------------------------------------------------------------------------


def _feed(rule, observed, nulls):
    """Feed null scores until the rule says stop; return the update() results."""
    returned = []
    for s in nulls:
        returned.append(rule.update(observed, s))
        if returned[-1]:
            break
    return returned


def test_sequential_stop_h_reached_at_draw_37():
    # Source: REFERENCES §4 hand example (Besag & Clifford 1991 rule): h = 10 reached
    # at draw L = 37 gives p = 10/37 = 0.270270.
    nulls = np.full(37, 0.1)
    nulls[[2, 5, 9, 13, 17, 21, 25, 29, 33, 36]] = 0.9  # 10th exceedance at draw 37
    rule = SequentialStop(h=10, n_max=1000)
    returned = _feed(rule, 0.5, np.concatenate([nulls, np.full(50, 0.9)]))
    assert returned == [False] * 36 + [True]
    assert rule.stopped_early
    assert rule.n_drawn == 37
    assert rule.exceedances == 10
    assert rule.p_value == pytest.approx(0.270270, rel=1e-5)
    assert rule.p_value == 10 / 37
    assert rule.reason == (
        "stopped after 10 of 37 permutations scored at least as well as the observed "
        "score (sequential rule of Besag & Clifford 1991, h = 10)"
    )


def test_sequential_stop_all_draws_used_with_three_exceedances():
    # Source: REFERENCES §4 hand example: n = 1000 with only g = 3 exceedances in 999
    # draws gives p = (g + 1)/n = 4/1000 = 0.004.
    nulls = np.full(999, 0.1)
    nulls[[10, 500, 998]] = 0.95
    rule = SequentialStop(h=10, n_max=1000)
    returned = _feed(rule, 0.9, nulls)
    assert returned == [False] * 998 + [True]
    assert not rule.stopped_early
    assert rule.n_drawn == 999
    assert rule.exceedances == 3
    assert rule.p_value == pytest.approx(0.004, rel=1e-12)
    assert rule.reason.startswith("ran all 999 permutations")


def test_sequential_stop_h_on_the_last_allowed_draw_gives_h_over_n_minus_one():
    # Source: REFERENCES §4: attainable values include h/(n - 1) (the h-th
    # exceedance arriving at the last allowed draw L = n - 1).
    nulls = np.full(9, 0.0)
    nulls[[0, 8]] = 1.0
    rule = SequentialStop(h=2, n_max=10)
    assert _feed(rule, 0.5, nulls)[-1] is True
    assert rule.stopped_early
    assert rule.p_value == pytest.approx(2 / 9)


def test_sequential_stop_lower_is_better_and_ties_count():
    # Besag & Clifford rule with "at least as good" meaning <= for errors; ties count
    # (the conservative convention of REFERENCES §3c/§4).
    rule = SequentialStop(h=3, n_max=100, greater_is_better=False)
    returned = _feed(rule, 0.2, [0.5, 0.2, 0.9, 0.1, 0.4, 0.15, 0.3])
    assert returned == [False, False, False, False, False, True]
    assert rule.p_value == pytest.approx(3 / 6)


def test_sequential_stop_attainable_values_are_those_of_besag_clifford():
    # Source: REFERENCES §4: attainable values are 1/n, ..., h/n and h/(n-1), ...,
    # h/h. Enumerate every stopping point of a small rule and compare the sets.
    h, n_max = 3, 8
    seen = set()
    for L in range(h, n_max):  # h-th exceedance at draw L
        rule = SequentialStop(h=h, n_max=n_max)
        _feed(rule, 0.5, [1.0] * (h - 1) + [0.0] * (L - h) + [1.0])
        seen.add(rule.p_value)
    for g in range(h):  # all n_max - 1 draws with g exceedances
        rule = SequentialStop(h=h, n_max=n_max)
        _feed(rule, 0.5, [1.0] * g + [0.0] * (n_max - 1 - g))
        seen.add(rule.p_value)
    expected = {i / n_max for i in range(1, h + 1)} | {h / j for j in range(h, n_max)}
    assert len(seen) == len(expected) == 8  # 1/8, 2/8, 3/8 and 3/7, ..., 3/3
    assert sorted(seen) == pytest.approx(sorted(expected))


def test_sequential_stop_null_simulation_has_nominal_size_and_few_draws():
    # Statistical test, one fixed seed. Source: REFERENCES §4 (Besag & Clifford
    # 1991): under H0 with a continuous statistic, P(p <= h/L0) = h/L0 exactly at
    # attainable levels; 0.05 = 10/200, 0.10 = 10/100, 0.25 = 10/40 are attainable for
    # h = 10, n = 1000. The number of replicates with p <= alpha is therefore
    # Binomial(N, alpha); we require it inside the central 99.9% binomial interval
    # (scipy.stats.binom.interval(0.999, N, alpha)).
    h, n_max, n_rep = 10, 1000, 4000
    rng = np.random.default_rng(1991)
    observed = rng.random(n_rep)
    nulls = rng.random((n_rep, n_max - 1))

    # vectorised reading of the rule, used to cross-check the class draw by draw
    cum = np.cumsum(nulls >= observed[:, None], axis=1)
    reached = cum[:, -1] >= h
    stop_at = np.where(reached, np.argmax(cum >= h, axis=1) + 1, n_max - 1)
    p_vec = np.where(reached, h / stop_at, (cum[:, -1] + 1) / n_max)

    p = np.empty(n_rep)
    draws = np.empty(n_rep, dtype=int)
    for i in range(n_rep):
        rule = SequentialStop(h=h, n_max=n_max)
        obs, row = float(observed[i]), nulls[i].tolist()
        j = 0
        while not rule.update(obs, row[j]):
            j += 1
        p[i], draws[i] = rule.p_value, rule.n_drawn
    np.testing.assert_array_equal(draws, stop_at)
    np.testing.assert_allclose(p, p_vec, rtol=0, atol=0)

    for alpha in (0.05, 0.10, 0.25):
        lo, hi = stats.binom.interval(0.999, n_rep, alpha)
        count = int(np.sum(p <= alpha + 1e-12))
        assert lo <= count <= hi, (alpha, count, lo, hi)

    # REFERENCES §4: mean number of draws under H0 with n = 1000 is about 55-57,
    # against 999 for a fixed-size test.
    assert draws.mean() < 100
    # Derived here from the uniform-count fact of REFERENCES §4 (not a published
    # value): E[draws] = h + h * (H_{n-1} - H_h) = 55.55 for h = 10, n = 1000, with
    # H_k the k-th harmonic number. Allow 5 standard errors.
    harmonic = np.cumsum(1.0 / np.arange(1, n_max))
    expected = h + h * (harmonic[n_max - 2] - harmonic[h - 1])
    assert 55 <= expected <= 57
    se = draws.std(ddof=1) / math.sqrt(n_rep)
    assert abs(draws.mean() - expected) < 5 * se


def test_sequential_stop_p_value_undefined_while_running():
    rule = SequentialStop(h=5, n_max=100)
    rule.update(0.5, 0.9)
    assert not rule.finished
    with pytest.raises(RunError, match="not defined yet: 1 of at most 99"):
        _ = rule.p_value
    d = rule.to_dict()
    assert d["p_value"] is None and d["finished"] is False
    assert rule.reason.startswith("still running")


def test_sequential_stop_refuses_updates_after_stopping():
    rule = SequentialStop(h=1, n_max=100)
    assert rule.update(0.5, 0.7) is True
    with pytest.raises(RunError, match="already stopped after 1 permutations"):
        rule.update(0.5, 0.1)


def test_sequential_stop_rejects_changed_observed_and_nan():
    rule = SequentialStop(h=3, n_max=100)
    rule.update(0.5, 0.1)
    with pytest.raises(DataError, match="observed score changed"):
        rule.update(0.6, 0.1)
    with pytest.raises(DataError, match="null score 2 is NaN"):
        rule.update(0.5, float("nan"))
    assert rule.n_drawn == 1  # rejected updates leave the state untouched


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"h": 0}, "h .* must be an integer >= 1"),
        ({"h": 2.5}, "h .* must be an integer >= 1"),
        ({"n_max": 1}, "n_max must be an integer >= 2"),
        ({"greater_is_better": None}, "greater_is_better must be True or False"),
    ],
)
def test_sequential_stop_rejects_bad_settings(kwargs, match):
    with pytest.raises(SpecError, match=match):
        SequentialStop(**kwargs)


def test_sequential_stop_to_dict_is_json_ready():
    rule = SequentialStop(h=2, n_max=50)
    _feed(rule, np.float64(0.5), [np.float32(0.7), 0.1, 0.6])
    d = json.loads(json.dumps(rule.to_dict()))
    assert d == {
        "rule": "besag_clifford_1991",
        "h": 2,
        "n_max": 50,
        "greater_is_better": True,
        "observed": 0.5,
        "n_drawn": 3,
        "exceedances": 2,
        "stopped_early": True,
        "finished": True,
        "p_value": pytest.approx(2 / 3),
        "reason": rule.reason,
    }


# --------------------------------------------------------------------------------------
# null_summary
# --------------------------------------------------------------------------------------


def test_null_summary_matches_numpy_and_statistics():
    # Sources: numpy (mean, std ddof=1, min, max, quantile with linear interpolation)
    # and Python's statistics module (stdev; quantiles(method="inclusive"), which is
    # the same Hyndman & Fan type-7 rule as numpy's default).
    null = np.random.default_rng(3).normal(0.5, 0.07, size=199)
    s = null_summary(null)
    assert s["n"] == 199
    assert s["mean"] == pytest.approx(np.mean(null), rel=1e-12)
    assert s["sd"] == pytest.approx(np.std(null, ddof=1), rel=1e-12)
    assert s["sd"] == pytest.approx(statistics.stdev(null.tolist()), rel=1e-9)
    assert s["min"] == null.min() and s["max"] == null.max()
    cuts = statistics.quantiles(null.tolist(), n=20, method="inclusive")
    # cut points k/20: 0.05, 0.25, 0.5, 0.75, 0.95 are cuts 1, 5, 10, 15, 19
    keys = ["0.05", "0.25", "0.5", "0.75", "0.95"]
    ref = {key: cuts[i] for key, i in zip(keys, (0, 4, 9, 14, 18), strict=True)}
    assert list(s["quantiles"]) == ["0.05", "0.25", "0.5", "0.75", "0.95"]
    for key, value in ref.items():
        assert s["quantiles"][key] == pytest.approx(value, rel=1e-9)
        by_numpy = np.quantile(null, float(key))
        assert s["quantiles"][key] == pytest.approx(by_numpy, rel=1e-12)
    assert s["observed"] is None and s["observed_rank_fraction"] is None
    json.dumps(s)  # plain Python numbers only


def test_null_summary_rank_fraction_in_both_directions():
    null = [0.1, 0.2, 0.3, 0.3, 0.5]
    # by hand: 3 of 5 null scores are >= 0.3; 4 of 5 are <= 0.3 (ties count)
    assert null_summary(null, 0.3)["observed_rank_fraction"] == pytest.approx(0.6)
    assert null_summary(null, 0.3, greater_is_better=False)[
        "observed_rank_fraction"
    ] == pytest.approx(0.8)


def test_null_summary_single_score_has_nan_sd():
    s = null_summary([0.4])
    assert math.isnan(s["sd"]) and s["mean"] == 0.4


def test_null_summary_rejects_nan():
    with pytest.raises(DataError, match="1 of 3 null scores are NaN"):
        null_summary([0.1, np.nan, 0.2])


CLS = "classification"
