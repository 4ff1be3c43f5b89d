"""Results stores: the protocol the runners use, the SQLite run store, an in-memory store.

See ``docs/store.md`` for the SQLite tables, the durability guarantee and how to
inspect a store with plain SQL. The table's ledger (every study run on a table,
``docs/holdout.md``) lives here too.
"""

from __future__ import annotations

from ._faults import StoreDamagedError, check_store_file, store_faults
from ._ledger import (
    LEDGER_SCHEMA_VERSION,
    LedgerEntry,
    LedgerFamily,
    LedgerHistory,
    append_entry,
    append_or_explain,
    control_family,
    default_ledger_path,
    ledger_history,
    read_entries,
)
from ._lock import LOCK_NAME, RunFolderBusyError, RunLock
from ._memory import MemoryStore
from ._protocol import StoredUnit, UnitStore
from ._sqlite import STORE_SCHEMA_VERSION, RunStore

__all__ = [
    "RunStore",
    "MemoryStore",
    "UnitStore",
    "StoredUnit",
    "STORE_SCHEMA_VERSION",
    # one run per folder; damaged stores (docs/security.md)
    "RunLock",
    "RunFolderBusyError",
    "LOCK_NAME",
    "StoreDamagedError",
    "check_store_file",
    "store_faults",
    # the table's ledger (docs/holdout.md)
    "LEDGER_SCHEMA_VERSION",
    "LedgerEntry",
    "LedgerFamily",
    "LedgerHistory",
    "append_entry",
    "append_or_explain",
    "control_family",
    "default_ledger_path",
    "ledger_history",
    "read_entries",
]
