"""Tests for label permutation in the random-label control.

The invariants checked here are those of restricted permutation tests: labels are
exchangeable only within the cells the design allows (outer test folds, blocks), and
with repeated measures the exchangeable unit is the group. Folds come from
scikit-learn's splitters, so the tests run on real fold layouts.
"""

from __future__ import annotations

from collections import Counter

import numpy as np
import pandas as pd
import pytest
from scipy import stats
from sklearn.model_selection import GroupKFold, KFold, StratifiedKFold

from foldwall.controls import permute_labels
from foldwall.exceptions import DataError, SpecError


@pytest.fixture(params=[0, 7, 42])
def seed(request):
    """Property tests must pass for any seed; a few are run here."""
    return request.param


def _rng(seed):
    return np.random.default_rng(seed)


def _test_folds(splitter, X, y, groups=None):
    return [test for _, test in splitter.split(X, y, groups)]


def _grouped_data(n_groups=12, seed=0):
    """Groups of 2-5 rows, one label per group, and a site per group."""
    rng = np.random.default_rng(seed)
    sizes = rng.integers(2, 6, size=n_groups)
    groups = np.repeat([f"g{i}" for i in range(n_groups)], sizes)
    group_label = np.array(["ctrl", "case"])[np.arange(n_groups) % 2]
    y = np.repeat(group_label, sizes)
    sites = np.array(["north", "south", "east"])
    site = np.repeat(sites[np.arange(n_groups) % 3], sizes)
    order = rng.permutation(groups.size)  # rows of a group need not be adjacent
    return y[order], groups[order], site[order]


def test_within_fold_permutation_keeps_every_fold_multiset(seed):
    y = np.repeat([0, 1, 2], [14, 16, 10])
    splitter = StratifiedKFold(5, shuffle=True, random_state=seed)
    folds = _test_folds(splitter, np.zeros((40, 1)), y)
    y_perm = permute_labels(y, rng=_rng(seed), folds=folds)
    assert y_perm.shape == y.shape and y_perm.dtype == y.dtype
    for fold in folds:
        assert Counter(y_perm[fold]) == Counter(y[fold])
    assert not np.array_equal(y_perm, y)  # labels did move


def test_within_fold_permutation_is_uniform_within_a_cell():
    # Statistical test, fixed seed: three distinct labels in one fold have 3! = 6
    # orderings, each with probability 1/6; every count must lie in the central
    # 99.9% Binomial(6000, 1/6) interval (scipy.stats.binom.interval). A biased
    # shuffle (e.g. a naive swap-with-any-position loop) fails this.
    y = np.array(["a", "b", "c", "x", "y"])
    folds = [np.array([0, 1, 2]), np.array([3, 4])]
    rng = np.random.default_rng(2024)
    n = 6000
    counts = Counter(
        "".join(permute_labels(y, rng=rng, folds=folds)[:3]) for _ in range(n)
    )
    assert set(counts) == {"abc", "acb", "bac", "bca", "cab", "cba"}
    lo, hi = stats.binom.interval(0.999, n, 1 / 6)
    assert all(lo <= c <= hi for c in counts.values()), counts


def test_global_permutation_keeps_overall_multiset_and_crosses_folds():
    y = np.repeat([0, 1], [25, 15])
    half = [np.arange(20), np.arange(20, 40)]
    crossed = False
    for s in range(5):
        y_perm = permute_labels(y, rng=_rng(s), folds=None)
        assert Counter(y_perm) == Counter(y)
        crossed |= Counter(y_perm[half[0]]) != Counter(y[half[0]])
    assert crossed  # unlike the within-fold scheme, fold contents change


def test_group_permutation_keeps_groups_whole(seed):
    y, groups, _ = _grouped_data(seed=seed)
    folds = _test_folds(GroupKFold(3), np.zeros((y.size, 1)), y, groups)
    y_perm = permute_labels(y, rng=_rng(seed), folds=folds, groups=groups)
    df = pd.DataFrame({"g": groups, "y": y, "p": y_perm})
    assert (df.groupby("g")["p"].nunique() == 1).all()  # every group still constant
    for fold in folds:
        # the multiset of *group* labels is kept in each fold (row counts may not be,
        # since groups differ in size)
        sub = df.iloc[fold].groupby("g").first()
        assert Counter(sub["p"]) == Counter(sub["y"])


def test_group_permutation_moves_labels_between_groups():
    y, groups, _ = _grouped_data(seed=3)
    moved = False
    for s in range(5):
        y_perm = permute_labels(y, rng=_rng(s), folds=None, groups=groups)
        moved |= not np.array_equal(y_perm, y)
    assert moved


def test_group_permutation_is_uniform_over_groups_not_rows():
    # Statistical test, fixed seed: with one big group (10 rows) and two small ones,
    # a group-wise shuffle gives the big group's label to each of the 3 groups with
    # probability 1/3. A row-wise shuffle followed by a "majority per group" fix-up
    # would favour the big group. Bound: central 99.9% Binomial(3000, 1/3) interval.
    y = np.array(["A"] * 10 + ["B"] * 2 + ["C"] * 2)
    groups = np.array(["big"] * 10 + ["s1"] * 2 + ["s2"] * 2)
    rng = np.random.default_rng(99)
    n = 3000
    big_label = Counter(
        permute_labels(y, rng=rng, folds=None, groups=groups)[0] for _ in range(n)
    )
    lo, hi = stats.binom.interval(0.999, n, 1 / 3)
    assert set(big_label) == {"A", "B", "C"}
    assert all(lo <= c <= hi for c in big_label.values()), big_label


def test_block_permutation_never_crosses_blocks(seed):
    rng = np.random.default_rng(seed)
    y = rng.integers(0, 3, size=45)
    blocks = np.repeat(["siteA", "siteB", "siteC"], 15)
    y_perm = permute_labels(y, rng=_rng(seed), folds=None, blocks=blocks)
    for b in np.unique(blocks):
        assert Counter(y_perm[blocks == b]) == Counter(y[blocks == b])
    assert not np.array_equal(y_perm, y)


def test_block_permutation_within_folds_keeps_every_cell(seed):
    rng = np.random.default_rng(seed)
    y = rng.normal(size=48).round(2)  # regression target
    blocks = rng.choice(["s1", "s2", "s3"], size=48)
    folds = _test_folds(KFold(4, shuffle=True, random_state=seed), np.zeros((48, 1)), y)
    y_perm = permute_labels(y, rng=_rng(seed), folds=folds, blocks=blocks)
    for fold in folds:
        for b in np.unique(blocks):
            cell = fold[blocks[fold] == b]
            assert sorted(y_perm[cell]) == sorted(y[cell])


def test_groups_and_blocks_permute_whole_groups_within_fold_and_block(seed):
    y, groups, site = _grouped_data(n_groups=18, seed=seed)
    folds = _test_folds(GroupKFold(3), np.zeros((y.size, 1)), y, groups)
    y_perm = permute_labels(y, rng=_rng(seed), folds=folds, groups=groups, blocks=site)
    df = pd.DataFrame({"g": groups, "y": y, "p": y_perm, "site": site})
    assert (df.groupby("g")["p"].nunique() == 1).all()
    for fold in folds:
        sub = df.iloc[fold].groupby("g").first()
        for _, cell in sub.groupby("site"):
            assert Counter(cell["p"]) == Counter(cell["y"])


def test_non_constant_group_is_rejected_with_its_id():
    y = np.array([0, 0, 1, 1, 0, 1, 1])
    groups = np.array(["g1", "g1", "g5", "g5", "g17", "g17", "g17"])
    with pytest.raises(
        DataError,
        match=r"target 'y' is not constant within group 'g17' \(values 0 and 1\): "
        r"a group-wise permutation needs one label per group.*'within-groups'.*"
        r"'whole-groups'",
    ):
        permute_labels(y, rng=_rng(0), folds=None, groups=groups)


def test_non_constant_group_message_uses_target_name_and_counts_others():
    y = np.array(["a", "b", "a", "b", "a", "a"])
    groups = np.array([3, 3, 8, 8, 9, 9])
    with pytest.raises(
        DataError,
        match=r"target 'outcome' is not constant within group 3 \(values 'a' and "
        r"'b'\) \(1 more group has mixed labels\)",
    ):
        permute_labels(y, rng=_rng(0), folds=None, groups=groups, target_name="outcome")


def test_group_split_across_folds_is_rejected():
    y = np.array([0, 0, 1, 1])
    groups = np.array(["p1", "p1", "p2", "p2"])
    folds = [np.array([0, 2]), np.array([1, 3])]
    with pytest.raises(
        DataError, match=r"group 'p1' has rows in outer test folds 0 and 1.*GroupKFold"
    ):
        permute_labels(y, rng=_rng(0), folds=folds, groups=groups)


def test_group_split_across_blocks_is_rejected():
    y = np.array([0, 0, 1, 1])
    groups = np.array(["p1", "p1", "p2", "p2"])
    blocks = np.array(["siteA", "siteB", "siteA", "siteA"])
    with pytest.raises(
        DataError, match=r"group 'p1' has rows in blocks 'siteA' and 'siteB'"
    ):
        permute_labels(y, rng=_rng(0), folds=None, groups=groups, blocks=blocks)


def test_same_seed_same_result_different_seed_different_result():
    y = np.arange(30) % 3
    folds = [np.arange(0, 30, 2), np.arange(1, 30, 2)]
    a = permute_labels(y, rng=_rng(123), folds=folds)
    b = permute_labels(y, rng=_rng(123), folds=folds)
    c = permute_labels(y, rng=_rng(124), folds=folds)
    np.testing.assert_array_equal(a, b)
    assert not np.array_equal(a, c)


def test_inputs_are_not_modified():
    y, groups, site = _grouped_data(seed=1)
    folds = _test_folds(GroupKFold(3), np.zeros((y.size, 1)), y, groups)
    copies = [y.copy(), groups.copy(), site.copy(), [f.copy() for f in folds]]
    y_series = pd.Series(y, index=np.arange(100, 100 + y.size))
    out = permute_labels(y_series, rng=_rng(0), folds=folds, groups=groups, blocks=site)
    np.testing.assert_array_equal(y, copies[0])
    np.testing.assert_array_equal(y_series.to_numpy(), copies[0])
    np.testing.assert_array_equal(groups, copies[1])
    np.testing.assert_array_equal(site, copies[2])
    for f, f0 in zip(folds, copies[3], strict=True):
        np.testing.assert_array_equal(f, f0)
    assert isinstance(out, np.ndarray) and out.ndim == 1
    assert not np.shares_memory(out, y)


@pytest.mark.parametrize(
    "labels",
    [
        np.array(["no", "yes"]),
        np.array(["no", "yes"], dtype=object),
        np.array([1.5, -2.0]),
    ],
)
def test_string_and_float_labels_work(labels):
    y = labels[np.arange(20) % 2]
    folds = [np.arange(10), np.arange(10, 20)]
    out = permute_labels(y, rng=_rng(0), folds=folds)
    assert out.dtype == y.dtype
    assert Counter(out[:10].tolist()) == Counter(y[:10].tolist())


@pytest.mark.parametrize(
    ("folds", "match"),
    [
        (
            [np.array([0, 1, 2]), np.array([2, 3, 4, 5])],
            "row 2 appears in outer test folds 0 and 1",
        ),
        (
            [np.array([0, 1, 2]), np.array([3, 4])],
            "1 of 6 rows is in no outer test fold",
        ),
        ([np.array([0, 1, 1, 2]), np.array([3, 4, 5])], "row 1 appears more than once"),
        ([np.array([0, 1, 2]), np.array([3, 4, 6])], "outside 0..5"),
        ([np.ones(6, dtype=bool)], "boolean mask"),
        (np.arange(6), "a single 1-d array"),
    ],
)
def test_bad_folds_are_rejected(folds, match):
    with pytest.raises(SpecError, match=match):
        permute_labels(np.arange(6), rng=_rng(0), folds=folds)


def test_bad_rng_and_bad_target_are_rejected():
    with pytest.raises(SpecError, match="rng must be a numpy.random.Generator"):
        permute_labels(np.arange(4), rng=np.random.RandomState(0), folds=None)
    with pytest.raises(DataError, match="target 'y' has 1 missing values"):
        permute_labels(np.array([0.0, np.nan, 1.0]), rng=_rng(0), folds=None)
    with pytest.raises(DataError, match="groups must be 1-d with one entry per row"):
        permute_labels(np.arange(4), rng=_rng(0), folds=None, groups=[1, 2])
    with pytest.raises(DataError, match="blocks has 1 missing values"):
        permute_labels(np.arange(3), rng=_rng(0), folds=None, blocks=["a", None, "b"])
