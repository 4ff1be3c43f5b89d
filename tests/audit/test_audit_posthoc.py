"""The post-hoc test of Dinga et al. (2020), checked against statsmodels."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm

from foldwall.audit import acquisition_design, posthoc_test


def _data(seed=0, n=300):
    rng = np.random.default_rng(seed)
    site = rng.choice(["north", "south", "west"], n)
    age = rng.normal(50, 10, n)
    A = pd.DataFrame({"site": site, "age": age})
    lin = 0.5 * (site == "south") - 0.3 * (site == "west") + 0.02 * (age - 50)
    pred = lin + rng.normal(0, 1, n)
    return rng, A, lin, pred


def _designs(A, pred):
    D, _, _ = acquisition_design(A)
    Xr = sm.add_constant(D)
    return Xr, np.column_stack([Xr, pred])


def test_binary_outcome_matches_statsmodels_glm_binomial():
    rng, A, lin, pred = _data()
    y = (rng.random(len(pred)) < 1 / (1 + np.exp(-(lin + 0.4 * pred)))).astype(int)
    r = posthoc_test(y, A, pred, task="classification")
    Xr, Xf = _designs(A, pred)
    # reference: statsmodels GLM, Binomial family (likelihood-ratio of nested fits)
    m0 = sm.GLM(y, Xr, family=sm.families.Binomial()).fit()
    m1 = sm.GLM(y, Xf, family=sm.families.Binomial()).fit()
    assert r.family == "binomial" and r.df == 1
    assert r.statistic == pytest.approx(2 * (m1.llf - m0.llf), rel=1e-6)
    assert r.deviance_full == pytest.approx(m1.deviance, rel=1e-6)
    assert r.deviance_null == pytest.approx(m1.null_deviance, rel=1e-6)
    assert r.explained_full == pytest.approx(
        1 - m1.deviance / m1.null_deviance, rel=1e-6
    )
    assert r.explained_reduced == pytest.approx(
        1 - m0.deviance / m0.null_deviance, rel=1e-6
    )
    from scipy import stats

    assert r.p_value == pytest.approx(stats.chi2.sf(2 * (m1.llf - m0.llf), 1), rel=1e-6)


def test_continuous_outcome_matches_statsmodels_ols_lr_and_f_tests():
    rng, A, lin, pred = _data(1)
    y = lin + 0.3 * pred + rng.normal(0, 1, len(pred))
    r = posthoc_test(y, A, pred, task="regression")
    Xr, Xf = _designs(A, pred)
    # reference: statsmodels OLS compare_lr_test / compare_f_test
    o0, o1 = sm.OLS(y, Xr).fit(), sm.OLS(y, Xf).fit()
    lr, lr_p, _ = o1.compare_lr_test(o0)
    f, f_p, _ = o1.compare_f_test(o0)
    assert r.statistic == pytest.approx(lr, rel=1e-6)
    assert r.p_value == pytest.approx(lr_p, rel=1e-5)
    assert r.f_statistic == pytest.approx(f, rel=1e-6)
    assert r.f_p_value == pytest.approx(f_p, rel=1e-5)
    assert r.explained_full == pytest.approx(o1.rsquared, rel=1e-9)
    assert r.added == pytest.approx(o1.rsquared - o0.rsquared, rel=1e-6)
    assert r.partial == pytest.approx(1 - o1.ssr / o0.ssr, rel=1e-6)


def test_three_classes_match_statsmodels_mnlogit():
    rng, A, _, _ = _data(2)
    y = rng.choice(3, len(A))
    P = rng.dirichlet([2, 2, 2], len(A))
    r = posthoc_test(y, A, P, task="classification")
    logodds = np.log(P[:, 1:] / P[:, :1])
    Xr, Xf = _designs(A, logodds)
    # reference: statsmodels MNLogit (class 0 the reference, as here)
    m0 = sm.MNLogit(y, Xr).fit(disp=0)
    m1 = sm.MNLogit(y, Xf).fit(disp=0)
    assert r.family == "multinomial" and r.df == 2
    assert r.loglik_full == pytest.approx(m1.llf, rel=1e-6)
    assert r.statistic == pytest.approx(2 * (m1.llf - m0.llf), rel=1e-5, abs=1e-8)


def test_predictions_that_are_a_function_of_site_add_nothing():
    rng, A, _, _ = _data(3)
    y = rng.integers(0, 2, len(A))
    site_only = A["site"].map({"north": 0.2, "south": 0.5, "west": 0.7}).to_numpy()
    r = posthoc_test(y, A[["site"]], site_only, task="classification")
    assert r.df == 0 and r.statistic == 0 and r.p_value == 1.0
    assert "linear function of the acquisition" in r.note


def test_permutation_p_value_within_site_cells():
    rng, A, lin, pred = _data(4)
    y = (rng.random(len(pred)) < 1 / (1 + np.exp(-(lin + 1.5 * pred)))).astype(int)
    r = posthoc_test(
        y, A[["site"]], pred, task="classification", n_permutations=19, random_state=0
    )
    # strong signal: no shuffle reaches it; the smallest possible p is 1/(19+1)
    # (Phipson & Smyth 2010)
    assert r.permutation_p == pytest.approx(1 / 20)
    noise = rng.normal(size=len(pred))
    r0 = posthoc_test(
        y, A[["site"]], noise, task="classification", n_permutations=19, random_state=0
    )
    assert r0.permutation_p > 0.05


def test_numeric_acquisition_gives_no_permutation_p_and_says_why():
    rng, A, _, pred = _data(5)
    y = rng.integers(0, 2, len(A))
    r = posthoc_test(
        y, A, pred, task="classification", n_permutations=9, random_state=0
    )
    assert r.permutation_p is None and "numeric" in r.note
