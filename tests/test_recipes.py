"""Every recipe in recipes/ runs end to end and shows what its README says it shows.

Each recipe folder is copied into ``tmp_path`` (without any data it may already
hold), its ``make_data.py`` is run there with this interpreter, and the study is
run through the command line entry point with ``--quiet --jobs 1``. Every recipe
must exit 0 and pass the row audit (no outer-test row seen by any fit); some
recipes have their own checks below. A few recipes have their number of
permutations lowered here so the whole file stays fast; the recipe-specific
check never depends on those permutations.
"""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest
import yaml

from foldwall.cli import main

RECIPES = Path(__file__).resolve().parents[1] / "recipes"
ALL = sorted(
    p.name
    for p in RECIPES.iterdir()
    if (p / "study.yaml").is_file() and (p / "make_data.py").is_file()
)

# control.permutations used in the tests (None: keep the recipe's own number).
PERMUTATIONS: dict[str, int | None] = {
    "breath_pilot": 3,
    "repeated_visits": 3,
    "wide_panel": None,  # its check is about the control's p-value
    "glaze_inspection": 3,
}


def _prepare(name: str, tmp_path: Path) -> Path:
    """Copy a recipe to tmp_path, generate its data there, return the study path."""
    dst = tmp_path / name
    shutil.copytree(
        RECIPES / name, dst, ignore=shutil.ignore_patterns("data", "__pycache__")
    )
    proc = subprocess.run(
        [sys.executable, "make_data.py"],
        cwd=dst,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert proc.returncode == 0, proc.stderr
    study = dst / "study.yaml"
    m = PERMUTATIONS.get(name)
    if m is not None:
        spec = yaml.safe_load(study.read_text(encoding="utf-8"))
        spec.setdefault("control", {})["permutations"] = m
        study.write_text(yaml.safe_dump(spec, sort_keys=False), encoding="utf-8")
    return study


def _run(study: Path, out: Path, capsys: pytest.CaptureFixture[str]) -> dict[str, Any]:
    code = main(["run", str(study), "--out", str(out), "--quiet", "--jobs", "1"])
    captured = capsys.readouterr()
    assert code == 0, captured.err
    assert (out / "results.json").is_file()
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))
    assert results["audit"]["test_rows_seen"] == 0
    assert results["audit"]["validation_rows_seen"] == 0
    if results["control"]:
        # the audit covers the permutation units too
        assert results["audit"]["units"] > len(results["folds"]) * len(
            results["candidates"]
        )
    return results


def _check_breath_pilot(results: dict[str, Any], study: Path, out: Path) -> None:
    score = results["score"]
    assert score["metric"] == "roc_auc"
    assert score["mean"] > results["reference"]["score"]["mean"] == pytest.approx(0.5)
    assert score["mean"] > 0.55


def _check_wide_panel(results: dict[str, Any], study: Path, out: Path) -> None:
    # Pure-noise labels: the honest estimate is near chance and the control does not reject.
    assert results["data"]["n_features"] > 10 * results["data"]["n_samples"]
    assert results["score"]["metric"] in ("roc_auc", "accuracy")
    assert 0.25 <= results["score"]["mean"] <= 0.75
    assert results["control"]["permutations"] >= 19
    assert results["control"]["p_value"] > 0.05


def _check_repeated_visits(results: dict[str, Any], study: Path, out: Path) -> None:
    spec = yaml.safe_load(study.read_text(encoding="utf-8"))
    table = pd.read_csv(study.parent / spec["data"]["table"])
    groups = table[spec["data"]["groups"]].astype(str).to_numpy()
    plan = json.loads((out / "plan.json").read_text(encoding="utf-8"))
    assert plan["outer"]["grouped"] and plan["inner"]["grouped"]
    assert plan["search"]["method"] == "tpe"
    n = len(groups)
    for fold in plan["folds"]:
        train, test = np.asarray(fold["train"]), np.asarray(fold["test"])
        assert len(np.intersect1d(train, test)) == 0
        assert not set(groups[train]) & set(groups[test]), (
            f"outer fold {fold['fold']} splits a subject"
        )
        seen = set()
        for inner in fold["inner"]:
            itr, ite = np.asarray(inner["train"]), np.asarray(inner["test"])
            assert set(itr) | set(ite) == set(train)
            assert not set(groups[itr]) & set(groups[ite]), (
                f"an inner split of outer fold {fold['fold']} splits a subject"
            )
            seen |= set(ite)
        assert seen == set(train)
    assert sorted(
        np.concatenate([f["test"] for f in plan["folds"] if f["repeat"] == 0])
    ) == list(range(n))
    # Whole subjects swap labels in the control.
    assert results["control"]["exchangeable_units"] == "groups"
    # Both candidates were searched with optuna, with the same budget, in every outer fold.
    cands = [c for c in results["candidates"] if c["role"] == "candidate"]
    assert {c["name"] for c in cands} == {"logistic", "forest"}
    assert all(c["score"]["n"] == len(plan["folds"]) for c in cands)
    trials = pd.read_csv(out / "trials.csv")
    per_search = trials.groupby(["repeat", "fold", "candidate"]).size()
    assert len(per_search) == len(plan["folds"]) * len(cands)
    assert (per_search == spec["search"]["trials"]).all()


def _check_glaze_inspection(results: dict[str, Any], study: Path, out: Path) -> None:
    # Six inspectors, a third of the tiles borderline (calls near coin tosses):
    # the model is good on clear tiles and near chance on ambiguous ones.
    r = results["raters"]
    assert results["data"]["target"] == "consensus"
    assert (
        results["data"]["n_features"] == 6
    )  # the inspectors' columns are not features
    assert r["consensus"]["rule"] == "majority"
    scores = r["strata"]["scores"]
    assert scores["clear"]["mean"] > 0.75
    assert 0.3 < scores["ambiguous"]["mean"] < 0.65
    assert 0.41 <= r["agreement"]["krippendorff_alpha"]["value"] <= 0.8
    statement = r["human_reference"]["statement"]
    assert "as well as a typical rater" in statement
    assert len(r["human_reference"]["raters"]["raters"]) == 6


CHECKS = {
    "glaze_inspection": _check_glaze_inspection,
    "breath_pilot": _check_breath_pilot,
    "wide_panel": _check_wide_panel,
    "repeated_visits": _check_repeated_visits,
}


def test_known_recipes_are_present() -> None:
    assert set(CHECKS) <= set(ALL)


@pytest.mark.parametrize("name", ALL)
def test_recipe_runs(
    name: str, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    study = _prepare(name, tmp_path)
    out = tmp_path / "out"
    results = _run(study, out, capsys)
    check = CHECKS.get(name)
    if check is not None:
        check(results, study, out)


def test_recipe_run_is_deterministic(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    study = _prepare("breath_pilot", tmp_path)
    _run(study, tmp_path / "first", capsys)
    _run(study, tmp_path / "second", capsys)
    a = (tmp_path / "first" / "results.json").read_bytes()
    b = (tmp_path / "second" / "results.json").read_bytes()
    assert a == b
    for name in ("plan.json", "folds.csv"):
        assert (tmp_path / "first" / name).read_bytes() == (
            tmp_path / "second" / name
        ).read_bytes()
