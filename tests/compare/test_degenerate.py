"""Degenerate test parts and degenerate chosen models (issue 10).

Outside references: scikit-learn itself. A test part is flagged as single-class
exactly when ``sklearn.metrics.roc_auc_score`` cannot score it, and a chosen model
is flagged as predicting a single class exactly when scikit-learn's balanced
accuracy of its predictions is 1/k for every possible truth (here: 0.5), the
symptom of the demo recipe described in the issue.
"""

from __future__ import annotations

import warnings

import numpy as np
import pytest
from sklearn.datasets import load_breast_cancer
from sklearn.dummy import DummyRegressor
from sklearn.linear_model import LogisticRegression, Ridge
from sklearn.metrics import balanced_accuracy_score, roc_auc_score
from sklearn.model_selection import KFold, StratifiedKFold
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

from foldwall.compare import (
    classes_missing_from_test_parts,
    degenerate_folds_note,
    prediction_flag,
)
from foldwall.exceptions import SpecError


def _auc_defined(y, scores):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            return bool(np.isfinite(roc_auc_score(y, scores)))
        except ValueError:
            return False


def test_single_class_test_parts_are_exactly_those_roc_auc_cannot_score():
    # Runs of labels and unshuffled KFold: the first and last test parts hold one class.
    y = np.repeat([0, 1, 0, 1], [6, 4, 4, 6])
    parts = [test for _, test in KFold(4).split(np.zeros((20, 1)))]
    flagged = classes_missing_from_test_parts(y, parts)
    assert flagged == [(0, [1]), (3, [0])]
    scores = np.linspace(0, 1, 20)
    for i, part in enumerate(parts):
        assert (i in dict(flagged)) == (not _auc_defined(y[part], scores[part]))


def test_stratified_parts_are_never_flagged():
    X, y = load_breast_cancer(return_X_y=True)
    parts = [
        test for _, test in StratifiedKFold(5, shuffle=True, random_state=0).split(X, y)
    ]
    assert classes_missing_from_test_parts(y, parts) == []


def test_heavily_regularised_model_is_flagged_and_has_chance_balanced_accuracy():
    X, y = load_breast_cancer(return_X_y=True)
    train, test = next(StratifiedKFold(5, shuffle=True, random_state=0).split(X, y))
    tiny_c = make_pipeline(StandardScaler(), LogisticRegression(C=1e-6))
    tiny_c = tiny_c.fit(X[train], y[train]).predict(X[test])
    assert prediction_flag(tiny_c, task="classification") == "single class"
    assert (
        balanced_accuracy_score(y[test], tiny_c) == 0.5
    )  # scikit-learn: chance exactly
    fitted = (
        make_pipeline(StandardScaler(), LogisticRegression())
        .fit(X[train], y[train])
        .predict(X[test])
    )
    assert prediction_flag(fitted, task="classification") is None


def test_constant_regression_prediction_is_flagged():
    rng = np.random.default_rng(0)
    X, y = rng.normal(size=(40, 3)), rng.normal(size=40)
    assert (
        prediction_flag(DummyRegressor().fit(X, y).predict(X), task="regression")
        == "constant"
    )
    assert prediction_flag(Ridge().fit(X, y).predict(X), task="regression") is None


def test_short_test_parts_are_not_flagged():
    assert prediction_flag([1], task="classification") is None


def test_note_counts_and_names_the_flagged_folds():
    flags = ["single class", "single class", None, "single class", "single class"]
    names = [f"fold {i}" for i in range(5)]
    note = degenerate_folds_note(flags, names)
    assert note.startswith(
        "In 4 of 5 outer folds (fold 0, fold 1, fold 3, fold 4) the chosen "
        "model predicted a single class"
    )
    assert degenerate_folds_note([None] * 5, names) is None
    many = degenerate_folds_note(
        ["constant"] * 7, [f"f{i}" for i in range(7)], task="regression"
    )
    assert "(f0, f1, f2, f3, f4 and 2 more)" in many and "constant value" in many


@pytest.mark.parametrize(
    ("call", "match"),
    [
        (lambda: prediction_flag([0, 1], task="survival"), "task must be"),
        (lambda: prediction_flag([[0, 1]], task="classification"), "must be 1-d"),
        (lambda: degenerate_folds_note([None], ["a", "b"]), "1 flags for 2 folds"),
        (lambda: classes_missing_from_test_parts([0, 1], [[0, 5]]), "outside 0..1"),
    ],
)
def test_bad_input_is_refused(call, match):
    with pytest.raises(SpecError, match=match):
        call()
