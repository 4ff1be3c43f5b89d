"""The decision's degrees of freedom: max(repeats, folds) - 1.

The statistic is the corrected resampled t of Nadeau & Bengio (2003); only the
reference t distribution changes. The p-values are checked against scipy's t
distribution computed by hand from the published formula.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from foldwall.compare import (
    assess_differences,
    calibrated_df,
    corrected_t_interval,
    corrected_ttest,
    detectable_difference,
)
from foldwall.exceptions import SpecError

D = np.array([0.02, 0.05, -0.01, 0.04, 0.03, 0.00, 0.06, 0.02, 0.01, 0.03])


def _by_hand(
    d: np.ndarray, n_train: int, n_test: int, df: float
) -> tuple[float, float]:
    # Nadeau & Bengio (2003), eq. for the corrected resampled t statistic.
    se = math.sqrt((1 / d.size + n_test / n_train) * np.var(d, ddof=1))
    t = d.mean() / se
    return t, 2 * stats.t.sf(abs(t), df)


@pytest.mark.parametrize(
    ("repeats", "folds", "expected"),
    [(10, 5, 9.0), (5, 2, 4.0), (1, 5, 4.0), (1, 2, 1.0), (10, 10, 9.0), (3, 10, 9.0)],
)
def test_calibrated_df_is_the_larger_of_repeats_and_folds_minus_one(
    repeats: int, folds: int, expected: float
) -> None:
    assert calibrated_df(repeats, folds) == expected


def test_one_run_of_k_fold_keeps_the_published_test() -> None:
    # r = 1: max(1, k) - 1 = J - 1, the published degrees of freedom.
    d = D[:5]
    assert corrected_ttest(d, n_train=40, n_test=10, df=calibrated_df(1, 5)) == (
        corrected_ttest(d, n_train=40, n_test=10)
    )


def test_smaller_df_keeps_the_statistic_and_raises_the_p_value() -> None:
    full = corrected_ttest(D, n_train=50, n_test=50)
    calibrated = corrected_ttest(D, n_train=50, n_test=50, df=4)
    t, p = _by_hand(D, 50, 50, 4)
    assert calibrated.statistic == pytest.approx(full.statistic)
    assert calibrated.statistic == pytest.approx(t)
    assert calibrated.p_value == pytest.approx(p)
    assert calibrated.df == 4.0
    assert calibrated.p_value > full.p_value


def test_interval_and_detectable_difference_follow_the_df() -> None:
    se = math.sqrt((1 / D.size + 1.0) * np.var(D, ddof=1))
    lo, hi = corrected_t_interval(D, n_train=50, n_test=50, df=4)
    half = stats.t.ppf(0.975, 4) * se
    assert (lo, hi) == pytest.approx((D.mean() - half, D.mean() + half))
    assert detectable_difference(D, n_train=50, n_test=50, df=4) > (
        detectable_difference(D, n_train=50, n_test=50)
    )
    res = assess_differences(D, n_train=50, n_test=50, df=4)
    assert res.test is not None and res.test.df == 4.0
    assert res.ci == pytest.approx((lo, hi))


@pytest.mark.parametrize("bad", [0, 0.5, 10, -1, True, "4"])
def test_df_out_of_range_is_refused_in_one_line(bad: object) -> None:
    with pytest.raises(SpecError, match="df must be a number from 1 to 9"):
        corrected_ttest(D, n_train=50, n_test=50, df=bad)  # type: ignore[arg-type]


def test_a_study_decides_with_the_calibrated_df() -> None:
    from sklearn.datasets import load_breast_cancer
    from sklearn.linear_model import LogisticRegression
    from sklearn.naive_bayes import GaussianNB
    from sklearn.pipeline import make_pipeline
    from sklearn.preprocessing import StandardScaler

    import foldwall

    X, y = load_breast_cancer(return_X_y=True)
    X, y = X[::4, :5], y[::4]
    res = foldwall.wrap(
        make_pipeline(StandardScaler(), LogisticRegression()),
        metric="roc_auc",
        outer=2,
        repeats=5,
        inner=2,
        random_state=0,
        baselines={"bayes": GaussianNB()},
    ).run(X, y)
    row = res.to_dict()["comparisons"][0]
    assert row["df"] == 4.0
    assert "df = max(repeats, folds) - 1" in row["ci_method"]
