"""Time order: forward splits and the outcome-drift audit."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from foldwall.audit import forward_splits, time_drift_check
from foldwall.exceptions import DataError


@pytest.mark.parametrize("seed", range(5))
def test_forward_splits_never_put_a_test_row_before_a_training_row(seed):
    rng = np.random.default_rng(seed)
    n = int(rng.integers(40, 200))
    t = rng.integers(0, rng.integers(20, 100), n)  # ties on purpose
    k = int(rng.integers(2, 6))
    splits = forward_splits(t, k)
    assert len(splits) == k
    for tr, te in splits:
        assert t[tr].max() < t[te].min()
        assert not set(tr) & set(te)
    # the test parts are disjoint and later parts are later in time
    tests = [te for _, te in splits]
    assert sum(len(te) for te in tests) == len(np.unique(np.concatenate(tests)))


def test_forward_splits_of_a_subset_return_table_rows():
    t = np.arange(30)[::-1]
    rows = np.arange(0, 30, 2)
    for tr, te in forward_splits(t, 3, rows=rows):
        assert set(tr) | set(te) <= set(rows)
        assert t[tr].min() > t[te].max() or t[tr].max() < t[te].min()
        assert t[tr].max() < t[te].min()


def test_forward_splits_test_a_group_only_where_it_first_appears():
    t = np.arange(40)
    groups = np.arange(40) % 10  # each subject seen four times over the period
    with pytest.raises(DataError, match="no test rows"):
        forward_splits(t, 4, groups=groups)
    groups = np.arange(40) // 4  # subjects seen in consecutive visits
    for tr, te in forward_splits(t, 4, groups=groups):
        assert not set(groups[tr]) & set(groups[te])


def test_dates_are_read_and_bad_values_named():
    dates = pd.date_range("2020-01-01", periods=12, freq="W").astype(str)
    assert len(forward_splits(dates, 3)) == 3
    with pytest.raises(DataError, match="'visit'.*neither numbers nor dates"):
        forward_splits(["a", "b", "c", "d"], 2, name="visit")


def test_drift_with_random_splits_is_a_warning_and_forward_splits_are_fine():
    rng = np.random.default_rng(0)
    t = np.sort(rng.uniform(0, 100, 300))
    y = (t / 100 + rng.normal(0, 0.3, 300) > 0.5).astype(int)
    c = time_drift_check(t, y, forward=False, name="visit_date")
    assert c.severity == "warning"
    assert c.evidence["test"] == "Mann-Whitney U" and c.evidence["auc_of_time"] > 0.8
    assert time_drift_check(t, y, forward=True).severity == "info"


def test_no_drift_is_info_for_every_kind_of_outcome():
    rng = np.random.default_rng(1)
    t = rng.uniform(size=300)
    for y in (rng.integers(0, 2, 300), rng.integers(0, 3, 300), rng.normal(size=300)):
        assert time_drift_check(t, y, forward=False).severity == "info"
