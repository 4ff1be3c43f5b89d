"""Things a new user met in the first hour (issue 13): each one checked here."""

from __future__ import annotations

import re
import tomllib
from pathlib import Path

import numpy as np
import pytest
from sklearn.linear_model import LogisticRegression
from sklearn.pipeline import Pipeline
from sklearn.preprocessing import StandardScaler

import foldwall
from foldwall.exceptions import DataError, SpecError

ROOT = Path(__file__).resolve().parents[1]
X = np.random.default_rng(0).normal(size=(40, 3))
Y = np.array([0, 1] * 20)


def _pipe():
    return Pipeline([("scale", StandardScaler()), ("model", LogisticRegression())])


@pytest.mark.parametrize("key", ["model_C", "C", "modelC"])
def test_misspelt_search_key_gets_did_you_mean(key):
    with pytest.raises(SpecError, match=r"did you mean 'model__C'\?"):
        foldwall.wrap(_pipe(), space={key: [1.0]}, outer=2, inner=2).run(
            X, Y, progress=False
        )


@pytest.mark.parametrize(("outer", "inner"), [(2, 2), (2, 5), (4, 2)])
def test_advice_for_a_tiny_table_is_never_impossible(outer, inner):
    y = np.array([0, 0, 0, 0, 0, 0, 1, 1])
    with pytest.raises(DataError) as info:
        foldwall.wrap(LogisticRegression(), outer=outer, inner=inner).run(
            X[:8], y, progress=False
        )
    msg = str(info.value)
    assert not re.search(r"folds <= [01]\b", msg), msg
    assert "folds <=" in msg or "collect more" in msg


def test_wrap_takes_a_name_for_the_pipeline():
    study = foldwall.wrap(
        _pipe(),
        space={"model__C": [0.1, 1.0]},
        outer=2,
        inner=2,
        name="scaled_logistic",
    )
    assert study.candidates[0].name == "scaled_logistic"
    with pytest.raises(SpecError, match="argument 'name'"):
        foldwall.wrap(_pipe(), name="  ")


def test_python_and_command_line_use_the_same_default_workers():
    from foldwall.cli import _jobs
    from foldwall.runners import resolve_jobs

    assert _jobs(None) == resolve_jobs(foldwall.wrap(_pipe()).n_jobs) == 1


def test_license_is_an_spdx_string():
    meta = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    assert meta["project"]["license"] == "BSD-3-Clause"
    # PEP 639 license expressions need setuptools 77 or later (no deprecation boxes)
    assert any(
        re.fullmatch(r"setuptools>=(\d+)", r) and int(r.split(">=")[1]) >= 77
        for r in meta["build-system"]["requires"]
    )


def test_make_demo_installs_foldwall_without_the_test_tools():
    text = (ROOT / "Makefile").read_text(encoding="utf-8")
    demo = re.search(r"^demo: (\S+)", text, re.M)
    assert demo is not None
    recipe = re.search(rf"^{re.escape(demo.group(1))}:.*?\n((?:\t.*\n)+)", text, re.M)
    assert recipe is not None
    assert "pip install --quiet -e ." in recipe.group(1)
    assert "[test" not in recipe.group(1)
