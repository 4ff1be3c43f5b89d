"""Checks of foldwall.compare statistics against outside sources.

Each hard-coded value names where it comes from. "REFERENCES §n" is
/work/shared/REFERENCES.md, whose values were recomputed with scipy/statsmodels/
scikit-learn (its status lines say which formulas are from memory of the papers).
Values printed to 6 decimals are compared with ``abs=5e-7`` (half a unit in the
last printed digit); values printed to 4 decimals with ``abs=5e-5``.
"""

import itertools
import json
import math

import numpy as np
import pytest
import scipy.stats
from sklearn.metrics import roc_auc_score
from statsmodels.stats.multitest import multipletests
from statsmodels.stats.proportion import proportion_confint

from foldwall.compare import (
    TestResult,
    adjust_pvalues,
    bootstrap_interval,
    corrected_t_interval,
    corrected_ttest,
    delong_aucs,
    delong_test,
    five_by_two_f,
    five_by_two_t,
    paired_ttest,
    proportion_interval,
    sign_flip_test,
)
from foldwall.exceptions import SpecError

SIX = 5e-7  # half a unit in the 6th decimal
FOUR = 5e-5  # half a unit in the 4th decimal

# REFERENCES §5 worked example (J = 10, n1 = 90, n2 = 10).
NB_BASELINE = np.array([0.80, 0.78, 0.83, 0.79, 0.81, 0.77, 0.82, 0.80, 0.79, 0.81])
NB_DIFFS = np.array([0.02, 0.05, -0.01, 0.04, 0.03, 0.00, 0.06, 0.02, 0.01, 0.03])

# REFERENCES §6 worked example (rows = replications of 2-fold CV).
FIVE_BY_TWO = np.array(
    [[0.04, 0.02], [0.03, 0.05], [0.01, 0.03], [0.05, 0.02], [0.02, 0.04]]
)

# REFERENCES §12 tiny exact example.
DL_Y = np.array([0, 0, 0, 0, 0, 1, 1, 1, 1, 1])
DL_S1 = np.array([0.1, 0.3, 0.45, 0.6, 0.2, 0.5, 0.7, 0.8, 0.9, 0.4])
DL_S2 = np.array([0.2, 0.4, 0.3, 0.7, 0.1, 0.6, 0.5, 0.9, 0.65, 0.35])


def bouckaert_frank_diffs():
    # Generated as stated in REFERENCES §5 (rows = repetitions, columns = folds).
    return np.random.default_rng(7).normal(0.01, 0.04, size=(10, 10)).round(3)


# ------------------------------------------------------------- corrected t-test


def test_corrected_ttest_matches_nadeau_bengio_worked_example():
    res = corrected_ttest(NB_DIFFS, n_train=90, n_test=10)
    # REFERENCES §5 (Nadeau & Bengio 2003 formula): t = 2.503867, p = 0.033648, df 9.
    assert res.statistic == pytest.approx(2.503867, abs=SIX)
    assert res.p_value == pytest.approx(0.033648, abs=SIX)
    assert res.df == 9
    assert res.name == "corrected_t"


def test_corrected_ttest_worked_example_intermediate_values():
    # REFERENCES §5: mean 0.025, var 0.000472222, factor 0.211111.
    assert NB_DIFFS.mean() == pytest.approx(0.025, abs=SIX)
    assert NB_DIFFS.var(ddof=1) == pytest.approx(0.000472222, abs=5e-10)
    # The statistic follows from these three numbers alone.
    t = 0.025 / math.sqrt(0.211111 * 0.000472222)
    res = corrected_ttest(NB_DIFFS, n_train=90, n_test=10)
    assert res.statistic == pytest.approx(t, rel=1e-5)


def test_paired_ttest_equals_scipy_ttest_rel():
    a = NB_BASELINE + NB_DIFFS
    res = paired_ttest(a - NB_BASELINE)
    ref = scipy.stats.ttest_rel(a, NB_BASELINE)  # reference library: scipy
    assert res.statistic == pytest.approx(ref.statistic, rel=1e-12)
    assert res.p_value == pytest.approx(ref.pvalue, rel=1e-12)
    assert res.df == ref.df
    # REFERENCES §5: uncorrected t = 3.638034, p = 0.005417.
    assert res.statistic == pytest.approx(3.638034, abs=SIX)
    assert res.p_value == pytest.approx(0.005417, abs=SIX)


@pytest.mark.parametrize("seed", range(5))
def test_paired_ttest_equals_scipy_ttest_rel_on_random_data(seed):
    rng = np.random.default_rng(seed)
    a, b = rng.normal(0.8, 0.05, size=(2, 12))
    res = paired_ttest(a - b)
    ref = scipy.stats.ttest_rel(a, b)  # reference library: scipy
    assert res.statistic == pytest.approx(ref.statistic, rel=1e-10)
    assert res.p_value == pytest.approx(ref.pvalue, rel=1e-10)


def test_corrected_ttest_matches_bouckaert_frank_10x10_example():
    d = bouckaert_frank_diffs()
    # REFERENCES §5 prints the generated table; spot-check that we rebuilt it.
    np.testing.assert_array_equal(
        d[0],
        [0.010, 0.022, -0.001, -0.026, -0.008, -0.030, 0.012, 0.064, -0.010, -0.015],
    )
    np.testing.assert_array_equal(
        d[9], [0.009, 0.037, -0.004, 0.052, 0.010, 0.033, -0.042, 0.024, -0.058, -0.071]
    )
    # 10-fold CV: n_test / n_train = 1 / (k - 1) = 1/9 (Bouckaert & Frank 2004).
    res = corrected_ttest(d, n_train=90, n_test=10)
    # REFERENCES §5: corrected t = 0.248770, p (df 99) = 0.804054.
    assert res.statistic == pytest.approx(0.248770, abs=SIX)
    assert res.p_value == pytest.approx(0.804054, abs=SIX)
    assert res.df == 99
    naive = paired_ttest(d)
    # REFERENCES §5: naive t = 0.865744, p = 0.388724.
    assert naive.statistic == pytest.approx(0.865744, abs=SIX)
    assert naive.p_value == pytest.approx(0.388724, abs=SIX)


def test_corrected_ttest_ignores_order_and_shape_of_differences():
    d = bouckaert_frank_diffs()
    flat = corrected_ttest(d.ravel()[::-1], n_train=90, n_test=10)
    table = corrected_ttest(d, n_train=90, n_test=10)
    assert flat.statistic == pytest.approx(table.statistic, rel=1e-12)
    assert flat.p_value == pytest.approx(table.p_value, rel=1e-12)


def test_corrected_ttest_is_never_more_liberal_than_the_plain_test():
    # Nadeau & Bengio 2003: the correction only inflates the variance.
    d = bouckaert_frank_diffs().ravel()
    assert corrected_ttest(d, n_train=90, n_test=10).p_value > paired_ttest(d).p_value


@pytest.mark.parametrize(
    ("values", "statistic", "p_value"),
    [
        ([0.0, 0.0, 0.0], 0.0, 1.0),
        ([0.1, 0.1, 0.1], math.inf, 0.0),
        ([-0.2, -0.2], -math.inf, 0.0),
    ],
)
def test_zero_variance_convention(values, statistic, p_value):
    # Documented convention (not from an outside source): scipy returns NaN here.
    for res in (corrected_ttest(values, n_train=9, n_test=1), paired_ttest(values)):
        assert res.statistic == statistic
        assert res.p_value == p_value


# ------------------------------------------------------------------------ 5x2cv


def test_five_by_two_t_matches_worked_example():
    res = five_by_two_t(FIVE_BY_TWO)
    # REFERENCES §6 (Dietterich 1998 formula): t = 2.529822, p (df 5) = 0.052541.
    assert res.statistic == pytest.approx(2.529822, abs=SIX)
    assert res.p_value == pytest.approx(0.052541, abs=SIX)
    assert res.df == 5
    assert res.name == "5x2cv_t"


def test_five_by_two_f_matches_worked_example():
    res = five_by_two_f(FIVE_BY_TWO)
    # REFERENCES §6 (Alpaydin 1999 formula): f = 4.520000, p = 0.054850, F(10, 5).
    assert res.statistic == pytest.approx(4.52, abs=SIX)
    assert res.p_value == pytest.approx(0.054850, abs=SIX)
    assert res.df == (10, 5)
    assert res.name == "5x2cv_f"


@pytest.mark.parametrize("seed", range(3))
def test_five_by_two_uses_unhalved_per_replication_variance(seed):
    # REFERENCES §6: s_i^2 = (p1 - pbar)^2 + (p2 - pbar)^2, not a ddof=0 variance.
    # Algebraically that sum equals (p1 - p2)^2 / 2, computed here independently.
    p = np.random.default_rng(seed).normal(0.02, 0.03, size=(5, 2))
    s2 = (p[:, 0] - p[:, 1]) ** 2 / 2
    f_expected = np.sum(p**2) / (2 * np.sum(s2))
    t_expected = p[0, 0] / np.sqrt(np.mean(s2))
    assert five_by_two_f(p).statistic == pytest.approx(f_expected, rel=1e-12)
    assert five_by_two_t(p).statistic == pytest.approx(t_expected, rel=1e-12)
    # The pitfall named in REFERENCES §6 (np.var with ddof=0) would double f.
    f_pitfall = np.sum(p**2) / (2 * np.sum(np.var(p, axis=1, ddof=0)))
    assert f_pitfall == pytest.approx(2 * f_expected, rel=1e-12)
    assert five_by_two_f(p).statistic != pytest.approx(f_pitfall, rel=1e-3)


def test_five_by_two_worked_example_per_replication_variances():
    # REFERENCES §6: s_i^2 = [0.0002, 0.0002, 0.0002, 0.00045, 0.0002]; their sum
    # with the numerator sum(p^2) = 0.0113 gives f = 0.0113 / (2 * 0.00125) = 4.52.
    assert np.sum(FIVE_BY_TWO**2) == pytest.approx(0.0113, rel=1e-12)
    assert five_by_two_f(FIVE_BY_TWO).statistic == pytest.approx(
        0.0113 / (2 * (4 * 0.0002 + 0.00045)), rel=1e-10
    )


@pytest.mark.parametrize("func", [five_by_two_t, five_by_two_f])
@pytest.mark.parametrize("shape", [(10,), (2, 5), (5, 3), (4, 2)])
def test_five_by_two_rejects_wrong_shape(func, shape):
    with pytest.raises(SpecError, match=r"shape \(5, 2\).*got shape"):
        func(np.zeros(shape))


# -------------------------------------------------------------- sign-flip test


def _exact_sign_flip_p(d):
    # Independent enumeration of all 2^J sign patterns with itertools.product.
    d = np.asarray(d, dtype=float)
    observed = abs(d.mean())
    count = 0
    total = 0
    for signs in itertools.product((1, -1), repeat=d.size):
        total += 1
        if abs(np.mean(np.array(signs) * d)) >= observed - 1e-12:
            count += 1
    return count / total


@pytest.mark.parametrize(
    "d",
    [
        [0.02, 0.05, -0.01, 0.04, 0.03, 0.00, 0.06, 0.02, 0.01, 0.03],  # REFERENCES §5
        [0.3, -0.1, 0.2, 0.4, -0.25],
        [0.1, -0.1, 0.2, -0.2],
    ],
)
def test_sign_flip_exact_enumeration_matches_brute_force(d):
    res = sign_flip_test(d)
    assert "exact" in res.test
    assert res.p_value == pytest.approx(_exact_sign_flip_p(d), abs=1e-15)
    assert res.statistic == pytest.approx(np.mean(d), rel=1e-12)
    assert res.df is None


def test_sign_flip_exact_matches_scipy_permutation_test():
    # Reference library: scipy.stats.permutation_test with one sample and
    # permutation_type="samples" flips signs; its two-sided p (twice the smaller
    # tail) equals P(|mean| >= |observed|) because the null is symmetric.
    d = np.array([0.3, -0.1, 0.2, 0.4, -0.25, 0.15, 0.05])
    ref = scipy.stats.permutation_test(
        (d,),
        np.mean,
        permutation_type="samples",
        n_resamples=np.inf,
        vectorized=False,
    )
    assert sign_flip_test(d).p_value == pytest.approx(ref.pvalue, rel=1e-12)


def test_sign_flip_monte_carlo_is_deterministic_for_fixed_seed():
    d = np.random.default_rng(3).normal(0.01, 0.03, size=20)
    first = sign_flip_test(d, n_resamples=999, random_state=42)
    second = sign_flip_test(d, n_resamples=999, random_state=42)
    assert "Monte Carlo" in first.test
    assert first == second
    # p = (b + 1) / (m + 1) (Phipson & Smyth 2010, REFERENCES §3a): integer b.
    b = first.p_value * 1000 - 1
    assert b == pytest.approx(round(b), abs=1e-9)
    assert first.p_value >= 1 / 1000


def test_sign_flip_monte_carlo_agrees_with_exact_enumeration():
    # Statistical check, one fixed seed and a wide margin: J = 14 forces Monte Carlo
    # with 9999 resamples; the exact p comes from the brute-force enumeration.
    d = np.random.default_rng(11).normal(0.005, 0.03, size=14)
    exact = _exact_sign_flip_p(d)
    mc = sign_flip_test(d, n_resamples=9999, random_state=0)
    assert "Monte Carlo" in mc.test
    assert abs(mc.p_value - exact) < 5 * math.sqrt(exact * (1 - exact) / 9999) + 1e-3


def test_sign_flip_switches_to_exact_when_all_patterns_fit():
    d = np.linspace(-0.02, 0.05, 13)  # 2^13 = 8192 <= 9999 + 1
    res = sign_flip_test(d)
    assert "exact" in res.test
    assert (res.p_value * 2**13) == pytest.approx(round(res.p_value * 2**13))
    assert "Monte Carlo" in sign_flip_test(d, n_resamples=100, random_state=0).test


# --------------------------------------------------------------------- intervals


@pytest.mark.parametrize("confidence", [0.8, 0.95, 0.99])
def test_corrected_t_interval_is_symmetric_with_t_quantile_half_width(confidence):
    d = bouckaert_frank_diffs().ravel()
    lo, hi = corrected_t_interval(d, n_train=90, n_test=10, confidence=confidence)
    # Nadeau & Bengio 2003 variance (REFERENCES §5); quantile from scipy.stats.t.ppf.
    factor = 1 / d.size + 10 / 90
    half = scipy.stats.t.ppf(0.5 + confidence / 2, d.size - 1) * math.sqrt(
        factor * d.var(ddof=1)
    )
    assert (lo + hi) / 2 == pytest.approx(d.mean(), rel=1e-10)
    assert hi - lo == pytest.approx(2 * half, rel=1e-10)


def test_corrected_t_interval_agrees_with_corrected_ttest():
    # REFERENCES §5: two-sided p = 0.033648, so the 95% interval excludes 0 and the
    # 99% interval does not.
    lo95, _ = corrected_t_interval(NB_DIFFS, n_train=90, n_test=10, confidence=0.95)
    lo99, _ = corrected_t_interval(NB_DIFFS, n_train=90, n_test=10, confidence=0.99)
    assert lo95 > 0 > lo99
    # At confidence 1 - p the interval touches zero exactly.
    p = corrected_ttest(NB_DIFFS, n_train=90, n_test=10).p_value
    lo, _ = corrected_t_interval(NB_DIFFS, n_train=90, n_test=10, confidence=1 - p)
    assert lo == pytest.approx(0.0, abs=1e-12)


def test_bootstrap_interval_equals_scipy_bootstrap_for_same_seed():
    values = bouckaert_frank_diffs()[0]
    ours = bootstrap_interval(values, random_state=123, n_resamples=2000)
    # Reference library: scipy.stats.bootstrap, BCa, same generator seed.
    ref = scipy.stats.bootstrap(
        (values,),
        np.mean,
        n_resamples=2000,
        method="BCa",
        rng=np.random.default_rng(123),
    ).confidence_interval
    assert ours == pytest.approx((ref.low, ref.high), rel=1e-12)
    assert ours[0] < values.mean() < ours[1]


def test_bootstrap_interval_is_reproducible_and_contains_the_mean():
    values = np.random.default_rng(5).normal(0.7, 0.05, size=15)
    first = bootstrap_interval(values, random_state=0, n_resamples=999)
    assert first == bootstrap_interval(values, random_state=0, n_resamples=999)
    assert first[0] < values.mean() < first[1]


def test_bootstrap_interval_of_constant_values_is_a_point():
    assert bootstrap_interval([0.4, 0.4, 0.4], random_state=0) == (0.4, 0.4)


@pytest.mark.filterwarnings("ignore::RuntimeWarning")
@pytest.mark.filterwarnings("ignore::scipy.stats.DegenerateDataWarning")
def test_bootstrap_interval_falls_back_to_percentile_when_bca_degenerates():
    # With one resample of [0, 1] and this seed scipy's BCa returns NaN (checked
    # below); the fallback must equal scipy's percentile interval on the same draw.
    values = np.array([0.0, 1.0])
    bca = scipy.stats.bootstrap(
        (values,), np.mean, n_resamples=1, method="BCa", rng=np.random.default_rng(0)
    ).confidence_interval
    assert math.isnan(bca.low)
    ref = scipy.stats.bootstrap(
        (values,),
        np.mean,
        n_resamples=1,
        method="percentile",
        rng=np.random.default_rng(0),
    ).confidence_interval
    ours = bootstrap_interval(values, random_state=0, n_resamples=1)
    assert ours == pytest.approx((ref.low, ref.high))


# ------------------------------------------------------------ multiple testing

BH_1995 = [
    0.0001,
    0.0004,
    0.0019,
    0.0095,
    0.0201,
    0.0278,
    0.0298,
    0.0344,
    0.0459,
    0.3240,
    0.4262,
    0.5719,
    0.6528,
    0.7590,
    1.000,
]  # REFERENCES §7 ex. 1
SMALL = [0.01, 0.04, 0.03, 0.005]  # REFERENCES §7 ex. 2
STATSMODELS_NAME = {"holm": "holm", "bonferroni": "bonferroni", "bh": "fdr_bh"}


@pytest.mark.parametrize("method", ["holm", "bonferroni", "bh"])
@pytest.mark.parametrize("p", [BH_1995, SMALL], ids=["ex1", "ex2"])
def test_adjust_pvalues_matches_statsmodels_on_reference_examples(method, p):
    # Reference library: statsmodels.stats.multitest.multipletests.
    ref = multipletests(p, alpha=0.05, method=STATSMODELS_NAME[method])[1]
    np.testing.assert_allclose(adjust_pvalues(p, method=method), ref, rtol=1e-12)


@pytest.mark.parametrize(
    ("method", "first_six", "rejections"),
    [
        # REFERENCES §7 example 1 table (values recomputed there with statsmodels;
        # the p-values themselves and BH's 4-vs-3 conclusion are from memory of the
        # BH 1995 paper).
        ("bonferroni", [0.0015, 0.006, 0.0285, 0.1425, 0.3015, 0.417], 3),
        ("holm", [0.0015, 0.0056, 0.0247, 0.114, 0.2211, 0.278], 3),
        ("bh", [0.0015, 0.003, 0.0095, 0.035625, 0.0603, 0.063857], 4),
    ],
)
def test_adjust_pvalues_reproduces_bh_1995_table(method, first_six, rejections):
    adjusted = adjust_pvalues(BH_1995, method=method)
    np.testing.assert_allclose(adjusted[:6], first_six, atol=SIX)
    assert int(np.sum(adjusted <= 0.05)) == rejections


@pytest.mark.parametrize(
    ("method", "expected"),
    [
        # REFERENCES §7 example 2, in input order.
        ("bonferroni", [0.04, 0.16, 0.12, 0.02]),
        ("holm", [0.03, 0.06, 0.06, 0.02]),
        ("bh", [0.02, 0.04, 0.04, 0.02]),
    ],
)
def test_adjust_pvalues_small_example_in_input_order(method, expected):
    adjusted = adjust_pvalues(SMALL, method=method)
    np.testing.assert_allclose(adjusted, expected, atol=1e-12)


@pytest.mark.parametrize("method", ["holm", "bonferroni", "bh"])
@pytest.mark.parametrize("seed", range(6))
def test_adjust_pvalues_matches_statsmodels_on_random_vectors(method, seed):
    rng = np.random.default_rng(seed)
    m = int(rng.integers(1, 40))
    # A mix of small and uniform p-values, with some ties.
    p = np.concatenate([rng.uniform(0, 0.02, m // 2), rng.uniform(0, 1, m - m // 2)])
    p[: m // 4] = p[0]
    rng.shuffle(p)
    ref = multipletests(p, method=STATSMODELS_NAME[method])[1]  # statsmodels
    np.testing.assert_allclose(adjust_pvalues(p, method=method), ref, rtol=1e-12)


def test_adjust_pvalues_rejects_unknown_method_listing_the_allowed_ones():
    with pytest.raises(SpecError, match=r"'fdr_bh'.*'holm', 'bonferroni', 'bh'"):
        adjust_pvalues([0.01, 0.2], method="fdr_bh")


@pytest.mark.parametrize("bad", [[0.01, np.nan], [0.2, 1.5], [-0.1], [[0.1, 0.2]]])
def test_adjust_pvalues_rejects_invalid_input(bad):
    with pytest.raises(SpecError, match="p_values"):
        adjust_pvalues(bad)


# ------------------------------------------------------------------ proportions

# REFERENCES §13 95% table: (x, n, Clopper-Pearson, Wilson). The first four rows are
# Newcombe (1998) examples (table recalled from memory there, recomputed with
# statsmodels); the last two are additions of REFERENCES.md.
NEWCOMBE_ROWS = [
    (81, 263, (0.2527, 0.3676), (0.2553, 0.3662)),
    (15, 148, (0.0578, 0.1617), (0.0624, 0.1605)),
    (0, 20, (0.0000, 0.1684), (0.0000, 0.1611)),
    (1, 29, (0.0009, 0.1776), (0.0061, 0.1718)),
    (29, 29, (0.8806, 1.0000), (0.8830, 1.0000)),
    (36, 50, (0.5751, 0.8377), (0.5833, 0.8253)),
]


@pytest.mark.parametrize(("x", "n", "cp", "wilson"), NEWCOMBE_ROWS)
def test_proportion_interval_matches_reference_table(x, n, cp, wilson):
    assert proportion_interval(x, n, method="wilson") == pytest.approx(wilson, abs=FOUR)
    assert proportion_interval(x, n, method="clopper-pearson") == pytest.approx(
        cp, abs=FOUR
    )


@pytest.mark.parametrize(("x", "n", "cp", "wilson"), NEWCOMBE_ROWS)
@pytest.mark.parametrize("confidence", [0.9, 0.95, 0.99])
def test_proportion_interval_matches_statsmodels_on_table_rows(
    x, n, cp, wilson, confidence
):
    # Reference library: statsmodels.stats.proportion.proportion_confint.
    alpha = 1 - confidence
    for ours, theirs in (("wilson", "wilson"), ("clopper-pearson", "beta")):
        ref = proportion_confint(x, n, alpha=alpha, method=theirs)
        got = proportion_interval(x, n, method=ours, confidence=confidence)
        assert got == pytest.approx(ref, rel=1e-10, abs=1e-12)


@pytest.mark.parametrize("seed", range(4))
def test_proportion_interval_matches_statsmodels_on_random_counts(seed):
    rng = np.random.default_rng(seed)
    for _ in range(25):
        n = int(rng.integers(1, 500))
        x = int(rng.integers(0, n + 1))
        for ours, theirs in (("wilson", "wilson"), ("clopper-pearson", "beta")):
            ref = proportion_confint(x, n, alpha=0.05, method=theirs)  # statsmodels
            got = proportion_interval(x, n, method=ours)
            assert got == pytest.approx(ref, rel=1e-10, abs=1e-12), (x, n, ours)


@pytest.mark.parametrize(
    ("args", "kwargs", "match"),
    [
        ((5, 3), {}, "between 0 and n=3"),
        ((-1, 3), {}, "between 0 and n=3"),
        ((1, 0), {}, "at least 1"),
        ((1.5, 3), {}, "successes must be an integer"),
        ((1, 3), {"method": "exact"}, r"'wilson', 'clopper-pearson'"),
        ((1, 3), {"confidence": 95}, "strictly between 0 and 1"),
    ],
)
def test_proportion_interval_rejects_invalid_input(args, kwargs, match):
    with pytest.raises(SpecError, match=match):
        proportion_interval(*args, **kwargs)


# ------------------------------------------------------------------------ DeLong


def test_delong_tiny_exact_example():
    res = delong_aucs(DL_Y, DL_S1, DL_S2)
    # REFERENCES §12 (DeLong et al. 1988 formula, exact fractions):
    assert res["auc_a"] == pytest.approx(22 / 25, rel=1e-12)
    assert res["auc_b"] == pytest.approx(4 / 5, rel=1e-12)
    assert res["variance_a"] == pytest.approx(8 / 625, rel=1e-12)
    assert res["variance_b"] == pytest.approx(7 / 250, rel=1e-12)
    assert res["covariance"] == pytest.approx(7 / 500, rel=1e-12)
    assert res["variance"] == pytest.approx(0.0128, rel=1e-12)
    assert res["z"] == pytest.approx(1 / math.sqrt(2), rel=1e-10)  # 0.707107
    assert res["p_value"] == pytest.approx(0.479500, abs=SIX)
    test = delong_test(DL_Y, DL_S1, DL_S2)
    assert test.name == "delong"
    assert test.statistic == res["z"] and test.p_value == res["p_value"]


def _simulated(seed, m=30, n=40, ties=False):
    rng = np.random.default_rng(seed)
    y = np.r_[np.ones(m, int), np.zeros(n, int)]
    a = rng.normal(size=m + n) + 0.8 * y
    b = 0.6 * a + rng.normal(size=m + n) * 0.8 + 0.3 * y
    if ties:
        a, b = np.round(a, 0), np.round(b, 0)
    perm = rng.permutation(m + n)
    return y[perm], a[perm], b[perm]


@pytest.mark.parametrize("ties", [False, True])
@pytest.mark.parametrize("seed", range(3))
def test_delong_auc_equals_roc_auc_score(seed, ties):
    y, a, b = _simulated(seed, ties=ties)
    res = delong_aucs(y, a, b)
    # Reference library: sklearn.metrics.roc_auc_score.
    assert res["auc_a"] == pytest.approx(roc_auc_score(y, a), rel=1e-12)
    assert res["auc_b"] == pytest.approx(roc_auc_score(y, b), rel=1e-12)


def _jackknife_variance(y, s):
    # REFERENCES §12 identity: two-sample jackknife built only from roc_auc_score.
    pos, neg = np.flatnonzero(y == 1), np.flatnonzero(y == 0)
    m, n = pos.size, neg.size
    keep = np.ones(y.size, bool)
    total = 0.0
    for idx, size in ((pos, m), (neg, n)):
        loo = []
        for i in idx:
            keep[i] = False
            loo.append(roc_auc_score(y[keep], s[keep]))
            keep[i] = True
        loo = np.array(loo)
        total += (size - 1) / size * np.sum((loo - loo.mean()) ** 2)
    return total


@pytest.mark.parametrize(("seed", "ties"), [(0, False), (1, True)])
def test_delong_single_auc_variance_equals_jackknife_variance(seed, ties):
    y, a, b = _simulated(seed, ties=ties)
    res = delong_aucs(y, a, b)
    assert res["variance_a"] == pytest.approx(_jackknife_variance(y, a), rel=1e-9)
    assert res["variance_b"] == pytest.approx(_jackknife_variance(y, b), rel=1e-9)


def _pairwise_delong(y, a, b):
    # Direct O(m n) transcription of the DeLong et al. (1988) formulas in
    # REFERENCES §12 (psi kernel, structural components, S = S10/m + S01/n).
    def psi(x, yy):
        return (x[:, None] > yy[None, :]) + 0.5 * (x[:, None] == yy[None, :])

    pos, neg = y == 1, y == 0
    kernels = [psi(s[pos], s[neg]) for s in (a, b)]
    v10 = np.array([k.mean(axis=1) for k in kernels])
    v01 = np.array([k.mean(axis=0) for k in kernels])
    s = np.cov(v10) / pos.sum() + np.cov(v01) / neg.sum()
    aucs = [k.mean() for k in kernels]
    z = (aucs[0] - aucs[1]) / math.sqrt(s[0, 0] + s[1, 1] - 2 * s[0, 1])
    return aucs, s, z


@pytest.mark.parametrize(("seed", "ties"), [(2, False), (3, True)])
def test_delong_midranks_equal_pairwise_formula(seed, ties):
    y, a, b = _simulated(seed, m=25, n=35, ties=ties)
    aucs, s, z = _pairwise_delong(y, a, b)
    res = delong_aucs(y, a, b)
    assert [res["auc_a"], res["auc_b"]] == pytest.approx(aucs, rel=1e-12)
    assert res["covariance"] == pytest.approx(s[0, 1], rel=1e-9)
    assert res["z"] == pytest.approx(z, rel=1e-9)
    assert res["p_value"] == pytest.approx(2 * scipy.stats.norm.sf(abs(z)), rel=1e-9)


def test_delong_is_antisymmetric_and_label_coding_free():
    y, a, b = _simulated(4)
    ab, ba = delong_aucs(y, a, b), delong_aucs(y, b, a)
    assert ab["z"] == pytest.approx(-ba["z"], rel=1e-12)
    assert ab["p_value"] == pytest.approx(ba["p_value"], rel=1e-12)
    # Same positive class (the greater label, as in scikit-learn) whatever the coding.
    recoded = delong_aucs(np.where(y == 1, "yes", "no"), a, b)
    assert recoded["z"] == pytest.approx(ab["z"], rel=1e-12)
    assert delong_aucs(2 * y - 1, a, b)["auc_a"] == pytest.approx(ab["auc_a"])


def test_delong_identical_scores_give_z_zero_p_one():
    y, a, _ = _simulated(5)
    res = delong_aucs(y, a, a.copy())
    assert (res["z"], res["p_value"], res["variance"]) == (0.0, 1.0, 0.0)


@pytest.mark.parametrize(
    ("y", "a", "b", "match"),
    [
        ([0, 0, 1, 1], [0.1, 0.2, 0.3], [0.1, 0.2, 0.3, 0.4], "same length"),
        ([1, 1, 1, 1], [0.1, 0.2, 0.3, 0.4], [0.1, 0.2, 0.3, 0.4], "exactly two"),
        ([0, 0, 0, 1], [0.1, 0.2, 0.3, 0.4], [0.1, 0.2, 0.3, 0.4], "at least 2 rows"),
        ([0, 0, 1, 1], [0.1, np.nan, 0.3, 0.4], [0.1, 0.2, 0.3, 0.4], "NaN"),
        ([0, 1, 1], [0.1, 0.2, 0.3, 0.4], [0.1, 0.2, 0.3, 0.4], "one label per"),
    ],
)
def test_delong_rejects_invalid_input(y, a, b, match):
    with pytest.raises(SpecError, match=match):
        delong_aucs(y, a, b)


# ------------------------------------------------------------ errors and results


@pytest.mark.parametrize(
    "call",
    [
        lambda d: corrected_ttest(d, n_train=9, n_test=1),
        paired_ttest,
        sign_flip_test,
        lambda d: corrected_t_interval(d, n_train=9, n_test=1),
        bootstrap_interval,
    ],
)
@pytest.mark.parametrize("d", [[], [0.1]])
def test_fewer_than_two_differences_is_an_error(call, d):
    with pytest.raises(SpecError, match="at least 2"):
        call(d)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"n_train": 0, "n_test": 1}, "n_train must be a positive integer"),
        ({"n_train": 9, "n_test": 1.5}, "n_test must be a positive integer"),
    ],
)
def test_corrected_ttest_rejects_bad_row_counts(kwargs, match):
    with pytest.raises(SpecError, match=match):
        corrected_ttest(NB_DIFFS, **kwargs)


def test_non_finite_differences_are_an_error():
    with pytest.raises(SpecError, match="NaN or infinite"):
        corrected_ttest([0.1, np.nan, 0.2], n_train=9, n_test=1)


@pytest.mark.parametrize("confidence", [0, 1, 1.2, -0.5])
def test_intervals_reject_confidence_outside_unit_interval(confidence):
    with pytest.raises(SpecError, match="strictly between 0 and 1"):
        corrected_t_interval(NB_DIFFS, n_train=9, n_test=1, confidence=confidence)


def test_spec_error_is_a_value_error():
    with pytest.raises(ValueError):
        paired_ttest([0.1])


def test_test_result_is_frozen_and_serialises_to_plain_json():
    res = five_by_two_f(FIVE_BY_TWO)
    with pytest.raises(AttributeError):
        res.statistic = 0.0
    d = res.to_dict()
    assert json.loads(json.dumps(d, allow_nan=False)) == d
    assert d["df"] == [10.0, 5.0]
    assert all(type(d[k]) is float for k in ("statistic", "p_value"))
    assert isinstance(res, TestResult)
    assert corrected_ttest(NB_DIFFS, n_train=90, n_test=10).to_dict()["df"] == 9.0
    assert sign_flip_test(NB_DIFFS).to_dict()["df"] is None
