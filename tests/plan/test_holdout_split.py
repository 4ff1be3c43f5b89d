"""Sealing a hold-out: stratified, group-aware, seeded; no group ever on both sides."""

from __future__ import annotations

import numpy as np
import pytest

from foldwall.exceptions import DataError, SpecError
from foldwall.plan import holdout_by_column, holdout_by_fraction, holdout_from_table


@pytest.mark.parametrize("seed", [0, 7, 42, 99])
def test_fraction_without_groups_is_a_stratified_sample(seed):
    y = np.array([0] * 30 + [1] * 20 + [2] * 10)
    split = holdout_by_fraction(y, 0.2, random_state=seed)
    counts = np.bincount(y[split.sealed], minlength=3)
    # round(0.2 * n_c) rows of every class: 6, 4, 2
    assert counts.tolist() == [6, 4, 2]
    assert split.development.size + split.holdout.size == y.size
    assert not np.intersect1d(split.development, split.holdout).size


@pytest.mark.parametrize("seed", range(0, 100, 9))
def test_fraction_with_groups_never_puts_a_group_on_both_sides(seed):
    rng = np.random.default_rng(seed)
    sizes = rng.integers(1, 6, size=40)
    groups = np.repeat(np.arange(40), sizes)
    # one label per group, unbalanced classes
    y = np.repeat(rng.choice([0, 1], size=40, p=[0.7, 0.3]), sizes)
    split = holdout_by_fraction(y, 0.25, groups=groups, random_state=seed)
    assert not set(groups[split.sealed]) & set(groups[~split.sealed])
    # close to the asked share, as whole groups allow
    assert abs(split.sealed.mean() - 0.25) < 0.1
    if (y == 1).sum() >= 8:
        assert abs(y[split.sealed].mean() - y.mean()) < 0.15


def test_fraction_is_seeded_and_the_seed_matters():
    y = np.tile([0, 1], 50)
    a = holdout_by_fraction(y, 0.3, random_state=3)
    b = holdout_by_fraction(y, 0.3, random_state=3)
    c = holdout_by_fraction(y, 0.3, random_state=4)
    assert np.array_equal(a.sealed, b.sealed)
    assert not np.array_equal(a.sealed, c.sealed)


def test_fraction_of_a_continuous_target_spreads_over_its_range():
    y = np.linspace(0.0, 100.0, 50)
    split = holdout_by_fraction(y, 0.2, classification=False, random_state=1)
    assert split.sealed.sum() == 10
    # quintile stratification: two rows from each fifth of the range
    assert (
        np.bincount(np.minimum(y[split.sealed] // 20.01, 4).astype(int)).tolist()
        == [2] * 5
    )


@pytest.mark.parametrize("fraction", [0.0, 1.0, -0.1, "0.2", True, float("nan")])
def test_bad_fraction_is_refused(fraction):
    with pytest.raises(
        SpecError, match="holdout.fraction must be a number strictly between 0 and 1"
    ):
        holdout_by_fraction(np.tile([0, 1], 10), fraction)


def test_too_few_rows_for_the_fraction_names_the_fix():
    with pytest.raises(
        DataError, match="holdout.fraction: no row is in the hold-out; use a larger"
    ):
        holdout_by_fraction(np.array([0, 1, 0, 1]), 0.05)
    with pytest.raises(DataError, match="collect more groups"):
        holdout_by_fraction(
            np.array([0, 0, 1, 1]), 0.1, groups=np.array(["a", "a", "b", "b"])
        )


def test_column_accepts_bool_numbers_and_words():
    for col in (
        [True, False, False, True],
        [1, 0, 0, 1],
        ["yes", "no", "No", " TRUE "],
    ):
        split = holdout_by_column(col)
        assert split.holdout.tolist() == [0, 3]


@pytest.mark.parametrize(
    ("col", "match"),
    [
        ([1, 0, 2, 1], "row 2 has 2"),
        ([1.0, 0.0, float("nan"), 1.0], "row 2 has nan"),
        (["yes", None, "no", "no"], "row 1 has None"),
        ([False, False, False, False], "no row is in the hold-out"),
        ([1, 1, 1, 1], "every row is in the hold-out"),
    ],
)
def test_column_with_bad_values_gives_one_line(col, match):
    with pytest.raises(DataError, match=match) as info:
        holdout_by_column(col, name="sealed")
    assert "holdout.column 'sealed'" in str(info.value) and "\n" not in str(info.value)


def test_column_that_splits_a_group_is_refused_with_the_group_named():
    with pytest.raises(DataError, match="group 'p2' has rows on both sides"):
        holdout_by_column([0, 0, 1, 0, 1], groups=["p1", "p1", "p2", "p2", "p3"])


def test_second_table_rows_come_last_and_groups_may_not_span_tables():
    split = holdout_from_table(5, 2, name="later.csv")
    assert split.holdout.tolist() == [5, 6] and split.describe()["table"] == "later.csv"
    with pytest.raises(DataError, match="group 7 has rows on both sides"):
        holdout_from_table(3, 2, groups=[1, 2, 7, 7, 8])
    with pytest.raises(DataError, match="no row is in the hold-out"):
        holdout_from_table(3, 0)


def test_describe_counts_rows_groups_and_classes_but_no_score():
    y = np.array([0, 0, 1, 1, 0, 1])
    split = holdout_by_column([0, 0, 0, 0, 1, 1], groups=[1, 1, 2, 2, 3, 4])
    d = split.describe(y, groups=[1, 1, 2, 2, 3, 4])
    assert d["rows"] == {"development": 4, "holdout": 2}
    assert d["groups"] == {"development": 2, "holdout": 2}
    assert d["classes"]["holdout"] == {"0": 1, "1": 1}
    assert not any("score" in k for k in d)


def test_key_names_the_sealed_rows_of_a_table():
    a = holdout_by_column([1, 0, 0, 1, 0, 0, 0, 0, 0, 0])
    b = holdout_by_column([True, False, False, True] + [False] * 6)
    assert a.key("table-1") == b.key("table-1")
    assert a.key("table-1") != a.key("table-2")
    assert a.key("t") != holdout_by_column([0, 1, 0, 1, 0, 0, 0, 0, 0, 0]).key("t")
    assert a.key("t") != holdout_from_table(8, 2).key("t")
