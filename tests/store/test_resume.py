"""Runs that survive: SIGKILL and resume, changed inputs refused, failures reported."""

from __future__ import annotations

import os
import signal
import sqlite3
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from foldwall.cli import main

STUDY = """\
name: resume check
seed: 3
data: {table: rows.csv, target: label}
steps:
  - {name: scale, use: sklearn.preprocessing.StandardScaler}
candidates:
  - name: logistic
    model: {name: model, use: sklearn.linear_model.LogisticRegression}
    space: {model__C: [0.1, 1.0]}
outer: {folds: 3}
inner: {folds: 3}
metrics: [roc_auc, balanced_accuracy]
control: {permutations: PERMS}
"""


def _write(tmp: Path, perms: int = 30, seed: int = 0) -> Path:
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(60, 6))
    y = (X[:, 0] + rng.normal(size=60) > 0).astype(int)
    df = pd.DataFrame(X, columns=[f"f{i}" for i in range(6)])
    df["label"] = y
    df.to_csv(tmp / "rows.csv", index=False)
    p = tmp / "study.yaml"
    p.write_text(STUDY.replace("PERMS", str(perms)))
    return p


def _count(store: Path) -> int:
    if not store.exists():
        return 0
    try:
        con = sqlite3.connect(f"file:{store}?mode=ro", uri=True, timeout=1)
        try:
            return con.execute("select count(*) from units").fetchone()[0]
        finally:
            con.close()
    except sqlite3.Error:
        return 0


def test_sigkill_then_resume_gives_identical_results(tmp_path):
    study = _write(tmp_path, perms=40)
    assert (
        main(
            [
                "run",
                str(study),
                "--out",
                str(tmp_path / "whole"),
                "--jobs",
                "1",
                "--quiet",
            ]
        )
        == 0
    )
    out = tmp_path / "cut"
    env = {**os.environ, "PYTHONUNBUFFERED": "1"}
    proc = subprocess.Popen(
        [
            sys.executable,
            "-m",
            "foldwall.cli",
            "run",
            str(study),
            "--out",
            str(out),
            "--jobs",
            "1",
            "--quiet",
        ],
        env=env,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    # Kill at a random point after some permutation units are stored (the 6 real
    # units, candidate and chance reference, come first; a permutation adds 3).
    target = 6 + 3 * int(np.random.default_rng().integers(1, 25))
    deadline = time.time() + 120
    while (
        _count(out / "store.sqlite") < target
        and proc.poll() is None
        and time.time() < deadline
    ):
        time.sleep(0.02)
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    assert not (out / "results.json").exists() or proc.returncode == 0
    kept = _count(out / "store.sqlite")
    assert kept >= 6
    assert main(["run", str(study), "--out", str(out), "--jobs", "1", "--quiet"]) == 0
    a = (tmp_path / "whole" / "results.json").read_bytes()
    b = (out / "results.json").read_bytes()
    assert a == b
    con = sqlite3.connect(out / "store.sqlite")
    assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    n_units = con.execute("select count(*) from units").fetchone()[0]
    con.close()
    assert n_units == 6 + 3 * 40  # no unit lost, none twice


def test_resume_refuses_a_changed_study_or_table(tmp_path, capsys):
    study = _write(tmp_path, perms=5)
    out = tmp_path / "run"
    from foldwall.spec import load_study
    from foldwall.study import prepare_run_dir

    loaded = load_study(study)
    store, state = prepare_run_dir(
        out, study_sha=loaded.sha256, data_sha="x", fresh=False, replace=False
    )
    store.close()
    assert state == "new"
    # The folder now holds an unfinished run whose data hash differs from the table.
    assert main(["run", str(study), "--out", str(out), "--jobs", "1", "--quiet"]) == 2
    err = capsys.readouterr().err
    assert "the data table changed" in err and "--fresh" in err
    study.write_text(study.read_text().replace("seed: 3", "seed: 4"))
    assert main(["run", str(study), "--out", str(out), "--jobs", "1", "--quiet"]) == 2
    assert "the study file and the data table changed" in capsys.readouterr().err
    # --fresh moves the old run aside, never deletes it.
    assert (
        main(
            ["run", str(study), "--out", str(out), "--jobs", "1", "--quiet", "--fresh"]
        )
        == 0
    )
    aside = [p for p in tmp_path.iterdir() if p.name.startswith("run.old-")]
    assert len(aside) == 1 and (aside[0] / "store.sqlite").exists()
    assert (out / "results.json").exists()


def test_finished_run_is_never_overwritten(tmp_path, capsys):
    study = _write(tmp_path, perms=0)
    out = tmp_path / "run"
    assert main(["run", str(study), "--out", str(out), "--jobs", "1", "--quiet"]) == 0
    first = (out / "results.json").read_bytes()
    assert main(["run", str(study), "--out", str(out), "--jobs", "1", "--quiet"]) == 2
    assert "already holds a finished run" in capsys.readouterr().err
    assert (out / "results.json").read_bytes() == first


FAILING = textwrap.dedent('''
    import numpy as np
    from sklearn.linear_model import LogisticRegression

    class FragileModel(LogisticRegression):
        """Fails in inner fits (fewer than 35 rows) whose training rows include row 0."""
        def fit(self, X, y, sample_weight=None):
            if len(X) < 35 and np.any(np.isclose(np.asarray(X)[:, 0], MARK)):
                raise ValueError("cannot fit on these rows")
            return super().fit(X, y)
''')


def test_failing_estimator_names_fold_and_candidate_and_keeps_units(
    tmp_path, capsys, monkeypatch
):
    study = _write(tmp_path, perms=0)
    df = pd.read_csv(tmp_path / "rows.csv")
    (tmp_path / "fragile_models.py").write_text(
        FAILING.replace("MARK", repr(float(df.loc[0, "f0"])))
    )
    monkeypatch.syspath_prepend(str(tmp_path))
    text = study.read_text().replace(
        "sklearn.linear_model.LogisticRegression", "fragile_models.FragileModel"
    )
    text = text.replace(
        "steps:\n  - {name: scale, use: sklearn.preprocessing.StandardScaler}\n", ""
    )
    study.write_text(text)
    out = tmp_path / "run"
    # Not allowed without --allow: refused before anything runs.
    assert main(["run", str(study), "--out", str(out), "--jobs", "1", "--quiet"]) == 2
    assert "--allow fragile_models" in capsys.readouterr().err
    assert not out.exists()
    code = main(
        [
            "run",
            str(study),
            "--out",
            str(out),
            "--jobs",
            "1",
            "--quiet",
            "--allow",
            "fragile_models",
        ]
    )
    assert code == 3
    err = capsys.readouterr().err
    assert (
        "candidate 'logistic'" in err
        and "outer fold" in err
        and "cannot fit on these rows" in err
    )
    assert len(err.strip().splitlines()) == 1
    assert (out / "store.sqlite").exists() and not (out / "results.json").exists()
    from foldwall.store import RunStore

    with RunStore.open(out / "store.sqlite") as st:
        assert st.failures() and "cannot fit" in st.failures()[0]["error"]


def test_ctrl_c_stops_cleanly_and_says_how_to_resume(tmp_path):
    study = _write(tmp_path, perms=60)
    out = tmp_path / "run"
    proc = subprocess.Popen(
        [
            sys.executable,
            "-m",
            "foldwall.cli",
            "run",
            str(study),
            "--out",
            str(out),
            "--jobs",
            "1",
            "--quiet",
        ],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    deadline = time.time() + 120
    while (
        _count(out / "store.sqlite") < 12
        and proc.poll() is None
        and time.time() < deadline
    ):
        time.sleep(0.02)
    proc.send_signal(signal.SIGINT)
    _, err = proc.communicate(timeout=60)
    if proc.returncode == 0:  # finished before the signal arrived: nothing to check
        pytest.skip("the run finished before Ctrl-C")
    assert proc.returncode == 130
    assert "Run the same command again to resume" in err and "Traceback" not in err
    assert not (out / "results.json").exists()
    assert main(["run", str(study), "--out", str(out), "--jobs", "1", "--quiet"]) == 0
    assert _count(out / "store.sqlite") == 6 + 3 * 60


def test_allowed_failed_trials_are_scored_as_failed_and_listed(tmp_path):
    from sklearn.neighbors import KNeighborsClassifier

    import foldwall

    rng = np.random.default_rng(1)
    X, y = rng.normal(size=(45, 3)), np.repeat([0, 1, 1], 15)
    # 40 neighbours cannot be found among the 15 rows of an inner training part:
    # that setting fails in every inner fit, must never win, and is listed.
    res = foldwall.wrap(
        KNeighborsClassifier(),
        space={"n_neighbors": [3, 40]},
        outer=3,
        inner=2,
        allow_failed_trials=True,
    ).run(X, y)
    assert all(f["settings"]["model__n_neighbors"] == 3 for f in res.to_dict()["folds"])
    failed = res.to_dict()["failed_trials"]
    assert failed and all("n_neighbors" in e and "40" in e for e in failed)
    trials = res.trials_frame()
    assert trials.loc[trials.settings.str.contains("40"), "inner_mean"].isna().all()
