"""Nested scores against scikit-learn as a reference library.

Reference: a hand-written ``cross_validate(GridSearchCV(pipeline, grid, cv=inner),
X, y, cv=outer)`` with the same splitter objects (scikit-learn 1.x). foldwall's
engine shares equal steps between settings, so this also proves the sharing
never changes a score.
"""

from __future__ import annotations

import numpy as np
import pytest
from sklearn.datasets import load_breast_cancer, make_classification, make_regression
from sklearn.feature_selection import SelectKBest
from sklearn.linear_model import LogisticRegression, Ridge
from sklearn.model_selection import GridSearchCV, KFold, StratifiedKFold, cross_validate
from sklearn.pipeline import Pipeline
from sklearn.preprocessing import StandardScaler

import foldwall


def _pipe():
    return Pipeline(
        [
            ("scale", StandardScaler()),
            ("select", SelectKBest()),
            ("model", LogisticRegression(max_iter=2000)),
        ]
    )


@pytest.mark.parametrize("metric", ["roc_auc", "accuracy"])
@pytest.mark.parametrize("n_jobs", [1, 2])
def test_outer_scores_equal_sklearn_nested_grid_search(metric, n_jobs):
    X, y = make_classification(
        n_samples=90, n_features=40, n_informative=6, random_state=0
    )
    grid = {"select__k": [5, 15], "model__C": [0.01, 0.1, 1.0]}
    outer = StratifiedKFold(4, shuffle=True, random_state=1)
    inner = StratifiedKFold(3, shuffle=True, random_state=2)
    res = foldwall.wrap(
        _pipe(), space=grid, metric=metric, outer=outer, inner=inner, n_jobs=n_jobs
    ).run(X, y)
    # Reference library: scikit-learn's own nested loop.
    ref = cross_validate(
        GridSearchCV(_pipe(), grid, cv=inner, scoring=metric),
        X,
        y,
        cv=outer,
        scoring=metric,
        return_estimator=True,
    )
    np.testing.assert_allclose(res.fold_scores, ref["test_score"], rtol=0, atol=1e-12)
    chosen = [f["settings"] for f in res.to_dict()["folds"]]
    assert chosen == [est.best_params_ for est in ref["estimator"]]
    inner_best = [f["inner_score"] for f in res.to_dict()["folds"]]
    np.testing.assert_allclose(
        inner_best, [est.best_score_ for est in ref["estimator"]], rtol=0, atol=1e-12
    )


def test_regression_scores_equal_sklearn():
    X, y = make_regression(n_samples=80, n_features=12, noise=5.0, random_state=0)
    pipe = Pipeline([("scale", StandardScaler()), ("model", Ridge())])
    grid = {"model__alpha": [0.1, 1.0, 10.0]}
    outer, inner = (
        KFold(4, shuffle=True, random_state=3),
        KFold(3, shuffle=True, random_state=4),
    )
    res = foldwall.wrap(pipe, space=grid, metric="r2", outer=outer, inner=inner).run(
        X, y
    )
    ref = cross_validate(
        GridSearchCV(pipe, grid, cv=inner, scoring="r2"), X, y, cv=outer, scoring="r2"
    )
    np.testing.assert_allclose(res.fold_scores, ref["test_score"], rtol=0, atol=1e-12)


def test_breast_cancer_estimate_is_plausible_and_deterministic():
    # scikit-learn's bundled breast-cancer table; a scaled logistic regression is
    # known to reach ROC AUC near 0.99 on it (common practice, not a published value).
    X, y = load_breast_cancer(return_X_y=True)
    pipe = Pipeline(
        [("scale", StandardScaler()), ("model", LogisticRegression(max_iter=2000))]
    )
    study = foldwall.wrap(
        pipe,
        space={"model__C": [0.01, 0.1, 1.0]},
        metric="roc_auc",
        outer=3,
        inner=3,
        random_state=5,
    )
    a = study.run(X, y)
    b = study.run(X, y)
    assert 0.95 < a.score <= 1.0
    assert a.to_json() == b.to_json()
    assert a.audit["test_rows_seen"] == 0
    assert a.audit["fits"] > 0


@pytest.mark.filterwarnings(
    "ignore::foldwall.exceptions.ControlWarning"
)  # small m, for speed
def test_results_do_not_depend_on_workers():
    X, y = make_classification(n_samples=70, n_features=20, random_state=2)
    kw = dict(
        space={"select__k": [3, 8], "model__C": [0.1, 1.0]},
        metric="roc_auc",
        outer=3,
        inner=3,
        random_state=9,
        n_permutations=3,
    )
    one = foldwall.wrap(_pipe(), n_jobs=1, **kw).run(X, y)
    two = foldwall.wrap(_pipe(), n_jobs=2, **kw).run(X, y)
    assert one.to_json() == two.to_json()


def test_optuna_search_is_seeded_and_uses_the_budget():
    from optuna.distributions import FloatDistribution

    X, y = make_classification(n_samples=60, n_features=10, random_state=4)
    pipe = Pipeline(
        [("scale", StandardScaler()), ("model", LogisticRegression(max_iter=2000))]
    )
    study = foldwall.wrap(
        pipe,
        space={"model__C": FloatDistribution(1e-3, 1e2, log=True)},
        trials=5,
        metric="roc_auc",
        outer=3,
        inner=3,
        random_state=1,
    )
    a, b = study.run(X, y), study.run(X, y)
    assert a.to_json() == b.to_json()
    trials = a.trials_frame()
    assert (trials.groupby(["repeat", "fold", "candidate"]).size() == 5).all()


def test_different_seed_gives_different_splits():
    X, y = make_classification(n_samples=60, n_features=10, random_state=4)
    pipe = Pipeline([("model", LogisticRegression())])
    a = foldwall.wrap(pipe, outer=3, inner=3, random_state=1).run(X, y)
    b = foldwall.wrap(pipe, outer=3, inner=3, random_state=2).run(X, y)
    assert a.plan_dict["digest"] != b.plan_dict["digest"]


def test_selected_features_per_fold_match_a_selector_fitted_on_that_fold():
    # Reference library: SelectKBest fitted by hand on each outer-training part.
    X, y = make_classification(
        n_samples=80, n_features=12, n_informative=3, random_state=6
    )
    pipe = Pipeline(
        [
            ("scale", StandardScaler()),
            ("select", SelectKBest(k=3)),
            ("model", LogisticRegression()),
        ]
    )
    res = foldwall.wrap(pipe, outer=4, inner=2, random_state=2).run(X, y)
    for fold, f in zip(res.plan_dict["folds"], res.to_dict()["folds"], strict=True):
        tr = np.array(fold["train"])
        keep = (
            SelectKBest(k=3)
            .fit(StandardScaler().fit_transform(X[tr]), y[tr])
            .get_support(indices=True)
        )
        assert f["selected_features"] == [f"x{i}" for i in keep]
    assert sum(res.to_dict()["feature_selection"]["times_selected"].values()) == 4 * 3


def test_positive_class_for_text_labels_matches_sklearn_pos_label():
    # Reference library: scikit-learn's f1_score with pos_label, through the same
    # splits (text labels sort like 0/1 here, so the stratified folds are equal).
    X, y01 = make_classification(
        n_samples=90, n_features=8, weights=[0.7], random_state=8
    )
    y_text = np.where(y01 == 1, "ill", "healthy")
    pipe = Pipeline([("scale", StandardScaler()), ("model", LogisticRegression())])
    kw = dict(metric=["f1", "roc_auc"], outer=3, inner=2, random_state=1)
    with pytest.raises(
        foldwall.SpecError, match="positive_class: the metric 'f1' counts one class"
    ):
        foldwall.wrap(pipe, **kw).run(X, y_text)
    a = foldwall.wrap(pipe, positive_class="ill", **kw).run(X, y_text)
    b = foldwall.wrap(pipe, **kw).run(X, y01)
    np.testing.assert_allclose(a.fold_scores, b.fold_scores, atol=1e-12)
    assert a.to_dict()["data"]["positive_class"] == "ill"
    with pytest.raises(foldwall.SpecError, match="not a class of the target"):
        foldwall.wrap(pipe, positive_class="sick", **kw).run(X, y_text)


def test_dataframe_with_text_columns_and_series_target():
    # A mixed table through a ColumnTransformer, against scikit-learn's own nested loop.
    import pandas as pd
    from sklearn.compose import ColumnTransformer
    from sklearn.preprocessing import OneHotEncoder

    rng = np.random.default_rng(9)
    df = pd.DataFrame(
        {
            "dose": rng.normal(size=80),
            "site": rng.choice(["a", "b", "c"], size=80),
            "age": rng.normal(50, 10, size=80),
        }
    )
    y = pd.Series(
        (df["dose"] + (df["site"] == "b") + rng.normal(size=80) > 0.5).astype(int),
        name="outcome",
    )
    pre = ColumnTransformer(
        [
            ("num", StandardScaler(), ["dose", "age"]),
            ("cat", OneHotEncoder(handle_unknown="ignore"), ["site"]),
        ]
    )
    pipe = Pipeline([("prep", pre), ("model", LogisticRegression())])
    outer, inner = (
        StratifiedKFold(4, shuffle=True, random_state=0),
        StratifiedKFold(3, shuffle=True, random_state=1),
    )
    grid = {"model__C": [0.1, 1.0]}
    res = foldwall.wrap(
        pipe, space=grid, metric="roc_auc", outer=outer, inner=inner
    ).run(df, y)
    ref = cross_validate(
        GridSearchCV(pipe, grid, cv=inner, scoring="roc_auc"),
        df,
        y,
        cv=outer,
        scoring="roc_auc",
    )
    np.testing.assert_allclose(res.fold_scores, ref["test_score"], rtol=0, atol=1e-12)
    assert res.to_dict()["data"]["target"] == "outcome"
    assert res.audit["test_rows_seen"] == 0


def test_a_budget_of_one_trial_still_samples_the_space():
    from optuna.distributions import FloatDistribution

    X, y = make_classification(n_samples=40, n_features=5, random_state=1)
    res = foldwall.wrap(
        LogisticRegression(),
        space={"C": FloatDistribution(1e-3, 1e-2, log=True)},
        trials=1,
        outer=2,
        inner=2,
    ).run(X, y)
    for f in res.to_dict()["folds"]:
        assert 1e-3 <= f["settings"]["model__C"] <= 1e-2
