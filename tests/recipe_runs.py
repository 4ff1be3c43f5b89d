"""Run each recipe once per test session; test_recipes.py and the browser tests share the runs.

Each recipe folder is copied into a temporary folder (without any data it may
already hold), its ``make_data.py`` is run there with this interpreter, and the
study is run through the command line entry point with ``--quiet --jobs 1``. A
few recipes have their number of permutations lowered so the suite stays fast.
"""

from __future__ import annotations

import contextlib
import io
import json
import shutil
import subprocess
import sys
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

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
    "site_confound": 3,  # its check is about the audits, not the control
    "wide_panel": None,  # its check is about the control's p-value
    "glaze_inspection": 3,
    "many_variants": 3,
}


@dataclass(frozen=True)
class RecipeRun:
    name: str
    study: Path
    out: Path
    results: dict[str, Any]
    own_permutations: bool  # the recipe ran with its own number of permutations


def prepare(name: str, where: Path) -> Path:
    """Copy a recipe to ``where``, generate its data there, return the study path."""
    dst = where / name
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


def run(study: Path, out: Path) -> dict[str, Any]:
    """Run a study file through the command line; the content of its results.json."""
    err = io.StringIO()
    with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(err):
        code = main(["run", str(study), "--out", str(out), "--quiet", "--jobs", "1"])
    assert code == 0, err.getvalue()
    return json.loads((out / "results.json").read_text(encoding="utf-8"))


def recipe_runner(where: Path) -> Callable[[str], RecipeRun]:
    """A function that runs a recipe on first use and returns the same run afterwards."""
    cache: dict[str, RecipeRun] = {}

    def get(name: str) -> RecipeRun:
        if name not in cache:
            study = prepare(name, where)
            out = where / f"{name}-out"
            cache[name] = RecipeRun(
                name, study, out, run(study, out), PERMUTATIONS.get(name) is None
            )
        return cache[name]

    return get
