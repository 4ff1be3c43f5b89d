"""A dask worker lost mid-run: its tasks run again elsewhere, or the run stops in one line and resumes.

A loopback ``LocalCluster`` (two worker processes, one thread each) runs a small
study whose model kills the worker process it is fitted in, as the kernel's
out-of-memory killer would. Issue 9.
"""

from __future__ import annotations

import json
import os
import sys
import textwrap

import dask
import distributed
import numpy as np
import pandas as pd
import pytest

from foldwall.cli import main

MODELS = textwrap.dedent(
    '''
    """Models that kill the dask worker they are fitted in (test only)."""
    import os
    from pathlib import Path

    from sklearn.linear_model import LogisticRegression


    def _in_dask_worker():
        try:
            from distributed import get_worker

            get_worker()
        except (ImportError, ValueError):
            return False
        return True


    class DiesOnce(LogisticRegression):
        """The first fit on a dask worker kills that worker; every later fit is ordinary."""

        def fit(self, X, y, sample_weight=None):
            mark = Path(os.environ["FOLDWALL_TEST_MARKS"]) / "died-once"
            if _in_dask_worker():
                try:
                    fd = os.open(mark, os.O_CREAT | os.O_EXCL | os.O_WRONLY)
                except FileExistsError:
                    pass
                else:
                    os.close(fd)
                    os._exit(1)
            return super().fit(X, y, sample_weight=sample_weight)


    class DiesWhileMarked(LogisticRegression):
        """Kills its dask worker on the training rows of outer fold 1 while a mark file exists."""

        def fit(self, X, y, sample_weight=None):
            mark = Path(os.environ["FOLDWALL_TEST_MARKS"]) / "keep-dying"
            if _in_dask_worker() and mark.exists() and len(X) > 25 and X[0, 0] > 0:
                os._exit(1)
            return super().fit(X, y, sample_weight=sample_weight)
    '''
)

STUDY = """
data: {table: rows.csv, target: y}
needs_modules: [dying_models]
candidates:
  - name: m
    model: {name: model, use: dying_models.MODEL}
    space: {model__C: [0.1, 1.0]}
outer: {folds: 2}
inner: {folds: 2}
seed: 4
"""


@pytest.fixture(scope="module")
def cluster(tmp_path_factory):
    """Workers that can import the test models; a task may fail on one worker only."""
    home = tmp_path_factory.mktemp("dying")
    (home / "dying_models.py").write_text(MODELS)
    marks = tmp_path_factory.mktemp("marks")
    old = {k: os.environ.get(k) for k in ("PYTHONPATH", "FOLDWALL_TEST_MARKS")}
    os.environ["PYTHONPATH"] = os.pathsep.join(
        filter(None, [str(home), old["PYTHONPATH"]])
    )
    os.environ["FOLDWALL_TEST_MARKS"] = str(marks)
    sys.path.insert(0, str(home))
    try:
        with (
            dask.config.set({"distributed.scheduler.allowed-failures": 1}),
            distributed.LocalCluster(
                n_workers=2,
                threads_per_worker=1,
                host="127.0.0.1",
                dashboard_address=None,
                processes=True,
            ) as c,
        ):
            yield c, home, marks
    finally:
        sys.path.remove(str(home))
        for k, v in old.items():
            if v is None:
                os.environ.pop(k, None)
            else:
                os.environ[k] = v


def _study(tmp_path, model):
    rng = np.random.default_rng(1)
    X = rng.normal(size=(60, 3))
    y = (X[:, 1] + 0.5 * rng.normal(size=60) > 0).astype(int)
    pd.DataFrame({"a": X[:, 0], "b": X[:, 1], "c": X[:, 2], "y": y}).to_csv(
        tmp_path / "rows.csv", index=False
    )
    study = tmp_path / "study.yaml"
    study.write_text(STUDY.replace("MODEL", model))
    return study


def _results(out):
    data = json.loads((out / "results.json").read_text())
    data.pop("timing", None)
    data.get("study", {}).pop("file", None)
    return data


def _run(study, out, *extra):
    return main(
        [
            "run",
            str(study),
            "--out",
            str(out),
            "--quiet",
            "--allow",
            "dying_models",
            *extra,
        ]
    )


def test_a_task_whose_worker_dies_runs_again_on_another(cluster, tmp_path, capsys):
    c, _, _ = cluster
    study = _study(tmp_path, "DiesOnce")
    assert _run(study, tmp_path / "one", "--jobs", "1") == 0
    assert (
        _run(
            study,
            tmp_path / "dask",
            "--backend",
            "dask",
            "--scheduler",
            c.scheduler_address,
        )
        == 0
    )
    assert _results(tmp_path / "dask") == _results(tmp_path / "one")


def test_a_task_that_keeps_killing_workers_stops_the_run_in_one_line_and_the_same_command_resumes(
    cluster, tmp_path, capsys
):
    c, _, marks = cluster
    study = _study(tmp_path, "DiesWhileMarked")
    assert _run(study, tmp_path / "one", "--jobs", "1") == 0
    (marks / "keep-dying").write_text("")
    command = ["--backend", "dask", "--scheduler", c.scheduler_address]
    capsys.readouterr()
    assert _run(study, tmp_path / "dask", *command) == 3
    err = capsys.readouterr().err
    lines = [ln for ln in err.splitlines() if ln.startswith("foldwall")]
    assert len(lines) == 1, err
    assert (
        "lost the workers running" in lines[0]
        and "run the same command to resume" in lines[0]
    )
    assert "unit(s) of the real phase (" in lines[0]
    (marks / "keep-dying").unlink()
    assert _run(study, tmp_path / "dask", *command) == 0
    assert _results(tmp_path / "dask") == _results(tmp_path / "one")
