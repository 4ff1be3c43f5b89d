"""The same results whatever runs the units: one process, a pool of two, or dask."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from foldwall.cli import main

# The study uses 4 permutations to stay fast; the warning that 4 cannot reach 0.05 is expected.
pytestmark = pytest.mark.filterwarnings("ignore::foldwall.exceptions.ControlWarning")

STUDY = """\
seed: 11
data: {table: rows.csv, target: label, groups: subject}
steps:
  - {name: scale, use: sklearn.preprocessing.StandardScaler}
  - {name: select, use: sklearn.feature_selection.SelectKBest}
candidates:
  - name: logistic
    model: {name: model, use: sklearn.linear_model.LogisticRegression}
    space: {select__k: [2, 5], model__C: [0.1, 1.0]}
outer: {folds: 3}
inner: {folds: 3}
metrics: [roc_auc, accuracy]
control: {permutations: 4}
"""


@pytest.fixture
def study(tmp_path):
    rng = np.random.default_rng(0)
    subject = np.repeat(np.arange(30), 2)
    y = rng.permutation(np.repeat([0, 1], 15))[subject]
    X = rng.normal(size=(60, 8)) + 0.8 * y[:, None] * (np.arange(8) < 2)
    df = pd.DataFrame(X, columns=[f"f{i}" for i in range(8)])
    df["subject"] = [f"s{i:02d}" for i in subject]
    df["label"] = y
    df.to_csv(tmp_path / "rows.csv", index=False)
    (tmp_path / "study.yaml").write_text(STUDY)
    return tmp_path / "study.yaml"


def _run(study, out, *extra):
    assert main(["run", str(study), "--out", str(out), "--quiet", *extra]) == 0
    return (out / "results.json").read_bytes()


def test_jobs_one_two_and_dask_give_identical_results(study, tmp_path):
    one = _run(study, tmp_path / "one", "--jobs", "1")
    two = _run(study, tmp_path / "two", "--jobs", "2")
    assert one == two
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(
        n_workers=2,
        threads_per_worker=1,
        host="127.0.0.1",
        dashboard_address=None,
        processes=True,
    ) as cluster:
        on_dask = _run(
            study,
            tmp_path / "dask",
            "--backend",
            "dask",
            "--scheduler",
            cluster.scheduler_address,
        )
    assert one == on_dask


def test_dask_backend_needs_a_scheduler(study, tmp_path, capsys):
    assert (
        main(["run", str(study), "--out", str(tmp_path / "x"), "--backend", "dask"])
        == 2
    )
    assert "--scheduler" in capsys.readouterr().err
    assert not (tmp_path / "x").exists()
