"""Statistics of one scored test part (the opening of a sealed hold-out)."""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from scipy import stats
from sklearn.metrics import accuracy_score, f1_score, roc_auc_score
from statsmodels.stats.proportion import proportion_confint

from foldwall.compare import (
    accuracy_interval,
    auc_interval,
    delong_aucs,
    fixed_model_permutation_test,
    row_bootstrap_interval,
)
from foldwall.exceptions import SpecError


def _labels(correct: int, n: int) -> tuple[np.ndarray, np.ndarray]:
    y = np.tile([0, 1], n)[:n]
    pred = y.copy()
    pred[correct:] = 1 - pred[correct:]
    return y, pred


@pytest.mark.parametrize(
    ("correct", "n"), [(81, 263), (15, 148), (0, 20), (1, 29), (29, 29), (36, 50)]
)
@pytest.mark.parametrize(
    ("method", "sm_method"), [("wilson", "wilson"), ("clopper-pearson", "beta")]
)
def test_accuracy_interval_equals_statsmodels(correct, n, method, sm_method):
    # source: statsmodels.stats.proportion.proportion_confint (REFERENCES.md section 13)
    y, pred = _labels(correct, n)
    got = accuracy_interval(y, pred, method=method)
    low, high = proportion_confint(correct, n, alpha=0.05, method=sm_method)
    assert got.estimate == pytest.approx(correct / n)
    assert (got.lower, got.upper) == pytest.approx((low, high), abs=1e-9)
    assert got.n == n and got.to_dict()["source"].startswith(("Wilson", "exact"))


def test_accuracy_interval_matches_the_published_table():
    # REFERENCES.md section 13 (Newcombe 1998 examples, values from memory, recomputed
    # there with statsmodels): 36/50 -> Clopper-Pearson 0.5751-0.8377, Wilson 0.5833-0.8253
    y, pred = _labels(36, 50)
    cp = accuracy_interval(y, pred, method="clopper-pearson")
    wi = accuracy_interval(y, pred)
    assert (cp.lower, cp.upper) == pytest.approx((0.5751, 0.8377), abs=1e-4)
    assert (wi.lower, wi.upper) == pytest.approx((0.5833, 0.8253), abs=1e-4)


def test_auc_interval_uses_the_delong_variance_on_the_tiny_exact_example():
    # REFERENCES.md section 12: AUC 22/25 = 0.88, S11 = 8/625 = 0.0128
    y = np.array([0, 0, 0, 0, 0, 1, 1, 1, 1, 1])
    s1 = np.array([0.1, 0.3, 0.45, 0.6, 0.2, 0.5, 0.7, 0.8, 0.9, 0.4])
    got = auc_interval(y, s1)
    half = stats.norm.isf(0.025) * math.sqrt(0.0128)
    assert got.estimate == pytest.approx(0.88)
    assert got.lower == pytest.approx(0.88 - half, rel=1e-9)
    assert got.upper == 1.0 and got.note is not None  # 0.88 + 0.22 was cut at 1
    assert got.method == "delong"


def test_auc_interval_agrees_with_delong_and_the_jackknife_oracle():
    # DeLong's variance equals the two-sample jackknife variance built from
    # sklearn.metrics.roc_auc_score alone (REFERENCES.md section 12, identity checked)
    rng = np.random.default_rng(5)
    y = np.r_[np.ones(30), np.zeros(40)].astype(int)
    s = rng.normal(size=70) + 0.8 * y
    got = auc_interval(y, s, confidence=0.9)
    var = delong_aucs(y, s, s)["variance_a"]
    pos, neg = np.flatnonzero(y == 1), np.flatnonzero(y == 0)
    jack_pos = [roc_auc_score(np.delete(y, i), np.delete(s, i)) for i in pos]
    jack_neg = [roc_auc_score(np.delete(y, j), np.delete(s, j)) for j in neg]
    m, n = pos.size, neg.size
    jack = (m - 1) / m * np.sum((jack_pos - np.mean(jack_pos)) ** 2) + (
        n - 1
    ) / n * np.sum((jack_neg - np.mean(jack_neg)) ** 2)
    assert var == pytest.approx(jack, rel=1e-9)
    z = stats.norm.isf(0.05)
    assert got.estimate == pytest.approx(roc_auc_score(y, s))
    assert (got.lower, got.upper) == pytest.approx(
        (got.estimate - z * math.sqrt(jack), got.estimate + z * math.sqrt(jack)),
        rel=1e-9,
    )


def test_auc_interval_needs_two_of_each_class():
    with pytest.raises(SpecError, match="at least 2 rows of each class"):
        auc_interval([0, 1, 1, 1], [0.1, 0.2, 0.3, 0.4])


def test_bootstrap_interval_is_seeded_and_close_to_wilson_for_accuracy():
    rng = np.random.default_rng(1)
    y = rng.integers(0, 2, size=200)
    pred = np.where(rng.random(200) < 0.75, y, 1 - y)

    def acc(rows):
        return accuracy_score(y[rows], pred[rows])

    a = row_bootstrap_interval(acc, 200, random_state=3, n_resamples=999)
    b = row_bootstrap_interval(acc, 200, random_state=3, n_resamples=999)
    wilson = accuracy_interval(y, pred)
    assert a == b
    assert a.estimate == pytest.approx(wilson.estimate)
    # the bootstrap and the score interval agree to about a point at n = 200
    assert a.lower == pytest.approx(wilson.lower, abs=0.02)
    assert a.upper == pytest.approx(wilson.upper, abs=0.02)


def test_bootstrap_drops_resamples_it_cannot_score_and_says_so():
    y = np.array([0] * 18 + [1] * 2)
    pred = y.copy()

    def auc(rows):
        return roc_auc_score(y[rows], pred[rows])  # ValueError with one class

    got = row_bootstrap_interval(auc, 20, random_state=0, n_resamples=200)
    assert got.note is not None and "could not be scored" in got.note
    stratified = row_bootstrap_interval(
        auc, 20, strata=y, random_state=0, n_resamples=200
    )
    assert stratified.note is None


def test_bootstrap_gives_up_when_most_resamples_fail():
    with pytest.raises(SpecError, match="could not be scored"):
        row_bootstrap_interval(lambda rows: float("nan"), 10, n_resamples=20)


def test_permutation_p_value_by_hand():
    # y = [1, 0, 1, 1, 0], predictions [1, 0, 1, 0, 0]: accuracy 4/5.
    # Four permutations listed by hand; permuted labels y[perm] and their accuracy:
    #   [0, 1, 2, 3, 4] -> [1, 0, 1, 1, 0] -> 4/5 (>= 4/5, counts)
    #   [1, 0, 2, 3, 4] -> [0, 1, 1, 1, 0] -> 2/5
    #   [3, 4, 0, 1, 2] -> [1, 0, 1, 0, 1] -> 4/5 (counts)
    #   [4, 2, 1, 0, 3] -> [0, 1, 0, 1, 1] -> 0/5
    # b = 2, m = 4, so p = (2 + 1)/(4 + 1) = 0.6; null mean = (0.8+0.4+0.8+0)/4 = 0.5
    y = np.array([1, 0, 1, 1, 0])
    pred = np.array([1, 0, 1, 0, 0])
    perms = [[0, 1, 2, 3, 4], [1, 0, 2, 3, 4], [3, 4, 0, 1, 2], [4, 2, 1, 0, 3]]
    got = fixed_model_permutation_test(
        y, lambda lab: accuracy_score(lab, pred), permutations=perms
    )
    assert got.observed == pytest.approx(0.8)
    assert (got.n_at_least, got.n_permutations) == (2, 4)
    assert got.p_value == pytest.approx(0.6)
    assert got.null_mean == pytest.approx(0.5)


def test_permutation_p_approaches_the_exact_enumeration():
    # Perfect predictions on 3 + 3 rows: of the C(6, 3) = 20 equally likely label
    # arrangements only the true one scores 1.0, so the exact p-value is 1/20.
    y = np.array([0, 0, 0, 1, 1, 1])
    arrangements = {tuple(y[list(p)]) for p in itertools.permutations(range(6))}
    assert len(arrangements) == 20

    def accuracy(labels):  # numpy's mean, for speed: 10,000 calls
        return float(np.mean(labels == y))

    got = fixed_model_permutation_test(y, accuracy, n_permutations=9999, random_state=0)
    se = math.sqrt(0.05 * 0.95 / 9999)
    assert abs(got.p_value - 1 / 20) < 4 * se
    again = fixed_model_permutation_test(
        y, accuracy, n_permutations=9999, random_state=0
    )
    assert again == got


def test_permutation_moves_whole_groups_when_a_group_has_one_label():
    groups = np.array(["a", "a", "b", "c", "c", "c", "d"])
    y = np.array([1, 1, 0, 1, 1, 1, 0])
    seen = []

    def score(labels):
        seen.append(labels.copy())
        return f1_score(labels, y)

    got = fixed_model_permutation_test(
        y, score, groups=groups, n_permutations=30, random_state=2
    )
    assert got.scheme == "groups" and got.note is None
    for labels in seen:
        for g in np.unique(groups):
            assert np.unique(labels[groups == g]).size == 1  # a group keeps one label
    mixed = fixed_model_permutation_test(
        np.array([1, 0, 0, 1]),
        lambda lab: float(lab[0]),
        groups=[1, 1, 2, 2],
        n_permutations=5,
    )
    assert mixed.scheme == "rows" and "vary within groups" in mixed.note


def test_bad_permutations_are_refused():
    with pytest.raises(SpecError, match="must permute"):
        fixed_model_permutation_test(
            [0, 1, 1], lambda lab: 0.0, permutations=[[0, 0, 1]]
        )
    with pytest.raises(SpecError, match="n_permutations must be a whole number"):
        fixed_model_permutation_test([0, 1, 1], lambda lab: 0.0, n_permutations=0)
