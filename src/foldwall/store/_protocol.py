"""What the runners need from a results store: a small protocol and its row type."""

from __future__ import annotations

from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass
from typing import Any, Protocol, runtime_checkable

__all__ = ["StoredUnit", "UnitStore"]


@dataclass(frozen=True)
class StoredUnit:
    """One finished unit as a store keeps it.

    ``seed`` is the seed the unit used (its sampled search's seed, else its last
    seeded step's), or None when nothing in the unit was random. ``payload`` is the
    unit record's JSON (``foldwall.records.UnitRecord.to_json``).
    """

    unit_id: str
    kind: str
    seed: int | None
    payload: Mapping[str, Any]
    started: float
    finished: float
    status: str = "done"

    def as_row(self) -> dict[str, Any]:
        return {
            "unit_id": self.unit_id,
            "kind": self.kind,
            "seed": self.seed,
            "payload": self.payload,
            "started": self.started,
            "finished": self.finished,
            "status": self.status,
        }


@runtime_checkable
class UnitStore(Protocol):
    """The handful of methods the runners use.

    Contract (checked for every store by ``tests/store/store_contract.py``):

    - ``write_units`` stores all rows of a batch in one transaction or none, and
      refuses a ``unit_id`` that is already stored (a finished unit is never
      overwritten);
    - ``stored_units`` yields every stored unit in ``unit_id`` order, with the
      payload equal (floats bit for bit) to what was written;
    - only the driver process calls a store; calls from several threads of it are
      serialised by the store.
    """

    def write_units(self, rows: Sequence[StoredUnit]) -> None: ...

    def stored_units(self) -> Iterator[StoredUnit]: ...
