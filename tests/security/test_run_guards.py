"""The command line's guards: --jobs capped at the cores, one run per folder, damaged
stores, and plans too large to start without --long-run (issue 9)."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import time

import numpy as np
import pandas as pd
import pytest

from foldwall.cli import _jobs, main
from foldwall.exceptions import SpecError
from foldwall.plan import MAX_FITS, WorkEstimate, check_work, duration_text
from foldwall.store import LOCK_NAME

STUDY = """
data: {table: rows.csv, target: y}
candidates:
  - name: m
    model: {name: model, use: sklearn.linear_model.LogisticRegression}
    space: {model__C: [0.1, 1.0]}
outer: {folds: 3}
inner: {folds: 2}
"""


@pytest.fixture
def study(tmp_path):
    rng = np.random.default_rng(2)
    X = rng.normal(size=(36, 2))
    y = np.tile([0, 1], 18)
    pd.DataFrame({"a": X[:, 0] + y, "b": X[:, 1], "y": y}).to_csv(
        tmp_path / "rows.csv", index=False
    )
    (tmp_path / "study.yaml").write_text(STUDY)
    return tmp_path / "study.yaml"


def _one_line(err: str) -> str:
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1, err
    return lines[0]


# ----------------------------------------------------------------- --jobs
def test_jobs_above_the_cores_are_capped_with_a_note(monkeypatch, capsys):
    monkeypatch.setattr(os, "cpu_count", lambda: 2)
    assert _jobs(32) == 2
    note = _one_line(capsys.readouterr().err)
    assert (
        note.startswith("foldwall: note: --jobs 32 is more than the 2 cores")
        and "--oversubscribe" in note
    )
    assert _jobs(32, oversubscribe=True) == 32
    assert _jobs(32, backend="dask") == 32  # the workers are elsewhere
    # the default is one worker, as wrap(n_jobs=None) (issue 13); -1 is every core
    assert _jobs(2) == 2 and _jobs(None) == 1 and _jobs(-1) == 2
    assert capsys.readouterr().err == ""


def test_capped_jobs_give_the_same_results(study, tmp_path, monkeypatch, capsys):
    monkeypatch.setattr(os, "cpu_count", lambda: 1)
    assert (
        main(
            ["run", str(study), "--out", str(tmp_path / "a"), "--jobs", "8", "--quiet"]
        )
        == 0
    )
    assert "using 1" in capsys.readouterr().err
    assert (
        main(
            ["run", str(study), "--out", str(tmp_path / "b"), "--jobs", "1", "--quiet"]
        )
        == 0
    )
    a, b = (json.loads((tmp_path / d / "results.json").read_text()) for d in "ab")
    a.pop("timing", None), b.pop("timing", None)
    assert a == b


# ------------------------------------------------------------------ lock
def test_a_second_run_on_a_busy_folder_is_refused_naming_the_holder(
    study, tmp_path, capsys
):
    out = tmp_path / "run"
    out.mkdir()
    holder = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"])
    try:
        (out / LOCK_NAME).write_text(
            json.dumps(
                {
                    "host": os.uname().nodename,
                    "pid": holder.pid,
                    "started": time.time(),
                    "process_started": None,
                }
            )
        )
        assert (
            main(["run", str(study), "--out", str(out), "--jobs", "1", "--quiet"]) == 2
        )
        line = _one_line(capsys.readouterr().err)
        assert (
            line.startswith("foldwall: error: --out")
            and f"process {holder.pid}" in line
        )
        assert sorted(p.name for p in out.iterdir()) == [LOCK_NAME]  # nothing written
    finally:
        holder.kill()
        holder.wait()


def test_a_stale_lock_is_replaced_with_a_note_and_the_run_proceeds(
    study, tmp_path, capsys
):
    out = tmp_path / "run"
    out.mkdir()
    dead = subprocess.Popen([sys.executable, "-c", "pass"])
    dead.wait()
    (out / LOCK_NAME).write_text(
        json.dumps(
            {
                "host": os.uname().nodename,
                "pid": dead.pid,
                "started": time.time() - 60,
                "process_started": None,
            }
        )
    )
    assert main(["run", str(study), "--out", str(out), "--jobs", "1", "--quiet"]) == 0
    err = capsys.readouterr().err
    assert "replaced a stale lock" in err and f"process {dead.pid}" in err
    assert (out / "results.json").exists() and not (
        out / LOCK_NAME
    ).exists()  # released at the end


# ---------------------------------------------------------- damaged store
def test_a_damaged_store_is_one_line_with_exit_3_and_fresh_starts_over(
    study, tmp_path, capsys
):
    out = tmp_path / "run"
    assert main(["run", str(study), "--out", str(out), "--jobs", "1", "--quiet"]) == 0
    (out / "results.json").unlink()  # as if the run had been stopped before the end
    store = out / "store.sqlite"
    data = store.read_bytes()
    store.write_bytes(data[: len(data) // 2 + 7])
    capsys.readouterr()
    assert main(["run", str(study), "--out", str(out), "--jobs", "1", "--quiet"]) == 3
    line = _one_line(capsys.readouterr().err)
    assert (
        line.startswith("foldwall: run failed: the run store")
        and "is damaged" in line
        and "--fresh" in line
    )
    assert (
        main(
            ["run", str(study), "--out", str(out), "--jobs", "1", "--quiet", "--fresh"]
        )
        == 0
    )
    assert (out / "results.json").exists()
    assert any(
        p.name.startswith("run.old-") for p in tmp_path.iterdir()
    )  # moved aside, never deleted


# ----------------------------------------------------------------- budget
def test_plans_over_the_fit_limit_need_long_run():
    big = WorkEstimate(fits=MAX_FITS + 1, seconds=None, n_jobs=2)
    with pytest.raises(
        SpecError,
        match=r"makes 2,000,001 model fits.*--long-run.*sequential early stopping",
    ):
        check_work(big, confirmed=False)
    check_work(big, confirmed=True)
    check_work(WorkEstimate(fits=1000, seconds=5.0, n_jobs=2), confirmed=False)


def test_plans_over_the_time_limit_need_long_run_and_say_how_long():
    slow = WorkEstimate(fits=50_000, seconds=9 * 3600.0, n_jobs=2)
    with pytest.raises(SpecError, match=r"about 9\.0 hours with 2 worker\(s\)") as info:
        check_work(slow, confirmed=False)
    assert len(str(info.value).splitlines()) == 1
    assert (
        duration_text(30) == "about 30 s" and duration_text(3 * 86400) == "about 3 days"
    )


def test_plan_command_says_when_run_will_need_long_run(study, capsys):
    text = study.read_text().replace(
        "outer: {folds: 3}", "outer: {folds: 3, repeats: 20}"
    )
    study.write_text(text + "control: {permutations: 50000}\n")
    assert main(["plan", str(study), "--no-estimate", "--jobs", "1"]) == 0
    assert "needs --long-run" in capsys.readouterr().out
