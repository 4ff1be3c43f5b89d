"""A damaged run store ends in one line that says what is wrong and how to start over.

A store can be damaged by a disk that filled up, a copy that was cut short, or
someone editing the file. SQLite then raises ``sqlite3.DatabaseError`` from
whatever query first touches the bad page, possibly deep inside a run. This module
checks a store file before it is used (its header against its length, then
SQLite's own ``PRAGMA quick_check``) and turns any later ``DatabaseError`` into a
:class:`StoreDamagedError`, a ``RunError`` whose message is one line (the command
line exits with status 3).
"""

from __future__ import annotations

import os
import sqlite3
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from ..exceptions import RunError
from ..table import sanitise

__all__ = ["StoreDamagedError", "check_store_file", "damaged_message", "store_faults"]

_MAGIC = b"SQLite format 3\x00"
_HEADER = 100


class StoreDamagedError(RunError):
    """The run store file is truncated or corrupt."""


def damaged_message(path: str | os.PathLike[str], detail: str) -> str:
    """One line: which store, what is wrong, how to start over."""

    folder = Path(path).parent
    return (
        f"the run store '{sanitise(str(path), limit=100)}' is damaged ({sanitise(detail, limit=100)}); "
        f"its units cannot be trusted. Start over with --fresh (or --replace for a finished run): the damaged "
        f"run in '{sanitise(str(folder), limit=100)}' is moved aside, never deleted"
    )


def check_store_file(path: str | os.PathLike[str]) -> None:
    """Check a store file's header, length and pages before it is used.

    Raises
    ------
    StoreDamagedError
        One line naming the file, what is wrong and the fix.
    """
    p = Path(path)
    try:
        size = p.stat().st_size
        with open(p, "rb") as fh:
            header = fh.read(_HEADER)
    except OSError as exc:
        raise StoreDamagedError(
            damaged_message(p, f"cannot be read: {exc.strerror}")
        ) from None
    if size == 0:
        raise StoreDamagedError(damaged_message(p, "the file is empty"))
    if len(header) < _HEADER or not header.startswith(_MAGIC):
        raise StoreDamagedError(damaged_message(p, "it is not a complete SQLite file"))
    page = int.from_bytes(header[16:18], "big")
    page = 65536 if page == 1 else page
    if page < 512 or page & (page - 1):
        raise StoreDamagedError(
            damaged_message(p, f"its header gives an impossible page size {page}")
        )
    if size % page:
        raise StoreDamagedError(
            damaged_message(
                p, f"the file ends inside a page ({size} bytes): it was cut short"
            )
        )
    n_pages = int.from_bytes(header[28:32], "big")
    valid_for = int.from_bytes(header[92:96], "big")
    changes = int.from_bytes(header[24:28], "big")
    if n_pages and valid_for == changes and n_pages * page > size:
        raise StoreDamagedError(
            damaged_message(
                p,
                f"the header counts {n_pages} pages but the file holds {size // page}: it was cut short",
            )
        )
    try:
        conn = sqlite3.connect(
            p.resolve().as_uri() + "?mode=rw", uri=True, timeout=30.0
        )
    except sqlite3.Error as exc:
        raise StoreDamagedError(damaged_message(p, str(exc))) from None
    try:
        rows = conn.execute("PRAGMA quick_check").fetchall()
    except sqlite3.DatabaseError as exc:
        raise StoreDamagedError(damaged_message(p, str(exc))) from None
    finally:
        conn.close()
    if rows != [("ok",)]:
        lines = [
            ln
            for r in rows
            for ln in str(r[0]).splitlines()
            if not ln.startswith("***")
        ]
        first = lines[0] if lines else "no answer"
        raise StoreDamagedError(damaged_message(p, f"SQLite's check reports: {first}"))


@contextmanager
def store_faults(path: str | os.PathLike[str]) -> Iterator[None]:
    """Turn ``sqlite3.DatabaseError`` raised inside the block into :class:`StoreDamagedError`.

    ``sqlite3.OperationalError`` about a locked database or a full disk is not
    damage; it is reported as a plain ``RunError`` line.
    """
    try:
        yield
    except sqlite3.OperationalError as exc:
        text = str(exc)
        if "malformed" in text or "not a database" in text:
            raise StoreDamagedError(damaged_message(path, text)) from None
        raise RunError(f"the run store '{path}' cannot be written: {text}") from None
    except sqlite3.DatabaseError as exc:
        raise StoreDamagedError(damaged_message(path, str(exc))) from None
