"""The run's results store: one embedded SQLite file per run directory.

Every finished unit of work (an outer fold, a permutation, a baseline fit, ...) is one
row of the ``units`` table, written in its own transaction, so a run that dies can be
resumed from :meth:`RunStore.finished_ids`. Only the driver process writes; workers
hand their results back to it.

Payloads and metadata are stored as canonical JSON text (sorted keys, no whitespace)
that any JSON reader can parse. Floats are written with ``repr`` and therefore read
back bit for bit. JSON has no NaN or infinity, so a non-finite float ``x`` is written
as the one-key object ``{"$float": tag}``, where ``tag`` is ``"inf"``, ``"-inf"``,
``"nan"`` (the canonical quiet NaN, bits ``0x7ff8000000000000``) or
``"nan:<16 hex digits>"`` for any other NaN bit pattern (for example the negative NaN
that ``inf - inf`` gives on x86). The key ``"$float"`` is therefore reserved in user
dictionaries.
"""

from __future__ import annotations

import json
import math
import os
import sqlite3
import threading
import time
from collections.abc import Callable, Iterator, Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from ..exceptions import RunError, SpecError
from ._codec import dumps as _dumps
from ._codec import loads as _loads
from ._protocol import StoredUnit

if TYPE_CHECKING:
    from types import TracebackType

    from ._lock import RunLock

__all__ = ["RunStore", "STORE_SCHEMA_VERSION"]

STORE_SCHEMA_VERSION = 1
"""Version of the table layout written by this foldwall. Bump it (and add a migration
plus an old store under ``tests/data/``) whenever a table or column changes."""

_STORE_FORMAT = "foldwall.run_store"
_META_PREFIX = "meta."
_MAX_SEED = 2**63 - 1  # SQLite INTEGER is a signed 64-bit integer.
_PAGE_SIZE = 500
_UNIT_FIELDS = frozenset(
    {"unit_id", "kind", "seed", "payload", "started", "finished", "status"}
)
_REQUIRED_UNIT_FIELDS = _UNIT_FIELDS - {"status"}

# Plain SQL on purpose: the schema is part of the documented interface (docs/store.md)
# and must stay readable by any sqlite3 shell, so no STRICT tables (SQLite >= 3.37).
_SCHEMA = (
    """
    CREATE TABLE store_info (
        key   TEXT PRIMARY KEY,
        value TEXT NOT NULL
    )
    """,
    """
    CREATE TABLE units (
        unit_id  TEXT PRIMARY KEY,
        kind     TEXT NOT NULL,
        seed     INTEGER,
        status   TEXT,
        started  REAL,
        finished REAL,
        payload  TEXT NOT NULL
    )
    """,
    "CREATE INDEX units_kind ON units (kind)",
    """
    CREATE TABLE failures (
        failure_id INTEGER PRIMARY KEY,
        unit_id    TEXT NOT NULL,
        kind       TEXT NOT NULL,
        error      TEXT NOT NULL,
        time       REAL NOT NULL
    )
    """,
)
_TABLES = frozenset({"store_info", "units", "failures"})
_UNIT_COLUMNS = "unit_id, kind, seed, status, started, finished, payload"


# ------------------------------------------------------------------- validation


def _check_name(value: object, field: str) -> str:
    if not isinstance(value, str) or not value:
        raise SpecError(f"{field} must be a non-empty str, got {value!r}.")
    return value


def _check_seed(value: object, unit_id: str) -> int | None:
    if value is None:
        return None  # a unit that used no seed (nothing random in it)
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, (int, np.integer)):
        raise SpecError(
            f"unit {unit_id!r}: seed must be an int (or numpy integer) or None, got "
            f"{value!r} ({type(value).__name__})."
        )
    seed = int(value)
    if not 0 <= seed <= _MAX_SEED:
        raise SpecError(
            f"unit {unit_id!r}: seed must be in [0, 2**63 - 1] (SQLite stores signed "
            f"64-bit integers), got {seed}. Draw seeds with "
            "SeedSequence.generate_state(1, dtype=numpy.uint32), or reduce the value "
            "with seed % 2**63."
        )
    return seed


def _check_time(value: object, field: str, unit_id: str) -> float:
    if isinstance(value, (bool, np.bool_)) or not isinstance(
        value, (int, float, np.integer, np.floating)
    ):
        raise SpecError(
            f"unit {unit_id!r}: {field} must be a number of seconds (time.time()), "
            f"got {value!r}."
        )
    seconds = float(value)
    if not math.isfinite(seconds):
        # SQLite would silently turn NaN into NULL.
        raise SpecError(
            f"unit {unit_id!r}: {field} must be finite, got {seconds!r}. "
            "Pass time.time() taken when the unit started/finished."
        )
    return seconds


_UnitParams = tuple[str, str, int | None, str, float, float, str]


def _unit_params(row: Mapping[str, Any] | StoredUnit) -> _UnitParams:
    if isinstance(row, StoredUnit):
        row = row.as_row()
    unknown = set(row) - _UNIT_FIELDS
    missing = _REQUIRED_UNIT_FIELDS - set(row)
    if unknown or missing:
        raise SpecError(
            f"unit row {row.get('unit_id', '?')!r}: "
            + (f"unknown fields {sorted(unknown)}; " if unknown else "")
            + (f"missing fields {sorted(missing)}; " if missing else "")
            + f"expected {sorted(_UNIT_FIELDS)} ('status' is optional)."
        )
    unit_id = _check_name(row["unit_id"], "unit_id")
    kind = _check_name(row["kind"], f"unit {unit_id!r}: kind")
    status = _check_name(row.get("status", "done"), f"unit {unit_id!r}: status")
    seed = _check_seed(row["seed"], unit_id)
    started = _check_time(row["started"], "started", unit_id)
    finished = _check_time(row["finished"], "finished", unit_id)
    payload = row["payload"]
    if not isinstance(payload, Mapping):
        raise SpecError(
            f"unit {unit_id!r}: payload must be a dict, got {type(payload).__name__}."
        )
    text = _dumps(payload, f"unit {unit_id!r}: payload")
    return unit_id, kind, seed, status, started, finished, text


def _exists_message(path: Path) -> str:
    return (
        f"a file already exists at {path}; a run store is never overwritten. "
        "Open it with RunStore.open() to resume, or choose a new run directory."
    )


def _uri(path: Path) -> str:
    # mode=rw: opening must never create a file. as_uri() percent-encodes '?' and '#'.
    return path.resolve().as_uri() + "?mode=rw"


# ------------------------------------------------------------------------- store


class RunStore:
    """Results of one run, kept in an embedded SQLite database (``store.sqlite``).

    Do not call the constructor; use :meth:`create` for a new run and :meth:`open`
    to resume or read one. Every row of the ``units`` table is a finished unit of
    work; a finished unit is never overwritten.

    Parameters
    ----------
    connection : sqlite3.Connection
        An open connection in autocommit mode, already checked and configured.
    path : pathlib.Path
        Path of the database file.

    Notes
    -----
    Durability: the database runs in WAL journal mode with ``synchronous=NORMAL``.
    A write method returns only after its transaction has been appended to the WAL
    file, i.e. handed to the operating system, so a committed unit survives the death
    of the writing process (crash, ``SIGKILL``, out-of-memory kill). Only a power cut
    or an operating-system crash may lose the last few committed transactions, because
    WAL + NORMAL syncs to disk at checkpoints rather than at every commit; the database
    stays consistent even then, and the lost units are simply run again on resume. We
    accept that trade for the much cheaper commits; ``synchronous=FULL`` would buy
    power-loss durability with one fsync per unit.

    Thread safety: one process writes (the driver). Inside it, a lock serialises
    calls, so results may be written from callback threads.
    """

    def __init__(self, connection: sqlite3.Connection, path: Path) -> None:
        self._conn: sqlite3.Connection | None = connection
        self._path = path
        self._lock = threading.RLock()
        self._folder_lock: RunLock | None = None

    # ---------------------------------------------------------------- life cycle

    @classmethod
    def create(
        cls, path: str | os.PathLike[str], *, meta: Mapping[str, Any]
    ) -> RunStore:
        """Create a new, empty store file.

        Parameters
        ----------
        path : str or path-like
            Path of the database file to create, by convention
            ``<run directory>/store.sqlite``. The directory must exist; the file
            must not.
        meta : dict
            JSON-serialisable facts about the run (study hash, data hash, seed,
            foldwall version, ...). Keys are str.

        Returns
        -------
        RunStore
            The open store.

        Raises
        ------
        SpecError
            If the file (or a leftover ``-wal``/``-journal`` file next to it) already
            exists, the directory is missing, or ``meta`` is not JSON-serialisable.
        RunError
            If SQLite cannot create the database or enable WAL mode.
        """
        path = Path(path)
        if not isinstance(meta, Mapping):
            raise SpecError(f"meta must be a dict, got {type(meta).__name__}.")
        meta_rows = [
            (_META_PREFIX + _check_name(key, "meta key"), _dumps(val, f"meta[{key!r}]"))
            for key, val in meta.items()
        ]
        if path.is_dir():
            raise SpecError(
                f"{path} is a directory. Pass the path of the store file, e.g. "
                f"{path / 'store.sqlite'}."
            )
        if not path.parent.is_dir():
            raise SpecError(
                f"cannot create a run store at {path}: the directory {path.parent} "
                "does not exist. Create the run directory first."
            )
        if path.exists():
            raise SpecError(_exists_message(path))
        for suffix in ("-wal", "-journal"):
            leftover = path.with_name(path.name + suffix)
            if leftover.exists():
                # SQLite would replay a stale journal into the new file.
                raise SpecError(
                    f"cannot create a run store at {path}: a leftover {leftover.name} "
                    "from an earlier database is next to it. Remove it, or use a new "
                    "run directory."
                )
        try:
            # O_EXCL makes "refuse if it exists" atomic; SQLite treats an empty file
            # as a new database.
            fd = os.open(path, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
        except FileExistsError:
            raise SpecError(_exists_message(path)) from None
        os.close(fd)

        conn: sqlite3.Connection | None = None
        try:
            conn = cls._connect(path)
            cls._configure(conn, path)
            conn.execute("BEGIN IMMEDIATE")
            for statement in _SCHEMA:
                conn.execute(statement)
            conn.executemany(
                "INSERT INTO store_info (key, value) VALUES (?, ?)",
                [
                    ("format", json.dumps(_STORE_FORMAT)),
                    ("schema_version", json.dumps(STORE_SCHEMA_VERSION)),
                    *meta_rows,
                ],
            )
            conn.execute("COMMIT")
        except BaseException as exc:
            if conn is not None:
                conn.close()
            for suffix in ("", "-wal", "-shm"):
                Path(str(path) + suffix).unlink(missing_ok=True)
            if isinstance(exc, sqlite3.Error):
                msg = f"could not create a run store at {path}: {exc}"
                raise RunError(msg) from exc
            raise
        return cls(conn, path)

    @classmethod
    def open(cls, path: str | os.PathLike[str]) -> RunStore:
        """Open an existing store to read it or to resume the run.

        Parameters
        ----------
        path : str or path-like
            Path of the database file, usually ``<run directory>/store.sqlite``.

        Returns
        -------
        RunStore
            The open store.

        Raises
        ------
        RunError
            If the file is missing, is not an SQLite database, is an SQLite database
            but not a foldwall run store, or was written by a newer foldwall (schema
            version above :data:`STORE_SCHEMA_VERSION`).
        """
        path = Path(path)
        if not path.is_file():
            raise RunError(
                f"no run store at {path}: the file does not exist. Check the run "
                "directory, or start a new run."
            )
        try:
            conn = cls._connect(path)
        except sqlite3.Error as exc:
            raise RunError(f"cannot open the run store at {path}: {exc}") from exc
        try:
            cls._check_store(conn, path)
            cls._configure(conn, path)
        except BaseException:
            conn.close()
            raise
        return cls(conn, path)

    @staticmethod
    def _connect(path: Path) -> sqlite3.Connection:
        # isolation_level=None: we issue BEGIN/COMMIT ourselves, so one call is one
        # transaction. check_same_thread=False: our own lock serialises access.
        return sqlite3.connect(
            _uri(path),
            uri=True,
            timeout=30.0,
            isolation_level=None,
            check_same_thread=False,
        )

    @staticmethod
    def _configure(conn: sqlite3.Connection, path: Path) -> None:
        mode = conn.execute("PRAGMA journal_mode = WAL").fetchone()[0]
        if str(mode).lower() != "wal":
            raise RunError(
                f"cannot switch the run store at {path} to WAL journal mode (got "
                f"{mode!r}); the file system may not support it (network drives "
                "often do not). Put the run directory on a local disk."
            )
        # WAL + NORMAL: committed transactions survive the death of the process;
        # only power loss / OS crash may drop the last ones (see the class Notes).
        conn.execute("PRAGMA synchronous = NORMAL")

    @staticmethod
    def _check_store(conn: sqlite3.Connection, path: Path) -> None:
        try:
            tables = {
                name
                for (name,) in conn.execute(
                    "SELECT name FROM sqlite_master WHERE type = 'table'"
                )
            }
        except sqlite3.DatabaseError as exc:
            raise RunError(
                f"{path} is not a foldwall run store: it is not an SQLite database "
                f"({exc})."
            ) from exc
        if "store_info" not in tables:
            raise RunError(
                f"{path} is an SQLite database but not a foldwall run store (it has no "
                "store_info table). Point foldwall at the store.sqlite file inside a "
                "run directory."
            )
        try:
            info = dict(
                conn.execute(
                    "SELECT key, value FROM store_info "
                    "WHERE key IN ('format', 'schema_version')"
                ).fetchall()
            )
            fmt = json.loads(info["format"]) if "format" in info else None
            version = (
                json.loads(info["schema_version"]) if "schema_version" in info else None
            )
        except (sqlite3.Error, ValueError, TypeError) as exc:
            raise RunError(
                f"{path}: the store_info table is unreadable ({exc}); the file is not "
                "a foldwall run store or it is corrupt."
            ) from exc
        if fmt != _STORE_FORMAT:
            raise RunError(
                f"{path} is an SQLite database but not a foldwall run store "
                f"(store_info format is {fmt!r}, expected {_STORE_FORMAT!r})."
            )
        if isinstance(version, bool) or not isinstance(version, int) or version < 1:
            raise RunError(
                f"{path}: the run store has an invalid schema_version {version!r}; "
                "the file is corrupt."
            )
        if version > STORE_SCHEMA_VERSION:
            raise RunError(
                f"{path} was written by a newer foldwall (store schema version "
                f"{version}; this foldwall reads up to version "
                f"{STORE_SCHEMA_VERSION}). "
                "Upgrade foldwall to open it."
            )
        missing = _TABLES - tables
        if missing:
            raise RunError(
                f"{path}: the run store lacks the table(s) {sorted(missing)}; the "
                "file is corrupt."
            )

    def close(self) -> None:
        """Close the store (and give back the run folder's lock it holds). Closing twice is harmless."""
        with self._lock:
            if self._conn is not None:
                self._conn.close()
                self._conn = None
            if self._folder_lock is not None:
                self._folder_lock.release()
                self._folder_lock = None

    def hold(self, lock: RunLock) -> None:
        """Keep the run folder's ``lock`` until this store is closed."""
        self._folder_lock = lock

    def __enter__(self) -> RunStore:
        return self

    def __exit__(
        self,
        exc_type: type[BaseException] | None,
        exc: BaseException | None,
        tb: TracebackType | None,
    ) -> None:
        self.close()

    def __repr__(self) -> str:
        state = "closed" if self._conn is None else "open"
        return f"RunStore({str(self._path)!r}, {state})"

    @property
    def path(self) -> Path:
        """Path of the database file."""
        return self._path

    def _connection(self) -> sqlite3.Connection:
        if self._conn is None:
            raise SpecError(
                f"the run store {self._path} is closed. Reopen it with RunStore.open()."
            )
        return self._conn

    # ---------------------------------------------------------------------- meta

    def meta(self) -> dict[str, Any]:
        """Return the run's metadata.

        Returns
        -------
        dict
            Every key given to :meth:`create` or :meth:`set_meta`, with its value.
        """
        with self._lock:
            rows = (
                self._connection()
                .execute(
                    "SELECT key, value FROM store_info WHERE substr(key, 1, ?) = ? "
                    "ORDER BY key",
                    (len(_META_PREFIX), _META_PREFIX),
                )
                .fetchall()
            )
        n = len(_META_PREFIX)
        return {key[n:]: self._decode(value, f"meta {key!r}") for key, value in rows}

    def set_meta(self, key: str, value: Any) -> None:
        """Set one metadata entry, replacing any earlier value, in its own transaction.

        Parameters
        ----------
        key : str
            Name of the entry.
        value : JSON-serialisable
            Its value.

        Raises
        ------
        SpecError
            If ``key`` is not a non-empty str or ``value`` is not JSON-serialisable.
        """
        _check_name(key, "meta key")
        text = _dumps(value, f"meta[{key!r}]")
        with self._lock:
            self._transaction(
                lambda conn: conn.execute(
                    "INSERT OR REPLACE INTO store_info (key, value) VALUES (?, ?)",
                    (_META_PREFIX + key, text),
                ),
                what=f"meta {key!r}",
            )

    # --------------------------------------------------------------------- units

    def write_unit(
        self,
        unit_id: str,
        *,
        kind: str,
        seed: int | None,
        payload: Mapping[str, Any],
        started: float,
        finished: float,
        status: str = "done",
    ) -> None:
        """Record one finished unit of work, in one transaction.

        Parameters
        ----------
        unit_id : str
            Unique name of the unit, e.g. ``"outer/03"`` or ``"perm/0042/outer/03"``.
        kind : str
            What sort of unit it is (``"outer_fold"``, ``"permutation"``, ...).
        seed : int or None
            The seed the unit ran with; int or numpy integer in ``[0, 2**63 - 1]``,
            or None for a unit that used none.
        payload : dict
            The unit's results; JSON-serialisable, numpy scalars and arrays allowed
            (arrays come back as lists). Floats, including NaN, infinities and
            ``-0.0``, read back bit for bit.
        started, finished : float
            Wall-clock times (``time.time()``) when the unit started and finished.
        status : str, default="done"
            Outcome label kept with the row. Every stored unit counts as finished.

        Raises
        ------
        SpecError
            If ``unit_id`` is already stored (a finished unit is never overwritten;
            the first row is kept), or an argument is invalid.
        RunError
            If SQLite fails to write (disk full, I/O error).
        """
        self.write_units(
            [
                {
                    "unit_id": unit_id,
                    "kind": kind,
                    "seed": seed,
                    "payload": payload,
                    "started": started,
                    "finished": finished,
                    "status": status,
                }
            ]
        )

    def write_units(self, rows: Sequence[StoredUnit | Mapping[str, Any]]) -> None:
        """Record several finished units in one transaction: all of them or none.

        Parameters
        ----------
        rows : sequence of dict
            Each dict has the keyword arguments of :meth:`write_unit` plus
            ``unit_id``; ``status`` is optional.

        Raises
        ------
        SpecError
            If a row is invalid, two rows share a ``unit_id``, or a ``unit_id`` is
            already stored. Nothing is written then.
        RunError
            If SQLite fails to write.
        """
        if isinstance(rows, (str, bytes, Mapping)):
            raise SpecError(
                "write_units expects a list of unit dicts; use write_unit for one unit."
            )
        params = [_unit_params(row) for row in rows]
        seen: set[str] = set()
        for p in params:
            if p[0] in seen:
                raise SpecError(
                    f"unit {p[0]!r} appears twice in one write_units batch; nothing "
                    "was written. Give every unit its own unit_id."
                )
            seen.add(p[0])
        if not params:
            return

        def insert(conn: sqlite3.Connection) -> None:
            for p in params:
                try:
                    conn.execute(
                        f"INSERT INTO units ({_UNIT_COLUMNS}) "
                        "VALUES (?, ?, ?, ?, ?, ?, ?)",
                        p,
                    )
                except sqlite3.IntegrityError:
                    raise SpecError(
                        f"unit {p[0]!r} is already in the run store {self._path}; a "
                        "finished unit is never overwritten"
                        + ("" if len(params) == 1 else " (nothing was written)")
                        + ". Skip the ids in finished_ids() when resuming."
                    ) from None

        with self._lock:
            self._transaction(insert, what=f"{len(params)} unit(s)")

    def finished_ids(self) -> set[str]:
        """Return the ids of all stored (finished) units."""
        with self._lock:
            cur = self._connection().execute("SELECT unit_id FROM units")
            return {unit_id for (unit_id,) in cur}

    def get_unit(self, unit_id: str) -> dict[str, Any] | None:
        """Return one unit, or None if it is not stored.

        Returns
        -------
        dict or None
            Keys ``unit_id``, ``kind``, ``seed``, ``status``, ``started``,
            ``finished`` and ``payload`` (decoded).
        """
        with self._lock:
            row = (
                self._connection()
                .execute(
                    f"SELECT {_UNIT_COLUMNS} FROM units WHERE unit_id = ?", (unit_id,)
                )
                .fetchone()
            )
        return None if row is None else self._unit_dict(row)

    def iter_units(self, kind: str | None = None) -> Iterator[dict[str, Any]]:
        """Iterate over stored units in ``unit_id`` order (plain code-point order).

        Parameters
        ----------
        kind : str, default=None
            Only units of this kind; all units when None.

        Yields
        ------
        dict
            As returned by :meth:`get_unit`.
        """
        last: str | None = None
        while True:
            # Keyset pages: no cursor stays open between yields, so writes may
            # happen while a caller is iterating.
            clauses: list[str] = []
            args: list[Any] = []
            if kind is not None:
                clauses.append("kind = ?")
                args.append(kind)
            if last is not None:
                clauses.append("unit_id > ?")
                args.append(last)
            where = f"WHERE {' AND '.join(clauses)} " if clauses else ""
            with self._lock:
                rows = (
                    self._connection()
                    .execute(
                        f"SELECT {_UNIT_COLUMNS} FROM units {where}"
                        "ORDER BY unit_id LIMIT ?",
                        (*args, _PAGE_SIZE),
                    )
                    .fetchall()
                )
            for row in rows:
                yield self._unit_dict(row)
            if len(rows) < _PAGE_SIZE:
                return
            last = rows[-1][0]

    def stored_units(self) -> Iterator[StoredUnit]:
        """Every stored unit as a :class:`StoredUnit`, in ``unit_id`` order."""
        for row in self.iter_units():
            yield StoredUnit(**row)

    def count(self, kind: str | None = None) -> int:
        """Return the number of stored units, optionally of one kind only."""
        with self._lock:
            if kind is None:
                cur = self._connection().execute("SELECT count(*) FROM units")
            else:
                cur = self._connection().execute(
                    "SELECT count(*) FROM units WHERE kind = ?", (kind,)
                )
            return int(cur.fetchone()[0])

    # ------------------------------------------------------------------ failures

    def record_failure(self, unit_id: str, *, kind: str, error: str) -> None:
        """Record that a unit failed, in its own transaction.

        A failure does not make the unit finished: it stays out of
        :meth:`finished_ids` and is run again on resume. A unit may fail several
        times; each failure is one row.

        Parameters
        ----------
        unit_id : str
            The unit that failed.
        kind : str
            Its kind.
        error : str
            The error text (message or formatted traceback).
        """
        _check_name(unit_id, "unit_id")
        _check_name(kind, f"unit {unit_id!r}: kind")
        if not isinstance(error, str):
            raise SpecError(f"unit {unit_id!r}: error must be a str, got {error!r}.")
        now = time.time()
        with self._lock:
            self._transaction(
                lambda conn: conn.execute(
                    "INSERT INTO failures (unit_id, kind, error, time) "
                    "VALUES (?, ?, ?, ?)",
                    (unit_id, kind, error, now),
                ),
                what=f"the failure of unit {unit_id!r}",
            )

    def failures(self) -> list[dict[str, Any]]:
        """Return recorded failures, oldest first.

        Returns
        -------
        list of dict
            Keys ``unit_id``, ``kind``, ``error`` and ``time`` (``time.time()`` when
            it was recorded).
        """
        with self._lock:
            rows = (
                self._connection()
                .execute(
                    "SELECT unit_id, kind, error, time FROM failures ORDER BY failure_id"
                )
                .fetchall()
            )
        return [{"unit_id": u, "kind": k, "error": e, "time": t} for u, k, e, t in rows]

    # --------------------------------------------------------------------- checks

    def integrity_ok(self) -> bool:
        """Return True when SQLite's ``PRAGMA integrity_check`` reports ``ok``."""
        with self._lock:
            try:
                rows = self._connection().execute("PRAGMA integrity_check").fetchall()
            except sqlite3.DatabaseError:
                return False
        return rows == [("ok",)]

    # ------------------------------------------------------------------- helpers

    def _transaction(
        self, body: Callable[[sqlite3.Connection], object], *, what: str
    ) -> None:
        conn = self._connection()
        try:
            conn.execute("BEGIN IMMEDIATE")
        except sqlite3.Error as exc:
            raise RunError(f"could not write {what} to {self._path}: {exc}") from exc
        try:
            body(conn)
            conn.execute("COMMIT")
        except BaseException as exc:
            if conn.in_transaction:
                conn.execute("ROLLBACK")
            if isinstance(exc, sqlite3.Error):
                msg = f"could not write {what} to {self._path}: {exc}"
                raise RunError(msg) from exc
            raise

    def _decode(self, text: str, where: str) -> Any:
        try:
            return _loads(text)
        except (ValueError, TypeError) as exc:
            raise RunError(
                f"{self._path}: {where} is not valid store JSON ({exc}); the store "
                "is corrupt."
            ) from exc

    def _unit_dict(self, row: tuple[Any, ...]) -> dict[str, Any]:
        unit_id, kind, seed, status, started, finished, payload = row
        return {
            "unit_id": unit_id,
            "kind": kind,
            "seed": seed,
            "status": status,
            "started": started,
            "finished": finished,
            "payload": self._decode(payload, f"the payload of unit {unit_id!r}"),
        }
