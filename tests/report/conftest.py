"""Small real runs (scikit-learn data sets) shared by the report tests: each is run once."""

from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd
import pytest


@dataclass
class Run:
    results: dict[str, Any]
    plan: dict[str, Any]
    predictions: pd.DataFrame
    y: np.ndarray


def _run(study: Any, X: Any, y: Any) -> Run:
    import warnings

    from foldwall.exceptions import ControlWarning

    with warnings.catch_warnings():
        # 4 permutations keep the shared run fast; the warning that they cannot reach
        # alpha = 0.05 (issue 10) is expected here
        warnings.simplefilter("ignore", ControlWarning)
        res = study.run(X, y)
    results = json.loads(res.to_json())
    plan = json.loads(json.dumps(res.plan_dict, default=str))
    assert res.predictions is not None
    return Run(results, plan, res.predictions, np.asarray(y))


@pytest.fixture(scope="session")
def classification_run() -> Run:
    """Breast cancer (90 rows): selection pipeline, a baseline, the control, marked clinical."""
    from sklearn.datasets import load_breast_cancer
    from sklearn.feature_selection import SelectKBest
    from sklearn.linear_model import LogisticRegression
    from sklearn.pipeline import make_pipeline
    from sklearn.preprocessing import StandardScaler

    import foldwall

    X, y = load_breast_cancer(return_X_y=True)
    rows = np.random.default_rng(0).choice(len(y), 90, replace=False)
    pipe = make_pipeline(
        StandardScaler(), SelectKBest(), LogisticRegression(max_iter=500)
    )
    base = make_pipeline(StandardScaler(), LogisticRegression(max_iter=500))
    study = foldwall.wrap(
        pipe,
        space={"selectkbest__k": [2, 8], "logisticregression__C": [0.1, 1.0]},
        metric=["roc_auc", "accuracy"],
        outer=3,
        inner=2,
        random_state=1,
        n_jobs=1,
        n_permutations=4,
        clinical=True,
        baselines={"plain": (base, {"logisticregression__C": [0.01, 0.1, 1.0, 10.0]})},
    )
    return _run(study, X[rows], y[rows])


@pytest.fixture(scope="session")
def regression_run() -> Run:
    """Diabetes (60 rows), ridge over two settings, two repeats, no control."""
    from sklearn.datasets import load_diabetes
    from sklearn.linear_model import Ridge

    import foldwall

    X, y = load_diabetes(return_X_y=True)
    study = foldwall.wrap(
        Ridge(),
        space={"alpha": [0.1, 10.0]},
        metric=["neg_mean_absolute_error", "r2"],
        outer=3,
        inner=2,
        repeats=2,
        random_state=2,
        n_jobs=1,
    )
    return _run(study, X[:60], y[:60])


@pytest.fixture(scope="session")
def text_label_run() -> Run:
    """Text labels with the first class in sorted order as the positive class."""
    from sklearn.datasets import make_classification
    from sklearn.linear_model import LogisticRegression

    import foldwall

    X, y01 = make_classification(
        n_samples=60, n_features=5, weights=[0.3], random_state=4
    )
    y = np.where(y01 == 1, "no", "yes")
    study = foldwall.wrap(
        LogisticRegression(),
        space={"C": [0.1, 1.0]},
        metric=["average_precision", "roc_auc"],
        outer=3,
        inner=2,
        random_state=3,
        n_jobs=1,
        positive_class="no",
    )
    return _run(study, X, y)
