"""A damaged run store is one line that says what is wrong and how to start over."""

from __future__ import annotations

import os
import sqlite3

import pytest

from foldwall.exceptions import RunError
from foldwall.store import RunStore
from foldwall.store._faults import StoreDamagedError, check_store_file, store_faults


@pytest.fixture
def store_file(tmp_path):
    path = tmp_path / "run" / "store.sqlite"
    path.parent.mkdir()
    store = RunStore.create(path, meta={"study_sha256": "x"})
    for i in range(200):
        store.write_unit(
            f"u{i:03d}",
            kind="real",
            seed=i,
            payload={"scores": [0.5] * 50, "note": "y" * 300},
            started=1.0,
            finished=2.0,
        )
    store.close()
    return path


def _damaged(path, match):
    with pytest.raises(StoreDamagedError, match=match) as info:
        check_store_file(path)
    msg = str(info.value)
    assert len(msg.splitlines()) == 1
    assert "--fresh" in msg and "never deleted" in msg
    assert isinstance(
        info.value, RunError
    )  # the command line exits with 3 for RunError
    return msg


def test_a_healthy_store_passes(store_file):
    check_store_file(store_file)


def test_a_store_cut_short_at_a_page_boundary_is_detected(store_file):
    data = store_file.read_bytes()
    store_file.write_bytes(data[: len(data) // 2 // 4096 * 4096])
    _damaged(store_file, "cut short")


def test_a_store_cut_inside_a_page_is_detected(store_file):
    data = store_file.read_bytes()
    store_file.write_bytes(data[: len(data) // 2 + 100])
    _damaged(store_file, "ends inside a page")


def test_a_corrupted_page_is_detected(store_file):
    data = bytearray(store_file.read_bytes())
    rng = __import__("random").Random(0)
    for page in (3, 5, 8):
        start = page * 4096
        data[start : start + 300] = bytes(rng.randrange(256) for _ in range(300))
    store_file.write_bytes(bytes(data))
    msg = _damaged(store_file, "is damaged")
    assert "\n" not in msg


def test_files_that_are_not_stores(tmp_path):
    empty = tmp_path / "empty.sqlite"
    empty.write_bytes(b"")
    _damaged(empty, "the file is empty")
    text = tmp_path / "text.sqlite"
    text.write_bytes(b"not a database at all, " * 20)
    _damaged(text, "not a complete SQLite file")


def test_database_errors_inside_a_run_become_one_line(tmp_path):
    with (
        pytest.raises(
            StoreDamagedError, match="damaged .database disk image is malformed"
        ),
        store_faults(tmp_path / "store.sqlite"),
    ):
        raise sqlite3.DatabaseError("database disk image is malformed")
    with (
        pytest.raises(RunError, match="cannot be written: disk I/O error") as info,
        store_faults(tmp_path / "store.sqlite"),
    ):
        raise sqlite3.OperationalError("disk I/O error")
    assert not isinstance(info.value, StoreDamagedError)


def test_check_is_quick_on_a_large_store(store_file):
    import time

    t0 = time.perf_counter()
    for _ in range(5):
        check_store_file(store_file)
    assert time.perf_counter() - t0 < 2.0
    assert os.path.getsize(store_file) > 100_000
