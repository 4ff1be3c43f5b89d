"""Bad input: one clear line on stderr, exit status 2, no traceback, nothing written.

Every case starts from a small *valid* study and table written into ``tmp_path``
and applies exactly one mutation. The CLI must then

- return 2,
- print exactly one non-empty line on stderr, starting with ``foldwall: error:``,
- name the offending key / column / value (a case-specific substring),
- never show a traceback, and
- leave the ``--out`` folder uncreated.

The same problems raised from Python surface as ``SpecError`` / ``DataError``.
"""

from __future__ import annotations

import copy
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest
import yaml

import foldwall
from foldwall import DataError, SpecError
from foldwall.cli import main

# --------------------------------------------------------------------------
# The valid starting point: 40 rows, 10 subjects x 4 visits, 3 features.
# --------------------------------------------------------------------------

N_SUBJECTS = 10
VISITS = 4


def make_table() -> pd.DataFrame:
    rng = np.random.default_rng(0)
    n = N_SUBJECTS * VISITS
    subject = np.repeat([f"S{i:02d}" for i in range(N_SUBJECTS)], VISITS)
    visit = np.tile(np.arange(VISITS), N_SUBJECTS)
    X = rng.normal(size=(n, 3)).round(4)
    # both classes inside every subject, so every fold sees both classes
    label = np.tile([0, 1, 0, 1], N_SUBJECTS)
    X[:, 0] += 0.8 * label
    return pd.DataFrame(
        {
            "subject": subject,
            "visit": visit,
            "f1": X[:, 0],
            "f2": X[:, 1],
            "f3": X[:, 2],
            "label": label,
        }
    )


BASE_STUDY: dict[str, Any] = {
    "name": "tiny bad-input study",
    "seed": 3,
    "data": {
        "table": "tiny.csv",
        "target": "label",
        "groups": "subject",
        "drop": ["visit"],
    },
    "steps": [{"name": "scale", "use": "sklearn.preprocessing.StandardScaler"}],
    "candidates": [
        {
            "name": "logit",
            "model": {
                "name": "model",
                "use": "sklearn.linear_model.LogisticRegression",
                "with": {"max_iter": 200},
            },
            "space": {"model__C": [0.1, 1.0]},
        }
    ],
    "search": {"method": "grid"},
    "outer": {"folds": 3},
    "inner": {"folds": 2},
    "metrics": ["roc_auc"],
    "control": {"permutations": 0},
}


@dataclass
class Case:
    id: str
    expect: list[str]  # substrings the one stderr line must contain
    study: Callable[[dict[str, Any]], Any] | None = (
        None  # mutate the study dict in place
    )
    table: Callable[[pd.DataFrame], pd.DataFrame | None] | None = (
        None  # mutate (or return) the table
    )
    text: str | None = None  # raw study text instead of YAML of the dict
    files: dict[str, Callable[[Path], None]] = field(
        default_factory=dict
    )  # extra files to write
    xfail: str | None = None


def _set(path: str, value: Any) -> Callable[[dict[str, Any]], None]:
    """Mutation: set a dotted key (``candidates.0.model.use``) to a value."""

    def f(d: dict[str, Any]) -> None:
        *head, last = path.split(".")
        cur: Any = d
        for p in head:
            cur = cur[int(p)] if isinstance(cur, list) else cur[p]
        if isinstance(cur, list):
            cur[int(last)] = value
        else:
            cur[last] = value

    return f


def _rename(path: str, new: str) -> Callable[[dict[str, Any]], None]:
    """Mutation: rename the last key of a dotted path (a misspelt key)."""

    def f(d: dict[str, Any]) -> None:
        *head, last = path.split(".")
        cur: Any = d
        for p in head:
            cur = cur[int(p)] if isinstance(cur, list) else cur[p]
        cur[new] = cur.pop(last)

    return f


def _delete(path: str) -> Callable[[dict[str, Any]], None]:
    def f(d: dict[str, Any]) -> None:
        *head, last = path.split(".")
        cur: Any = d
        for p in head:
            cur = cur[int(p)] if isinstance(cur, list) else cur[p]
        del cur[last]

    return f


def _space(value: dict[str, Any]) -> Callable[[dict[str, Any]], None]:
    return _set("candidates.0.space", value)


def _nan_target(df: pd.DataFrame) -> pd.DataFrame:
    df = df.astype({"label": float})
    df.loc[[5, 17, 30], "label"] = np.nan
    return df


def _single_class(df: pd.DataFrame) -> pd.DataFrame:
    df["label"] = 1
    return df


def _rare_class(df: pd.DataFrame) -> pd.DataFrame:
    df["label"] = 0
    df.loc[[1, 9], "label"] = 1  # two rows of class 1, three outer folds
    return df


def _two_subjects(df: pd.DataFrame) -> pd.DataFrame:
    df["subject"] = np.where(np.arange(len(df)) < 20, "A", "B")
    return df


def _dup_candidate(d: dict[str, Any]) -> None:
    d["candidates"].append(copy.deepcopy(d["candidates"][0]))


def _xlsx(d: dict[str, Any]) -> None:
    d["data"]["table"] = "tiny.xlsx"


def _write_xlsx(tmp: Path) -> None:
    (tmp / "tiny.xlsx").write_bytes((tmp / "tiny.csv").read_bytes())


def _write_fake_parquet(tmp: Path) -> None:
    (tmp / "tiny.parquet").write_bytes((tmp / "tiny.csv").read_bytes())


CASES = [
    # -- the file itself ------------------------------------------------------
    Case(
        "not-yaml", ["not valid YAML", "line"], text="data: [tiny.csv\ncandidates: {\n"
    ),
    Case(
        "yaml-not-a-mapping",
        ["must be a mapping", "list"],
        text="- data\n- candidates\n",
    ),
    Case("yaml-empty", ["is empty", "data:"], text=""),
    # -- keys -----------------------------------------------------------------
    Case(
        "misspelt-top-level-key",
        ["unknown key 'candidats'", "did you mean 'candidates'"],
        study=_rename("candidates", "candidats"),
    ),
    Case(
        "misspelt-nested-key",
        ["unknown key 'data.tagret'", "did you mean 'target'"],
        study=_rename("data.target", "tagret"),
    ),
    Case(
        "misspelt-loop-key",
        ["outer.fold", "did you mean 'folds'"],
        study=_rename("outer.folds", "fold"),
    ),
    Case(
        "missing-data-target", ["data.target", "missing"], study=_delete("data.target")
    ),
    Case("missing-candidates", ["candidates", "missing"], study=_delete("candidates")),
    Case("empty-candidates", ["candidates"], study=_set("candidates", [])),
    Case("negative-seed", ["seed", "-1"], study=_set("seed", -1)),
    Case(
        "permutations-negative",
        ["control.permutations", "-5"],
        study=_set("control.permutations", -5),
    ),
    Case("outer-folds-one", ["outer.folds"], study=_set("outer.folds", 1)),
    Case(
        "folds-not-a-number", ["outer.folds", "five"], study=_set("outer.folds", "five")
    ),
    Case(
        "unknown-search-method",
        ["search.method", "bayes"],
        study=_set("search.method", "bayes"),
    ),
    Case("inner-repeats", ["inner.repeats"], study=_set("inner.repeats", 2)),
    Case("duplicate-candidate-names", ["unique", "logit"], study=_dup_candidate),
    Case(
        "step-name-with-dunder",
        ["steps[0].name", "my__scale", "'__'"],
        study=_set("steps.0.name", "my__scale"),
    ),
    Case(
        "duplicate-step-names",
        ["scale", "used twice"],
        study=_set("candidates.0.model.name", "scale"),
    ),
    # -- the table ------------------------------------------------------------
    Case(
        "table-file-missing",
        ["data.table", "nowhere.csv", "does not exist"],
        study=_set("data.table", "nowhere.csv"),
    ),
    Case(
        "table-xlsx",
        ["data.table", "tiny.xlsx", ".csv"],
        study=_xlsx,
        files={"xlsx": _write_xlsx},
    ),
    Case(
        "table-parquet-not-parquet",
        ["data.table", "tiny.parquet"],
        study=_set("data.table", "tiny.parquet"),
        files={"parquet": _write_fake_parquet},
    ),
    Case(
        "table-empty-file", ["data.table", "tiny.csv"], table=lambda df: pd.DataFrame()
    ),
    Case(
        "table-header-only",
        ["data.target", "'label'", "no rows"],
        table=lambda df: df.iloc[:0],
    ),
    Case(
        "target-column-missing",
        ["data.target", "'lable'", "did you mean 'label'"],
        study=_set("data.target", "lable"),
    ),
    Case(
        "groups-column-missing",
        ["data.groups", "'subjects'", "did you mean 'subject'"],
        study=_set("data.groups", "subjects"),
    ),
    Case(
        "drop-column-missing",
        ["data.drop", "'vist'", "did you mean 'visit'"],
        study=_set("data.drop", ["vist"]),
    ),
    Case(
        "features-column-missing",
        ["data.features", "'f4'"],
        study=_set("data.features", ["f1", "f4"]),
    ),
    Case(
        "features-include-target",
        ["data.features", "'label'"],
        study=_set("data.features", ["f1", "label"]),
    ),
    Case(
        "blocks-column-missing",
        ["control.blocks", "'site'"],
        study=_set("control.blocks", "site"),
    ),
    Case("target-has-nan", ["data.target", "'label'", "3 missing"], table=_nan_target),
    Case(
        "target-single-class",
        ["data.target", "'label'", "single class"],
        table=_single_class,
    ),
    Case(
        "text-column-not-dropped",
        ["'note'", "data.drop"],
        table=lambda df: df.assign(note=["seen at home"] * len(df)),
    ),
    Case(
        "nan-in-features-without-imputer",
        ["'f2'", "missing"],
        table=lambda df: df.assign(f2=df["f2"].where(df.index != 4)),
    ),
    Case(
        "groups-have-nan",
        ["data.groups", "'subject'", "missing"],
        table=lambda df: df.assign(subject=df["subject"].where(df.index != 3)),
    ),
    Case(
        "continuous-target-for-classifier",
        ["data.target", "'label'", "continuous", "regressor"],
        table=lambda df: df.assign(label=df["label"] + np.linspace(0.01, 0.5, len(df))),
    ),
    Case(
        "regression-target-not-numeric",
        ["data.target", "'label'", "regression"],
        study=_set(
            "candidates.0",
            {
                "name": "ridge",
                "model": {"name": "model", "use": "sklearn.linear_model.Ridge"},
            },
        ),
        table=lambda df: df.assign(label=np.where(df["label"] == 1, "yes", "no")),
    ),
    Case(
        "task-mismatch",
        ["data.task", "regression"],
        study=_set("data.task", "regression"),
    ),
    # -- estimators and the allow-list ---------------------------------------
    Case(
        "unknown-estimator-class",
        [
            "candidates[0].model.use",
            "LogisticRegresion",
            "did you mean 'sklearn.linear_model.LogisticRegression'",
        ],
        study=_set("candidates.0.model.use", "sklearn.linear_model.LogisticRegresion"),
    ),
    Case(
        "unknown-module",
        [
            "candidates[0].model.use",
            "sklearn.linear_models",
            "did you mean 'sklearn.linear_model.LogisticRegression'",
        ],
        study=_set(
            "candidates.0.model.use", "sklearn.linear_models.LogisticRegression"
        ),
    ),
    Case(
        "not-an-import-path",
        ["candidates[0].model.use", "LogisticRegression", "full import path"],
        study=_set("candidates.0.model.use", "LogisticRegression"),
    ),
    Case(
        "disallowed-import-numpy",
        [
            "candidates[0].model.use",
            "numpy.linalg.norm",
            "not a scikit-learn estimator class",
        ],
        study=_set("candidates.0.model.use", "numpy.linalg.norm"),
    ),
    Case(
        "disallowed-import-os-system",
        ["candidates[0].model.use", "os.system", "never"],
        study=_set("candidates.0.model.use", "os.system"),
    ),
    Case(
        "non-estimator-from-sklearn",
        [
            "candidates[0].model.use",
            "sklearn.metrics.roc_auc_score",
            "not a scikit-learn estimator",
        ],
        study=_set("candidates.0.model.use", "sklearn.metrics.roc_auc_score"),
    ),
    Case(
        "model-not-last-step",
        ["candidates[0]", "transform"],
        study=_set(
            "steps.0",
            {"name": "first", "use": "sklearn.linear_model.LogisticRegression"},
        ),
    ),
    Case(
        "last-step-not-a-model",
        ["'logit'", "neither a classifier nor a regressor"],
        study=_set(
            "candidates.0",
            {
                "name": "logit",
                "model": {
                    "name": "model",
                    "use": "sklearn.preprocessing.StandardScaler",
                },
            },
        ),
    ),
    Case(
        "unknown-constructor-argument",
        ["candidates[0].model.with", "max_itr", "did you mean 'max_iter'"],
        study=_set("candidates.0.model.with", {"max_itr": 200}),
    ),
    # scikit-learn checks argument values only in fit(); this must still fail before the folder exists
    Case(
        "invalid-constructor-value",
        ["candidates[0].model.with", "'solver'", "magic"],
        study=_set("candidates.0.model.with", {"solver": "magic"}),
    ),
    Case(
        "invalid-nested-constructor-value",
        ["steps[0].with", "'strategy'", "middle"],
        study=_set(
            "steps.0",
            {
                "name": "impute",
                "use": "sklearn.impute.SimpleImputer",
                "with": {"strategy": "middle"},
            },
        ),
    ),
    Case(
        "allow-modules-os",
        ["allow_modules", "'os'"],
        study=_set("allow_modules", ["os"]),
    ),
    Case(
        "reserved-candidate-name",
        ["'chance'"],
        study=_set("candidates.0.name", "chance"),
    ),
    # -- search spaces -------------------------------------------------------
    Case(
        "space-key-missing-step",
        ["candidates[0].space", "select__k", "STEP"],
        study=_space({"select__k": [1, 2]}),
    ),
    Case(
        "space-key-unknown-parameter",
        ["candidates[0].space", "model__max_iters", "did you mean 'model__max_iter'"],
        study=_space({"model__max_iters": [10, 20]}),
    ),
    Case(
        "space-key-without-dunder",
        ["candidates[0].space", "'C'"],
        study=_space({"C": [0.1, 1.0]}),
    ),
    Case(
        "space-empty-list",
        ["candidates[0].space", "model__C", "empty list"],
        study=_space({"model__C": []}),
    ),
    Case(
        "space-invalid-choice-value",
        ["candidates[0].space", "model__C", "-1.0"],
        study=_space({"model__C": [-1.0, 1.0]}),
    ),
    Case(
        "space-invalid-range-end",
        ["candidates[0].space", "model__C", "0.0"],
        study=_space({"model__C": {"between": [0, 1], "grid_points": 3}}),
    ),
    Case(
        "space-range-not-integer",
        ["candidates[0].space", "model__max_iter", "integer"],
        study=_space({"model__max_iter": {"between": [10, 100], "grid_points": 3}}),
    ),
    Case(
        "space-value-not-a-list-or-range",
        ["candidates[0].space.model__C", "list of values", "range"],
        study=_space({"model__C": 0.5}),
    ),
    Case(
        "range-misspelt-between",
        ["candidates[0].space.model__C.betwen", "did you mean 'between'"],
        study=_space({"model__C": {"betwen": [0.1, 1], "grid_points": 3}}),
    ),
    Case(
        "range-one-value",
        ["candidates[0].space.model__C.between", "too few values"],
        study=_space({"model__C": {"between": [0.1], "grid_points": 3}}),
    ),
    Case(
        "range-low-not-below-high",
        ["key 'candidates[0].space.model__C'", "low < high", "[10.0, 1.0]"],
        study=_space({"model__C": {"between": [10, 1], "grid_points": 3}}),
    ),
    Case(
        "log-range-low-not-positive",
        ["candidates[0].space.model__C", "log", "0"],
        study=_space(
            {"model__C": {"between": [0, 1], "scale": "log", "grid_points": 3}}
        ),
    ),
    Case(
        "range-misspelt-key",
        ["candidates[0].space.model__C", "grid_point", "did you mean 'grid_points'"],
        study=_space({"model__C": {"between": [0.1, 1], "grid_point": 3}}),
    ),
    Case(
        "range-in-grid-without-grid-points",
        ["candidates[0].space", "model__C", "grid_points"],
        study=_space({"model__C": {"between": [0.1, 1]}}),
    ),
    Case(
        "tpe-without-trials",
        ["search.trials", "tpe"],
        study=_set("search.method", "tpe"),
    ),
    Case(
        "grid-with-trials", ["search.trials", "grid"], study=_set("search.trials", 10)
    ),
    # -- metrics -------------------------------------------------------------
    Case(
        "unknown-metric",
        ["metrics", "balanced_acuracy", "did you mean 'balanced_accuracy'"],
        study=_set("metrics", ["balanced_acuracy"]),
    ),
    Case(
        "metric-given-as-function-name",
        ["metrics", "roc_auc_score", "did you mean 'roc_auc'"],
        study=_set("metrics", ["roc_auc_score"]),
    ),
    Case("empty-metrics", ["metrics"], study=_set("metrics", [])),
    Case(
        "binary-metric-on-three-classes",
        ["metrics", "roc_auc", "3 classes"],
        table=lambda df: df.assign(label=np.tile(["a", "b", "c", "a"], N_SUBJECTS)),
    ),
    # -- folds against the rows ---------------------------------------------
    Case(
        "class-too-small-for-outer-folds",
        ["outer.folds", "smallest class (1)", "2 rows"],
        table=_rare_class,
    ),
    Case("groups-fewer-than-folds", ["outer.folds", "2 groups"], table=_two_subjects),
    Case(
        "outer-folds-more-than-subjects",
        ["outer.folds", "12", "10 groups"],
        study=_set("outer.folds", 12),
    ),
    Case(
        "inner-folds-too-many",
        ["inner.folds", "training part of outer fold"],
        study=_set("inner.folds", 8),
    ),
    Case(
        "stratify-regression",
        ["outer.stratify", "regression"],
        study=lambda d: (
            _set(
                "candidates.0",
                {
                    "name": "ridge",
                    "model": {"name": "model", "use": "sklearn.linear_model.Ridge"},
                },
            )(d),
            _set("outer.stratify", True)(d),
        ),
    ),
]


def _write(tmp_path: Path, case: Case) -> Path:
    df = make_table()
    if case.table is not None:
        got = case.table(df)
        df = df if got is None else got
    df.to_csv(tmp_path / "tiny.csv", index=False)
    for write in case.files.values():
        write(tmp_path)
    study_path = tmp_path / "study.yaml"
    if case.text is not None:
        study_path.write_text(case.text, encoding="utf-8")
    else:
        d = copy.deepcopy(BASE_STUDY)
        if case.study is not None:
            case.study(d)
        study_path.write_text(yaml.safe_dump(d, sort_keys=False), encoding="utf-8")
    return study_path


def _argv(study: Path, out: Path, *extra: str) -> list[str]:
    return ["run", str(study), "--out", str(out), "--jobs", "1", "--quiet", *extra]


def _params(cases: list[Case]) -> list[Any]:
    out = []
    for c in cases:
        marks = [pytest.mark.xfail(strict=True, reason=c.xfail)] if c.xfail else []
        out.append(pytest.param(c, id=c.id, marks=marks))
    return out


def test_base_study_is_valid(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """The starting point runs, so every failure below comes from its one mutation."""
    study = _write(tmp_path, Case("valid", []))
    rc = main(_argv(study, tmp_path / "out"))
    captured = capsys.readouterr()
    assert rc == 0, captured.err
    assert (tmp_path / "out" / "results.json").is_file()


@pytest.mark.parametrize("case", _params(CASES))
def test_cli_bad_input(
    case: Case, tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    study = _write(tmp_path, case)
    out = tmp_path / "out"
    rc = main(_argv(study, out))
    captured = capsys.readouterr()
    lines = captured.err.splitlines()
    assert "Traceback" not in captured.err and "Traceback" not in captured.out
    assert rc == 2, captured.err
    assert len(lines) == 1 and lines[0].strip(), (
        f"want one line on stderr, got: {captured.err!r}"
    )
    assert lines[0].startswith("foldwall: error: "), lines[0]
    for want in case.expect:
        assert want in lines[0], f"{want!r} not in {lines[0]!r}"
    assert not out.exists(), "the output folder was created for bad input"


def test_cli_missing_study_file(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    rc = main(_argv(tmp_path / "nope.yaml", tmp_path / "out"))
    err = capsys.readouterr().err
    assert rc == 2
    assert err.startswith("foldwall: error: ") and len(err.splitlines()) == 1
    assert "nope.yaml" in err and "does not exist" in err
    assert not (tmp_path / "out").exists()


def test_cli_allow_os_names_the_flag(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    study = _write(tmp_path, Case("valid", []))
    rc = main(_argv(study, tmp_path / "out", "--allow", "os"))
    err = capsys.readouterr().err
    assert rc == 2 and len(err.splitlines()) == 1
    assert err.startswith("foldwall: error: --allow: 'os' cannot be allowed")
    assert not (tmp_path / "out").exists()


def test_cli_debug_shows_traceback(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    """--debug re-raises instead of printing one line, so the traceback is shown."""
    case = next(c for c in CASES if c.id == "target-column-missing")
    study = _write(tmp_path, case)
    with pytest.raises(
        DataError,
        match=r"data\.target: column 'lable' is not in the table; did you mean 'label'\?",
    ):
        main(_argv(study, tmp_path / "out", "--debug"))
    assert capsys.readouterr().err == ""
    assert not (tmp_path / "out").exists()


def test_library_errors_are_value_errors() -> None:
    assert issubclass(SpecError, ValueError) and issubclass(DataError, ValueError)


# --------------------------------------------------------------------------
# The Python API: same problems, SpecError / DataError with the same message.
# --------------------------------------------------------------------------


def _pipe() -> Any:
    from sklearn.linear_model import LogisticRegression
    from sklearn.pipeline import make_pipeline
    from sklearn.preprocessing import StandardScaler

    return make_pipeline(StandardScaler(), LogisticRegression(max_iter=200))


def _arrays() -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    df = make_table()
    return (
        df[["f1", "f2", "f3"]].to_numpy(),
        df["label"].to_numpy(),
        df["subject"].to_numpy(),
    )


def _api_unknown_metric() -> None:
    foldwall.wrap(
        _pipe(),
        space={"logisticregression__C": [0.1, 1.0]},
        metric="balanced_acuracy",
        outer=3,
        inner=2,
    )


def _api_space_key_not_in_pipeline() -> None:
    foldwall.wrap(
        _pipe(), space={"selectkbest__k": [1, 2]}, metric="roc_auc", outer=3, inner=2
    )


def _api_space_param_unknown() -> None:
    foldwall.wrap(
        _pipe(),
        space={"logisticregression__CC": [0.1, 1.0]},
        metric="roc_auc",
        outer=3,
        inner=2,
    )


def _api_distribution_without_trials() -> None:
    from optuna.distributions import FloatDistribution

    foldwall.wrap(
        _pipe(),
        space={"logisticregression__C": FloatDistribution(0.01, 10, log=True)},
        metric="roc_auc",
        outer=3,
        inner=2,
    )


def _api_length_mismatch() -> None:
    X, y, _ = _arrays()
    foldwall.wrap(_pipe(), metric="roc_auc", outer=3, inner=2).run(X, y[:-3])


def _api_nan_in_y() -> None:
    X, y, _ = _arrays()
    y = y.astype(float)
    y[[2, 11]] = np.nan
    foldwall.wrap(_pipe(), metric="roc_auc", outer=3, inner=2).run(X, y)


def _api_groups_fewer_than_folds() -> None:
    X, y, _ = _arrays()
    groups = np.where(np.arange(len(y)) < 20, "A", "B")
    foldwall.wrap(_pipe(), metric="roc_auc", outer=3, inner=2).run(X, y, groups=groups)


def _api_groups_length_mismatch() -> None:
    X, y, g = _arrays()
    foldwall.wrap(_pipe(), metric="roc_auc", outer=3, inner=2).run(X, y, groups=g[:-1])


def _api_class_too_small() -> None:
    X, y, _ = _arrays()
    y = np.zeros_like(y)
    y[[1, 9]] = 1
    foldwall.wrap(_pipe(), metric="roc_auc", outer=3, inner=2).run(X, y)


def _api_single_class() -> None:
    X, y, _ = _arrays()
    foldwall.wrap(_pipe(), metric="roc_auc", outer=3, inner=2).run(X, np.ones_like(y))


def _api_continuous_y_for_classifier() -> None:
    X, y, _ = _arrays()
    foldwall.wrap(_pipe(), metric="roc_auc", outer=3, inner=2).run(
        X, y + np.linspace(0.01, 0.5, len(y))
    )


def _api_no_rows() -> None:
    foldwall.wrap(_pipe(), metric="roc_auc", outer=3, inner=2).run(
        np.zeros((0, 3)), np.zeros(0)
    )


def _api_negative_permutations() -> None:
    foldwall.wrap(_pipe(), metric="roc_auc", outer=3, inner=2, n_permutations=-1)


def _api_not_an_estimator() -> None:
    foldwall.wrap("LogisticRegression", metric="roc_auc", outer=3, inner=2)


API_CASES = [
    (
        "unknown-metric",
        _api_unknown_metric,
        SpecError,
        r"'balanced_acuracy' is not a scikit-learn scorer name; did you mean 'balanced_accuracy'\?",
    ),
    (
        "space-key-not-in-pipeline",
        _api_space_key_not_in_pipeline,
        SpecError,
        r"'selectkbest__k'.*STEP one of",
    ),
    (
        "space-param-unknown",
        _api_space_param_unknown,
        SpecError,
        r"'logisticregression__CC'.*did you mean 'logisticregression__C'\?",
    ),
    (
        "distribution-without-trials",
        _api_distribution_without_trials,
        SpecError,
        r"trials=N",
    ),
    (
        "X-y-length-mismatch",
        _api_length_mismatch,
        DataError,
        r"X has 40 rows but y has 37",
    ),
    ("nan-in-y", _api_nan_in_y, DataError, r"2 missing value\(s\)"),
    (
        "groups-fewer-than-folds",
        _api_groups_fewer_than_folds,
        DataError,
        r"outer\.folds asks for 3 folds.*only 2 groups",
    ),
    (
        "groups-length-mismatch",
        _api_groups_length_mismatch,
        DataError,
        r"groups has 39 values but y has 40",
    ),
    (
        "class-too-small",
        _api_class_too_small,
        DataError,
        r"outer\.folds.*smallest class \(1\) has only 2 rows",
    ),
    ("single-class", _api_single_class, DataError, r"single class"),
    (
        "continuous-y-for-classifier",
        _api_continuous_y_for_classifier,
        DataError,
        r"continuous values.*use a regressor",
    ),
    ("no-rows", _api_no_rows, DataError, r"no rows"),
    (
        "negative-permutations",
        _api_negative_permutations,
        SpecError,
        r"argument 'n_permutations': Input should be greater than or equal to 0",
    ),
    (
        "not-an-estimator",
        _api_not_an_estimator,
        SpecError,
        r"must be a scikit-learn estimator",
    ),
]


@pytest.mark.parametrize(
    "call, error, match", [pytest.param(f, e, m, id=i) for i, f, e, m in API_CASES]
)
def test_python_api_bad_input(
    call: Callable[[], None], error: type[Exception], match: str
) -> None:
    with pytest.raises(error, match=match) as info:
        call()
    msg = str(info.value)
    assert msg and "\n" not in msg
