"""The random-label control run end to end: the whole procedure per permutation."""

from __future__ import annotations

import numpy as np
import pytest
from sklearn.datasets import load_breast_cancer
from sklearn.feature_selection import SelectKBest, f_classif
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import StratifiedKFold, cross_val_score
from sklearn.neighbors import KNeighborsClassifier
from sklearn.pipeline import Pipeline
from sklearn.preprocessing import StandardScaler

import foldwall
from foldwall.controls import permutation_pvalue


def test_pvalue_matches_sklearn_permutation_test_score_with_the_same_permutations():
    # Reference library: scikit-learn's permutation_test_score scores a plain
    # estimator on permuted labels over fixed folds. We recompute its null scores
    # with the same permutations and our p-value rule must give its p-value
    # (Phipson & Smyth 2010: (b + 1) / (m + 1)).
    from sklearn.model_selection import permutation_test_score

    rng = np.random.default_rng(5)
    X = rng.normal(size=(40, 5))
    y = np.repeat([0, 1], 20)
    cv = StratifiedKFold(5)
    score, null, p = permutation_test_score(
        LogisticRegression(), X, y, cv=cv, n_permutations=49, random_state=0
    )
    assert permutation_pvalue(score, null) == pytest.approx(p, abs=1e-15)
    # the same null scores from the permutations it draws (sklearn shuffles with
    # check_random_state(0).permutation per replicate, documented behaviour)
    rs = np.random.RandomState(0)
    mine = [
        cross_val_score(
            LogisticRegression(), X, y[rs.permutation(len(y))], cv=cv
        ).mean()
        for _ in range(49)
    ]
    np.testing.assert_allclose(mine, null, atol=1e-12)


def test_noise_with_selection_inside_folds_is_not_significant():
    # ESL 2nd ed. sec. 7.10.2 scenario (pure-noise labels, selection inside the
    # folds), smaller p so it runs in CI: the observed score sits in the null.
    rng = np.random.default_rng(7)
    X = rng.normal(size=(50, 1000))
    y = rng.permutation(np.repeat([0, 1], 25))
    pipe = Pipeline(
        [("select", SelectKBest(f_classif, k=50)), ("model", KNeighborsClassifier(1))]
    )
    res = foldwall.wrap(
        pipe, metric="accuracy", outer=5, inner=3, n_permutations=39, random_state=1
    ).run(X, y)
    c = res.control
    assert c["permutations"] == 39 and len(c["null_scores"]) == 39
    assert c["p_value"] > 0.1  # fixed seed; "well above 0.05"
    assert min(c["null_scores"]) <= c["observed"] <= max(c["null_scores"])
    assert 0.35 < c["null_mean"] < 0.65


def test_strong_signal_reaches_the_floor():
    # scikit-learn's bundled breast-cancer data: a real, strong signal.
    X, y = load_breast_cancer(return_X_y=True)
    pipe = Pipeline(
        [("scale", StandardScaler()), ("model", LogisticRegression(max_iter=500))]
    )
    res = foldwall.wrap(
        pipe, metric="roc_auc", outer=3, inner=3, n_permutations=19, n_jobs=2
    ).run(X, y)
    assert res.control["p_value"] == pytest.approx(1 / 20)
    assert res.control["chance_level"] == 0.5


def test_type_one_error_of_the_control_on_null_data():
    # Over 40 null data sets with m = 19, the test rejects at alpha = 0.05 (only
    # p = 1/20 rejects) with probability at most 0.05 by the exactness argument
    # (Phipson & Smyth 2010). Binomial(40, 0.05): P(X >= 7) = 0.0086, so more than
    # 6 rejections would be evidence of a broken test. A larger run is in bench/.
    rejections = 0
    for k in range(40):
        rng = np.random.default_rng(1000 + k)
        X = rng.normal(size=(30, 4))
        y = rng.permutation(np.repeat([0, 1], 15))
        res = foldwall.wrap(
            LogisticRegression(),
            metric="accuracy",
            outer=3,
            inner=2,
            n_permutations=19,
            random_state=k,
        ).run(X, y)
        rejections += res.control["p_value"] <= 0.05
    assert rejections <= 6


@pytest.mark.filterwarnings(
    "ignore::foldwall.exceptions.ControlWarning"
)  # small m, for speed
def test_groups_are_permuted_whole_and_blocks_are_kept(monkeypatch):
    # issue 8: the labels of a permutation are made in one place, patched once
    from foldwall.runners import _control

    seen = []
    real = _control.permute_for

    def spy(plan, data, p, scheme):
        out = real(plan, data, p, scheme)
        seen.append((out, data.groups, data.extra.get("__blocks__")))
        return out

    monkeypatch.setattr(_control, "permute_for", spy)
    rng = np.random.default_rng(2)
    groups = np.repeat(np.arange(24), 3)
    y_group = rng.permutation(np.repeat([0, 1], 12))
    y = y_group[groups]
    site = np.where(groups < 12, "a", "b")
    X = rng.normal(size=(72, 5)) + y[:, None] * 0.3
    foldwall.wrap(LogisticRegression(), outer=3, inner=2, n_permutations=5).run(
        X, y, groups=groups, blocks=site
    )
    assert len(seen) == 5
    for yp, g, b in seen:
        for gid in np.unique(g):
            assert np.unique(yp[g == gid]).size == 1  # a group's labels never split
        for level in np.unique(b):
            assert sorted(yp[b == level]) == sorted(
                y[b == level]
            )  # nothing crosses a block


def test_label_not_constant_within_groups_is_a_clear_error():
    rng = np.random.default_rng(3)
    groups = np.repeat(np.arange(12), 2)
    y = np.tile([0, 1], 12)
    with pytest.raises(
        foldwall.DataError,
        match="varies within group .* set permutation_scheme to within-groups .* "
        "or whole-groups .* or set n_permutations to 0",
    ):
        foldwall.wrap(LogisticRegression(), outer=3, inner=2, n_permutations=3).run(
            rng.normal(size=(24, 3)), y, groups=groups
        )


@pytest.mark.filterwarnings(
    "ignore::foldwall.exceptions.ControlWarning"
)  # small m, for speed
def test_sharing_fits_never_changes_a_result():
    rng = np.random.default_rng(4)
    X = rng.normal(size=(60, 40))
    y = rng.permutation(np.repeat([0, 1], 30))
    pipe = Pipeline(
        [
            ("scale", StandardScaler()),
            ("select", SelectKBest()),
            ("model", LogisticRegression()),
        ]
    )
    kw = dict(
        space={"select__k": [3, 10, 20], "model__C": [0.1, 1.0]},
        metric="roc_auc",
        outer=3,
        inner=3,
        n_permutations=6,
        random_state=2,
    )
    a = foldwall.wrap(pipe, share_fits=True, **kw).run(X, y)
    b = foldwall.wrap(pipe, share_fits=False, **kw).run(X, y)
    assert a.to_dict()["score"] == b.to_dict()["score"]
    assert a.control["null_scores"] == b.control["null_scores"]
    assert a.audit["fits"] < b.audit["fits"]  # the sharing did happen


def test_early_stopping_on_null_data_stops_and_says_why():
    rng = np.random.default_rng(9)
    X = rng.normal(size=(40, 5))
    y = rng.permutation(np.repeat([0, 1], 20))
    res = foldwall.wrap(
        LogisticRegression(),
        outer=4,
        inner=2,
        n_permutations=500,
        stop_early=True,
        stop_after_exceedances=5,
        random_state=3,
    ).run(X, y)
    c = res.control
    assert c["stopped_early"] and c["permutations"] < 100
    assert "Besag & Clifford" in c["reason"]
    assert c["p_value"] == pytest.approx(
        5 / c["permutations"]
    )  # h / L, Besag & Clifford 1991


@pytest.mark.filterwarnings(
    "ignore::foldwall.exceptions.ControlWarning"
)  # small m, for speed
def test_global_scheme_resplits_and_keeps_the_label_multiset():
    rng = np.random.default_rng(1)
    X = rng.normal(size=(45, 4))
    y = rng.permutation(np.repeat([0, 1, 2], 15))
    res = foldwall.wrap(
        LogisticRegression(),
        outer=3,
        inner=2,
        n_permutations=4,
        permutation_scheme="global",
        random_state=5,
    ).run(X, y)
    assert res.control["scheme"] == "global" and res.control["permutations"] == 4
    assert res.control["chance_level"] == pytest.approx(1 / 3)
