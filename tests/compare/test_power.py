"""Power, equivalence and degenerate inputs of the corrected resampled t-test (issue 10).

Sources:

- Power: the power function of the one-sample t-test (noncentral t), checked
  against statsmodels' ``statsmodels.stats.power.ttest_power`` with the effective
  sample size 1 / (1/J + n_test/n_train) and df = J - 1, and against the
  large-sample hand formula (z_{1-alpha/2} + z_power) * se (common practice).
- Equivalence: two one-sided tests (Schuirmann 1987, REFERENCES.md section 14),
  checked against statsmodels' ``ttost_paired`` in the limit n_test/n_train -> 0,
  and against the duality "equivalent iff the 1 - 2 alpha interval lies inside
  (-delta, delta)" stated in the same reference.
- The worked differences are those of REFERENCES.md section 5 (Nadeau & Bengio
  example, J = 10, n1 = 90, n2 = 10).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats
from statsmodels.stats.power import ttest_power
from statsmodels.stats.weightstats import ttost_paired

from foldwall.compare import (
    assess_differences,
    corrected_t_interval,
    corrected_ttest,
    detectable_difference,
    equivalence_test,
    no_spread_reason,
)
from foldwall.exceptions import SpecError

NB = [0.02, 0.05, -0.01, 0.04, 0.03, 0.00, 0.06, 0.02, 0.01, 0.03]  # REFERENCES §5
BF = (
    np.random.default_rng(7).normal(0.01, 0.04, size=(10, 10)).round(3)
)  # REFERENCES §5


@pytest.fixture(params=[0, 7, 42])
def seed(request):
    return request.param


# ------------------------------------------------------------ detectable difference


@pytest.mark.parametrize(
    ("d", "n_train", "n_test", "alpha", "power"),
    [
        (NB, 90, 10, 0.05, 0.8),
        (NB, 90, 10, 0.01, 0.9),
        (BF, 90, 10, 0.05, 0.8),  # 10 x 10-fold
        (np.random.default_rng(3).normal(0, 0.05, size=10), 50, 50, 0.05, 0.8),  # 5 x 2
    ],
)
def test_detectable_difference_has_the_requested_power_per_statsmodels(
    d, n_train, n_test, alpha, power
):
    delta = detectable_difference(
        d, n_train=n_train, n_test=n_test, alpha=alpha, power=power
    )
    j = np.asarray(d).size
    sd = float(np.std(d, ddof=1))
    n_eff = 1.0 / (1.0 / j + n_test / n_train)
    got = ttest_power(
        delta / sd, nobs=n_eff, alpha=alpha, df=j - 1, alternative="two-sided"
    )
    assert got == pytest.approx(power, abs=1e-8)


def test_detectable_difference_approaches_the_normal_formula_for_many_splits():
    # Hand formula (common practice): (z_0.975 + z_0.80) * se = (1.959964 + 0.841621) * se.
    d = np.random.default_rng(1).normal(0.0, 0.03, size=4000)
    se = math.sqrt((1 / d.size + 1 / 4) * np.var(d, ddof=1))
    delta = detectable_difference(d, n_train=80, n_test=20)
    assert delta == pytest.approx((1.959964 + 0.841621) * se, rel=1e-3)


def test_detectable_difference_worked_example():
    # NB example: se = sqrt(0.211111 * 0.000472222) = 0.0099846; the noncentrality
    # for 80% power at df = 9 is 3.1496 (statsmodels solve_power on the same df).
    se = math.sqrt(0.2111111 * 0.000472222)
    assert detectable_difference(NB, n_train=90, n_test=10) == pytest.approx(
        3.1496 * se, rel=1e-3
    )


def test_detectable_difference_grows_with_stricter_alpha_and_higher_power():
    base = detectable_difference(NB, n_train=90, n_test=10)
    assert detectable_difference(NB, n_train=90, n_test=10, alpha=0.01) > base
    assert detectable_difference(NB, n_train=90, n_test=10, power=0.9) > base
    # The overlap correction widens it compared with treating splits as independent.
    assert detectable_difference(NB, n_train=90, n_test=10) > detectable_difference(
        NB, n_train=10**9, n_test=1
    )


def test_detectable_difference_is_nan_without_spread():
    assert math.isnan(detectable_difference([0.1, 0.1, 0.1], n_train=20, n_test=10))


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"alpha": 0.0}, "alpha must be a number strictly between 0 and 1"),
        ({"power": 1.0}, "power must be a number strictly between 0 and 1"),
        ({"n_train": 0}, "n_train must be a positive integer"),
    ],
)
def test_detectable_difference_bad_arguments(kwargs, match):
    args = {"n_train": 90, "n_test": 10, **kwargs}
    with pytest.raises(SpecError, match=match):
        detectable_difference(NB, **args)


# --------------------------------------------------------------------- equivalence


def test_equivalence_matches_statsmodels_ttost_without_the_correction():
    d = np.array(
        [0.002, 0.004, -0.001, 0.003, 0.001, 0.000, 0.005, 0.002, 0.001, 0.003]
    )
    # n_test / n_train = 1e-9: the corrected variance is the plain paired one.
    res = equivalence_test(d, n_train=10**9, n_test=1, smallest_difference=0.004)
    p, lower, upper = ttost_paired(d, np.zeros_like(d), -0.004, 0.004)
    assert res.p_lower == pytest.approx(lower[1], rel=1e-6)
    assert res.p_upper == pytest.approx(upper[1], rel=1e-6)
    assert res.p_value == pytest.approx(p, rel=1e-6)


def test_equivalence_hand_computation_with_the_correction():
    # NB example, delta = 0.05: t_lower = (0.025 + 0.05)/se, t_upper = (0.025 - 0.05)/se.
    se = math.sqrt((1 / 10 + 10 / 90) * 0.000472222)
    res = equivalence_test(NB, n_train=90, n_test=10, smallest_difference=0.05)
    assert res.p_lower == pytest.approx(stats.t.sf(0.075 / se, 9), rel=1e-5)
    assert res.p_upper == pytest.approx(stats.t.cdf(-0.025 / se, 9), rel=1e-5)
    # (0.025 - 0.05)/se = -2.503867, the corrected t of REFERENCES §5 with its sign
    # flipped, so p_upper is that example's one-sided p-value, 0.016824.
    assert res.p_value == pytest.approx(0.016824, abs=1e-6)
    assert res.equivalent


def test_equivalence_is_the_interval_inside_the_margin(seed):
    rng = np.random.default_rng(seed)
    for _ in range(200):
        d = rng.normal(
            rng.normal(0, 0.02), rng.uniform(0.005, 0.05), size=int(rng.integers(4, 30))
        )
        delta = float(rng.uniform(0.005, 0.06))
        res = equivalence_test(d, n_train=80, n_test=20, smallest_difference=delta)
        lo, hi = corrected_t_interval(d, n_train=80, n_test=20, confidence=0.90)
        assert res.ci == pytest.approx((lo, hi))
        assert res.equivalent == (-delta < lo and hi < delta)


def test_equivalence_without_spread_gives_no_p_value():
    res = equivalence_test(
        [0.0, 0.0, 0.0], n_train=20, n_test=10, smallest_difference=0.1
    )
    assert math.isnan(res.p_value) and not res.equivalent
    assert "every split shows the same difference" in res.reason
    assert res.to_dict()["p_value"] is None


@pytest.mark.parametrize("bad", [0.0, -0.01, math.inf, "0.02", True])
def test_equivalence_needs_a_positive_margin(bad):
    with pytest.raises(
        SpecError, match="smallest_difference must be a positive number"
    ):
        equivalence_test(NB, n_train=90, n_test=10, smallest_difference=bad)


# -------------------------------------------------------- zero spread, assessment


@pytest.mark.parametrize("d", [[0.05] * 10, [0.0] * 4, [[0.2, 0.2], [0.2, 0.2]]])
def test_zero_spread_gives_no_test_no_interval_and_a_reason(d):
    res = assess_differences(d, n_train=40, n_test=20, smallest_difference=0.02)
    assert not res.assessable
    assert res.test is None and res.ci is None and res.detectable_difference is None
    assert res.equivalence is None
    assert res.reason.startswith(
        "cannot be assessed: every split shows the same difference"
    )
    assert res.reason.endswith("use more folds or repeats")
    assert res.to_dict()["test"] is None


def test_zero_spread_reason_names_the_common_difference():
    assert "(0.25)" in no_spread_reason([0.25, 0.25])
    assert no_spread_reason([0.25, 0.26]) is None


def test_assessment_uses_the_corrected_test_and_interval():
    res = assess_differences(NB, n_train=90, n_test=10, smallest_difference=0.05)
    ref = corrected_ttest(NB, n_train=90, n_test=10)
    assert res.test == ref
    assert res.test.p_value == pytest.approx(0.033648, abs=1e-6)  # REFERENCES §5
    assert res.ci == pytest.approx(corrected_t_interval(NB, n_train=90, n_test=10))
    assert res.detectable_difference == pytest.approx(
        detectable_difference(NB, n_train=90, n_test=10)
    )
    assert res.equivalence.equivalent


def test_assessment_power_level_for_a_family():
    res = assess_differences(NB, n_train=90, n_test=10, power_alpha=0.05 / 3)
    assert res.power_alpha == pytest.approx(0.05 / 3)
    assert res.detectable_difference == pytest.approx(
        detectable_difference(NB, n_train=90, n_test=10, alpha=0.05 / 3)
    )
