"""Several raters inside a study: the consensus target, strata, reference, output.

End to end through ``wrap(raters=...)`` / ``run(ratings=...)`` and through a study
file. The data are invented: a latent class that the features predict, and a set
of ambiguous cases whose ratings are coin tosses unrelated to the features.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml
from sklearn.linear_model import LogisticRegression

import foldwall
from foldwall.cli import main
from foldwall.exceptions import DataError, LowAgreementWarning, SpecError

RATERS = ["ada", "bram", "cleo", "dov", "eli", "fen", "gus"]
# each rater: (chance to call a true "pass" a "flaw", chance to miss a true "flaw")
STRICTNESS = [
    (0.02, 0.02),
    (0.08, 0.01),  # strict
    (0.01, 0.08),  # lenient
    (0.03, 0.03),
    (0.05, 0.02),
    (0.02, 0.05),
    (0.03, 0.01),
]


def _panel(seed: int = 0, n: int = 240, share_ambiguous: float = 0.35):
    """Features, ratings of 7 raters (different strictness), and the ambiguous mask.

    Clear cases: the label follows the features and each rater errs rarely.
    Ambiguous cases: every rater tosses a coin of their own, so the ratings (and
    hence the consensus) are random and unrelated to the features.
    """
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, 4))
    truth = (X[:, 0] + 0.8 * X[:, 1] > 0).astype(int)
    ambiguous = rng.random(n) < share_ambiguous
    ratings = np.empty((n, len(RATERS)), dtype=object)
    for j, (false_pos, false_neg) in enumerate(STRICTNESS):
        flip = np.where(
            truth == 1, rng.random(n) < false_neg, rng.random(n) < false_pos
        )
        label = np.where(flip, 1 - truth, truth)
        label = np.where(ambiguous, rng.integers(0, 2, n), label)
        ratings[:, j] = np.where(label == 1, "flaw", "pass")
    ratings[rng.random(ratings.shape) < 0.02] = None
    frame = pd.DataFrame(ratings, columns=RATERS)
    return X, frame, ambiguous


def _run(X, frame, **raters):
    study = foldwall.wrap(
        LogisticRegression(),
        {"C": [0.1, 1.0]},
        metric="accuracy",
        outer=5,
        inner=3,
        raters={"classes": ["pass", "flaw"], "clear_share": 0.85, **raters},
    )
    return study.run(X, ratings=frame)


@pytest.fixture(scope="module")
def panel_result():
    X, frame, ambiguous = _panel()
    return _run(X, frame, smallest_difference=0.05), frame, ambiguous


def test_ambiguous_cases_score_near_chance_and_clear_cases_high(panel_result):
    result, _, _ = panel_result
    r = result.to_dict()["raters"]
    scores = r["strata"]["scores"]
    # The ambiguous cases' labels are coin tosses the features cannot predict:
    # accuracy near 0.5 (chance); the clear cases follow the features closely.
    assert scores["clear"]["mean"] > 0.85
    assert 0.3 < scores["ambiguous"]["mean"] < 0.7
    assert scores["clear"]["n_splits_scored"] == 5
    n = r["strata"]["counts"]
    assert n["clear"] + n["ambiguous"] + n["one rating"] == r["n_cases"] == 240
    assert r["strata"]["metric"] == "accuracy"


def test_results_record_the_rule_agreement_and_reference(panel_result):
    result, frame, _ = panel_result
    d = result.to_dict()
    r = d["raters"]
    assert r["columns"] == RATERS
    assert r["consensus"]["rule"] == "majority"
    assert "listed first" in r["consensus"]["rule_text"]
    assert d["data"]["target"] == "consensus"
    assert d["data"]["n_features"] == 4  # the ratings are never features
    assert r["agreement"]["krippendorff_alpha"]["value"] is not None
    assert r["agreement"]["band"] in {"fair", "moderate", "substantial"}
    assert len(r["agreement"]["pairs"]) == 21
    ref = r["human_reference"]
    assert [x["rater"] for x in ref["raters"]["raters"]] == list(frame.columns)
    assert ref["model"]["metric"] == "accuracy"
    assert len(ref["model"]["splits"]) == 5
    assert ref["statement"] == ref["model"]["statement"]
    json.dumps(d, allow_nan=False)  # plain JSON, no NaN


def test_consensus_target_is_what_the_models_learned(panel_result):
    result, frame, _ = panel_result
    from foldwall.labels import label_distribution, rating_table

    expected = label_distribution(rating_table(frame, categories=["pass", "flaw"]))
    classes = result.to_dict()["data"]["classes"]
    counts = pd.Series(expected.consensus).value_counts()
    assert classes == {k: int(v) for k, v in sorted(counts.items())}


def test_terminal_summary_shows_the_raters_block(panel_result, capsys):
    result, _, _ = panel_result
    foldwall.report.print_summary(result)
    out = capsys.readouterr().out
    assert "Krippendorff's alpha" in out
    assert "by stratum" in out
    assert "human reference" in out


def test_low_agreement_warns_before_the_run():
    X, frame, _ = _panel(seed=1, share_ambiguous=0.9)
    study = foldwall.wrap(
        LogisticRegression(),
        metric="accuracy",
        outer=3,
        inner=2,
        raters={"classes": ["pass", "flaw"]},
    )
    with pytest.warns(LowAgreementWarning, match=r"Landis & Koch \(1977\)"):
        study.plan(X, ratings=frame)


def test_python_arguments_are_checked_in_one_line():
    X, frame, _ = _panel(n=40)
    study = foldwall.wrap(LogisticRegression(), raters={"classes": ["pass", "flaw"]})
    with pytest.raises(SpecError, match=r"argument 'ratings': wrap\(raters=...\)"):
        study.plan(X, np.zeros(40))
    with pytest.raises(SpecError, match="argument 'y': with ratings"):
        study.plan(X, np.zeros(40), ratings=frame)
    with pytest.raises(DataError, match="ratings has 39 rows but X has 40"):
        study.plan(X, ratings=frame.iloc[:39])
    bad = frame.copy()
    bad.loc[3, "cleo"] = "maybe"
    with pytest.raises(DataError, match=r"ratings: rater 'cleo' gives 'maybe'") as info:
        study.plan(X, ratings=bad)
    assert "\n" not in str(info.value)
    with pytest.raises(SpecError, match="argument 'raters.scale'"):
        foldwall.wrap(LogisticRegression(), raters={"scale": "ratio"})
    with pytest.raises(SpecError, match="the models must be regressors"):
        foldwall.wrap(
            LogisticRegression(), raters={"scale": "interval", "clear_spread": 1.0}
        ).plan(X, ratings=frame)
    frame_x = pd.DataFrame(X, columns=["a", "b", "c", "ada"])
    with pytest.raises(DataError, match="X holds the rater column 'ada'"):
        study.plan(frame_x, ratings=frame)


# ------------------------------------------------------------ study file

STUDY = {
    "seed": 3,
    "data": {"table": "tiles.csv", "drop": ["tile"]},
    "candidates": [
        {
            "name": "logit",
            "model": {
                "name": "model",
                "use": "sklearn.linear_model.LogisticRegression",
            },
            "space": {"model__C": [1.0]},
        }
    ],
    "outer": {"folds": 3},
    "inner": {"folds": 2},
    "raters": {"columns": RATERS, "classes": ["pass", "flaw"]},
}


def _write(tmp_path: Path, study: dict, n: int = 90) -> Path:
    X, frame, _ = _panel(seed=2, n=n)
    table = pd.DataFrame(X, columns=["gloss", "rough", "pin", "hue"])
    table.insert(0, "tile", [f"T{i:03d}" for i in range(n)])
    table = pd.concat([table, frame], axis=1)
    table.to_csv(tmp_path / "tiles.csv", index=False)
    path = tmp_path / "study.yaml"
    path.write_text(yaml.safe_dump(study), encoding="utf-8")
    return path


def test_study_file_with_raters_runs_and_writes_the_section(tmp_path, capsys):
    path = _write(tmp_path, STUDY)
    code = main(
        ["run", str(path), "--out", str(tmp_path / "out"), "--quiet", "--jobs", "1"]
    )
    assert code == 0, capsys.readouterr().err
    d = json.loads((tmp_path / "out" / "results.json").read_text(encoding="utf-8"))
    assert d["raters"]["consensus"]["rule"] == "majority"
    assert d["data"]["n_features"] == 4


@pytest.mark.parametrize(
    ("change", "words"),
    [
        (
            {"raters": {**STUDY["raters"], "columns": ["ada", "bran"]}},
            "raters.columns: column 'bran' is not in the table; did you mean 'bram'?",
        ),
        (
            {"raters": {**STUDY["raters"], "classes": ["pass", "fail"]}},
            "raters.columns: rater 'ada' gives 'flaw'",
        ),
        ({"raters": {**STUDY["raters"], "columns": ["ada"]}}, "raters.columns"),
        (
            {"data": {**STUDY["data"], "target": "ada"}},
            "data.target 'ada' and a raters section both give the label",
        ),
        (
            {"raters": {"classes": ["pass", "flaw"]}},
            "missing required key 'raters.columns'",
        ),
        (
            {"data": {**STUDY["data"], "features": ["gloss", "ada"]}},
            "data.features: column 'ada' is a rater column",
        ),
        (
            {"raters": {**STUDY["raters"], "consensus": "mean"}},
            "consensus 'mean' does not fit nominal ratings",
        ),
    ],
)
def test_bad_raters_section_is_one_line_with_exit_2(tmp_path, capsys, change, words):
    path = _write(tmp_path, {**STUDY, **change}, n=30)
    code = main(["run", str(path), "--out", str(tmp_path / "out")])
    err = capsys.readouterr().err.strip()
    assert code == 2
    assert words in err
    assert len(err.splitlines()) == 1
    assert not (tmp_path / "out").exists()  # nothing half-written
