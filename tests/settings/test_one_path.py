"""One validation path: the study file and wrap() reject a bad setting with the same words.

Every row gives a study-file key, the wrap() argument that sets it, and a bad
value. The study file must fail with ``key 'KEY': MESSAGE`` and wrap() with
``argument 'ARG': MESSAGE`` - the same MESSAGE - before anything is fitted
(issue 8).
"""

from __future__ import annotations

import copy
import re
from pathlib import Path
from typing import Any

import numpy as np
import pytest
import yaml
from sklearn.linear_model import LogisticRegression

import foldwall
from foldwall import SpecError
from foldwall.spec import parse_study

BASE: dict[str, Any] = {
    "data": {"table": "t.csv", "target": "y"},
    "candidates": [
        {
            "name": "logit",
            "model": {
                "name": "model",
                "use": "sklearn.linear_model.LogisticRegression",
            },
            "space": {"model__C": [0.1, 1.0]},
        }
    ],
}

# (study-file key path, wrap argument, bad value, extra file keys, extra wrap arguments)
CASES: list[tuple[str, str, Any, dict[str, Any], dict[str, Any]]] = [
    ("control.alpha", "alpha", 1.5, {}, {}),
    ("control.alpha", "alpha", 0.0, {}, {}),
    ("control.alpha", "alpha", "small", {}, {}),
    ("control.permutations", "n_permutations", -1, {}, {}),
    ("control.permutations", "n_permutations", 2.5, {}, {}),
    ("control.stop_after_exceedances", "stop_after_exceedances", 0, {}, {}),
    ("control.scheme", "permutation_scheme", "sideways", {}, {}),
    ("control.stop_early", "stop_early", "yes", {}, {}),
    ("compare.correction", "correction", "fdr", {}, {}),
    ("compare.between_candidates", "between_candidates", 3, {}, {}),
    ("compare.smallest_difference", "smallest_difference", 0.0, {}, {}),  # issue 10
    ("compare.smallest_difference", "smallest_difference", "small", {}, {}),
    ("control.scheme", "permutation_scheme", "within-group", {}, {}),
    ("search.trials", "trials", 0, {"search.method": "tpe"}, {}),
    ("search.method", "sampler", "annealing", {"search.trials": 5}, {"trials": 5}),
    ("search.allow_failed_trials", "allow_failed_trials", "no", {}, {}),
    ("outer.folds", "outer", 1, {}, {}),
    ("outer.folds", "outer", "five", {}, {}),
    ("inner.folds", "inner", 1, {}, {}),
    ("outer.repeats", "repeats", 0, {}, {}),
    ("outer.repeats", "repeats", True, {}, {}),
    # upper bounds (issue 9): a study cannot ask for astronomical work
    ("outer.repeats", "repeats", 1_000_000_000, {}, {}),
    ("outer.folds", "outer", 100_000, {}, {}),
    ("inner.folds", "inner", 100_000, {}, {}),
    ("control.permutations", "n_permutations", 1_000_000_000, {}, {}),
    ("search.trials", "trials", 1_000_000_000, {"search.method": "tpe"}, {}),
    ("outer.forward", "forward", "yes", {}, {}),
    ("ledger", "ledger", 3, {}, {}),
    ("ledger", "ledger", "", {}, {}),
]


def _set(d: dict[str, Any], dotted: str, value: Any) -> None:
    *path, last = dotted.split(".")
    for p in path:
        d = d.setdefault(p, {})
    d[last] = value


def _file_message(key: str, value: Any, extra: dict[str, Any]) -> str:
    raw = copy.deepcopy(BASE)
    for k, v in extra.items():
        _set(raw, k, v)
    _set(raw, key, value)
    with pytest.raises(SpecError) as info:
        parse_study(yaml.safe_dump(raw), path=Path("study.yaml"))
    return str(info.value)


def _wrap_message(arg: str, value: Any, extra: dict[str, Any]) -> str:
    with pytest.raises(SpecError) as info:
        foldwall.wrap(LogisticRegression(), {"C": [0.1, 1.0]}, **{arg: value, **extra})
    return str(info.value)


@pytest.mark.parametrize(("key", "arg", "value", "file_extra", "wrap_extra"), CASES)
def test_bad_setting_gets_the_same_message_from_file_and_wrap(
    key, arg, value, file_extra, wrap_extra
):
    from_file = _file_message(key, value, file_extra)
    from_wrap = _wrap_message(arg, value, wrap_extra)
    assert "\n" not in from_file and "\n" not in from_wrap
    m_file = re.fullmatch(
        rf"study file 'study\.yaml': key '{re.escape(key)}': (.+)", from_file
    )
    m_wrap = re.fullmatch(rf"argument '{re.escape(arg)}': (.+)", from_wrap)
    assert m_file, from_file
    assert m_wrap, from_wrap
    assert m_file.group(1) == m_wrap.group(1)


def test_wrap_rejects_before_any_fit(monkeypatch):
    # issue 8: alpha=1.5 used to run the whole real-label study and fail afterwards
    import foldwall.runners._engine as engine

    def no_fit(*args: Any, **kwargs: Any) -> None:
        raise AssertionError("a fit happened before the arguments were checked")

    monkeypatch.setattr(engine, "finish_unit", no_fit)
    X, y = np.random.default_rng(0).normal(size=(30, 3)), np.repeat([0, 1], 15)
    with pytest.raises(SpecError, match="argument 'alpha'"):
        foldwall.wrap(
            LogisticRegression(), alpha=1.5, baselines={"b": LogisticRegression()}
        ).run(X, y)


# raters section (issue 12): key of the section, bad value. The study file sets
# raters.KEY (with data.target removed); wrap() gets raters={KEY: value}.
RATER_CASES: list[tuple[str, Any]] = [
    ("scale", "ratio"),
    ("clear_share", 1.5),
    ("clear_share", 0),
    ("consensus", "vote"),
    ("reference_metric", "f1"),
    ("smallest_difference", -0.1),
    ("warn_below", 2),
    ("classes", ["only"]),
    ("clear_spread", -1.0),
    ("columns", ["only_one"]),
]


@pytest.mark.parametrize(("key", "value"), RATER_CASES)
def test_bad_rater_setting_gets_the_same_message_from_file_and_wrap(key, value):
    raw = copy.deepcopy(BASE)
    del raw["data"]["target"]
    raw["raters"] = {"columns": ["a", "b"], key: value}
    with pytest.raises(SpecError) as info:
        parse_study(yaml.safe_dump(raw), path=Path("study.yaml"))
    from_file = str(info.value)
    with pytest.raises(SpecError) as info:
        foldwall.wrap(LogisticRegression(), raters={key: value})
    from_wrap = str(info.value)
    m_file = re.fullmatch(
        rf"study file 'study\.yaml': key 'raters\.{key}': (.+)", from_file
    )
    m_wrap = re.fullmatch(rf"argument 'raters\.{key}': (.+)", from_wrap)
    assert m_file, from_file
    assert m_wrap, from_wrap
    assert m_file.group(1) == m_wrap.group(1)
