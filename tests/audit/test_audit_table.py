"""All table audits at once: no false alarm on clean data; planted faults found."""

from __future__ import annotations

import time

import numpy as np
import pandas as pd
import pytest
from sklearn import datasets

from foldwall.audit import audit_table


@pytest.mark.parametrize("loader", ["load_breast_cancer", "load_wine", "load_diabetes"])
def test_no_alarm_above_info_on_clean_data_that_scikit_learn_ships(loader):
    # source: the data sets bundled with scikit-learn (no download)
    d = getattr(datasets, loader)(as_frame=True)
    audit = audit_table(d.data, d.target.to_numpy(), random_state=0)
    above = [(c.check, c.title) for c in audit.checks if c.severity != "info"]
    assert above == []
    assert "made by the audit" in audit.splits


def test_planted_faults_are_each_found_by_their_check():
    rng = np.random.default_rng(0)
    n = 300
    X = pd.DataFrame(rng.normal(size=(n, 12)), columns=[f"m{j}" for j in range(12)])
    y = np.array((X["m0"] + rng.normal(size=n) > 0).astype(int))
    X["patient_id"] = np.arange(n)  # id column left among the features
    X["after_outcome"] = y + rng.normal(0, 0.05, n)  # leaky column
    X.iloc[200] = X.iloc[100].to_numpy()  # the same patient entered twice
    y[200] = y[100]
    A = pd.DataFrame({"site": rng.choice(["x", "y"], n)})
    audit = audit_table(X, y, ids=[f"r{i}" for i in range(n)], acquisition=A)
    sev = {c.check: c.severity for c in audit.checks}
    assert sev["exact_duplicates"] in {"problem", "info"}  # depends on the split
    dup = next(c for c in audit.checks if c.check == "exact_duplicates")
    assert dup.evidence["examples"] == [["r100", "r200"]]
    assert sev["id_columns"] == "problem"
    assert sev["single_column"] == "problem"
    assert sev["acquisition_outcome"] == "info"
    assert audit.severity == "problem"
    assert set(audit.to_json()) == {"checks", "splits", "confounds"}


def test_table_audit_is_fast_on_a_mid_sized_table():
    # A smoke bound only; the timed benchmark is bench/bench_audit.py.
    rng = np.random.default_rng(1)
    X = rng.normal(size=(600, 120))
    y = rng.integers(0, 2, 600)
    t0 = time.perf_counter()
    audit_table(X, y, acquisition=pd.DataFrame({"site": rng.choice(list("abc"), 600)}))
    assert time.perf_counter() - t0 < 20
