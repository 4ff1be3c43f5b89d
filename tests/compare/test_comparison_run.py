"""Comparisons end to end: equal budgets, the corrected test's type I error, repeats."""

from __future__ import annotations

import numpy as np
import pytest
from sklearn.linear_model import LogisticRegression
from sklearn.neighbors import KNeighborsClassifier
from sklearn.pipeline import Pipeline
from sklearn.preprocessing import StandardScaler

import foldwall


def test_corrected_test_holds_its_level_where_the_uncorrected_one_does_not():
    # Two learners with the same true accuracy (0.5: the labels are pure noise),
    # compared over 10 x 5-fold cross-validation. The per-split differences are
    # correlated (overlapping training sets), so the plain paired t-test rejects far
    # too often; the corrected resampled t-test (Nadeau & Bengio 2003; Bouckaert &
    # Frank 2004) keeps near alpha. That is the known result behind the correction.
    # Bound: Binomial(30, 0.05) gives P(X >= 6) = 0.016, so at most 5 of 30
    # corrected rejections; more than 9 uncorrected ones has probability 0.0000x
    # under a valid test (scipy.stats.binom.sf(9, 30, 0.05) = 6e-5).
    corrected = uncorrected = 0
    n = 30
    for k in range(n):
        rng = np.random.default_rng(500 + k)
        X = rng.normal(size=(60, 5))
        y = rng.permutation(np.repeat([0, 1], 30))
        res = foldwall.wrap(
            LogisticRegression(),
            metric="accuracy",
            outer=5,
            repeats=10,
            inner=2,
            random_state=k,
            baselines={"knn": KNeighborsClassifier(5)},
        ).run(X, y)
        c = res.to_dict()["comparisons"][0]
        corrected += c["p_value"] < 0.05
        uncorrected += c["conditional_checks"]["uncorrected_t"]["p_value"] < 0.05
    assert corrected <= 5
    assert uncorrected >= 10


def test_baselines_get_the_same_budget_and_the_same_splits():
    rng = np.random.default_rng(0)
    X = rng.normal(size=(60, 6))
    y = (X[:, 0] + rng.normal(size=60) > 0).astype(int)
    pipe = Pipeline([("scale", StandardScaler()), ("model", LogisticRegression())])
    res = foldwall.wrap(
        pipe,
        space={"model__C": [0.01, 0.1, 1.0]},
        metric="roc_auc",
        outer=3,
        inner=3,
        baselines={"knn": (KNeighborsClassifier(), {"n_neighbors": [3, 5, 9]})},
    ).run(X, y)
    d = res.to_dict()
    assert d["budget"]["equal"] and d["budget"]["settings_per_search"] == {
        "pipeline": 3,
        "knn": 3,
    }
    trials = res.trials_frame()
    per = trials.groupby(["candidate", "repeat", "fold"]).size()
    assert (per == 3).all() and set(trials["candidate"]) == {"pipeline", "knn"}
    # the same inner splits: each trial of both is scored on the same inner test parts
    split_cols = [c for c in trials.columns if c.startswith("inner_split_")]
    assert len(split_cols) == 3
    assert trials[split_cols].notna().all().all()
    units = res.units_frame()
    for _, g in units.groupby(["repeat", "fold"]):
        assert (
            g["n_train"].nunique() == 1 and g["n_test"].nunique() == 1
        )  # same outer splits


def test_unequal_budgets_are_warned_about():
    rng = np.random.default_rng(1)
    X = rng.normal(size=(45, 4))
    y = rng.permutation(np.repeat([0, 1], 22).tolist() + [1])
    study = foldwall.wrap(
        LogisticRegression(),
        space={"C": [0.01, 0.1, 1.0]},
        outer=3,
        inner=2,
        baselines={"knn": KNeighborsClassifier(3)},
    )
    with pytest.warns(foldwall.BudgetWarning, match="same budget"):
        res = study.run(X, y)
    assert res.to_dict()["budget"]["equal"] is False


def test_every_pair_is_adjusted_together_and_reported():
    rng = np.random.default_rng(2)
    X = rng.normal(size=(60, 5))
    y = (X[:, 0] > 0).astype(int)
    res = foldwall.wrap(
        LogisticRegression(),
        space={"C": [0.1, 1.0]},
        metric="accuracy",
        outer=4,
        inner=2,
        candidates={"knn": (KNeighborsClassifier(), {"n_neighbors": [3, 7]})},
        baselines={"knn15": (KNeighborsClassifier(), {"n_neighbors": [9, 15]})},
        between_candidates=True,
        correction="bonferroni",
    ).run(X, y)
    cmp = res.comparisons
    assert set(zip(cmp["a"], cmp["b"], strict=True)) == {
        ("model", "knn15"),
        ("knn", "knn15"),
        ("model", "knn"),
    }
    assert (cmp["family_size"] == 3).all() and (cmp["correction"] == "bonferroni").all()
    # Bonferroni: adjusted = min(1, 3 p) (Bonferroni's rule, as in statsmodels' multipletests)
    np.testing.assert_allclose(cmp["p_adjusted"], np.minimum(1, 3 * cmp["p_value"]))
    assert cmp["statement"].str.len().gt(20).all()


def test_five_by_two_tests_appear_with_five_repeats_of_two_folds():
    rng = np.random.default_rng(3)
    X = rng.normal(size=(50, 4))
    y = (X[:, 0] + rng.normal(size=50) > 0).astype(int)
    res = foldwall.wrap(
        LogisticRegression(),
        outer=2,
        repeats=5,
        inner=2,
        metric="accuracy",
        baselines={"knn": KNeighborsClassifier(5)},
    ).run(X, y)
    c = res.to_dict()["comparisons"][0]["conditional_checks"]
    assert c["five_by_two_t"]["df"] == 5 and c["five_by_two_f"]["df"] == [10, 5]
    assert "not a test of the learning procedures" in c["note"]
    s = res.to_dict()["score"]
    assert (
        set(s["per_repeat"]) == {"0", "1", "2", "3", "4"}
        and len(s["repeat_seeds"]) == 5
    )
    means = [np.mean(s["per_fold"][2 * r : 2 * r + 2]) for r in range(5)]
    np.testing.assert_allclose(
        [s["per_repeat"][str(r)]["mean"] for r in range(5)], means
    )


def test_roc_auc_comparison_carries_delong_on_pooled_predictions():
    # DeLong et al. (1988) on the pooled out-of-fold decision values; the AUC of
    # the pooled values must equal scikit-learn's roc_auc_score on them.
    from sklearn.metrics import roc_auc_score

    rng = np.random.default_rng(4)
    X = rng.normal(size=(80, 5))
    y = (X[:, 0] + rng.normal(size=80) > 0).astype(int)
    res = foldwall.wrap(
        LogisticRegression(),
        metric="roc_auc",
        outer=4,
        inner=2,
        baselines={"knn": KNeighborsClassifier(7)},
    ).run(X, y)
    dl = res.to_dict()["comparisons"][0]["conditional_checks"]["delong_pooled"]
    rec = [r for r in res.records if r.candidate == "model"]
    rows = np.concatenate([r.test_rows for r in rec])
    dec = np.concatenate([r.decision for r in rec])
    order = np.argsort(rows)
    assert dl["auc_a"] == pytest.approx(roc_auc_score(y[rows[order]], dec[order]))
    assert 0 <= dl["p_value"] <= 1
