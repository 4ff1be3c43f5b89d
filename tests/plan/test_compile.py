"""Plan compilation and splitting rules, on small arrays (no fitting)."""

from __future__ import annotations

import json

import numpy as np
import pytest
from sklearn.dummy import DummyClassifier
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import StratifiedKFold
from sklearn.preprocessing import StandardScaler

from foldwall._candidate import candidate_from_estimator
from foldwall.exceptions import DataError
from foldwall.plan import SplitRule, compile_plan, derive_seed, make_folds
from foldwall.records import UnitKey


def _y(n: int = 40) -> np.ndarray:
    return np.repeat([0, 1], n // 2)


def test_derive_seed_is_numpys_seed_sequence():
    # Source: numpy.random.SeedSequence (the documented derivation of unit seeds).
    got = derive_seed(7, "outer", 2)
    ss = np.random.SeedSequence(7, spawn_key=(__import__("zlib").crc32(b"outer"), 2))
    assert got == int(ss.generate_state(1, dtype=np.uint32)[0])
    assert derive_seed(7, "outer", 2) == got
    assert derive_seed(7, "outer", 3) != got


def test_stratified_outer_folds_equal_scikit_learns():
    # Source: scikit-learn StratifiedKFold with the same seed (foldwall owns splitting
    # but must give the folds a reader would compute).
    y = np.array([0] * 23 + [1] * 17)
    rule = SplitRule(5, shuffle=True, stratify=True)
    seed = derive_seed(3, "outer", 0)
    ours = rule.split(np.arange(40), y, None, seed=seed)
    ref = list(
        StratifiedKFold(5, shuffle=True, random_state=seed).split(np.zeros((40, 1)), y)
    )
    for (tr, te), (rtr, rte) in zip(ours, ref, strict=True):
        assert np.array_equal(tr, np.sort(rtr)) and np.array_equal(te, np.sort(rte))


def test_folds_partition_rows_and_inner_splits_partition_the_outer_training_part():
    y = _y(40)
    outer, inner = (
        SplitRule(4, stratify=True),
        SplitRule(3, stratify=True, label="inner"),
    )
    folds = make_folds(y, None, outer, inner, seed=1, repeats=2, check=True)
    assert len(folds) == 8
    for r in range(2):
        tests = np.concatenate([f.test for f in folds if f.repeat == r])
        assert sorted(tests) == list(range(40))
    for f in folds:
        assert not set(f.train) & set(f.test)
        inner_tests = np.concatenate([te for _, te in f.inner])
        assert sorted(inner_tests) == sorted(f.train)
    # repeats shuffle anew
    assert not all(
        np.array_equal(a.test, b.test)
        for a, b in zip(folds[:4], folds[4:], strict=True)
    )


def test_fixed_partition_keeps_the_first_repeat():
    y = _y(40)
    outer, inner = (
        SplitRule(4, stratify=True),
        SplitRule(2, stratify=True, label="inner"),
    )
    folds = make_folds(y, None, outer, inner, seed=1, repeats=1)
    y2 = np.random.default_rng(0).permutation(y)
    again = make_folds(y2, None, outer, inner, seed=1, repeats=1, fixed=folds)
    for a, b in zip(folds, again, strict=True):
        assert np.array_equal(a.test, b.test)


def test_groups_never_straddle_and_too_few_groups_is_one_line():
    rng = np.random.default_rng(0)
    groups = np.repeat(np.arange(10), 4).astype(str)
    y = np.repeat(rng.integers(0, 2, 10), 4)
    outer = SplitRule(5, grouped=True)
    inner = SplitRule(2, grouped=True, label="inner")
    for f in make_folds(y, groups, outer, inner, seed=2, repeats=1, check=True):
        assert not set(groups[f.train]) & set(groups[f.test])
        for tr, te in f.inner:
            assert not set(groups[tr]) & set(groups[te])
    with pytest.raises(
        DataError, match="outer.folds asks for 11 folds.*only 10 groups"
    ):
        make_folds(
            y, groups, SplitRule(11, grouped=True), inner, seed=2, repeats=1, check=True
        )


def _plan(method: str = "grid", trials: int | None = None, permutations: int = 0):
    from sklearn.pipeline import make_pipeline

    pipe = make_pipeline(StandardScaler(), LogisticRegression())
    cands = [
        candidate_from_estimator(
            "a", pipe, {"logisticregression__C": [0.1, 1.0, 10.0]}
        ),
        candidate_from_estimator("b", LogisticRegression(), None, role="baseline"),
        candidate_from_estimator("chance", DummyClassifier(), None, role="reference"),
    ]
    return compile_plan(
        y=_y(40),
        groups=None,
        task="classification",
        candidates=cands,
        outer=SplitRule(4, stratify=True),
        inner=SplitRule(3, stratify=True, label="inner"),
        repeats=1,
        seed=0,
        metrics=["roc_auc"],
        search_method=method,
        trials=trials,
        permutations=permutations,
    )


def test_one_scheduling_rule_for_settings_tasks_and_fits():
    plan = _plan(permutations=5)
    # candidate a: a grid of 3 on 3 inner splits, then one refit
    assert plan.settings_of(0) == [
        {"logisticregression__C": c} for c in (0.1, 1.0, 10.0)
    ]
    assert (
        plan.needs_search(0)
        and plan.tasks_of(0) == 3 + 1
        and plan.fits_of(0) == 3 * 3 + 1
    )
    # a baseline with nothing to tune and the reference: one refit each, no search
    for ci in (1, 2):
        assert (
            not plan.needs_search(ci)
            and plan.tasks_of(ci) == 1
            and plan.fits_of(ci) == 1
        )
    assert plan.settings_of(2) == [{}]
    units = [UnitKey(0, f.repeat, f.fold, ci) for f in plan.folds for ci in range(3)]
    assert plan.n_tasks(units) == 4 * (4 + 1 + 1)
    fits = plan.model_fits()
    assert fits["real"] == 4 * (10 + 1 + 1)
    assert (
        fits["permutations"] == 5 * 4 * 10
    )  # candidates only are re-run on permuted labels


def test_a_sampled_search_is_one_task_of_trials_fits():
    plan = _plan(method="tpe", trials=6)
    assert plan.method_of(0) == "tpe" and plan.settings_count(0) == 6
    assert plan.tasks_of(0) == 2 and plan.fits_of(0) == 6 * 3 + 1
    assert plan.method_of(1) == "grid"  # nothing to tune: one setting, no sampler


def test_plan_dict_is_json_and_its_digest_depends_on_the_folds():
    a, b = _plan(), _plan()
    assert json.loads(json.dumps(a.to_dict())) == a.to_dict()
    assert a.digest() == b.digest()
    c = compile_plan(
        y=_y(40),
        groups=None,
        task="classification",
        candidates=a.candidates,
        outer=SplitRule(4, stratify=True),
        inner=SplitRule(3, stratify=True, label="inner"),
        repeats=1,
        seed=1,
        metrics=["roc_auc"],
        search_method="grid",
        trials=None,
    )
    assert c.digest() != a.digest()
