"""The SQLite run store and the in-memory store keep the same contract (issue 8)."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest
from store_contract import UnitStoreContract

from foldwall.store import MemoryStore, RunStore


class TestRunStore(UnitStoreContract):
    @pytest.fixture
    def store(self, tmp_path: Path) -> Iterator[RunStore]:
        with RunStore.create(tmp_path / "store.sqlite", meta={"k": 1}) as s:
            yield s


class TestMemoryStore(UnitStoreContract):
    @pytest.fixture
    def store(self) -> MemoryStore:
        return MemoryStore()


def test_a_run_resumes_from_a_memory_store_with_the_same_result():
    # A run stopped after some units and resumed from the store gives the same
    # result as a run without one (the runners read back their own records).
    import numpy as np
    from sklearn.linear_model import LogisticRegression

    import foldwall
    from foldwall.store import StoredUnit

    rng = np.random.default_rng(0)
    X = rng.normal(size=(48, 4))
    y = (X[:, 0] + rng.normal(size=48) > 0).astype(int)
    study = foldwall.wrap(
        LogisticRegression(), {"C": [0.1, 1.0]}, metric="roc_auc", outer=3, inner=2
    )
    fresh = study.run(X, y)
    store = MemoryStore()
    first = list(fresh.records)[:2]
    store.write_units(
        [
            StoredUnit(
                unit_id=r.unit,
                kind="real",
                seed=r.seeds.stored_seed(),
                payload=r.to_json(),
                started=0.0,
                finished=0.0,
            )
            for r in first
        ]
    )
    resumed = study.run(X, y, store=store)
    assert resumed.to_json() == fresh.to_json()
    assert store.count() == len(fresh.records)
