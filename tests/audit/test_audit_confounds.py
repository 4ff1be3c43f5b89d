"""Confound statistics on the outer folds: planted site confound versus real signal."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sklearn.linear_model import LogisticRegression, Ridge
from sklearn.model_selection import KFold, StratifiedKFold
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

from foldwall.audit import (
    acquisition_outcome_score,
    confound_checks,
    features_acquisition_scores,
    ridge_out_of_fold,
)


def _site_study(real_signal, seed=0, n=240):
    """Three invented sites with different outcome rates; features carry the site."""
    rng = np.random.default_rng(seed)
    site = rng.choice(["site_a", "site_b", "site_c"], n)
    rate = np.select([site == "site_a", site == "site_b"], [0.85, 0.5], 0.15)
    y = (rng.random(n) < rate).astype(int)
    X = rng.normal(size=(n, 30))
    shift = pd.Series(site).map({"site_a": 1.5, "site_b": 0.0, "site_c": -1.5})
    X[:, :6] += shift.to_numpy()[:, None]
    if real_signal:
        X[:, 6:10] += 2.0 * (y[:, None] - 0.5)
    splits = list(StratifiedKFold(5, shuffle=True, random_state=0).split(X, y))
    model = make_pipeline(StandardScaler(), LogisticRegression(C=0.1))
    pred = np.zeros(n)
    for tr, te in splits:
        pred[te] = model.fit(X[tr], y[tr]).predict_proba(X[te])[:, 1]
    return X, y, pd.DataFrame({"site": site}), splits, pred


def _by_check(checks):
    return {c.check: c for c in checks}


def test_planted_site_confound_is_a_problem():
    X, y, A, splits, pred = _site_study(real_signal=False)
    checks, details = confound_checks(
        A, y, splits, X=X, predictions=pred, n_permutations=19, random_state=0
    )
    c = _by_check(checks)
    assert c["acquisition_outcome"].severity == "warning"
    assert c["acquisition_outcome"].evidence["p_value"] == pytest.approx(1 / 20)
    assert c["features_acquisition"].severity == "warning"
    assert c["features_acquisition"].evidence["column"] == "site"
    assert c["posthoc"].severity == "problem"
    assert details["posthoc"]["p_value"] > 0.05


def test_real_signal_beside_a_site_effect_is_still_found():
    X, y, A, splits, pred = _site_study(real_signal=True)
    checks, details = confound_checks(
        A, y, splits, X=X, predictions=pred, n_permutations=19, random_state=0
    )
    c = _by_check(checks)
    assert c["acquisition_outcome"].severity == "warning"
    assert c["posthoc"].severity == "info"
    assert details["posthoc"]["p_value"] < 1e-6
    assert details["posthoc"]["added"] > 0.2


def test_without_predictions_a_confound_path_is_a_warning():
    X, y, A, splits, _ = _site_study(real_signal=False)
    checks, _ = confound_checks(A, y, splits, X=X, n_permutations=19, random_state=0)
    assert _by_check(checks)["confound_path"].severity == "warning"


def test_no_site_effect_raises_nothing():
    rng = np.random.default_rng(1)
    X = rng.normal(size=(200, 20))
    y = rng.integers(0, 2, 200)
    A = pd.DataFrame({"site": rng.choice(["p", "q"], 200)})
    splits = list(StratifiedKFold(5, shuffle=True, random_state=0).split(X, y))
    checks, _ = confound_checks(A, y, splits, X=X, n_permutations=19, random_state=0)
    assert {c.severity for c in checks} == {"info"}


def test_random_label_controls_are_seeded_and_bounded():
    _X, y, A, splits, _ = _site_study(real_signal=False)
    a = acquisition_outcome_score(A, y, splits, n_permutations=9, random_state=3)
    b = acquisition_outcome_score(A, y, splits, n_permutations=9, random_state=3)
    assert a == b
    assert len(a.null_scores) == 9
    # p = (1 + hits) / (1 + m) (Phipson & Smyth 2010): between 1/10 and 1
    assert 0.1 <= a.p_value <= 1.0
    # shuffled outcomes hover around chance
    assert abs(np.median(a.null_scores) - 0.5) < 0.1


def test_numeric_acquisition_column_is_scored_with_r2():
    rng = np.random.default_rng(2)
    age = rng.normal(50, 10, 200)
    X = rng.normal(size=(200, 10))
    X[:, 0] += (age - 50) / 5
    splits = list(KFold(5, shuffle=True, random_state=0).split(X))
    (s,) = features_acquisition_scores(
        X, pd.DataFrame({"age": age}), splits, n_permutations=9, random_state=0
    )
    assert s.metric == "r2" and s.score > 0.5 and s.p_value == pytest.approx(0.1)


def test_ridge_out_of_fold_matches_scikit_learn_ridge_at_a_fixed_penalty():
    rng = np.random.default_rng(4)
    X = rng.normal(size=(80, 6)) * [1, 2, 3, 4, 5, 6] + 3
    Y = rng.normal(size=(80, 2))
    splits = list(KFold(4, shuffle=True, random_state=0).split(X))
    ours = ridge_out_of_fold(X, Y, splits, alpha=2.5)
    # reference: scikit-learn Ridge on inputs standardised with the training part
    for tr, te in splits:
        sc = StandardScaler().fit(X[tr])
        ref = (
            Ridge(alpha=2.5)
            .fit(sc.transform(X[tr]), Y[tr])
            .predict(sc.transform(X[te]))
        )
        np.testing.assert_allclose(ours[te], ref, rtol=1e-8, atol=1e-10)


def test_roc_auc_of_a_binary_site_matches_scikit_learn_with_ties():
    from sklearn.metrics import roc_auc_score

    rng = np.random.default_rng(5)
    site = rng.choice(["p", "q"], 150)
    y = (rng.random(150) < np.where(site == "p", 0.7, 0.3)).astype(int)
    splits = list(StratifiedKFold(5, shuffle=True, random_state=0).split(site, y))
    s = acquisition_outcome_score(
        pd.DataFrame({"site": site}), y, splits, n_permutations=0
    )
    # the fitted model ranks rows by site only: every fold's AUC is the AUC of the
    # site indicator, with heavy ties (reference: scikit-learn roc_auc_score)
    ref = np.mean(
        [roc_auc_score(y[te], (site[te] == "p").astype(float)) for _, te in splits]
    )
    assert s.score == pytest.approx(ref, rel=1e-12)
