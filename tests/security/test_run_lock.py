"""One run per run folder: a second run is refused naming the holder; stale locks are replaced."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import time

import pytest

from foldwall.store._lock import LOCK_NAME, RunFolderBusyError, RunLock


def _write_lock(folder, **fields):
    base = {
        "host": os.uname().nodename,
        "pid": os.getpid(),
        "started": time.time(),
        "process_started": None,
        "token": "x",
    }
    base.update(fields)
    (folder / LOCK_NAME).write_text(json.dumps(base))


def _dead_pid() -> int:
    proc = subprocess.Popen([sys.executable, "-c", "pass"])
    proc.wait()
    return proc.pid


def test_second_run_on_the_same_folder_is_refused_naming_the_holder(tmp_path):
    with RunLock(tmp_path) as first:
        assert first.held and first.note is None
        holder = json.loads((tmp_path / LOCK_NAME).read_text())
        assert holder["pid"] == os.getpid() and holder["host"]
        with pytest.raises(
            RunFolderBusyError,
            match=rf"in use by another foldwall run \(process {os.getpid()} on host",
        ):
            RunLock(tmp_path).acquire()
    assert not (tmp_path / LOCK_NAME).exists()  # released


def test_a_lock_held_by_a_live_process_in_another_program_is_respected(tmp_path):
    child = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(30)"])
    try:
        _write_lock(tmp_path, pid=child.pid)
        with pytest.raises(RunFolderBusyError, match=f"process {child.pid}") as info:
            RunLock(tmp_path).acquire()
        assert len(str(info.value).splitlines()) == 1
    finally:
        child.kill()
        child.wait()


def test_stale_lock_of_a_dead_process_is_replaced_with_a_note(tmp_path):
    pid = _dead_pid()
    _write_lock(tmp_path, pid=pid)
    with RunLock(tmp_path) as lock:
        assert (
            lock.note is not None
            and f"process {pid}" in lock.note
            and "no longer running" in lock.note
        )
        assert json.loads((tmp_path / LOCK_NAME).read_text())["pid"] == os.getpid()
    assert [
        p.name for p in tmp_path.iterdir()
    ] == []  # the stale file is not left beside


def test_a_reused_process_id_counts_as_stale(tmp_path):
    # this process is alive, but the lock says the process with its id started long before
    _write_lock(tmp_path, pid=os.getpid(), process_started=1.0)
    from foldwall.store._lock import process_start_time

    if process_start_time(os.getpid()) is None:
        pytest.skip("process start times are not available on this system")
    with RunLock(tmp_path) as lock:
        assert lock.note is not None


def test_a_lock_from_another_host_is_never_judged_from_here(tmp_path):
    _write_lock(tmp_path, host="other-machine", pid=_dead_pid())
    with pytest.raises(
        RunFolderBusyError, match=r"host 'other-machine'.*delete .*run\.lock"
    ):
        RunLock(tmp_path).acquire()


def test_release_leaves_a_lock_taken_over_by_someone_else(tmp_path):
    lock = RunLock(tmp_path).acquire()
    _write_lock(tmp_path, token="someone-else")
    lock.release()
    assert (tmp_path / LOCK_NAME).exists()


def test_racing_runs_get_exactly_one_lock(tmp_path):
    import threading

    barrier = threading.Barrier(4)
    results: list[str] = []

    def take() -> None:
        barrier.wait()
        try:
            RunLock(tmp_path).acquire()
            results.append("got")
        except RunFolderBusyError:
            results.append("busy")

    threads = [threading.Thread(target=take) for _ in range(4)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(timeout=30)
    assert sorted(results) == ["busy", "busy", "busy", "got"]
