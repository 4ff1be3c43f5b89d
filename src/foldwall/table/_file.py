"""Opening a table file that someone else named: regular files only, bounded, quoted safely.

The table of a study is named by the study file, which may come from someone
else. Opening it must therefore never block (a FIFO), never read a device or a
system file (``/proc/self/environ`` holds a process's secrets), never read more
than a set number of bytes, and never echo more than a short, escaped excerpt of
the file in a message.

The file is read once into memory; its SHA-256 and the parsed table come from the
same bytes, so the hash recorded with a run is the hash of what was analysed.
"""

from __future__ import annotations

import hashlib
import io
import os
import stat
from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pandas as pd

from ..exceptions import DataError

__all__ = [
    "DEFAULT_MAX_COLUMNS",
    "DEFAULT_MAX_TABLE_BYTES",
    "TableFile",
    "excerpt_names",
    "open_table",
    "parse_table",
    "sanitise",
]

DEFAULT_MAX_TABLE_BYTES = 512 * 1024 * 1024
"""Largest table file read by default (512 MiB); foldwall is for small data."""

DEFAULT_MAX_COLUMNS = 100_000
"""Most columns a table may have (counted on the header line before parsing)."""

# Pseudo file systems: their files describe the machine or a process, never a table.
_SYSTEM_ROOTS = ("/proc", "/sys", "/dev")
_KINDS = {
    stat.S_IFIFO: "a pipe (FIFO)",
    stat.S_IFCHR: "a character device",
    stat.S_IFBLK: "a block device",
    stat.S_IFSOCK: "a socket",
    stat.S_IFDIR: "a folder",
}
_SUFFIXES = {".csv": ",", ".txt": ",", ".tsv": "\t"}
_PARQUET = (".parquet", ".pq")


def sanitise(text: object, *, limit: int = 80) -> str:
    """Text fit for a one-line message: non-printable characters escaped, cut at ``limit``.

    Control characters (newlines, terminal escape sequences), invisible format
    characters (such as right-to-left overrides) and undecodable bytes are shown
    as ``\\x..``/``\\u....`` escapes, so a hostile name can neither break the
    line nor repaint the terminal.

    Parameters
    ----------
    text : object
        Anything; bytes are decoded as UTF-8 with escapes for bad bytes.
    limit : int, default=80
        Characters kept before ``...`` is appended.

    Returns
    -------
    str
    """
    if isinstance(text, bytes):
        text = text.decode("utf-8", errors="backslashreplace")
    out: list[str] = []
    n = 0
    for ch in str(text):
        piece = ch if ch.isprintable() or ch == " " else _escape(ch)
        if n + len(piece) > limit:
            out.append("...")
            break
        out.append(piece)
        n += len(piece)
    return "".join(out)


def _escape(ch: str) -> str:
    code = ord(ch)
    if code < 0x100:
        return f"\\x{code:02x}"
    if code < 0x10000:
        return f"\\u{code:04x}"
    return f"\\U{code:08x}"


def excerpt_names(names: Iterable[object], *, n: int = 5, each: int = 30) -> str:
    """The first ``n`` names, each sanitised and cut at ``each`` characters, then a count.

    >>> excerpt_names(["a", "b", "c", "d", "e", "f", "g"], n=3)
    "'a', 'b', 'c', ... (4 more)"
    """
    names = list(names)
    shown = ", ".join(f"'{sanitise(x, limit=each)}'" for x in names[:n])
    rest = len(names) - n
    return f"{shown}, ... ({rest} more)" if rest > 0 else shown


@dataclass(frozen=True)
class TableFile:
    """The bytes of a table file, read once, with where they came from.

    Attributes
    ----------
    path : Path
        The path as given (relative paths already joined to the study's folder).
    resolved : Path
        The real file after every symbolic link is followed.
    data : bytes
        The whole file.
    sha256 : str
        SHA-256 of ``data`` (hex).
    """

    path: Path
    resolved: Path
    data: bytes
    sha256: str

    @property
    def via_link(self) -> bool:
        """Whether the path went through a symbolic link."""
        return Path(os.path.abspath(self.path)) != self.resolved

    def describe(self) -> str:
        """The path for messages, naming the link target when there is one."""
        return _describe(self.path, self.resolved)


def _describe(path: Path, resolved: Path) -> str:
    shown = sanitise(str(path), limit=100)
    if Path(os.path.abspath(path)) != resolved:
        return f"'{shown}' (a link to '{sanitise(str(resolved), limit=100)}')"
    return f"'{shown}'"


def _mb(n: int) -> str:
    return f"{n / (1024 * 1024):.0f} MiB" if n >= 1024 * 1024 else f"{n} bytes"


def open_table(
    path: str | os.PathLike[str],
    *,
    key: str = "data.table",
    max_bytes: int = DEFAULT_MAX_TABLE_BYTES,
    inside: str | os.PathLike[str] | None = None,
) -> TableFile:
    """Read a table file after checking that it is a regular file of bounded size.

    Parameters
    ----------
    path : path-like
        The table file.
    key : str, default="data.table"
        The study-file key or Python argument that named it (for messages).
    max_bytes : int, default=DEFAULT_MAX_TABLE_BYTES
        Refuse a larger file.
    inside : path-like, default=None
        When given, the real file (links followed) must lie in this folder or
        below it.

    Returns
    -------
    TableFile

    Raises
    ------
    DataError
        One line naming the file (and a link's target), what is wrong and the fix.
    """
    p = Path(path)
    resolved = Path(os.path.realpath(p))
    shown = _describe(p, resolved)
    if not resolved.exists():
        raise DataError(
            f"{key}: file {shown} does not exist; give a CSV or Parquet path relative to the study file"
        )
    if any(resolved == Path(r) or Path(r) in resolved.parents for r in _SYSTEM_ROOTS):
        raise DataError(
            f"{key}: {shown} is a system file, not a table; give the path of a CSV or Parquet file"
        )
    if inside is not None:
        base = Path(os.path.realpath(inside))
        if resolved != base and base not in resolved.parents:
            raise DataError(
                f"{key}: {shown} lies outside the study's folder '{sanitise(str(base), limit=100)}'; "
                f"copy the table next to the study file, or name it yourself on the command line"
            )
    flags = (
        os.O_RDONLY
        | getattr(os, "O_NONBLOCK", 0)
        | getattr(os, "O_NOCTTY", 0)
        | getattr(os, "O_NOFOLLOW", 0)
    )
    try:
        fd = os.open(resolved, flags)
    except OSError as exc:
        raise DataError(
            f"{key}: cannot open {shown} ({exc.strerror}); check the path and its permissions"
        ) from None
    try:
        st = os.fstat(fd)
        if not stat.S_ISREG(st.st_mode):
            kind = _KINDS.get(stat.S_IFMT(st.st_mode), "not a regular file")
            raise DataError(
                f"{key}: {shown} is {kind}, not a table file; give the path of a CSV or Parquet file"
            )
        if st.st_size > max_bytes:
            raise DataError(
                f"{key}: {shown} is {_mb(st.st_size)}, above the limit of {_mb(max_bytes)} for a table; "
                f"raise the limit (--max-table-mb) if the file is really meant"
            )
        chunks: list[bytes] = []
        left = max_bytes + 1
        while left > 0:
            chunk = os.read(fd, min(left, 1 << 20))
            if not chunk:
                break
            chunks.append(chunk)
            left -= len(chunk)
    except OSError as exc:
        raise DataError(f"{key}: cannot read {shown} ({exc.strerror})") from None
    finally:
        os.close(fd)
    data = b"".join(chunks)
    if len(data) > max_bytes:
        raise DataError(
            f"{key}: {shown} grew past the limit of {_mb(max_bytes)} while it was read; "
            f"give a file that is not being written"
        )
    if st.st_size == 0 and data:
        # a file that says it is empty yet has content is generated by the system
        raise DataError(
            f"{key}: {shown} is a generated system file, not a table; give a CSV or Parquet file"
        )
    return TableFile(
        path=p, resolved=resolved, data=data, sha256=hashlib.sha256(data).hexdigest()
    )


def parse_table(
    table: TableFile,
    *,
    key: str = "data.table",
    max_columns: int = DEFAULT_MAX_COLUMNS,
    max_bytes: int = DEFAULT_MAX_TABLE_BYTES,
) -> pd.DataFrame:
    """Parse the bytes of a CSV/TSV or Parquet table into a DataFrame.

    The header line of a CSV is checked for ``max_columns`` before parsing; a
    Parquet file whose uncompressed size exceeds four times ``max_bytes`` is
    refused from its metadata before it is decoded.

    Raises
    ------
    DataError
        One line; any excerpt of the file in it is sanitised.
    """
    suffix = table.path.suffix.lower() or table.resolved.suffix.lower()
    shown = table.describe()
    if not table.data:
        raise DataError(
            f"{key}: {shown} is empty; the table needs a header line and rows"
        )
    if suffix in _PARQUET:
        return _parse_parquet(
            table, key=key, shown=shown, max_columns=max_columns, max_bytes=max_bytes
        )
    if suffix not in _SUFFIXES:
        raise DataError(
            f"{key}: '{sanitise(table.path.name, limit=60)}' is neither .csv, .tsv nor .parquet; "
            f"convert the table to one of those"
        )
    sep = _SUFFIXES[suffix]
    header = table.data.split(b"\n", 1)[0]
    n_cols = header.count(sep.encode()) + 1
    if n_cols > max_columns:
        raise DataError(
            f"{key}: {shown} has about {n_cols} columns on its header line, above the limit of {max_columns}"
        )
    try:
        return pd.read_csv(io.BytesIO(table.data), sep=sep)
    except (
        pd.errors.ParserError,
        pd.errors.EmptyDataError,
        UnicodeDecodeError,
        ValueError,
        OSError,
    ) as exc:
        raise DataError(
            f"{key}: cannot read {shown} as a table: {_first(exc)}"
        ) from None


def _parse_parquet(
    table: TableFile, *, key: str, shown: str, max_columns: int, max_bytes: int
) -> pd.DataFrame:
    try:
        import pyarrow.parquet as pq
    except ImportError:
        raise DataError(
            f"{key}: reading Parquet needs pyarrow; pip install 'foldwall[parquet]'"
        ) from None
    try:
        meta = pq.ParquetFile(io.BytesIO(table.data)).metadata
        n_cols = int(meta.num_columns)
        n_rows = int(meta.num_rows)
        expanded = sum(
            int(meta.row_group(i).column(j).total_uncompressed_size)
            for i in range(meta.num_row_groups)
            for j in range(meta.num_columns)
        )
    except Exception as exc:  # noqa: BLE001 - pyarrow raises its own ArrowInvalid, OSError, ...
        raise DataError(
            f"{key}: cannot read {shown} as Parquet: {_first(exc)}"
        ) from None
    if n_cols > max_columns:
        raise DataError(
            f"{key}: {shown} has {n_cols} columns, above the limit of {max_columns}"
        )
    # Encodings (dictionaries, run lengths) hide how large the decoded table is:
    # count every cell as at least 8 bytes as well.
    expanded = max(expanded, 8 * n_rows * n_cols)
    if expanded > 4 * max_bytes:
        raise DataError(
            f"{key}: {shown} unpacks to {_mb(expanded)}, above four times the table limit of {_mb(max_bytes)}; "
            f"raise the limit (--max-table-mb) if the file is really meant"
        )
    try:
        frame: Any = pd.read_parquet(io.BytesIO(table.data))
    except Exception as exc:  # noqa: BLE001 - as above
        raise DataError(
            f"{key}: cannot read {shown} as Parquet: {_first(exc)}"
        ) from None
    return frame  # type: ignore[no-any-return]


def _first(exc: BaseException) -> str:
    text = (str(exc).strip().splitlines() or [type(exc).__name__])[0]
    return sanitise(text, limit=120)
