"""The in-fold acquisition-effect removal transformer."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from sklearn.ensemble import RandomForestClassifier
from sklearn.linear_model import LogisticRegression
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler
from sklearn.utils.estimator_checks import check_estimator

from foldwall.audit import (
    AcquisitionEffectRemover,
    AuditWarning,
    warn_removal_before_nonlinear,
)


@pytest.mark.filterwarnings("ignore::sklearn.exceptions.SkipTestWarning")
def test_passes_scikit_learn_check_estimator():
    # reference: scikit-learn's own estimator contract
    check_estimator(AcquisitionEffectRemover(columns=[0]))


def _sites(seed=0, n=120):
    rng = np.random.default_rng(seed)
    site = rng.choice(["a", "b", "c"], n)
    age = rng.normal(40, 8, n)
    F = rng.normal(size=(n, 3))
    F[:, 0] += pd.Series(site).map({"a": 0, "b": 3, "c": -2}).to_numpy()
    F[:, 1] += 0.2 * age
    frame = pd.DataFrame(F, columns=["f0", "f1", "f2"])
    frame.insert(0, "site", site)
    frame.insert(1, "age", age)
    return frame


def test_output_is_the_least_squares_residual_plus_the_mean():
    frame = _sites()
    out = AcquisitionEffectRemover(columns=["site", "age"]).fit_transform(frame)
    # reference: statsmodels OLS of each feature on site indicators and age
    D = pd.get_dummies(frame["site"], drop_first=True, dtype=float)
    D["age"] = frame["age"]
    D = sm.add_constant(D)
    for j, col in enumerate(["f0", "f1", "f2"]):
        fit = sm.OLS(frame[col], D).fit()
        np.testing.assert_allclose(out[:, j], fit.resid + frame[col].mean(), atol=1e-9)


def test_fitted_on_training_rows_only():
    frame = _sites(1)
    train, test = frame.iloc[:80], frame.iloc[80:].copy()
    a = AcquisitionEffectRemover(columns=["site", "age"]).fit(train)
    changed = test.copy()
    changed[["f0", "f1", "f2"]] += 100.0  # test rows cannot move the fitted effects
    b = AcquisitionEffectRemover(columns=["site", "age"]).fit(train)
    np.testing.assert_array_equal(a.coef_, b.coef_)
    np.testing.assert_allclose(a.transform(changed) - a.transform(test), 100.0)


def test_an_unseen_level_gets_no_correction():
    frame = _sites(2)
    rem = AcquisitionEffectRemover(columns=["site"]).fit(frame)
    new = frame.iloc[:3].copy()
    new["site"] = "unseen"
    np.testing.assert_allclose(
        rem.transform(new), new[["age", "f0", "f1", "f2"]].to_numpy()
    )
    assert rem.get_feature_names_out().tolist() == ["age", "f0", "f1", "f2"]


def test_warns_when_linear_removal_precedes_a_non_linear_model():
    nonlinear = make_pipeline(
        AcquisitionEffectRemover(columns=[0]), RandomForestClassifier()
    )
    with pytest.warns(AuditWarning, match="Hamdan et al. 2023"):
        assert warn_removal_before_nonlinear(nonlinear, name="candidate 'forest'")
    linear = make_pipeline(
        AcquisitionEffectRemover(columns=[0]), StandardScaler(), LogisticRegression()
    )
    assert warn_removal_before_nonlinear(linear) is False
    assert warn_removal_before_nonlinear(RandomForestClassifier()) is False


def test_needs_columns_and_a_feature_left():
    X = np.random.default_rng(0).normal(size=(10, 2))
    with pytest.raises(ValueError, match="columns="):
        AcquisitionEffectRemover().fit(X)
    with pytest.raises(ValueError, match="1 feature"):
        AcquisitionEffectRemover(columns=[0]).fit(X[:, :1])
