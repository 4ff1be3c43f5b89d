"""Property test: mutated recipe study files give a plan or one clean line, never a traceback.

Each example takes one recipe's study file and applies a few mutations, either to
the text (cut, repeat or insert characters that mean something in YAML) or to
the parsed structure (replace a value somewhere with a hostile one, drop a key,
add one). It then runs ``foldwall plan --no-estimate`` on the result, in this
process, and accepts exactly two outcomes: exit 0, or exit 2 with one line on
stderr starting ``foldwall: error:``. Each example must finish in 10 seconds.
"""

from __future__ import annotations

import shutil
import subprocess
import sys
import time
import warnings
from datetime import timedelta
from pathlib import Path
from typing import Any

import pytest
import yaml
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from foldwall.cli import main

RECIPES = Path(__file__).resolve().parents[2] / "recipes"
NAMES = sorted(p.name for p in RECIPES.iterdir() if (p / "study.yaml").is_file())

HOSTILE_VALUES = [
    None,
    True,
    -1,
    0,
    10**12,
    1e308,
    float("nan"),
    "",
    "x" * 200,
    "../../etc/passwd",
    "/proc/self/environ",
    [],
    [[[[[]]]]],
    {},
    {"use": "os.system"},
    {"use": "numpy.save"},
    {"use": "sklearn.svm.SVC", "with": {"C": -1}},
    {"between": [1, 0]},
    {"between": [0.001, 10], "scale": "log", "grid_points": 10**9},
    ["a", 1, None],
    "\x1b[31m",
    "sklearn.linear_model.LogisticRegression",
    {"memory": "/tmp/x"},
    10**9,
]
YAML_BITS = [
    "&a",
    "*a",
    "!!python/name:os.system",
    "{",
    "}",
    "[",
    "]",
    ": ",
    "- ",
    "#",
    "|",
    ">",
    "\t",
    "'",
    '"',
    "<<: *a",
    "\n  ",
    "~",
    "!!binary",
    "%YAML 1.1\n---\n",
    "&s [1, *s]",
    "[" * 3000,
    "{a: " * 2000,
    "9" * 5000,
    "&b [x, x, x, x, x, x, x, x, x, x]",
]


# Whole YAML values put after a "key: " on some line.
YAML_VALUES = [
    "&s [1, *s]",
    "&m {a: *m}",
    "[" * 3000 + "]" * 3000,
    "{a: " * 3000 + "1" + "}" * 3000,
    "9" * 5000,
    "!!python/object/apply:os.system [echo]",
    "{between: [0.001, 10], grid_points: 1000000000}",
    "1000000000",
    "-5",
    "{use: os.system}",
    "[{use: builtins.eval}]",
    "'\\x1b[2J'",
]


@pytest.fixture(scope="module")
def recipe_dirs(tmp_path_factory):
    """Each recipe copied once, with its data generated."""
    out = {}
    for name in NAMES:
        d = tmp_path_factory.mktemp(name)
        shutil.copytree(
            RECIPES / name, d, dirs_exist_ok=True, ignore=shutil.ignore_patterns("data")
        )
        subprocess.run(
            [sys.executable, "make_data.py"], cwd=d, check=True, capture_output=True
        )
        out[name] = d
    return out


def _paths(obj: Any, prefix: tuple[Any, ...] = ()) -> list[tuple[Any, ...]]:
    found = [prefix]
    if len(prefix) > 12:  # a value that contains itself (an earlier alias mutation)
        return found
    if isinstance(obj, dict):
        for k, v in obj.items():
            found += _paths(v, (*prefix, k))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            found += _paths(v, (*prefix, i))
    return found


def _set(obj: Any, path: tuple[Any, ...], value: Any, action: str) -> Any:
    if not path:
        return value if action == "replace" else obj
    parent = obj
    for p in path[:-1]:
        parent = parent[p]
    last = path[-1]
    if action == "replace":
        parent[last] = value
    elif action == "drop":
        del parent[last]
    elif action == "add" and isinstance(parent[last], dict):
        parent[last]["extra_key"] = value
    return obj


@st.composite
def mutated_study(draw: Any) -> tuple[str, str]:
    name = draw(st.sampled_from(NAMES))
    text = (RECIPES / name / "study.yaml").read_text()
    for _ in range(draw(st.integers(1, 3))):
        if draw(st.booleans()):
            try:
                raw = yaml.safe_load(text)
            except (yaml.YAMLError, RecursionError, ValueError):
                continue  # an earlier text mutation broke it: keep the text as it is
            path = draw(st.sampled_from(_paths(raw)))
            action = draw(st.sampled_from(["replace", "drop", "add"]))
            value = draw(st.sampled_from(HOSTILE_VALUES))
            try:
                raw = _set(raw, path, value, action)
                text = yaml.safe_dump(raw, sort_keys=False, allow_unicode=True)
            except (
                KeyError,
                IndexError,
                TypeError,
                ValueError,
                RecursionError,
                yaml.YAMLError,
            ):
                continue
        else:
            at = draw(st.integers(0, len(text)))
            kind = draw(st.sampled_from(["insert", "cut", "repeat", "value"]))
            lines = text.splitlines()
            keyed = [
                i
                for i, ln in enumerate(lines)
                if ": " in ln and not ln.lstrip().startswith("#")
            ]
            if kind == "value" and keyed:
                i = draw(st.sampled_from(keyed))
                lines[i] = (
                    lines[i].split(": ", 1)[0]
                    + ": "
                    + draw(st.sampled_from(YAML_VALUES))
                )
                text = "\n".join(lines) + "\n"
            elif kind == "insert":
                text = text[:at] + draw(st.sampled_from(YAML_BITS)) + text[at:]
            elif kind == "cut":
                text = text[:at] + text[at + draw(st.integers(1, 40)) :]
            else:
                line_start = text.rfind("\n", 0, at) + 1
                line_end = text.find("\n", at)
                line = text[line_start : line_end if line_end >= 0 else len(text)]
                text = text[:line_start] + line + "\n" + text[line_start:]
    return name, text


@settings(
    max_examples=40,
    deadline=timedelta(seconds=10),
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
    derandomize=True,
)
@given(case=mutated_study())
def test_mutated_recipe_study_files_plan_or_fail_in_one_line(case, recipe_dirs, capsys):
    name, text = case
    study = recipe_dirs[name] / "fuzzed.yaml"
    study.write_text(text, encoding="utf-8")
    capsys.readouterr()
    t0 = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        rc = main(["plan", str(study), "--no-estimate", "--jobs", "1"])
    err = capsys.readouterr().err
    assert "Traceback" not in err
    assert rc in (0, 2), err
    if rc == 2:
        lines = [ln for ln in err.splitlines() if ln.strip()]
        assert len(lines) == 1 and lines[0].startswith("foldwall: error: "), err
    assert time.perf_counter() - t0 < 10
