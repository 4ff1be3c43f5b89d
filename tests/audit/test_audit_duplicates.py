"""Exact and near duplicates across outer splits; merging them into groups."""

from __future__ import annotations

import numpy as np
import pandas as pd
from sklearn.model_selection import GroupKFold, KFold

from foldwall.audit import duplicate_checks, find_duplicates, merge_duplicates


def _table(seed=0, n=200, p=12):
    rng = np.random.default_rng(seed)
    X = pd.DataFrame(rng.normal(size=(n, p)), columns=[f"f{j}" for j in range(p)])
    ids = np.array([f"case{i:03d}" for i in range(n)])
    return X, ids, rng


def _fold_of(splits, n):
    fold = np.empty(n, dtype=int)
    for k, (_, te) in enumerate(splits):
        fold[te] = k
    return fold


def test_planted_exact_and_near_duplicates_are_found_with_ids_and_folds():
    X, ids, rng = _table()
    X.iloc[150] = X.iloc[10].to_numpy()  # exact copy
    X.iloc[160] = X.iloc[20].to_numpy() + 0.01 * rng.normal(size=X.shape[1])  # near
    splits = list(KFold(5, shuffle=True, random_state=1).split(X))
    fold = _fold_of(splits, len(X))
    assert fold[10] != fold[150] and fold[20] != fold[160]  # the copies straddle

    exact, near = duplicate_checks(X, splits=splits, ids=ids)

    assert exact.severity == "problem"
    assert exact.evidence["straddling_sets"] == 1
    (s,) = exact.evidence["straddling"]
    assert s["ids"] == ["case010", "case150"]
    # the set straddles every split in which one copy is tested: those two folds
    assert sorted(s["folds"]) == sorted({int(fold[10]), int(fold[150])})
    assert exact.evidence["test_rows_with_training_copy"] == 2

    assert near.severity == "warning"
    assert near.evidence["straddling"][0]["ids"] == ["case020", "case160"]
    assert near.evidence["pairs"] == 1


def test_copies_on_one_side_are_only_reported():
    X, _, _ = _table(1)
    X.iloc[5] = X.iloc[4].to_numpy()
    splits = list(
        GroupKFold(5).split(X, groups=np.r_[[0, 0, 0, 0, 0, 0], np.arange(6, 200)])
    )
    exact, _ = duplicate_checks(X, splits=splits)
    assert exact.severity == "info"
    assert exact.evidence["rows_with_copies"] == 2


def test_without_splits_duplicates_get_a_warning():
    X, _, _ = _table(2)
    X.iloc[7] = X.iloc[3].to_numpy()
    exact, near = duplicate_checks(X)
    assert exact.severity == "warning"
    assert near.severity == "info"


def test_exact_copies_with_different_outcomes_are_counted():
    X, _, _ = _table(3)
    X.iloc[9] = X.iloc[8].to_numpy()
    y = np.zeros(len(X), dtype=int)
    y[9] = 1
    exact, _ = duplicate_checks(X, y=y)
    assert exact.evidence["sets_with_different_outcomes"] == 1


def test_text_columns_and_missing_values_count_in_exact_duplicates():
    X = pd.DataFrame(
        {"a": [1.0, np.nan, 1.0, np.nan, 2.0], "site": ["x", "y", "x", "y", "x"]}
    )
    d = find_duplicates(X)
    assert [s.tolist() for s in d.exact] == [[0, 2], [1, 3]]


def test_merged_groups_never_straddle_a_group_split():
    X, _, rng = _table(4)
    X.iloc[150] = X.iloc[10].to_numpy()
    X.iloc[160] = X.iloc[20].to_numpy() + 0.01 * rng.normal(size=X.shape[1])
    groups = np.repeat(np.arange(100), 2)  # existing pairs of rows
    merged = merge_duplicates(len(X), find_duplicates(X), groups=groups)
    # rows 10, 11 (group 5) and 150, 151 (group 75) became one group
    assert merged[10] == merged[11] == merged[150] == merged[151] == "5+75"
    for tr, te in GroupKFold(5).split(X, groups=merged):
        assert not set(merged[tr]) & set(merged[te])
    exact, near = duplicate_checks(
        X, splits=list(GroupKFold(5).split(X, groups=merged))
    )
    assert exact.severity == "info" and near.severity == "info"


def test_merge_without_groups_names_rows():
    out = merge_duplicates(5, [[0, 3], [3, 4]])
    assert out.tolist() == ["dup:0", "row:1", "row:2", "dup:0", "dup:0"]
