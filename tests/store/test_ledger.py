"""The table's ledger: append-only, safe under concurrent appends, Holm over studies."""

from __future__ import annotations

import math
import multiprocessing
import os
import sqlite3
import sys

import numpy as np
import pytest
from statsmodels.stats.multitest import multipletests

from foldwall.exceptions import RunError, SpecError
from foldwall.store import (
    LedgerEntry,
    append_entry,
    append_or_explain,
    control_family,
    default_ledger_path,
    ledger_history,
    read_entries,
)

TABLE = "a" * 64


def _run(name, p, *, table=TABLE, **kw):
    fields = {"study_hash": f"hash-{name}", "metric": "roc_auc", "score": 0.6, **kw}
    return LedgerEntry(
        table_hash=table, kind="run", study_name=name, control_p=p, **fields
    )


def _opening(name: str, holdout: str = "sealed-1") -> LedgerEntry:
    return LedgerEntry(
        table_hash=TABLE,
        kind="opening",
        study_name=name,
        study_hash=f"hash-{name}",
        metric="roc_auc",
        score=0.7,
        control_p=0.02,
        holdout=holdout,
        holdout_opened=True,
    )


def test_entries_come_back_as_written_in_order(tmp_path):
    path = tmp_path / "t.ledger.sqlite"
    first = append_entry(
        path,
        _run("a", 0.05, comparison_p={"a vs chance": 0.2, "a vs b": None}),
    )
    second = append_entry(path, _run("b", None, score=float("nan")))
    other = append_entry(path, _run("c", 0.5, table="b" * 64))
    got = read_entries(path, TABLE)
    assert [e.study_name for e in got] == ["a", "b"]
    assert got[0] == first and got[1].entry_id == second.entry_id
    assert got[0].comparison_p == {"a vs b": None, "a vs chance": 0.2}
    assert got[1].score is None  # NaN is stored as missing
    assert first.entry_id < second.entry_id < other.entry_id
    assert len(read_entries(path)) == 3


def test_default_path_is_beside_the_table(tmp_path):
    table = tmp_path / "data" / "wards.csv"
    assert default_ledger_path(table) == tmp_path / "data" / "wards.csv.ledger.sqlite"


@pytest.mark.parametrize(
    "sql",
    [
        "UPDATE entries SET control_p = 0.001",
        "DELETE FROM entries",
        "UPDATE ledger_info SET value = '9'",
        "DELETE FROM ledger_info",
    ],
)
def test_rows_cannot_be_rewritten(tmp_path, sql):
    path = tmp_path / "t.ledger.sqlite"
    append_entry(path, _run("a", 0.3))
    conn = sqlite3.connect(path)
    with pytest.raises(sqlite3.IntegrityError, match="append-only"):
        conn.execute(sql)
    conn.close()
    assert read_entries(path, TABLE)[0].control_p == 0.3


def _append_many(path, worker, n, barrier):
    for i in range(n):
        # both processes race for every append: on a busy machine one of them could
        # otherwise finish all its appends before the other starts
        barrier.wait(60)
        append_entry(path, _run(f"w{worker}-{i}", (i + 1) / (n + 1)))


def test_two_processes_appending_at_once_lose_nothing(tmp_path):
    path = str(tmp_path / "t.ledger.sqlite")  # created by the racing processes
    ctx = multiprocessing.get_context("spawn")
    barrier = ctx.Barrier(2)
    procs = [
        ctx.Process(target=_append_many, args=(path, w, 60, barrier)) for w in (0, 1)
    ]
    for p in procs:
        p.start()
    for p in procs:
        p.join(180)
    assert [p.exitcode for p in procs] == [0, 0]
    got = read_entries(path, TABLE)
    names = {e.study_name for e in got}
    assert len(got) == 120
    assert names == {f"w{w}-{i}" for w in (0, 1) for i in range(60)}
    assert len({e.entry_id for e in got}) == 120
    # the appends really interleaved (otherwise the test proves nothing about locking)
    order = [e.study_name.split("-")[0] for e in got]
    switches = sum(a != b for a, b in zip(order, order[1:], strict=False))
    assert switches >= 60


@pytest.mark.skipif(
    sys.platform == "win32" or os.geteuid() == 0,
    reason="permissions are not enforced for root",
)
def test_an_unwritable_ledger_gives_one_line_and_no_exception(tmp_path):
    locked = tmp_path / "locked"
    locked.mkdir()
    locked.chmod(0o500)
    try:
        stored, message = append_or_explain(locked / "t.ledger.sqlite", _run("a", 0.2))
    finally:
        locked.chmod(0o700)
    assert stored is None
    assert message is not None and "\n" not in message
    assert "ledger" in message and "results are kept" in message


def test_a_ledger_path_that_cannot_exist_gives_one_line(tmp_path):
    # works for root too: the parent of the ledger path is a file, not a directory
    (tmp_path / "plain_file").write_text("x")
    stored, message = append_or_explain(
        tmp_path / "plain_file" / "t.sqlite", _run("a", 0.2)
    )
    assert stored is None and message is not None and "\n" not in message
    stored, message = append_or_explain(tmp_path, _run("a", 0.2))  # a directory
    assert stored is None and "is a directory" in message


def test_a_file_that_is_not_a_ledger_is_refused_in_one_line(tmp_path):
    path = tmp_path / "notes.txt"
    path.write_text("not a database, just text\n" * 100)
    stored, message = append_or_explain(path, _run("a", 0.2))
    assert stored is None and "\n" not in message
    other = tmp_path / "other.sqlite"
    conn = sqlite3.connect(other)
    conn.execute("CREATE TABLE t (x)")
    conn.commit()
    conn.close()
    with pytest.raises(RunError, match="not a foldwall ledger"):
        append_entry(other, _run("a", 0.2))
    assert path.read_text().startswith("not a database")


def test_missing_directory_and_missing_file_are_named(tmp_path):
    with pytest.raises(RunError, match="does not exist"):
        append_entry(tmp_path / "nope" / "t.ledger.sqlite", _run("a", 0.2))
    with pytest.raises(RunError, match="no ledger at"):
        read_entries(tmp_path / "absent.sqlite")


@pytest.mark.parametrize(
    ("change", "match"),
    [
        ({"control_p": 1.5}, "control_p must lie in"),
        ({"kind": "peek"}, "kind must be"),
        ({"study_name": ""}, "study_name"),
        ({"comparison_p": {"a vs b": -0.1}}, "comparison_p"),
        ({"holdout_opened": True}, "holdout_opened"),
    ],
)
def test_malformed_entries_are_refused_before_writing(tmp_path, change, match):
    import dataclasses

    entry = dataclasses.replace(_run("a", 0.2), **change)
    with pytest.raises(SpecError, match=match):
        append_entry(tmp_path / "t.ledger.sqlite", entry)
    assert not (tmp_path / "t.ledger.sqlite").exists()


def test_holm_over_studies_equals_statsmodels(tmp_path):
    # source: statsmodels.stats.multitest.multipletests(method="holm")
    path = tmp_path / "t.ledger.sqlite"
    ps = [0.05, 0.2, 0.01, 0.65, 0.05, 0.35, 0.15]
    for i, p in enumerate(ps):
        append_entry(path, _run(f"s{i}", p))
    family = control_family(read_entries(path, TABLE))
    expected = multipletests(ps, method="holm")[1]
    np.testing.assert_allclose(family.adjusted, expected, rtol=1e-12)
    assert family.study_names == tuple(f"s{i}" for i in range(7))
    assert family.adjusted_for("hash-s2") == pytest.approx(expected[2])


def test_holm_matches_the_published_small_example():
    # REFERENCES.md section 7, example 2 (verified there with statsmodels):
    # p = [0.01, 0.04, 0.03, 0.005] -> Holm [0.03, 0.06, 0.06, 0.02]
    entries = [
        LedgerEntry(TABLE, "run", f"s{i}", f"h{i}", control_p=p, entry_id=i + 1)
        for i, p in enumerate([0.01, 0.04, 0.03, 0.005])
    ]
    family = control_family(entries)
    np.testing.assert_allclose(family.adjusted, [0.03, 0.06, 0.06, 0.02], rtol=1e-9)


def test_family_counts_a_study_once_and_a_study_without_control_as_p_one():
    entries = [
        LedgerEntry(TABLE, "run", "first", "h1", control_p=0.02, entry_id=1),
        LedgerEntry(TABLE, "run", "first again", "h1", control_p=0.5, entry_id=2),
        LedgerEntry(TABLE, "run", "no control", "h2", control_p=None, entry_id=3),
        LedgerEntry(
            TABLE,
            "opening",
            "first",
            "h1",
            control_p=0.001,
            holdout="k",
            holdout_opened=True,
            entry_id=4,
        ),
        LedgerEntry(TABLE, "run", "late", "h3", control_p=0.04, entry_id=5),
    ]
    family = control_family(entries)
    assert family.study_hashes == ("h1", "h2", "h3")
    assert family.p_values == (0.02, 1.0, 0.04)
    assert family.without_control == ("no control",)
    np.testing.assert_allclose(
        family.adjusted, multipletests([0.02, 1.0, 0.04], method="holm")[1]
    )
    as_then = control_family(entries, upto=3)
    assert as_then.size == 2 and as_then.adjusted[0] == pytest.approx(0.04)
    # 19 permutations and 3 studies: no adjusted p can go below 3/20
    assert family.smallest_attainable(19) == pytest.approx(0.15)


def test_mixed_tables_are_refused():
    with pytest.raises(SpecError, match="one table"):
        control_family([_run("a", 0.1), _run("b", 0.1, table="c" * 64)])


def test_history_counts_prior_studies_and_openings_of_the_same_holdout():
    entries = [
        LedgerEntry(TABLE, "run", "plain", "h0", control_p=0.3, entry_id=1),
        LedgerEntry(TABLE, "run", "v1", "h1", control_p=0.3, holdout="k", entry_id=2),
        LedgerEntry(
            TABLE, "opening", "v1", "h1", holdout="k", holdout_opened=True, entry_id=3
        ),
        LedgerEntry(TABLE, "run", "v2", "h2", control_p=0.1, holdout="k", entry_id=4),
        LedgerEntry(
            TABLE, "opening", "v2", "h2", holdout="k", holdout_opened=True, entry_id=5
        ),
        LedgerEntry(
            TABLE,
            "opening",
            "x",
            "hx",
            holdout="other",
            holdout_opened=True,
            entry_id=6,
        ),
        LedgerEntry(TABLE, "run", "v2", "h2", control_p=0.1, holdout="k", entry_id=7),
    ]
    seen_by_v2 = ledger_history(entries, study_hash="h2", holdout="k", before=7)
    assert seen_by_v2.prior_studies == ("plain", "v1")
    assert seen_by_v2.n_prior_openings == 2
    assert seen_by_v2.first_opened_by == "v1"
    # the plain study used every row, the hold-out's rows included
    assert seen_by_v2.other_holdout_studies == ("plain",)
    at_start = ledger_history(entries, study_hash="h1", holdout="k", before=2)
    assert at_start.n_prior_studies == 1 and at_start.n_prior_openings == 0
    assert at_start.to_dict()["first_opened_by"] is None


def test_to_dict_is_plain_json():
    import json

    entry = _run("a", 0.2, comparison_p={"a vs b": float("nan")}, score=math.inf)
    text = json.dumps(entry.to_dict(), allow_nan=False)
    assert '"a vs b": null' in text and '"score": null' in text
