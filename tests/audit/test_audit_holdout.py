"""Audits and a sealed hold-out (issue 14).

Checks that do not use the outcome (copies, tight rows) look across the boundary
between development and sealed rows; checks that use the outcome see the
development rows only.
"""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pytest
from sklearn.linear_model import LogisticRegression
from sklearn.neighbors import NearestNeighbors
from sklearn.preprocessing import StandardScaler

import foldwall
from foldwall.audit import boundary_checks
from foldwall.exceptions import DataError, FoldwallWarning


def _by_name(checks):
    return {c.check: c for c in checks}


def _tables(seed=0, n_dev=40, n_sealed=12, p=6):
    rng = np.random.default_rng(seed)
    cols = [f"x{i}" for i in range(p)]
    dev = pd.DataFrame(rng.normal(size=(n_dev, p)), columns=cols)
    sealed = pd.DataFrame(rng.normal(size=(n_sealed, p)), columns=cols)
    return dev, sealed


def test_independent_tables_raise_nothing():
    dev, sealed = _tables()
    checks = _by_name(boundary_checks(dev, sealed))
    assert set(checks) == {
        "holdout_exact_duplicates",
        "holdout_near_duplicates",
        "holdout_tight_rows",
    }
    assert all(c.severity == "info" for c in checks.values())


def test_copies_across_the_boundary_are_counted():
    dev, sealed = _tables()
    sealed.iloc[0] = dev.iloc[5].to_numpy()
    sealed.iloc[1] = dev.iloc[5].to_numpy()
    sealed.iloc[2] = dev.iloc[9].to_numpy()
    sealed.iloc[3] = dev.iloc[20].to_numpy() + 1e-4
    checks = _by_name(boundary_checks(dev, sealed))

    exact = checks["holdout_exact_duplicates"]
    assert exact.severity == "problem"
    # independent count: pandas' inner merge finds the sealed rows that equal a
    # development row (source: pandas.DataFrame.merge)
    merged = sealed.merge(dev.drop_duplicates(), how="inner")
    assert exact.evidence["sealed_rows_with_copy"] == len(merged) == 3
    assert exact.evidence["sets_across"] == 2
    # row numbers of the stacked table: development rows first (40 of them)
    assert sorted(exact.evidence["examples"]) == [[5, 40, 41], [9, 42]]

    near = checks["holdout_near_duplicates"]
    assert near.severity == "warning"
    assert near.evidence["sealed_rows_with_near_copy"] == 1
    assert near.evidence["examples"] == [[20, 43]]
    # copies are not counted again as tight rows
    assert checks["holdout_tight_rows"].severity == "info"
    assert (
        checks["holdout_tight_rows"].evidence["sealed_rows_with_tight_neighbour"] == 0
    )


def test_sealed_visits_of_development_subjects_are_tight_rows():
    # invented: 40 subjects in 8 measurements, seen twice with visit noise 0.15 sd;
    # the second visit of 10 subjects is sealed, the first visits all develop
    rng = np.random.default_rng(3)
    subjects = rng.normal(size=(40, 8))
    first = subjects + 0.15 * rng.normal(size=subjects.shape)
    second = subjects[:10] + 0.15 * rng.normal(size=(10, 8))
    dev = pd.DataFrame(first)
    sealed = pd.DataFrame(np.vstack([second, rng.normal(size=(10, 8))]))
    ids_dev = [f"s{i:02d}a" for i in range(40)]
    ids_sealed = [f"s{i:02d}b" for i in range(10)] + [f"new{i}" for i in range(10)]
    checks = _by_name(
        boundary_checks(dev, sealed, ids_development=ids_dev, ids_sealed=ids_sealed)
    )
    tight = checks["holdout_tight_rows"]
    assert tight.severity == "warning"
    assert tight.evidence["sealed_rows_with_tight_neighbour"] == 10
    assert tight.evidence["share"] == pytest.approx(0.5)
    flagged = {tuple(sorted(p)) for p in tight.evidence["examples"]}
    # each flagged pair is a subject's two visits, and each sealed visit's nearest
    # row on the standardised stacked table is its own first visit (source:
    # scikit-learn NearestNeighbors on StandardScaler output)
    both = StandardScaler().fit_transform(np.vstack([first, sealed.to_numpy()]))
    nn = NearestNeighbors(n_neighbors=2).fit(both)
    nearest = nn.kneighbors(both[40:50], return_distance=False)[:, 1]
    assert list(nearest) == list(range(10))
    assert flagged <= {(f"s{i:02d}a", f"s{i:02d}b") for i in range(10)}
    assert checks["holdout_exact_duplicates"].severity == "info"
    assert checks["holdout_near_duplicates"].severity == "info"


def test_tables_with_other_columns_are_refused():
    dev, sealed = _tables()
    with pytest.raises(DataError, match="same columns"):
        boundary_checks(dev, sealed.rename(columns={"x0": "other"}))


def _planted(n=60, seed=0):
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, 6))
    y = (X[:, 0] + rng.normal(size=n) > 0).astype(int)
    mask = np.zeros(n, dtype=bool)
    mask[45:] = True
    X[45] = X[3]
    X[46] = X[7]
    return X, y, mask


def test_a_run_reports_copies_across_and_audits_the_outcome_on_development_rows(
    monkeypatch,
):
    import foldwall.runners._audits as audits_module

    seen: list[tuple[int, int]] = []
    real = audits_module.audit_table

    def spy(X, y, **kw):
        seen.append((len(X), len(y)))
        return real(X, y, **kw)

    monkeypatch.setattr(audits_module, "audit_table", spy)
    X, y, mask = _planted()
    study = foldwall.wrap(LogisticRegression(), None, outer=3, inner=2)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FoldwallWarning)
        result = study.run(X, y, holdout=mask, ids=[f"r{i}" for i in range(60)])
    # the outcome-using table audits were given the 45 development rows only
    assert seen == [(45, 45)]
    checks = {c["check"]: c for c in result.data["audits"]["checks"]}
    exact = checks["holdout_exact_duplicates"]
    assert exact["severity"] == "problem"
    assert sorted(exact["evidence"]["examples"]) == [["r3", "r45"], ["r7", "r46"]]
    # within the development rows there are no copies
    assert checks["exact_duplicates"]["severity"] == "info"
    assert result.data["holdout"]["duplicates_across"] == 2


def test_the_audit_alone_shows_original_row_numbers_across_the_boundary():
    from foldwall.study import audit_study

    X, y, mask = _planted()
    study = foldwall.wrap(LogisticRegression(), None, outer=3, inner=2)
    data = study.development(X, y, holdout=mask)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FoldwallWarning)
        audits = audit_study(study, data)
    checks = _by_name(audits.checks)
    assert sorted(checks["holdout_exact_duplicates"].evidence["examples"]) == [
        [3, 45],
        [7, 46],
    ]
