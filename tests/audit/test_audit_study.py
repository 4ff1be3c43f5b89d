"""The audits inside a study: keys, arguments, the runner step, results.json, the CLI.

The end-to-end checks of issue 11: a planted site confound is flagged as a
problem, and its leave-one-site-out estimate and within-site control fall to
chance; a real signal beside a site effect is still found by the post-hoc test
(Dinga et al. 2020).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import yaml
from sklearn.ensemble import RandomForestClassifier
from sklearn.linear_model import LogisticRegression
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

import foldwall
from foldwall import AuditWarning, DataError, SpecError
from foldwall.audit import AcquisitionEffectRemover
from foldwall.cli import main


def _sites(real_signal: bool, seed: int = 0, n: int = 180):
    """Invented: three sites with different outcome rates; six features carry the site."""
    rng = np.random.default_rng(seed)
    site = rng.choice(["site_a", "site_b", "site_c"], n)
    rate = np.select([site == "site_a", site == "site_b"], [0.85, 0.5], 0.15)
    y = (rng.random(n) < rate).astype(int)
    X = rng.normal(size=(n, 16))
    shift = pd.Series(site).map({"site_a": 1.5, "site_b": 0.0, "site_c": -1.5})
    X[:, :6] += shift.to_numpy()[:, None]
    if real_signal:
        X[:, 6:10] += 1.5 * (y[:, None] - 0.5)
    return X, y, pd.DataFrame({"site": site})


def _run(real_signal: bool):
    X, y, A = _sites(real_signal)
    study = foldwall.wrap(
        make_pipeline(StandardScaler(), LogisticRegression(C=0.1)),
        metric="roc_auc",
        outer=3,
        inner=3,
        n_permutations=19,
        audits={"leave_one_out": "site", "permutations": 19},
    )
    res = study.run(X, y, acquisition=A, blocks=A["site"])
    return res, {c["check"]: c for c in res.data["audits"]["checks"]}


def test_planted_site_confound_is_flagged_and_falls_to_chance():
    res, checks = _run(real_signal=False)
    assert res.score > 0.65  # the headline looks good ...
    # ... but the predictions add nothing beyond the site (post-hoc test)
    assert checks["posthoc"]["severity"] == "problem"
    assert checks["posthoc"]["evidence"]["p_value"] > 0.05
    # leave one site out: at chance
    loo = res.data["audits"]["leave_one_out"]
    assert loo["column"] == "site" and len(loo["levels"]) == 3
    assert abs(loo["mean"] - 0.5) < 0.1
    assert checks["leave_one_out"]["severity"] == "warning"
    # labels shuffled within sites: the model does not beat them
    assert res.data["control"]["p_value"] > 0.05
    assert checks["within_level_control"]["severity"] == "warning"
    assert checks["acquisition_outcome"]["severity"] == "warning"
    assert checks["features_acquisition"]["severity"] == "warning"
    # the report's "Data audits" section shows the same findings
    from foldwall.report import ReportInput, registered_sections

    (spec,) = [s for s in registered_sections() if s.key == "data-audits"]
    sec = spec.build(ReportInput(res.data, res.plan_dict))
    assert sec is not None
    text = repr(sec.blocks)
    assert "posthoc" in text and "problem" in text
    assert "Each level of 'site' held out in turn" in text
    assert "Dinga et al. 2020" in text


def test_real_signal_beside_a_site_effect_is_still_found():
    res, checks = _run(real_signal=True)
    assert checks["posthoc"]["severity"] == "info"
    assert checks["posthoc"]["evidence"]["p_value"] < 1e-6
    assert res.data["audits"]["leave_one_out"]["mean"] > 0.8
    assert checks["leave_one_out"]["severity"] == "info"
    assert checks["within_level_control"]["severity"] == "info"


def test_forward_splits_in_a_study_train_strictly_before_test():
    rng = np.random.default_rng(1)
    n = 120
    day = rng.integers(0, 200, n)
    X = rng.normal(size=(n, 5))
    y = (X[:, 0] + rng.normal(size=n) > 0).astype(int)
    study = foldwall.wrap(
        LogisticRegression(),
        metric="roc_auc",
        outer=4,
        inner=3,
        forward=True,
        n_permutations=3,
    )
    res = study.run(X, y, time=day)
    plan = res.plan_dict
    assert plan["outer"]["splitter"] == "forward in time"
    for f in plan["folds"]:
        tr, te = np.asarray(f["train"]), np.asarray(f["test"])
        assert day[tr].max() < day[te].min()
        for inner in f["inner"]:
            assert day[inner["train"]].max() < day[inner["test"]].min()
    drift = next(c for c in res.data["audits"]["checks"] if c["check"] == "time_drift")
    assert drift["evidence"]["forward_splits"] is True


def test_forward_without_time_is_refused_before_any_fit():
    X, y = np.zeros((40, 2)), np.repeat([0, 1], 20)
    with pytest.raises(
        SpecError, match=r"^forward splits by time.*run\(\.\.\., time=\.\.\.\)"
    ):
        foldwall.wrap(LogisticRegression(), forward=True).run(X, y)


def test_leave_one_out_needs_an_acquisition_column():
    X, y = np.zeros((40, 2)), np.repeat([0, 1], 20)
    with pytest.raises(SpecError, match="audits.leave_one_out is 'site'"):
        foldwall.wrap(LogisticRegression(), audits={"leave_one_out": "site"}).run(X, y)


def test_bad_audits_value_names_the_key():
    with pytest.raises(SpecError, match="argument 'audits.permutations'"):
        foldwall.wrap(LogisticRegression(), audits={"permutations": -1})
    with pytest.raises(
        SpecError,
        match="unknown argument 'audits.leave_one_outt'; did you mean 'leave_one_out'",
    ):
        foldwall.wrap(LogisticRegression(), audits={"leave_one_outt": "site"})


def test_merged_duplicates_never_straddle_a_split():
    X, y, _ = _sites(True, seed=3, n=120)
    X[100:110] = X[0:10]  # ten rows entered twice
    y[100:110] = y[0:10]
    study = foldwall.wrap(
        LogisticRegression(),
        metric="roc_auc",
        outer=3,
        inner=3,
        audits={"merge_duplicates": True},
    )
    res = study.run(X, y)
    checks = {c["check"]: c for c in res.data["audits"]["checks"]}
    assert checks["merge_duplicates"]["evidence"]["rows"] == 20
    assert checks["exact_duplicates"]["severity"] == "info"
    for f in res.plan_dict["folds"]:
        test = set(f["test"])
        for i in range(10):
            assert (i in test) == (100 + i in test)


def test_removal_inside_the_folds_with_acquisition_as_features():
    X, y, A = _sites(True, seed=4, n=120)
    pipe = make_pipeline(
        AcquisitionEffectRemover(columns=["site"]),
        StandardScaler(),
        LogisticRegression(),
    )
    X = pd.DataFrame(X, columns=[f"f{j}" for j in range(X.shape[1])])
    study = foldwall.wrap(
        pipe, metric="roc_auc", outer=3, inner=3, acquisition_as_features=True
    )
    res = study.run(X, y, acquisition=A)
    assert res.data["audit"]["test_rows_seen"] == 0  # the row audit covers the remover
    assert res.data["data"]["n_features"] == 17  # the site column went in as a feature
    # a non-linear model after linear removal is warned about before the run
    forest = make_pipeline(
        AcquisitionEffectRemover(columns=["site"]),
        RandomForestClassifier(n_estimators=5),
    )
    other = foldwall.wrap(forest, outer=3, inner=3, acquisition_as_features=True)
    with pytest.warns(AuditWarning, match="candidate 'pipeline'"):
        other.plan(data=other.dataset(X, y, acquisition=A))


def test_ids_must_be_unique_and_name_the_argument():
    X, y = np.zeros((40, 2)), np.repeat([0, 1], 20)
    ids = [f"c{i}" for i in range(39)] + ["c3"]
    with pytest.raises(
        DataError, match=r"^ids: the ids repeat 1 id\(s\) \(first: 'c3'\)"
    ):
        foldwall.wrap(LogisticRegression()).run(X, y, ids=ids)


STUDY = {
    "name": "audit command test (invented data)",
    "data": {
        "table": "t.csv",
        "target": "y",
        "id": "case_id",
        "acquisition": ["site"],
        "time": "visit",
    },
    "candidates": [
        {
            "name": "logit",
            "model": {
                "name": "model",
                "use": "sklearn.linear_model.LogisticRegression",
            },
        }
    ],
    "outer": {"folds": 3, "forward": True},
    "inner": {"folds": 3},
    "metrics": ["roc_auc"],
}


def _write_study(tmp_path: Path, study: dict) -> Path:
    X, y, A = _sites(False, seed=5, n=90)
    table = pd.DataFrame(X, columns=[f"m{j}" for j in range(X.shape[1])])
    table["case_id"] = [f"case{i:03d}" for i in range(90)]
    table["site"] = A["site"]
    table["visit"] = pd.date_range("2024-01-01", periods=90, freq="D").astype(str)
    table["y"] = y
    table.to_csv(tmp_path / "t.csv", index=False)
    path = tmp_path / "study.yaml"
    path.write_text(yaml.safe_dump(study), encoding="utf-8")
    return path


def test_audit_command_prints_the_checks_as_json(tmp_path, capsys):
    path = _write_study(tmp_path, STUDY)
    assert main(["audit", str(path), "--json"]) == 0
    audits = json.loads(capsys.readouterr().out)
    names = [c["check"] for c in audits["checks"]]
    assert {
        "exact_duplicates",
        "single_column",
        "time_drift",
        "acquisition_outcome",
    } <= set(names)
    # the id, site and time columns are never features
    assert all(
        c["evidence"].get("column") not in ("case_id", "site", "visit")
        for c in audits["checks"]
        if c["check"] == "single_column"
    )
    best = next(c for c in audits["checks"] if c["check"] == "single_column")[
        "evidence"
    ]["best"]
    assert not {"case_id", "site", "visit"} & {b["column"] for b in best}


def test_audit_command_names_a_bad_key(tmp_path, capsys):
    study = json.loads(json.dumps(STUDY))
    study["outer"] = {"folds": 3, "forward": True}
    del study["data"]["time"]
    path = _write_study(tmp_path, study)
    assert main(["audit", str(path)]) == 2
    err = capsys.readouterr().err
    assert "outer.forward splits by time, but data.time is not set" in err
    assert err.count("\n") == 1


def test_a_study_file_may_name_the_removal_step(tmp_path, capsys):
    study = json.loads(json.dumps(STUDY))
    study["data"]["acquisition_as_features"] = True
    study["outer"] = {"folds": 3}
    study["steps"] = [
        {
            "name": "deconfound",
            "use": "foldwall.audit.AcquisitionEffectRemover",
            "with": {"columns": ["site"]},
        },
        {"name": "scale", "use": "sklearn.preprocessing.StandardScaler"},
    ]
    path = _write_study(tmp_path, study)
    assert main(["plan", str(path), "--no-estimate"]) == 0, capsys.readouterr().err


def test_audit_command_fails_on_a_problem_only_when_asked(tmp_path, capsys):
    # A column that is the outcome itself is a 'problem'; by default the audit
    # reports it and exits 0, with --fail-on problem it exits 1 and says why.
    path = _write_study(tmp_path, STUDY)
    table = pd.read_csv(tmp_path / "t.csv")
    table["m_copy"] = table["y"]
    table.to_csv(tmp_path / "t.csv", index=False)
    assert main(["audit", str(path), "--json"]) == 0
    checks = json.loads(capsys.readouterr().out)["checks"]
    problems = [c["check"] for c in checks if c["severity"] == "problem"]
    assert problems
    assert main(["audit", str(path), "--json", "--fail-on", "problem"]) == 1
    err = capsys.readouterr().err
    assert "--fail-on problem" in err and problems[0] in err
    assert err.count("\n") == 1


def test_audit_command_passes_fail_on_when_nothing_reaches_it(tmp_path, capsys):
    path = _write_study(tmp_path, STUDY)
    assert main(["audit", str(path), "--json"]) == 0
    checks = json.loads(capsys.readouterr().out)["checks"]
    assert not [c for c in checks if c["severity"] == "problem"]
    assert main(["audit", str(path), "--json", "--fail-on", "problem"]) == 0
