"""The run's results store: one embedded SQLite file (``store.sqlite``) per run.

See ``docs/store.md`` for the tables, the durability guarantee and how to inspect a
store with plain SQL.
"""

from __future__ import annotations

from foldwall.store._sqlite import STORE_SCHEMA_VERSION, RunStore

__all__ = ["RunStore", "STORE_SCHEMA_VERSION"]
