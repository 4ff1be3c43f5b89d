"""A results store in memory: the same contract as the SQLite store, for fast tests."""

from __future__ import annotations

import threading
from collections.abc import Iterator, Sequence

from ..exceptions import SpecError
from ._codec import dumps, loads
from ._protocol import StoredUnit

__all__ = ["MemoryStore"]


class MemoryStore:
    """Keeps units in a dict; payloads go through the same canonical JSON as on disk."""

    def __init__(self) -> None:
        self._units: dict[str, tuple[StoredUnit, str]] = {}
        self._lock = threading.RLock()

    def write_units(self, rows: Sequence[StoredUnit]) -> None:
        encoded = [(r, dumps(r.payload, f"unit {r.unit_id!r}: payload")) for r in rows]
        ids = [r.unit_id for r in rows]
        with self._lock:
            if len(set(ids)) != len(ids):
                dup = next(i for i in ids if ids.count(i) > 1)
                raise SpecError(
                    f"unit {dup!r} appears twice in one batch; nothing was written"
                )
            taken = [i for i in ids if i in self._units]
            if taken:
                raise SpecError(
                    f"unit {taken[0]!r} is already stored; a finished unit is never overwritten"
                )
            for r, text in encoded:
                self._units[r.unit_id] = (r, text)

    def stored_units(self) -> Iterator[StoredUnit]:
        with self._lock:
            items = sorted(self._units.items())
        for _, (r, text) in items:
            yield StoredUnit(
                unit_id=r.unit_id,
                kind=r.kind,
                seed=r.seed,
                payload=loads(text),
                started=r.started,
                finished=r.finished,
                status=r.status,
            )

    def count(self) -> int:
        with self._lock:
            return len(self._units)
