"""The table's ledger: one append-only SQLite file that remembers every study run on it.

A single study evaluated by nested cross-validation is honest on its own. A researcher
who runs twenty variants on the same table and reports the best is not, and nothing
in any one run records that there were twenty. The ledger records them: every run and
every opening of a sealed hold-out appends one row, keyed by the table's content hash,
and the rows are never changed afterwards.

From the rows the ledger gives

- the family of control p-values of all studies run on the table, with their Holm
  (1979) adjustment, so a study's own p-value can be read beside the p-value adjusted
  for everything else that was tried on the same rows;
- how many studies were run before a given one, and how often (and by which study
  first) the hold-out was opened.

Safety: the file runs in WAL mode with a busy timeout, every append is one
``BEGIN IMMEDIATE`` transaction, so processes appending at the same time wait for each
other and lose nothing. Triggers refuse ``UPDATE`` and ``DELETE`` on both tables, so
the history cannot be rewritten through SQL by accident. An append that fails (a
read-only directory, a full disk, a file that is not a ledger) must never cost a run
its results: :func:`append_or_explain` returns one line instead of raising.
"""

from __future__ import annotations

import json
import math
import os
import sqlite3
import time
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from foldwall.compare import adjust_pvalues
from foldwall.exceptions import RunError, SpecError

__all__ = [
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

LEDGER_SCHEMA_VERSION = 1
"""Version of the ledger's table layout. Bump it (with a migration) on any change."""

_LEDGER_FORMAT = "foldwall.ledger"
_LEDGER_SUFFIX = ".ledger.sqlite"
_BUSY_TIMEOUT_S = 60.0
_KINDS = ("run", "opening")
_APPEND_ONLY = "the foldwall ledger is append-only: rows are never changed or removed"

# Plain SQL so any sqlite3 shell reads it. AUTOINCREMENT: an entry id is never reused,
# so ids give the order in which entries were appended, across processes.
_SCHEMA = (
    """
    CREATE TABLE IF NOT EXISTS ledger_info (
        key   TEXT PRIMARY KEY,
        value TEXT NOT NULL
    )
    """,
    """
    CREATE TABLE IF NOT EXISTS entries (
        entry_id         INTEGER PRIMARY KEY AUTOINCREMENT,
        time             REAL    NOT NULL,
        table_hash       TEXT    NOT NULL,
        kind             TEXT    NOT NULL CHECK (kind IN ('run', 'opening')),
        study_name       TEXT    NOT NULL,
        study_hash       TEXT    NOT NULL,
        metric           TEXT,
        score            REAL,
        control_p        REAL,
        comparison_p     TEXT    NOT NULL,
        holdout          TEXT,
        holdout_opened   INTEGER NOT NULL CHECK (holdout_opened IN (0, 1)),
        foldwall_version TEXT    NOT NULL,
        location         TEXT
    )
    """,
    "CREATE INDEX IF NOT EXISTS entries_table ON entries (table_hash, entry_id)",
    *(
        f"""
        CREATE TRIGGER IF NOT EXISTS {table}_no_{verb.lower()}
        BEFORE {verb} ON {table}
        BEGIN SELECT RAISE(ABORT, '{_APPEND_ONLY}'); END
        """
        for table in ("entries", "ledger_info")
        for verb in ("UPDATE", "DELETE")
    ),
)
_COLUMNS = (
    "entry_id, time, table_hash, kind, study_name, study_hash, metric, score, "
    "control_p, comparison_p, holdout, holdout_opened, foldwall_version, location"
)


# ----------------------------------------------------------------------- entries


@dataclass(frozen=True)
class LedgerEntry:
    """One row of the ledger: a run of a study, or an opening of the hold-out.

    Parameters
    ----------
    table_hash : str
        Content hash of the table the study ran on (the key of the ledger).
    kind : {"run", "opening"}
        ``"run"``: a nested study on the development rows. ``"opening"``: the
        procedure fitted on all development rows and scored once on the hold-out.
    study_name : str
        The study's name (study file name, or the name given to ``wrap``).
    study_hash : str
        Hash of the study's settings; two entries with the same hash ran the same
        procedure.
    metric : str or None, default=None
        The headline metric (a scikit-learn scorer name).
    score : float or None, default=None
        The headline score: the nested estimate for a run, the hold-out score for
        an opening. NaN is stored as missing.
    control_p : float or None, default=None
        The random-label control's p-value (runs), or the hold-out permutation
        test's p-value (openings); ``None`` when there was none.
    comparison_p : dict of str to float or None, default={}
        The comparisons' p-values by comparison name (``"a vs b"``).
    holdout : str or None, default=None
        A key naming the sealed hold-out rows (a hash of their fingerprints), or
        ``None`` when the study sealed no rows.
    holdout_opened : bool, default=False
        True for an opening of the hold-out.
    foldwall_version : str, default=""
        The foldwall version that wrote the entry.
    location : str or None, default=None
        Where the run's results were written (run directory), if anywhere.
    time : float or None, default=None
        Unix time of the entry; ``None`` takes the time of the append.
    entry_id : int or None, default=None
        Order of appending, set by the ledger; ``None`` before the entry is stored.
    """

    table_hash: str
    kind: str
    study_name: str
    study_hash: str
    metric: str | None = None
    score: float | None = None
    control_p: float | None = None
    comparison_p: Mapping[str, float | None] = field(default_factory=dict)
    holdout: str | None = None
    holdout_opened: bool = False
    foldwall_version: str = ""
    location: str | None = None
    time: float | None = None
    entry_id: int | None = None

    def to_dict(self) -> dict[str, Any]:
        """The entry as plain JSON-ready values (NaN becomes ``None``)."""
        return {
            "entry_id": self.entry_id,
            "time": self.time,
            "table_hash": self.table_hash,
            "kind": self.kind,
            "study_name": self.study_name,
            "study_hash": self.study_hash,
            "metric": self.metric,
            "score": _finite_or_none(self.score),
            "control_p": _finite_or_none(self.control_p),
            "comparison_p": {
                str(k): _finite_or_none(v) for k, v in self.comparison_p.items()
            },
            "holdout": self.holdout,
            "holdout_opened": bool(self.holdout_opened),
            "foldwall_version": self.foldwall_version,
            "location": self.location,
        }


def _finite_or_none(value: object) -> float | None:
    if value is None:
        return None
    number = float(value)  # type: ignore[arg-type]
    return number if math.isfinite(number) else None


def _check_text(value: object, field_name: str, *, optional: bool = False) -> None:
    if optional and value is None:
        return
    if not isinstance(value, str) or not value:
        raise SpecError(
            f"ledger entry: {field_name} must be a non-empty str, got {value!r}."
        )


def _check_p(value: object, field_name: str) -> float | None:
    p = _check_number(value, field_name)
    if p is not None and not 0.0 <= p <= 1.0:
        raise SpecError(f"ledger entry: {field_name} must lie in [0, 1], got {p}.")
    return p


def _check_number(value: object, field_name: str) -> float | None:
    if value is None:
        return None
    if isinstance(value, (bool, np.bool_)) or not isinstance(
        value, (int, float, np.integer, np.floating)
    ):
        raise SpecError(
            f"ledger entry: {field_name} must be a number or None, got {value!r}."
        )
    return _finite_or_none(value)


def _entry_params(entry: LedgerEntry) -> tuple[Any, ...]:
    if not isinstance(entry, LedgerEntry):
        raise SpecError(
            f"append_entry takes a LedgerEntry, got {type(entry).__name__}."
        )
    _check_text(entry.table_hash, "table_hash")
    if entry.kind not in _KINDS:
        raise SpecError(
            f"ledger entry: kind must be 'run' or 'opening', got {entry.kind!r}."
        )
    _check_text(entry.study_name, "study_name")
    _check_text(entry.study_hash, "study_hash")
    _check_text(entry.metric, "metric", optional=True)
    _check_text(entry.holdout, "holdout", optional=True)
    _check_text(entry.location, "location", optional=True)
    if entry.holdout_opened and entry.holdout is None:
        raise SpecError(
            "ledger entry: holdout_opened is true but holdout is None; an opening "
            "must name the hold-out it opened."
        )
    if (entry.kind == "opening") != bool(entry.holdout_opened):
        raise SpecError(
            "ledger entry: holdout_opened must be true exactly for kind 'opening'."
        )
    comparisons = {
        str(name): _check_p(p, f"comparison_p[{name!r}]")
        for name, p in dict(entry.comparison_p).items()
    }
    moment = time.time() if entry.time is None else _check_number(entry.time, "time")
    if moment is None:
        raise SpecError("ledger entry: time must be a finite number of seconds.")
    return (
        moment,
        entry.table_hash,
        entry.kind,
        entry.study_name,
        entry.study_hash,
        entry.metric,
        _check_number(entry.score, "score"),
        _check_p(entry.control_p, "control_p"),
        json.dumps(comparisons, sort_keys=True, separators=(",", ":")),
        entry.holdout,
        int(bool(entry.holdout_opened)),
        str(entry.foldwall_version),
        entry.location,
    )


def _entry_from_row(row: Sequence[Any]) -> LedgerEntry:
    comparisons = json.loads(row[9]) if row[9] else {}
    return LedgerEntry(
        entry_id=int(row[0]),
        time=float(row[1]),
        table_hash=str(row[2]),
        kind=str(row[3]),
        study_name=str(row[4]),
        study_hash=str(row[5]),
        metric=row[6],
        score=None if row[7] is None else float(row[7]),
        control_p=None if row[8] is None else float(row[8]),
        comparison_p={str(k): v for k, v in comparisons.items()},
        holdout=row[10],
        holdout_opened=bool(row[11]),
        foldwall_version=str(row[12]),
        location=row[13],
    )


# -------------------------------------------------------------------------- file


def default_ledger_path(table: str | os.PathLike[str]) -> Path:
    """Where the ledger of a table file lives unless the study says otherwise.

    Parameters
    ----------
    table : str or path-like
        Path of the table file, e.g. ``data/wards.csv``.

    Returns
    -------
    pathlib.Path
        The same directory, the table's file name plus ``.ledger.sqlite``, e.g.
        ``data/wards.csv.ledger.sqlite``.
    """
    path = Path(table)
    return path.with_name(path.name + _LEDGER_SUFFIX)


def _connect(path: Path, *, create: bool) -> sqlite3.Connection:
    if path.is_dir():
        raise RunError(f"the ledger path {path} is a directory; give a file path.")
    if not create and not path.is_file():
        raise RunError(f"no ledger at {path}: no study has been recorded there yet.")
    # Reads use a read-write connection when they can: the last connection to close
    # then removes the -wal and -shm files beside the ledger (a read-only one cannot).
    mode = "rwc" if create else ("rw" if os.access(path, os.W_OK) else "ro")
    try:
        conn = sqlite3.connect(
            path.resolve().as_uri() + f"?mode={mode}",
            uri=True,
            timeout=_BUSY_TIMEOUT_S,
            isolation_level=None,
        )
    except sqlite3.Error as exc:
        raise RunError(f"cannot open the ledger at {path}: {exc}") from None
    return conn


def _journal_mode_wal(conn: sqlite3.Connection, path: Path) -> str:
    """Switch the file to WAL, waiting while another process holds it.

    Changing the journal mode of a new file needs it alone, and SQLite reports
    "database is locked" at once instead of calling the busy handler when two
    processes create the same ledger together; so wait and retry here, up to the
    busy timeout. Any other error means the file is not an SQLite ledger.
    """
    deadline = time.monotonic() + _BUSY_TIMEOUT_S
    delay = 0.005
    while True:
        try:
            return str(conn.execute("PRAGMA journal_mode = WAL").fetchone()[0]).lower()
        except sqlite3.OperationalError as exc:
            locked = "locked" in str(exc) or "busy" in str(exc)
            if not locked or time.monotonic() > deadline:
                raise RunError(f"{path} is not a foldwall ledger: {exc}") from None
            time.sleep(delay)
            delay = min(0.1, delay * 2)
        except sqlite3.DatabaseError as exc:
            raise RunError(f"{path} is not a foldwall ledger: {exc}") from None


def _prepare(conn: sqlite3.Connection, path: Path) -> None:
    """Switch to WAL, create the tables if needed and check the file is a ledger."""
    mode = _journal_mode_wal(conn, path)
    if mode != "wal":
        raise RunError(
            f"cannot switch the ledger at {path} to WAL journal mode (got {mode!r}); "
            "put it on a local disk."
        )
    conn.execute("PRAGMA synchronous = NORMAL")
    conn.execute("BEGIN IMMEDIATE")
    try:
        tables = {
            name
            for (name,) in conn.execute(
                "SELECT name FROM sqlite_master WHERE type = 'table'"
            )
        }
        if tables and "ledger_info" not in tables:
            raise RunError(
                f"{path} is an SQLite database but not a foldwall ledger; choose "
                "another ledger path."
            )
        for statement in _SCHEMA:
            conn.execute(statement)
        conn.execute(
            "INSERT OR IGNORE INTO ledger_info (key, value) VALUES (?, ?), (?, ?)",
            (
                "format",
                json.dumps(_LEDGER_FORMAT),
                "schema_version",
                json.dumps(LEDGER_SCHEMA_VERSION),
            ),
        )
        _check_info(conn, path)
        conn.execute("COMMIT")
    except BaseException:
        if conn.in_transaction:
            conn.execute("ROLLBACK")
        raise


def _check_info(conn: sqlite3.Connection, path: Path) -> None:
    try:
        info = dict(conn.execute("SELECT key, value FROM ledger_info").fetchall())
        fmt = json.loads(info.get("format", "null"))
        version = json.loads(info.get("schema_version", "null"))
    except (sqlite3.Error, ValueError) as exc:
        raise RunError(
            f"{path}: the ledger_info table is unreadable ({exc})."
        ) from None
    if fmt != _LEDGER_FORMAT:
        raise RunError(
            f"{path} is not a foldwall ledger (format {fmt!r}); choose another path."
        )
    if not isinstance(version, int) or version > LEDGER_SCHEMA_VERSION:
        raise RunError(
            f"{path} was written by a newer foldwall (ledger schema {version!r}); "
            "upgrade foldwall to use it."
        )


def append_entry(path: str | os.PathLike[str], entry: LedgerEntry) -> LedgerEntry:
    """Append one entry to the ledger at ``path``, creating the file if needed.

    Parameters
    ----------
    path : str or path-like
        The ledger file. Its directory must exist.
    entry : LedgerEntry
        The entry; ``entry_id`` is ignored and ``time=None`` means now.

    Returns
    -------
    LedgerEntry
        The entry as stored, with its ``entry_id`` and ``time``.

    Raises
    ------
    SpecError
        If a field of the entry is malformed (a p-value outside [0, 1], ...).
    RunError
        If the ledger cannot be opened or written (missing directory, no
        permission, a file that is not a ledger, a lock held longer than the busy
        timeout of 60 s).

    Notes
    -----
    Each append is one ``BEGIN IMMEDIATE`` transaction in WAL mode: concurrent
    appenders (threads or processes) wait for one another, up to the busy timeout,
    and every committed entry survives the death of the process.
    """
    params = _entry_params(entry)
    ledger = Path(path)
    if not ledger.parent.is_dir():
        what = "is a file" if ledger.parent.exists() else "does not exist"
        raise RunError(
            f"cannot write the ledger at {ledger}: the directory {ledger.parent} "
            f"{what}."
        )
    conn = _connect(ledger, create=True)
    try:
        _prepare(conn, ledger)
        conn.execute("BEGIN IMMEDIATE")
        try:
            cursor = conn.execute(
                f"INSERT INTO entries ({_COLUMNS.split(', ', 1)[1]}) "
                f"VALUES ({', '.join('?' * len(params))})",
                params,
            )
            entry_id = cursor.lastrowid
            conn.execute("COMMIT")
        except BaseException:
            if conn.in_transaction:
                conn.execute("ROLLBACK")
            raise
    except sqlite3.Error as exc:
        raise RunError(f"cannot write the ledger at {ledger}: {exc}") from None
    finally:
        conn.close()
    stored = _entry_from_row((entry_id, *params))
    return stored


def append_or_explain(
    path: str | os.PathLike[str], entry: LedgerEntry
) -> tuple[LedgerEntry | None, str | None]:
    """Append like :func:`append_entry`, but never raise for a ledger that fails.

    Parameters
    ----------
    path : str or path-like
        The ledger file.
    entry : LedgerEntry
        The entry to append.

    Returns
    -------
    tuple of (LedgerEntry or None, str or None)
        ``(stored entry, None)`` on success; ``(None, message)`` when the ledger
        could not be written, where ``message`` is one line naming the file, the
        cause and the fix. The caller shows the line and keeps the run's results.

    Raises
    ------
    SpecError
        Only for a malformed entry (a programming error, not a file problem).
    """
    try:
        return append_entry(path, entry), None
    except RunError as exc:
        reason = (str(exc).splitlines() or [type(exc).__name__])[0].rstrip(".")
        return None, (
            f"the ledger was not updated ({reason}); the results are kept, but this "
            "study is missing from the table's ledger: fix the path or set "
            "ledger: false"
        )
    except OSError as exc:
        return None, (
            f"the ledger at {path} was not updated ({exc.strerror or exc}); the "
            "results are kept: fix the path or set ledger: false"
        )


def read_entries(
    path: str | os.PathLike[str], table_hash: str | None = None
) -> list[LedgerEntry]:
    """Entries of a ledger in the order they were appended.

    Parameters
    ----------
    path : str or path-like
        The ledger file.
    table_hash : str or None, default=None
        Only the entries of this table; ``None`` returns every entry in the file.

    Returns
    -------
    list of LedgerEntry
        Oldest first.

    Raises
    ------
    RunError
        If the file does not exist or is not a foldwall ledger.
    """
    ledger = Path(path)
    conn = _connect(ledger, create=False)
    try:
        try:
            _check_info(conn, ledger)
            if table_hash is None:
                rows = conn.execute(
                    f"SELECT {_COLUMNS} FROM entries ORDER BY entry_id"
                ).fetchall()
            else:
                rows = conn.execute(
                    f"SELECT {_COLUMNS} FROM entries WHERE table_hash = ? "
                    "ORDER BY entry_id",
                    (table_hash,),
                ).fetchall()
        except sqlite3.Error as exc:
            raise RunError(f"cannot read the ledger at {ledger}: {exc}") from None
    finally:
        conn.close()
    return [_entry_from_row(row) for row in rows]


# ------------------------------------------------------------------------ family


@dataclass(frozen=True)
class LedgerFamily:
    """The control p-values of every distinct study run on a table, Holm-adjusted.

    Parameters
    ----------
    study_names : tuple of str
        One per member, in the order the studies were first run.
    study_hashes : tuple of str
        The members' study hashes (a study run twice is one member).
    p_values : tuple of float
        Each member's control p-value; a study run without a control counts
        with p = 1 (see Notes of :func:`control_family`).
    adjusted : tuple of float
        Holm-adjusted p-values, same order.
    without_control : tuple of str
        Names of the members that had no control (counted with p = 1).
    """

    study_names: tuple[str, ...]
    study_hashes: tuple[str, ...]
    p_values: tuple[float, ...]
    adjusted: tuple[float, ...]
    without_control: tuple[str, ...]

    @property
    def size(self) -> int:
        """Number of members (distinct studies)."""
        return len(self.p_values)

    def adjusted_for(self, study_hash: str) -> float | None:
        """Holm-adjusted p-value of one study, or ``None`` if it is not a member."""
        for h, p in zip(self.study_hashes, self.adjusted, strict=True):
            if h == study_hash:
                return p
        return None

    def smallest_attainable(self, n_permutations: int) -> float:
        """Smallest adjusted p any member could reach with this many permutations.

        With ``m`` permutations a control p-value is at least ``1/(m + 1)``; Holm
        multiplies the smallest p-value of a family of ``K`` by ``K``.
        """
        return min(1.0, self.size / (int(n_permutations) + 1))

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready form, one member per list item."""
        return {
            "method": "holm",
            "size": self.size,
            "members": [
                {"study": n, "study_hash": h, "p_value": p, "p_adjusted": a}
                for n, h, p, a in zip(
                    self.study_names,
                    self.study_hashes,
                    self.p_values,
                    self.adjusted,
                    strict=True,
                )
            ],
            "without_control": list(self.without_control),
        }


def control_family(
    entries: Sequence[LedgerEntry], *, upto: int | None = None
) -> LedgerFamily:
    """The Holm family of control p-values over the studies run on one table.

    Parameters
    ----------
    entries : sequence of LedgerEntry
        The entries of one table (from :func:`read_entries` with a ``table_hash``).
    upto : int or None, default=None
        Use only entries with ``entry_id <= upto`` (the family as it stood when
        that entry was appended); ``None`` uses all.

    Returns
    -------
    LedgerFamily

    Raises
    ------
    SpecError
        If the entries belong to more than one table.

    Notes
    -----
    Only runs count (openings test a different hypothesis, on other rows). Runs
    with the same study hash are one member, with the p-value of their first run:
    re-running the same procedure is not a new attempt (a new seed changes the
    hash, and then it is one). A study run without a random-label control still
    was a look at the table: it is a member with p = 1, which keeps the family
    size honest (a p-value of 1 is always valid) and never makes any adjusted
    p-value smaller.
    """
    tables = {e.table_hash for e in entries}
    if len(tables) > 1:
        raise SpecError(
            f"control_family: entries of {len(tables)} tables were mixed; pass the "
            "entries of one table (read_entries(path, table_hash))."
        )
    names: list[str] = []
    hashes: list[str] = []
    ps: list[float] = []
    missing: list[str] = []
    for entry in entries:
        if entry.kind != "run":
            continue
        if upto is not None and entry.entry_id is not None and entry.entry_id > upto:
            continue
        if entry.study_hash in hashes:
            continue
        hashes.append(entry.study_hash)
        names.append(entry.study_name)
        if entry.control_p is None:
            missing.append(entry.study_name)
            ps.append(1.0)
        else:
            ps.append(float(entry.control_p))
    return LedgerFamily(
        study_names=tuple(names),
        study_hashes=tuple(hashes),
        p_values=tuple(ps),
        adjusted=tuple(float(v) for v in adjust_pvalues(ps, method="holm")),
        without_control=tuple(missing),
    )


# ----------------------------------------------------------------------- history


@dataclass(frozen=True)
class LedgerHistory:
    """What had happened on a table before one entry.

    Parameters
    ----------
    prior_studies : tuple of str
        Names of the distinct other studies run on the table before the entry
        (a study run twice appears once; the entry's own study is left out).
    openings : tuple of LedgerEntry
        Earlier openings of the same hold-out, oldest first.
    other_holdout_studies : tuple of str
        Earlier studies (distinct) that sealed no rows or other rows: the
        entry's hold-out rows may have been development rows for them.
    """

    prior_studies: tuple[str, ...]
    openings: tuple[LedgerEntry, ...]
    other_holdout_studies: tuple[str, ...]

    @property
    def n_prior_studies(self) -> int:
        """Number of distinct other studies run before."""
        return len(self.prior_studies)

    @property
    def n_prior_openings(self) -> int:
        """Number of earlier openings of the same hold-out."""
        return len(self.openings)

    @property
    def first_opened_by(self) -> str | None:
        """Name of the study that opened the hold-out first, if any did."""
        return self.openings[0].study_name if self.openings else None

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready form."""
        return {
            "prior_studies": list(self.prior_studies),
            "n_prior_studies": self.n_prior_studies,
            "n_prior_openings": self.n_prior_openings,
            "first_opened_by": self.first_opened_by,
            "first_opened_at": self.openings[0].time if self.openings else None,
            "other_holdout_studies": list(self.other_holdout_studies),
        }


def ledger_history(
    entries: Sequence[LedgerEntry],
    *,
    study_hash: str,
    holdout: str | None,
    before: int | None = None,
) -> LedgerHistory:
    """Counts of prior studies and prior openings, seen from one study.

    Parameters
    ----------
    entries : sequence of LedgerEntry
        The entries of one table, oldest first.
    study_hash : str
        The study asking; its own earlier runs are not "other studies".
    holdout : str or None
        The key of the study's hold-out rows (``None``: no hold-out); openings are
        counted for this key only.
    before : int or None, default=None
        Count entries with ``entry_id < before`` (the entry's own id); ``None``
        counts all.

    Returns
    -------
    LedgerHistory
    """
    seen: list[str] = []
    names: list[str] = []
    other: list[str] = []
    openings: list[LedgerEntry] = []
    for entry in entries:
        if (
            before is not None
            and entry.entry_id is not None
            and entry.entry_id >= before
        ):
            continue
        if entry.kind == "opening":
            if holdout is not None and entry.holdout == holdout:
                openings.append(entry)
            continue
        if entry.study_hash == study_hash or entry.study_hash in seen:
            continue
        seen.append(entry.study_hash)
        names.append(entry.study_name)
        if holdout is not None and entry.holdout != holdout:
            other.append(entry.study_name)
    return LedgerHistory(
        prior_studies=tuple(names),
        openings=tuple(openings),
        other_holdout_studies=tuple(other),
    )
