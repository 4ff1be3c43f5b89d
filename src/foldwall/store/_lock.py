"""The run-folder lock: one run writes to a run folder at a time.

A run takes the lock by creating ``run.lock`` in its folder with ``O_EXCL`` (so
exactly one of two racing runs succeeds) and writes into it the host name, the
process id, the process's start time and the time the lock was taken. A second
run on the same folder reads that file and refuses with one line naming the
holder.

A lock is *stale* when its holder is gone: same host, and no process with that id
is running (or one is, but it started after the lock was taken, so the id was
reused). A stale lock is replaced, and the caller gets a note saying so. A lock
held on another host can never be judged from here; the message says which host
holds it and that the file may be removed once that run is known to be gone.
"""

from __future__ import annotations

import json
import os
import secrets
import socket
import time
from dataclasses import dataclass
from pathlib import Path
from types import TracebackType
from typing import Any, Self

from ..exceptions import SpecError
from ..table import sanitise

__all__ = ["LOCK_NAME", "LockHolder", "RunFolderBusyError", "RunLock"]

LOCK_NAME = "run.lock"


class RunFolderBusyError(SpecError):
    """Another foldwall run holds the run folder's lock."""


@dataclass(frozen=True)
class LockHolder:
    """Who holds a lock, as written in the lock file."""

    host: str
    pid: int
    started: float
    process_started: float | None = None
    token: str = ""

    def describe(self) -> str:
        when = time.strftime("%Y-%m-%d %H:%M:%S", time.localtime(self.started))
        return f"process {self.pid} on host '{_clean(self.host)}', since {when}"


def _clean(text: str) -> str:
    return sanitise(text, limit=60)


def _host() -> str:
    return socket.gethostname()


def _boot_time() -> float | None:
    try:
        with open("/proc/stat", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("btime "):
                    return float(line.split()[1])
    except OSError:
        return None
    return None


def process_start_time(pid: int) -> float | None:
    """When process ``pid`` started (seconds since the epoch), where the system tells it (Linux)."""
    boot = _boot_time()
    if boot is None:
        return None
    try:
        with open(f"/proc/{pid}/stat", encoding="ascii", errors="replace") as fh:
            text = fh.read()
    except OSError:
        return None
    # the command name (field 2) may hold spaces and parentheses: split after the last ')'
    fields = text.rpartition(")")[2].split()
    try:
        ticks = int(
            fields[19]
        )  # field 22 of the whole line: start time in clock ticks after boot
    except (IndexError, ValueError):
        return None
    return boot + ticks / os.sysconf("SC_CLK_TCK")


def _alive(pid: int) -> bool:
    if pid <= 0:
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True  # it exists, under another user
    return True


def _read(path: Path) -> LockHolder | None:
    try:
        raw: Any = json.loads(path.read_text(encoding="utf-8"))
        return LockHolder(
            host=str(raw["host"]),
            pid=int(raw["pid"]),
            started=float(raw["started"]),
            process_started=None
            if raw.get("process_started") is None
            else float(raw["process_started"]),
            token=str(raw.get("token", "")),
        )
    except (OSError, ValueError, KeyError, TypeError):
        return None


class RunLock:
    """Hold a run folder for one run.

    Parameters
    ----------
    folder : path-like
        The run folder; it must exist.

    Examples
    --------
    >>> with RunLock(run_dir) as lock:  # doctest: +SKIP
    ...     if lock.note:
    ...         print(lock.note)
    ...     run()
    """

    def __init__(self, folder: str | os.PathLike[str]) -> None:
        self.folder = Path(folder)
        self.path = self.folder / LOCK_NAME
        self.note: str | None = None
        self._token: str | None = None

    def acquire(self) -> Self:
        """Take the lock, replacing a stale one (see :attr:`note`).

        Raises
        ------
        RunFolderBusyError
            When a live run holds it, or one on another host does.
        """
        me = LockHolder(
            host=_host(),
            pid=os.getpid(),
            started=time.time(),
            process_started=process_start_time(os.getpid()),
            token=secrets.token_hex(8),
        )
        for _ in range(5):
            try:
                fd = os.open(self.path, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
            except FileExistsError:
                self._judge_existing()
                continue
            except OSError as exc:
                raise SpecError(
                    f"--out '{_clean(str(self.folder))}': cannot create the lock file ({exc.strerror}); "
                    f"choose a writable folder"
                ) from None
            with os.fdopen(fd, "w", encoding="utf-8") as fh:
                json.dump(
                    {
                        "host": me.host,
                        "pid": me.pid,
                        "started": me.started,
                        "process_started": me.process_started,
                        "token": me.token,
                    },
                    fh,
                )
            self._token = me.token
            return self
        raise RunFolderBusyError(  # pragma: no cover - five lost races in a row
            f"--out '{_clean(str(self.folder))}': another run keeps taking the lock; try again"
        )

    def _judge_existing(self) -> None:
        holder = _read(self.path)
        where = f"--out '{_clean(str(self.folder))}'"
        if holder is None:
            # being written this very moment, or damaged: give a writer a moment first
            time.sleep(0.2)
            holder = _read(self.path)
            if holder is None:
                if not self.path.exists():
                    return
                age = time.time() - self.path.stat().st_mtime
                if age < 5:
                    raise RunFolderBusyError(
                        f"{where} is being taken by another run just now; try again"
                    )
                self._replace(
                    f"replaced an unreadable lock file {LOCK_NAME} in '{_clean(str(self.folder))}'"
                )
                return
        if holder.host != _host():
            raise RunFolderBusyError(
                f"{where} is in use by another foldwall run ({holder.describe()}); if that run has ended, "
                f"delete {self.path} and run again"
            )
        if _alive(holder.pid):
            begun = process_start_time(holder.pid)
            reused = (
                begun is not None
                and holder.process_started is not None
                and abs(begun - holder.process_started) > 2.0
            )
            if not reused:
                raise RunFolderBusyError(
                    f"{where} is in use by another foldwall run ({holder.describe()}); wait for it to finish, "
                    f"or stop it and run the same command again to resume"
                )
        self._replace(
            f"replaced a stale lock in '{_clean(str(self.folder))}' left by {holder.describe()}, "
            f"which is no longer running"
        )

    def _replace(self, note: str) -> None:
        aside = self.path.with_name(f"{LOCK_NAME}.stale-{secrets.token_hex(4)}")
        try:
            os.rename(self.path, aside)  # atomic: of two runs replacing it, one wins
        except FileNotFoundError:
            return  # the other one moved it first; try to create again
        aside.unlink(missing_ok=True)
        self.note = note

    def release(self) -> None:
        """Give the lock back (only if this lock still holds it). Releasing twice is harmless."""
        if self._token is None:
            return
        holder = _read(self.path)
        if holder is not None and holder.token == self._token:
            self.path.unlink(missing_ok=True)
        self._token = None

    @property
    def held(self) -> bool:
        """Whether this object holds the lock."""
        return self._token is not None

    def __enter__(self) -> Self:
        return self.acquire()

    def __exit__(
        self,
        exc_type: type[BaseException] | None,
        exc: BaseException | None,
        tb: TracebackType | None,
    ) -> None:
        self.release()
