"""The worked example of The Elements of Statistical Learning, 2nd ed., sec. 7.10.2.

Set-up (REFERENCES.md section 1, source read in a transcription of the section):
N = 50 (25/25), p = 5000 standard Gaussian predictors unrelated to the labels,
screen the 100 predictors most correlated with the label, then 1-nearest-neighbour.
Screening on all rows first gives a cross-validated error near 0 (book: 3% over 50
simulations); redone inside every fold the error is near the true 50%.
Assertion thresholds are the ones suggested in REFERENCES.md for 20 replicates.
"""

from __future__ import annotations

import numpy as np
from sklearn.feature_selection import SelectKBest, f_classif
from sklearn.model_selection import StratifiedKFold
from sklearn.neighbors import KNeighborsClassifier
from sklearn.pipeline import Pipeline

import foldwall


def _one(rng):
    X = rng.normal(size=(50, 5000))
    y = np.array([0] * 25 + [1] * 25)
    rng.shuffle(y)
    return X, y


def test_selection_inside_folds_gives_chance_error_outside_gives_near_zero():
    rng = np.random.default_rng(20240601)
    right, wrong = [], []
    for _ in range(20):
        X, y = _one(rng)
        cv = StratifiedKFold(5, shuffle=True, random_state=0)
        sealed = Pipeline(
            [
                ("select", SelectKBest(f_classif, k=100)),
                ("model", KNeighborsClassifier(1)),
            ]
        )
        r = foldwall.wrap(sealed, metric="accuracy", outer=cv, inner=3).run(X, y)
        right.append(1 - r.score)
        # The wrong way: screening on all 50 rows before the folds.
        keep = SelectKBest(f_classif, k=100).fit(X, y).get_support()
        w = foldwall.wrap(
            KNeighborsClassifier(1), metric="accuracy", outer=cv, inner=3
        ).run(X[:, keep], y)
        wrong.append(1 - w.score)
    assert np.mean(wrong) < 0.10
    assert 0.40 <= np.mean(right) <= 0.60
