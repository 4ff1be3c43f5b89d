"""Names in a study file: what the allow-list lets through, and what it refuses."""

from __future__ import annotations

import numpy as np
import pytest

import foldwall
from foldwall.spec import build_candidates, parse_study

BASE = """
data: {table: t.csv, target: y}
steps:
  - name: f
    use: STEP
    with: WITH
candidates: [{name: m, model: {name: model, use: sklearn.linear_model.LogisticRegression}}]
"""


def _cands(step: str, with_: str):
    return build_candidates(
        parse_study(BASE.replace("STEP", step).replace("WITH", with_)).spec
    )


def test_functions_that_write_files_are_refused_as_values():
    with pytest.raises(
        foldwall.SpecError, match="is not on the list of values a study may use"
    ):
        _cands(
            "sklearn.preprocessing.FunctionTransformer",
            "{func: {use: sklearn.datasets.dump_svmlight_file}, kw_args: {f: /tmp/x.txt}}",
        )


def test_score_functions_are_allowed_as_values():
    from sklearn.feature_selection import mutual_info_classif

    c = _cands(
        "sklearn.feature_selection.SelectKBest",
        "{score_func: {use: sklearn.feature_selection.mutual_info_classif}}",
    )
    assert dict(c[0].steps)["f"].score_func is mutual_info_classif


def test_parameters_that_write_files_are_refused():
    with pytest.raises(
        foldwall.SpecError,
        match="parameter 'memory' of Pipeline: 'memory' caches fitted steps",
    ):
        _cands("sklearn.pipeline.Pipeline", "{steps: [], memory: /tmp/cache}")


def test_yaml_12_floats_are_numbers():
    text = BASE.replace("STEP", "sklearn.feature_selection.VarianceThreshold").replace(
        "WITH", "{threshold: 1e-3}"
    )
    c = build_candidates(parse_study(text).spec)
    assert dict(c[0].steps)["f"].threshold == pytest.approx(0.001)


def test_a_model_with_nothing_to_tune_gets_one_setting_under_optuna():
    from optuna.distributions import FloatDistribution
    from sklearn.dummy import DummyClassifier
    from sklearn.linear_model import LogisticRegression

    rng = np.random.default_rng(0)
    X, y = rng.normal(size=(40, 3)), np.repeat([0, 1], 20)
    study = foldwall.wrap(
        LogisticRegression(),
        space={"C": FloatDistribution(0.01, 10, log=True)},
        trials=4,
        outer=2,
        inner=2,
        baselines={"prior": DummyClassifier()},
    )
    with pytest.warns(foldwall.BudgetWarning):
        res = study.run(X, y)
    trials = res.trials_frame()
    assert (trials[trials.candidate == "prior"].groupby("fold").size() == 1).all()
    assert (trials[trials.candidate == "model"].groupby("fold").size() == 4).all()
    assert res.to_dict()["budget"]["settings_per_search"] == {"model": 4, "prior": 1}


def test_score_interval_is_clipped_to_the_metric_range():
    from sklearn.linear_model import LogisticRegression

    rng = np.random.default_rng(0)
    X = rng.normal(size=(30, 2))
    y = (X[:, 0] + 0.4 * rng.normal(size=30) > 0).astype(int)
    res = foldwall.wrap(LogisticRegression(), metric="roc_auc", outer=3, inner=2).run(
        X, y
    )
    score = res.to_dict()["score"]
    lo, hi = score["ci"]
    assert 0.0 <= lo <= hi == 1.0  # the raw corrected t interval reaches past 1
    assert score["ci_method"].endswith("clipped to the metric's range")


def test_tiny_outer_test_parts_are_warned_about():
    from sklearn.linear_model import LogisticRegression

    rng = np.random.default_rng(2)
    X, y = rng.normal(size=(30, 2)), np.repeat([0, 1], 15)
    with pytest.warns(
        foldwall.SmallSampleWarning, match="smallest outer test part has 6 rows"
    ):
        foldwall.wrap(LogisticRegression(), outer=5, inner=2).plan(X, y)


def test_repeats_without_shuffle_are_refused():
    from sklearn.linear_model import LogisticRegression

    from foldwall.settings import LoopSettings
    from foldwall.study import Study

    rng = np.random.default_rng(3)
    X, y = rng.normal(size=(40, 2)), np.repeat([0, 1], 20)
    study = foldwall.wrap(LogisticRegression(), outer=4, inner=2, repeats=2)
    study = Study(
        **{**study.__dict__, "outer": LoopSettings(folds=4, repeats=2, shuffle=False)}
    )
    with pytest.raises(foldwall.SpecError, match="needs outer.shuffle: true"):
        study.plan(X, y)


def test_unwritable_out_folder_is_one_line(tmp_path, capsys):
    import pandas as pd

    from foldwall.cli import main

    rng = np.random.default_rng(4)
    pd.DataFrame({"a": rng.normal(size=30), "y": np.repeat([0, 1], 15)}).to_csv(
        tmp_path / "t.csv", index=False
    )
    (tmp_path / "s.yaml").write_text(
        "data: {table: t.csv, target: y}\ncandidates: [{name: m, model: {name: model, "
        "use: sklearn.linear_model.LogisticRegression}}]\nouter: {folds: 3}\n"
        "inner: {folds: 2}\n"
    )
    (tmp_path / "afile").write_text("")
    assert (
        main(
            [
                "run",
                str(tmp_path / "s.yaml"),
                "--out",
                str(tmp_path / "afile" / "x"),
                "--jobs",
                "1",
            ]
        )
        == 2
    )
    err = capsys.readouterr().err
    assert "cannot create the folder" in err and len(err.strip().splitlines()) == 1
