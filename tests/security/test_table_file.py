"""Tables are regular files, read once, within a size limit, and never echoed raw."""

from __future__ import annotations

import hashlib
import os
import time

import pandas as pd
import pytest

from foldwall.exceptions import DataError
from foldwall.table._file import excerpt_names, open_table, parse_table, sanitise


def _refused(match: str, path, **kw) -> str:
    t0 = time.perf_counter()
    with pytest.raises(DataError, match=match) as info:
        parse_table(open_table(path, **kw))
    assert time.perf_counter() - t0 < 5.0
    msg = str(info.value)
    assert len(msg.splitlines()) == 1 and msg.startswith("data.table: ")
    return msg


def test_a_csv_is_read_once_and_hashed_from_the_same_bytes(tmp_path):
    p = tmp_path / "t.csv"
    pd.DataFrame({"a": [1, 2], "y": [0, 1]}).to_csv(p, index=False)
    tf = open_table(p)
    assert tf.sha256 == hashlib.sha256(p.read_bytes()).hexdigest()
    assert parse_table(tf).to_dict("list") == {"a": [1, 2], "y": [0, 1]}
    assert not tf.via_link


def test_link_to_a_process_environment_is_refused_and_its_target_named(tmp_path):
    link = tmp_path / "table.csv"
    link.symlink_to("/proc/self/environ")
    msg = _refused("system file", link)
    assert "a link to '/proc/" in msg
    assert (
        "PATH=" not in msg and "HOME=" not in msg
    )  # nothing of the environment is shown


def test_devices_and_pseudo_files_are_refused():
    _refused("system file", "/dev/zero")
    _refused("system file", "/proc/self/status")


def test_a_fifo_is_refused_without_blocking(tmp_path):
    fifo = tmp_path / "t.csv"
    os.mkfifo(fifo)
    _refused(r"is a pipe \(FIFO\)", fifo)  # no writer: a blocking open would hang here


def test_a_folder_is_refused(tmp_path):
    (tmp_path / "t.csv").mkdir()
    _refused("is a folder", tmp_path / "t.csv")


def test_size_limit_is_configurable_and_checked_before_reading(tmp_path):
    p = tmp_path / "t.csv"
    with open(p, "wb") as fh:
        fh.truncate(3 * 1024 * 1024)
    msg = _refused(r"is 3 MiB, above the limit of 1 MiB", p, max_bytes=1024 * 1024)
    assert "--max-table-mb" in msg


def test_a_table_outside_the_allowed_folder_is_refused_through_links_too(tmp_path):
    inside, outside = tmp_path / "study", tmp_path / "elsewhere"
    inside.mkdir()
    outside.mkdir()
    (outside / "secret.csv").write_text("API_TOKEN=abc\n")
    _refused("outside the study's folder", outside / "secret.csv", inside=inside)
    (inside / "t.csv").symlink_to(outside / "secret.csv")
    msg = _refused("outside the study's folder", inside / "t.csv", inside=inside)
    assert "a link to" in msg and "API_TOKEN" not in msg
    (inside / "ok.csv").write_text("a,y\n1,0\n2,1\n")
    assert len(parse_table(open_table(inside / "ok.csv", inside=inside))) == 2


def test_too_many_columns_are_refused_from_the_header(tmp_path):
    p = tmp_path / "t.csv"
    p.write_text(
        ",".join(f"c{i}" for i in range(50)) + "\n" + ",".join("0" * 50) + "\n"
    )
    with pytest.raises(
        DataError,
        match="has about 50 columns on its header line, above the limit of 10",
    ):
        parse_table(open_table(p), max_columns=10)


def test_parquet_that_unpacks_too_far_is_refused_from_its_metadata(tmp_path):
    p = tmp_path / "t.parquet"
    pd.DataFrame({"a": ["x" * 1000] * 20_000, "y": [0, 1] * 10_000}).to_parquet(p)
    assert (
        p.stat().st_size < 100_000
    )  # dictionary and run-length encoding hide 20 MB of text
    with pytest.raises(DataError, match="unpacks to"):
        parse_table(open_table(p), max_bytes=50_000)
    assert len(parse_table(open_table(p), max_bytes=1_000_000_000)) == 20_000


def test_unreadable_csv_is_one_sanitised_line(tmp_path):
    p = tmp_path / "t.csv"
    p.write_bytes(b'a,b\n1,2\n\x1b[31m,"unterminated\n')
    with pytest.raises(DataError) as info:
        parse_table(open_table(p))
    assert len(str(info.value).splitlines()) == 1 and "\x1b" not in str(info.value)


def test_sanitise_escapes_control_and_format_characters_and_cuts():
    assert sanitise("a\nb\x1b[2J\u202ec") == "a\\x0ab\\x1b[2J\\u202ec"
    assert sanitise("x" * 100, limit=10) == "x" * 10 + "..."
    assert sanitise(b"ok\xff") == "ok\\xff"
    assert sanitise("été") == "été"  # printable text stays readable


def test_excerpt_names_shows_a_few_cut_names_and_a_count():
    names = [f"secret_{i}_" + "x" * 50 for i in range(40)]
    got = excerpt_names(names)
    assert got.count("'") == 10 and got.endswith("... (35 more)")
    assert len(got) < 250
