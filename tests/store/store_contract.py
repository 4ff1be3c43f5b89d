"""The contract every results store keeps (``foldwall.store.UnitStore``).

A subclass provides a ``store`` fixture; each test is then run against it.
"""

from __future__ import annotations

import math
import struct
from typing import Any

import pytest

from foldwall.exceptions import SpecError
from foldwall.store import StoredUnit, UnitStore


def _unit(uid: str, **payload: Any) -> StoredUnit:
    return StoredUnit(
        unit_id=uid,
        kind="real",
        seed=7,
        payload=payload or {"x": 1},
        started=1.0,
        finished=2.0,
    )


def _bits(x: float) -> int:
    return int(struct.unpack("<Q", struct.pack("<d", x))[0])


class UnitStoreContract:
    store: Any

    def test_is_a_unit_store(self, store: Any) -> None:
        assert isinstance(store, UnitStore)

    def test_round_trip_keeps_floats_bit_for_bit(self, store: Any) -> None:
        odd_nan = struct.unpack("<d", struct.pack("<Q", 0xFFF8000000000001))[0]
        payload = {
            "a": 0.1,
            "b": -0.0,
            "c": math.inf,
            "d": [math.nan, odd_nan],
            "e": "t",
        }
        store.write_units([_unit("u1", **payload)])
        (got,) = list(store.stored_units())
        assert got.unit_id == "u1" and got.seed == 7 and got.kind == "real"
        assert got.payload["a"] == 0.1 and got.payload["e"] == "t"
        assert _bits(got.payload["b"]) == _bits(-0.0)
        assert got.payload["c"] == math.inf
        assert _bits(got.payload["d"][0]) == _bits(math.nan)
        assert _bits(got.payload["d"][1]) == 0xFFF8000000000001

    def test_units_come_back_in_id_order(self, store: Any) -> None:
        store.write_units([_unit("b"), _unit("c")])
        store.write_units([_unit("a")])
        assert [u.unit_id for u in store.stored_units()] == ["a", "b", "c"]

    def test_a_batch_with_a_duplicate_writes_nothing(self, store: Any) -> None:
        with pytest.raises(SpecError):
            store.write_units([_unit("a"), _unit("b"), _unit("a")])
        assert list(store.stored_units()) == []

    def test_a_finished_unit_is_never_overwritten(self, store: Any) -> None:
        store.write_units([_unit("a", v=1)])
        with pytest.raises(SpecError, match="never overwritten"):
            store.write_units([_unit("b"), _unit("a", v=2)])
        units = list(store.stored_units())
        assert [u.unit_id for u in units] == ["a"]
        assert units[0].payload == {"v": 1}

    def test_a_unit_without_a_seed_is_stored(self, store: Any) -> None:
        u = StoredUnit(
            unit_id="n", kind="real", seed=None, payload={}, started=0.0, finished=0.0
        )
        store.write_units([u])
        assert next(iter(store.stored_units())).seed is None
