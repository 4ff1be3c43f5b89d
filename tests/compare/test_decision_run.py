"""Comparisons, degenerate folds and models, end to end through wrap() (issue 10).

The statistics inside are checked against outside sources in test_power.py and
test_stats.py; here the rules of the output are checked: no p-value without spread,
one decision test with the others apart, words that match the power, direction
words from the metric table, a single-class test part refused before any fit, and
chosen models that predict one class flagged (scikit-learn's balanced accuracy of
such a model is exactly 0.5).
"""

from __future__ import annotations

import numpy as np
import pytest
from sklearn.dummy import DummyRegressor
from sklearn.linear_model import LogisticRegression, Ridge
from sklearn.model_selection import KFold
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

import foldwall


def _data(n=60, seed=0, weight=1.0):
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, 5))
    y = (weight * X[:, 0] + rng.normal(size=n) > 0).astype(int)
    return X, y


def test_identical_models_give_no_p_value_and_no_claim():
    X, y = _data()
    res = foldwall.wrap(
        LogisticRegression(),
        metric="accuracy",
        outer=3,
        inner=2,
        baselines={"same": LogisticRegression()},
    ).run(X, y)
    c = res.to_dict()["comparisons"][0]
    assert c["p_value"] is None and c["test"] is None and "p_adjusted" not in c
    assert c["reason"].startswith("cannot be assessed: every split shows the same")
    assert "makes no claim" in c["statement"] and "had higher" not in c["statement"]
    assert any("no p-value" in n for n in res.to_dict()["notes"])


def test_one_decision_test_and_conditional_checks_apart():
    X, y = _data(seed=1)
    res = foldwall.wrap(
        make_pipeline(StandardScaler(), LogisticRegression()),
        metric="roc_auc",
        outer=4,
        inner=2,
        baselines={"plain": LogisticRegression(C=0.01)},
        smallest_difference=0.05,
    ).run(X, y)
    c = res.to_dict()["comparisons"][0]
    assert c["test"].startswith("corrected resampled t-test")
    assert set(c["conditional_checks"]) >= {"note", "uncorrected_t", "sign_flip"}
    assert "uncorrected_t" not in c and "sign_flip" not in c
    assert c["detectable_difference"] > 0 and c["power"] == 0.8
    eq = c["equivalence"]
    assert eq["smallest_difference"] == 0.05 and "p_adjusted" in eq
    assert "ROC AUC" in c["statement"] and "roc_auc" not in c["statement"]
    if c["p_adjusted"] >= 0.05:
        assert "could not detect a difference" in c["statement"]


def test_regression_comparison_uses_the_words_of_the_loss():
    rng = np.random.default_rng(2)
    X = rng.normal(size=(60, 4))
    y = 3 * X[:, 0] + rng.normal(size=60)
    res = foldwall.wrap(
        Ridge(),
        metric="neg_mean_absolute_error",
        outer=3,
        inner=2,
        baselines={"mean": DummyRegressor()},
    ).run(X, y)
    statement = res.to_dict()["comparisons"][0]["statement"]
    assert statement.startswith("model had lower mean absolute error than mean by")
    assert "neg_mean_absolute_error" not in statement


def test_single_class_test_part_is_refused_before_any_fit():
    X, y = _data(n=40)
    y = np.sort(y)  # unshuffled KFold then puts one class in the first test part
    study = foldwall.wrap(
        LogisticRegression(), metric="roc_auc", outer=KFold(4), inner=2
    )
    with pytest.raises(foldwall.DataError) as info:
        study.plan(X, y)
    msg = str(info.value)
    assert "\n" not in msg
    assert msg.startswith(
        "outer: the test part of outer fold 0 has no row of class '1'"
    )
    assert "roc_auc cannot be computed there" in msg


def test_degenerate_chosen_model_is_flagged_in_every_fold():
    from sklearn.metrics import balanced_accuracy_score

    rng = np.random.default_rng(3)
    X = rng.normal(size=(60, 4))
    y = np.r_[np.zeros(40, int), np.ones(20, int)]
    res = foldwall.wrap(
        make_pipeline(StandardScaler(), LogisticRegression(C=1e-6)),
        metric=["roc_auc", "balanced_accuracy"],
        outer=3,
        inner=2,
    ).run(X, y)
    d = res.to_dict()
    assert [f["degenerate_prediction"] for f in d["folds"]] == ["single class"] * 3
    assert d["other_metrics"]["balanced_accuracy"]["per_fold"] == [0.5] * 3
    assert any(
        n.startswith("In 3 of 3 outer folds (outer fold 0, outer fold 1, outer fold 2)")
        for n in d["notes"]
    )
    rec = [r for r in res.records if r.candidate == "pipeline" and r.perm == 0]
    assert len(rec) == 3
    for r in rec:  # scikit-learn agrees: chance-level balanced accuracy
        assert balanced_accuracy_score(y[list(r.test_rows)], r.predicted) == 0.5
