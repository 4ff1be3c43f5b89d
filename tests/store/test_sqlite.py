import datetime
import json
import math
import sqlite3
import struct
import subprocess
import sys
import textwrap
import threading
import time

import numpy as np
import pytest

from foldwall.exceptions import RunError, SpecError
from foldwall.store import STORE_SCHEMA_VERSION, RunStore

META = {"study_hash": "ab12", "data_hash": "cd34", "random_state": 7, "version": "0.1"}


def bits(value):
    return struct.unpack("<Q", struct.pack("<d", value))[0]


def from_bits(pattern):
    return struct.unpack("<d", struct.pack("<Q", pattern))[0]


def unit(unit_id, **overrides):
    row = {
        "unit_id": unit_id,
        "kind": "outer_fold",
        "seed": 1,
        "payload": {"score": 0.5},
        "started": 1000.0,
        "finished": 1001.5,
    }
    row.update(overrides)
    return row


@pytest.fixture
def path(tmp_path):
    return tmp_path / "store.sqlite"


@pytest.fixture
def store(path):
    with RunStore.create(path, meta=META) as s:
        yield s


# ------------------------------------------------------------------ create / open


def test_create_then_open_round_trips_meta(path):
    RunStore.create(path, meta=META).close()
    with RunStore.open(path) as s:
        assert s.meta() == META


def test_set_meta_upserts_one_key(store, path):
    store.set_meta("random_state", 8)
    store.set_meta("finished", {"at": 12.5, "nan": math.nan})
    store.close()
    with RunStore.open(path) as s:
        meta = s.meta()
    assert meta["random_state"] == 8
    assert meta["finished"]["at"] == 12.5 and math.isnan(meta["finished"]["nan"])
    assert meta["study_hash"] == "ab12"


def test_meta_key_named_like_store_info_rows_does_not_clash(path):
    # Meta keys live under their own prefix, so a user key "schema_version" is safe.
    RunStore.create(path, meta={"schema_version": 999}).close()
    with RunStore.open(path) as s:
        assert s.meta() == {"schema_version": 999}


def test_create_refuses_an_existing_file(path):
    path.write_text("keep me")
    with pytest.raises(SpecError, match="already exists.*never overwritten"):
        RunStore.create(path, meta=META)
    assert path.read_text() == "keep me"


def test_create_refuses_an_existing_store(store, path):
    with pytest.raises(SpecError, match="already exists"):
        RunStore.create(path, meta=META)
    assert store.meta() == META


def test_create_refuses_a_missing_directory(tmp_path):
    with pytest.raises(SpecError, match="does not exist. Create the run directory"):
        RunStore.create(tmp_path / "nope" / "store.sqlite", meta=META)


def test_create_refuses_a_directory_path(tmp_path):
    with pytest.raises(SpecError, match="is a directory"):
        RunStore.create(tmp_path, meta=META)


def test_create_refuses_leftover_wal_file(path):
    path.with_name(path.name + "-wal").write_bytes(b"stale")
    with pytest.raises(SpecError, match="leftover store.sqlite-wal"):
        RunStore.create(path, meta=META)
    assert not path.exists()


def test_create_rejects_meta_that_is_not_json_and_leaves_no_file(path):
    with pytest.raises(SpecError, match=r"meta\['when'\].*datetime"):
        RunStore.create(path, meta={"when": datetime.date(2024, 1, 1)})
    assert not path.exists()


def test_open_refuses_a_missing_file(path):
    with pytest.raises(RunError, match="no run store at .*does not exist"):
        RunStore.open(path)
    assert not path.exists()  # opening never creates a file


def test_open_refuses_a_plain_sqlite_file(path):
    conn = sqlite3.connect(path)
    conn.execute("CREATE TABLE t (x)")
    conn.commit()
    conn.close()
    with pytest.raises(RunError, match="SQLite database but not a foldwall run store"):
        RunStore.open(path)


def test_open_refuses_a_store_info_table_of_someone_else(path):
    conn = sqlite3.connect(path)
    conn.execute("CREATE TABLE store_info (key TEXT PRIMARY KEY, value TEXT)")
    conn.execute("INSERT INTO store_info VALUES ('format', '\"other.tool\"')")
    conn.commit()
    conn.close()
    with pytest.raises(RunError, match="not a foldwall run store.*'other.tool'"):
        RunStore.open(path)


def test_open_refuses_a_file_that_is_not_sqlite(path):
    path.write_bytes(b"this is a CSV file, not a database\n" * 100)
    with pytest.raises(RunError, match="not a foldwall run store: it is not an SQLite"):
        RunStore.open(path)


def test_open_refuses_a_newer_schema_version(store, path):
    store.close()
    conn = sqlite3.connect(path)
    conn.execute(
        "UPDATE store_info SET value = ? WHERE key = 'schema_version'",
        (json.dumps(STORE_SCHEMA_VERSION + 1),),
    )
    conn.commit()
    conn.close()
    with pytest.raises(RunError, match=r"newer foldwall.*version 2.*Upgrade foldwall"):
        RunStore.open(path)


def test_wal_mode_is_on(store, path):
    conn = sqlite3.connect(path)
    assert conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    conn.close()
    with RunStore.open(path) as s:
        assert s._connection().execute("PRAGMA journal_mode").fetchone()[0] == "wal"
        # synchronous is per connection: 1 == NORMAL
        assert s._connection().execute("PRAGMA synchronous").fetchone()[0] == 1


def test_closed_store_refuses_use(path):
    with RunStore.create(path, meta=META) as s:
        pass
    s.close()  # closing twice is harmless
    with pytest.raises(SpecError, match="is closed"):
        s.count()


# ------------------------------------------------------------------------ units


def test_write_unit_then_read_it_back(store, path):
    store.write_unit(
        "outer/00",
        kind="outer_fold",
        seed=3,
        payload={"score": 0.75},
        started=10.25,
        finished=12.5,
        status="done",
    )
    store.close()
    with RunStore.open(path) as s:
        assert s.get_unit("outer/00") == {
            "unit_id": "outer/00",
            "kind": "outer_fold",
            "seed": 3,
            "status": "done",
            "started": 10.25,
            "finished": 12.5,
            "payload": {"score": 0.75},
        }
        assert s.get_unit("outer/01") is None
        assert s.finished_ids() == {"outer/00"}


FLOATS = [
    0.1 + 0.2,
    -0.0,
    0.0,
    math.inf,
    -math.inf,
    math.nan,
    from_bits(0xFFF8000000000000),  # negative NaN, what inf - inf gives on x86
    from_bits(0x7FF8000000000123),  # quiet NaN with a payload
    5e-324,  # smallest subnormal
    1.7976931348623157e308,
    float(np.float64(1) / 3),
    np.float64(2) ** 0.5,
    np.float64(-0.0),
    np.float64(np.nan),
    float(np.float32(0.1)),
    1e16 + 2,
]


def test_payload_floats_round_trip_bit_for_bit(store, path):
    payload = {
        "floats": FLOATS,
        "nested": {"x": FLOATS[::-1]},
        "array": np.array(FLOATS),
    }
    store.write_unit("u", kind="k", seed=0, payload=payload, started=0.0, finished=1.0)
    store.close()
    with RunStore.open(path) as s:
        got = s.get_unit("u")["payload"]
    assert [bits(x) for x in got["floats"]] == [bits(x) for x in FLOATS]
    assert [bits(x) for x in got["nested"]["x"]] == [bits(x) for x in FLOATS[::-1]]
    assert [bits(x) for x in got["array"]] == [bits(x) for x in FLOATS]
    assert all(type(x) is float for x in got["floats"])


def test_stored_payload_is_plain_canonical_json(store, path):
    payload = {"b": math.inf, "a": [1, -0.0]}
    store.write_unit("u", kind="k", seed=0, payload=payload, started=0, finished=1)
    conn = sqlite3.connect(path)
    (text,) = conn.execute("SELECT payload FROM units").fetchone()
    conn.close()
    # Readable by any strict JSON parser (no bare NaN/Infinity tokens), keys sorted.
    assert text == '{"a":[1,-0.0],"b":{"$float":"inf"}}'
    json.loads(text, parse_constant=lambda name: pytest.fail(name))


def test_numpy_values_are_stored_as_plain_python(store):
    payload = {
        "n": np.int64(-3),
        "ok": np.bool_(True),
        "m": np.arange(4).reshape(2, 2),
        "t": (1, "a"),
        "none": None,
    }
    store.write_unit(
        "u",
        kind="k",
        seed=np.uint32(4_000_000_000),
        payload=payload,
        started=np.float64(1.5),
        finished=2,
    )
    got = store.get_unit("u")
    assert got["seed"] == 4_000_000_000 and type(got["seed"]) is int
    assert got["payload"] == {
        "n": -3,
        "ok": True,
        "m": [[0, 1], [2, 3]],
        "t": [1, "a"],
        "none": None,
    }
    assert type(got["payload"]["ok"]) is bool
    assert got["started"] == 1.5 and got["finished"] == 2.0


def test_largest_seed_round_trips(store):
    seed = np.uint64(2**63 - 1)
    store.write_unit("u", kind="k", seed=seed, payload={}, started=0, finished=0)
    assert store.get_unit("u")["seed"] == 2**63 - 1


@pytest.mark.parametrize("seed", [2**63, np.uint64(2**64 - 1), -1])
def test_seed_outside_signed_64_bit_range_is_refused(store, seed):
    with pytest.raises(SpecError, match=r"seed must be in \[0, 2\*\*63 - 1\]"):
        store.write_unit("u", kind="k", seed=seed, payload={}, started=0, finished=0)
    assert store.count() == 0


@pytest.mark.parametrize(
    "payload, match",
    [
        ({"x": {1, 2}}, r"payload\['x'\]: cannot store a value of type builtins.set"),
        ({"x": [1, 2j]}, r"payload\['x'\]\[1\]: cannot store.*complex"),
        ({"x": {3: "a"}}, r"keys must be str, got 3"),
        ({"x": {"$float": "nan"}}, r"key '\$float' is reserved"),
        ({"x": np.longdouble(1) / 3}, "without losing precision"),
    ],
)
def test_payload_that_is_not_json_is_refused(store, payload, match):
    with pytest.raises(SpecError, match=match):
        store.write_unit("u", kind="k", seed=0, payload=payload, started=0, finished=0)
    assert store.count() == 0


def test_nan_time_is_refused(store):
    # SQLite would silently store NaN as NULL.
    with pytest.raises(SpecError, match="finished must be finite"):
        store.write_unit(
            "u", kind="k", seed=0, payload={}, started=0, finished=math.nan
        )


def test_duplicate_unit_id_is_refused_and_first_row_kept(store):
    store.write_unit("u", kind="k", seed=1, payload={"v": 1}, started=0, finished=1)
    with pytest.raises(SpecError, match="'u' is already in the run store.*never"):
        store.write_unit("u", kind="k", seed=2, payload={"v": 2}, started=5, finished=6)
    assert store.get_unit("u")["payload"] == {"v": 1}
    assert store.get_unit("u")["seed"] == 1
    assert store.count() == 1


def test_write_units_writes_a_batch(store):
    store.write_units([unit(f"u{i}", seed=i, status="skipped") for i in range(3)])
    assert store.finished_ids() == {"u0", "u1", "u2"}
    assert store.get_unit("u2")["status"] == "skipped"


def test_write_units_with_duplicate_inside_batch_writes_nothing(store):
    with pytest.raises(SpecError, match="'b' appears twice.*nothing was written"):
        store.write_units([unit("a"), unit("b"), unit("c"), unit("b")])
    assert store.count() == 0


def test_write_units_colliding_with_stored_unit_writes_nothing(store):
    store.write_unit(
        "c", kind="k", seed=0, payload={"first": True}, started=0, finished=0
    )
    with pytest.raises(SpecError, match="'c' is already.*nothing was written"):
        store.write_units([unit("a"), unit("b"), unit("c"), unit("d")])
    assert store.finished_ids() == {"c"}
    assert store.get_unit("c")["payload"] == {"first": True}


def test_write_units_with_one_invalid_row_writes_nothing(store):
    with pytest.raises(SpecError, match="unknown fields \\['sead'\\]"):
        store.write_units([unit("a"), {**unit("b"), "sead": 3}])
    assert store.count() == 0


def test_iter_units_is_ordered_by_id_and_filters_by_kind(store):
    ids = [f"perm/{i:04d}" for i in range(1200)]  # more than one internal page
    rows = [unit(u, kind="permutation", seed=i) for i, u in enumerate(ids[::-1])]
    store.write_units(rows + [unit("outer/1"), unit("outer/0")])

    def ids_of(kind=None):
        return [u["unit_id"] for u in store.iter_units(kind)]

    assert ids_of() == sorted(ids + ["outer/0", "outer/1"])
    assert ids_of("outer_fold") == ["outer/0", "outer/1"]
    assert ids_of("permutation") == ids
    assert store.count() == 1202
    assert store.count("permutation") == 1200
    assert store.count("missing") == 0
    assert list(store.iter_units("missing")) == []


def test_failures_are_kept_apart_from_finished_units(store):
    store.record_failure("outer/02", kind="outer_fold", error="ValueError: boom")
    store.record_failure("outer/02", kind="outer_fold", error="ValueError: again")
    assert store.finished_ids() == set()
    assert store.count() == 0
    failures = store.failures()
    assert [(f["unit_id"], f["kind"], f["error"]) for f in failures] == [
        ("outer/02", "outer_fold", "ValueError: boom"),
        ("outer/02", "outer_fold", "ValueError: again"),
    ]
    assert all(abs(f["time"] - time.time()) < 60 for f in failures)


def test_integrity_ok_on_a_fresh_store(store):
    store.write_units([unit("a"), unit("b")])
    assert store.integrity_ok()


def test_corrupt_payload_raises_run_error(store, path):
    store.write_unit("u", kind="k", seed=0, payload={}, started=0, finished=0)
    conn = sqlite3.connect(path)
    conn.execute("UPDATE units SET payload = '{\"x\": NaN}'")
    conn.commit()
    conn.close()
    with pytest.raises(RunError, match="payload of unit 'u' is not valid store JSON"):
        store.get_unit("u")


# --------------------------------------------------------------- kill the writer

CHILD = textwrap.dedent(
    """
    import sys, time
    from foldwall.store import RunStore

    store = RunStore.open(sys.argv[1])
    i = 0
    while True:
        uid = f"u{i:07d}"
        t = time.time()
        store.write_unit(
            uid, kind="fold", seed=i, started=t, finished=t,
            payload={"i": i, "scores": [0.1 * i] * 200, "nan": float("nan")},
        )
        print(uid, flush=True)  # only after the commit has returned
        i += 1
    """
)


def test_committed_units_survive_sigkill_of_the_writer(path):
    RunStore.create(path, meta=META).close()
    child = subprocess.Popen(
        [sys.executable, "-c", CHILD, str(path)],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    reported = []
    reader = threading.Thread(
        target=lambda: reported.extend(line.strip() for line in child.stdout)
    )
    reader.start()
    try:
        with RunStore.open(path) as poll:
            deadline = time.monotonic() + 20
            while poll.count() < 5:
                assert child.poll() is None, child.stderr.read()
                assert time.monotonic() < deadline, "child wrote nothing in 20 s"
                time.sleep(0.01)
        time.sleep(0.02)  # let it get well into the loop, so the kill lands mid-write
    finally:
        child.kill()
        child.wait(timeout=10)
        reader.join(timeout=10)
        child.stdout.close()
        child.stderr.close()
    if sys.platform != "win32":
        assert child.returncode == -9

    with RunStore.open(path) as s:
        assert s.integrity_ok()
        stored = s.finished_ids()
        assert set(reported) <= stored
        # At most one unit committed whose id the child had no time to print.
        assert len(stored) - len(reported) in (0, 1)
        assert stored == {f"u{i:07d}" for i in range(len(stored))}
        for row in s.iter_units():
            payload = row["payload"]
            assert row["unit_id"] == f"u{payload['i']:07d}"
            assert len(payload["scores"]) == 200 and math.isnan(payload["nan"])
        assert s.meta() == META
    assert len(reported) >= 5
