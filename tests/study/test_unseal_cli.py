"""`foldwall run` with a hold-out, `foldwall unseal` and `foldwall ledger` (issue 14)."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml

from foldwall.cli import main
from foldwall.compare import accuracy_interval, auc_interval

STUDY = {
    "name": "sealed demo",
    "seed": 4,
    "data": {"table": "t.csv", "target": "outcome", "drop": ["case"]},
    "candidates": [
        {
            "name": "logistic",
            "model": {
                "name": "model",
                "use": "sklearn.linear_model.LogisticRegression",
            },
            "space": {"model__C": [0.1, 1.0]},
        }
    ],
    "outer": {"folds": 3},
    "inner": {"folds": 2},
    "metrics": ["accuracy"],
    "holdout": {"fraction": 0.25},
}


def _table(n=64, seed=0):
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, 3))
    df = pd.DataFrame(X, columns=["a", "b", "c"])
    df.insert(0, "case", [f"c{i:03d}" for i in range(n)])
    df["outcome"] = (X[:, 0] + 0.7 * rng.normal(size=n) > 0).astype(int)
    return df


def _write(tmp_path: Path, study: dict, df: pd.DataFrame | None = None) -> Path:
    (df if df is not None else _table()).to_csv(tmp_path / "t.csv", index=False)
    path = tmp_path / "study.yaml"
    path.write_text(yaml.safe_dump(study, sort_keys=False), encoding="utf-8")
    return path


def _cli(args, capsys):
    code = main([str(a) for a in args])
    return code, capsys.readouterr()


def test_run_unseal_and_ledger_end_to_end(tmp_path, capsys):
    study = _write(tmp_path, STUDY)
    code, _ = _cli(
        ["run", study, "--out", tmp_path / "r1", "--quiet", "--jobs", "1"], capsys
    )
    assert code == 0
    results = json.loads((tmp_path / "r1" / "results.json").read_text())
    assert results["data"]["n_samples"] == 48
    assert results["holdout"]["rows"] == {"development": 48, "holdout": 16}
    assert results["ledger"]["file"].endswith("t.csv.ledger.sqlite")
    assert (tmp_path / "t.csv.ledger.sqlite").is_file()

    # without a terminal, unseal refuses unless --yes
    code, out = _cli(["unseal", study, "--out", tmp_path / "o0", "--jobs", "1"], capsys)
    assert code == 2 and "pass --yes" in out.err and not (tmp_path / "o0").exists()

    code, out = _cli(
        [
            "unseal",
            study,
            "--out",
            tmp_path / "o1",
            "--yes",
            "--jobs",
            "1",
            "--permutations",
            "199",
        ],
        capsys,
    )
    assert code == 0, out.err
    opening = json.loads((tmp_path / "o1" / "opening.json").read_text())
    assert opening["holdout"]["key"] == results["holdout"]["key"]
    assert opening["audit"]["holdout_rows_seen"] == 0
    assert opening["opening"]["first"] is True
    pred = opening["predictions"]
    assert len(pred["rows"]) == 16
    # the interval is the Wilson interval of the replayed predictions
    # (accuracy_interval is checked against statsmodels in tests/compare)
    iv = accuracy_interval(pred["true"], pred["predicted"])
    assert opening["score"] == pytest.approx(iv.estimate)
    assert opening["interval"]["ci"] == pytest.approx([iv.lower, iv.upper])
    assert opening["chance_level"]["value"] == pytest.approx(
        max(np.mean(pred["true"]), 1 - np.mean(pred["true"]))
    )
    pt = opening["permutation_test"]
    assert pt["p_value"] == pytest.approx((pt["at_least_observed"] + 1) / 200)
    assert "first opening of this hold-out" in out.out

    # a second opening is recorded and flagged
    code, out = _cli(
        [
            "unseal",
            study,
            "--out",
            tmp_path / "o2",
            "--yes",
            "--jobs",
            "1",
            "--permutations",
            "19",
        ],
        capsys,
    )
    assert code == 0
    again = json.loads((tmp_path / "o2" / "opening.json").read_text())
    assert again["opening"]["openings_before"] == 1
    assert "only the first opening" in again["opening"]["note"]

    # a later run says the hold-out was opened, how often and by whom first
    code, out = _cli(["run", study, "--out", tmp_path / "r2", "--jobs", "1"], capsys)
    assert code == 0
    assert "opened 2 time(s) before, first by study 'sealed demo'" in out.out

    code, out = _cli(["ledger", tmp_path / "t.csv", "--json"], capsys)
    assert code == 0
    listing = json.loads(out.out)
    assert [e["kind"] for e in listing["entries"]] == [
        "run",
        "opening",
        "opening",
        "run",
    ]
    assert listing["openings"][0]["times"] == 2
    code, out = _cli(["ledger", tmp_path / "t.csv"], capsys)
    assert code == 0 and "opened 2 time(s)" in out.out


def test_unseal_refuses_what_it_cannot_do(tmp_path, capsys):
    plain = {k: v for k, v in STUDY.items() if k != "holdout"}
    study = _write(tmp_path, plain)
    code, out = _cli(["unseal", study, "--out", tmp_path / "o", "--yes"], capsys)
    assert code == 2 and "seals no rows" in out.err
    study = _write(tmp_path, STUDY)
    (tmp_path / "busy").mkdir()
    (tmp_path / "busy" / "x").write_text("x")
    code, out = _cli(["unseal", study, "--out", tmp_path / "busy", "--yes"], capsys)
    assert code == 2 and "not empty" in out.err
    code, out = _cli(["ledger", tmp_path / "nope.csv"], capsys)
    assert code == 2 and "does not exist" in out.err
    code, out = _cli(["unseal", study, "--out", tmp_path / "o", "--yes",
                      "--permutations", "0"], capsys)  # fmt: skip
    assert code == 2 and "--permutations must be at least 1" in out.err


@pytest.mark.parametrize(
    ("extra", "says"),
    [
        ([], "the ledger beside the table: no ledger at"),
        (["--ledger", "not_a_ledger.sqlite"], "--ledger: not_a_ledger.sqlite"),
        (["--ledger", "."], "is a directory"),
    ],
)
def test_ledger_bad_input_is_one_line_and_exit_2(
    tmp_path, capsys, monkeypatch, extra, says
):
    monkeypatch.chdir(tmp_path)
    _table().to_csv("t.csv", index=False)
    Path("not_a_ledger.sqlite").write_text("not a database", encoding="utf-8")
    code, out = _cli(["ledger", "t.csv", *extra], capsys)
    assert code == 2 and says in out.err
    assert len(out.err.strip().splitlines()) == 1 and "Traceback" not in out.err
    code, out = _cli(["ledger", "."], capsys)
    assert code == 2 and "is not a file" in out.err


def test_holdout_table_must_lie_beside_the_study_and_within_the_size_cap(
    tmp_path, capsys
):
    folder = tmp_path / "study"
    folder.mkdir()
    _table(n=10, seed=3).to_csv(tmp_path / "elsewhere.csv", index=False)
    _table(n=10, seed=3).to_csv(folder / "later.csv", index=False)
    path = _write(folder, dict(STUDY, holdout={"table": "../elsewhere.csv"}))
    for cmd in ("run", "unseal"):
        code, out = _cli(
            [cmd, path, "--out", tmp_path / f"o_{cmd}", "--yes"][
                : 4 + (cmd == "unseal")
            ],
            capsys,
        )
        assert code == 2 and "holdout.table" in out.err
        assert "outside the study's folder" in out.err
        assert len(out.err.strip().splitlines()) == 1
    # the main table is small enough, the second table is not
    big = _table(n=400, seed=4)
    big.to_csv(folder / "later.csv", index=False)
    path = _write(folder, dict(STUDY, holdout={"table": "later.csv"}))
    limit_mb = 1.5 * (folder / "t.csv").stat().st_size / 1e6
    assert (folder / "later.csv").stat().st_size > limit_mb * 1e6
    code, out = _cli(
        ["run", path, "--out", tmp_path / "o_big", "--max-table-mb", limit_mb],
        capsys,
    )
    assert code == 2 and out.err.startswith("foldwall: error: holdout.table:")
    assert "--max-table-mb" in out.err
    assert not (tmp_path / "o_big" / "results.json").exists()


def test_marking_column_and_second_table_in_a_study_file(tmp_path, capsys):
    df = _table()
    df["sealed"] = np.arange(len(df)) % 4 == 0
    study = dict(STUDY, holdout={"column": "sealed"}, metrics=["roc_auc"])
    path = _write(tmp_path, study, df)
    code, _ = _cli(
        ["run", path, "--out", tmp_path / "r", "--quiet", "--jobs", "1"], capsys
    )
    assert code == 0
    res = json.loads((tmp_path / "r" / "results.json").read_text())
    assert res["holdout"]["how"] == "column" and res["data"]["n_features"] == 3

    main_rows, later = _table(), _table(n=20, seed=9)
    later.to_csv(tmp_path / "later.csv", index=False)
    study = dict(STUDY, holdout={"table": "later.csv"}, metrics=["roc_auc"])
    path = _write(tmp_path, study, main_rows)
    code, out = _cli(
        [
            "unseal",
            path,
            "--out",
            tmp_path / "o",
            "--yes",
            "--jobs",
            "1",
            "--permutations",
            "19",
        ],
        capsys,
    )
    assert code == 0, out.err
    opening = json.loads((tmp_path / "o" / "opening.json").read_text())
    assert opening["holdout"]["rows"] == {"development": 64, "holdout": 20}
    pred = opening["predictions"]
    # DeLong interval of the recorded scores (auc_interval is checked against the
    # jackknife oracle and the tested DeLong code in tests/compare)
    iv = auc_interval(pred["true"], pred["score"])
    assert opening["interval"]["ci"] == pytest.approx([iv.lower, iv.upper])
    bad = _table(n=10, seed=2).drop(columns=["c"])
    bad.to_csv(tmp_path / "later.csv", index=False)
    code, out = _cli(["run", path, "--out", tmp_path / "r3", "--jobs", "1"], capsys)
    assert code == 2 and "lacks the column(s) 'c'" in out.err


def test_on_a_terminal_unseal_asks_and_no_keeps_it_sealed(
    tmp_path, capsys, monkeypatch
):
    import sys

    study = _write(tmp_path, STUDY)
    monkeypatch.setattr(sys.stdin, "isatty", lambda: True)
    monkeypatch.setattr("builtins.input", lambda prompt="": "n")
    code, out = _cli(["unseal", study, "--out", tmp_path / "o", "--jobs", "1"], capsys)
    assert code == 0 and "stays sealed" in out.err
    assert "it has not been opened before" in out.err
    assert not (tmp_path / "o").exists()
    assert not (tmp_path / "t.csv.ledger.sqlite").exists()


def test_the_report_has_a_hold_out_and_ledger_section(tmp_path, capsys):
    study = _write(tmp_path, STUDY)
    for out in ("r1", "r2"):
        code, _ = _cli(
            ["run", study, "--out", tmp_path / out, "--quiet", "--jobs", "1"], capsys
        )
        assert code == 0
    changed = dict(STUDY, seed=5)
    study = _write(tmp_path, changed)
    code, _ = _cli(
        ["run", study, "--out", tmp_path / "r3", "--quiet", "--jobs", "1"], capsys
    )
    assert code == 0
    md = (tmp_path / "r3" / "report.md").read_text(encoding="utf-8")
    assert "Hold-out and ledger" in md and "Sealed hold-out" in md
    assert "Studies run on this table" in md
    assert "1 other study was run on this table before this one" in md
