"""Every run writes predictions.csv and the report; `foldwall report` rebuilds the same bytes."""

from __future__ import annotations

import json
import shutil

import numpy as np
import pandas as pd
import pytest
from sklearn.linear_model import LogisticRegression

import foldwall
from foldwall.cli import main

# The shared runs use a few permutations to stay fast (issue 10 warns below 19).
pytestmark = pytest.mark.filterwarnings("ignore::foldwall.exceptions.ControlWarning")


@pytest.fixture(scope="module")
def saved(tmp_path_factory):
    rng = np.random.default_rng(5)
    X = rng.normal(size=(48, 4))
    y = (X[:, 0] + rng.normal(scale=0.8, size=48) > 0).astype(int)
    ids = np.array([f"s{i:03d}" for i in range(48)])
    seen = []
    res = foldwall.wrap(
        LogisticRegression(),
        space={"C": [0.1, 1.0]},
        metric="roc_auc",
        outer=3,
        inner=2,
        n_permutations=2,
        random_state=4,
    ).run(X, y, ids=ids, on_estimate=seen.append, progress=False)
    out = tmp_path_factory.mktemp("run") / "run"
    res.save(out)
    return res, out, ids, seen


def test_a_saved_run_holds_the_report_and_the_predictions(saved):
    _, out, _, _ = saved
    for name in ("report.html", "report.md", "predictions.csv", "report_files/roc.svg"):
        assert (out / name).is_file(), name
    assert not [p.name for p in out.iterdir() if p.name.startswith(".")]


def test_rebuilt_report_equals_the_one_the_run_wrote(saved, tmp_path, capsys):
    _, out, _, _ = saved
    copy = tmp_path / "copy"
    shutil.copytree(out, copy)
    (copy / "report.html").unlink()
    shutil.rmtree(copy / "report_files")
    assert main(["report", str(copy)]) == 0
    printed = capsys.readouterr().out
    assert (
        "roc_auc on outer test folds" in printed and "random-label control" in printed
    )
    for name in ("report.html", "report.md", "report_files/roc.svg"):
        assert (copy / name).read_bytes() == (out / name).read_bytes(), name


def test_report_of_a_folder_without_results_is_one_line_and_exit_2(tmp_path, capsys):
    assert main(["report", str(tmp_path / "nowhere")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "holds no results.json" in err


def test_ids_sit_beside_row_numbers_in_plan_and_predictions(saved):
    _, out, ids, _ = saved
    plan = json.loads((out / "plan.json").read_text(encoding="utf-8"))
    for f in plan["folds"]:
        assert f["test_ids"] == [ids[i] for i in f["test"]]
        for s in f["inner"]:
            assert s["train_ids"] == [ids[i] for i in s["train"]]
    pred = foldwall.report.read_predictions(
        out / "predictions.csv", task="classification"
    )
    assert list(pred.columns[:2]) == ["id", "row"]
    assert (pred["id"] == ids[pred["row"].to_numpy()]).all()


def test_the_estimate_is_handed_over_before_the_control(saved):
    res, _, _, seen = saved
    assert len(seen) == 1
    early = seen[0].to_dict()
    assert early["control"] is None
    assert early["score"] == res.to_dict()["score"]
    assert early["comparisons"] == res.to_dict()["comparisons"]


def test_result_repr_summary_and_notebook_view(saved):
    res, _, _, _ = saved
    text = repr(res)
    assert text.startswith("Result(") and "\n" not in text and len(text) < 200
    summary = res.summary()
    assert (
        "roc_auc on outer test folds" in summary and "random-label control" in summary
    )
    assert "<table>" in res._repr_html_()


def test_a_loaded_run_carries_its_predictions(saved):
    _, out, _, _ = saved
    back = foldwall.Result.load(out)
    assert isinstance(back.predictions, pd.DataFrame)
    assert len(back.predictions) == 48 * 2  # the candidate and the chance reference


def _tiny_study(**kw):
    rng = np.random.default_rng(1)
    X = rng.normal(size=(36, 3))
    y = (X[:, 0] > 0).astype(int)
    study = foldwall.wrap(
        LogisticRegression(), outer=3, inner=2, n_permutations=2, **kw
    )
    return study, X, y


def test_estimate_comes_after_the_real_labels_and_before_the_permutations():
    study, X, y = _tiny_study()
    events: list[str] = []
    study.run(
        X,
        y,
        on_progress=lambda e, info: events.append(e),
        on_estimate=lambda r: events.append("estimate"),
        progress=False,
    )
    assert (
        events.index("real:done")
        < events.index("estimate")
        < events.index("permutations:start")
    )
    assert all(e in ("real", "real:start") for e in events[: events.index("real:done")])


def test_progress_display_writes_plain_lines_without_a_terminal(capsys):
    study, X, y = _tiny_study()
    study.run(X, y, progress=True)
    err = capsys.readouterr().err
    assert "foldwall: real labels:" in err and "foldwall: permutations:" in err
    # the estimate is shown before the permutations run
    assert err.index("with the real labels; now 2 permutations") < err.index(
        "foldwall: permutations:"
    )


def test_no_display_when_switched_off(capsys):
    study, X, y = _tiny_study()
    study.run(X, y, progress=False)
    assert capsys.readouterr().err == ""


def test_plan_time_estimate_is_a_range_from_several_fits():
    from foldwall.cli import _estimate

    study, X, y = _tiny_study()
    data = study.dataset(X, y, None)
    plan = study.plan(data=data)
    est = _estimate(study, plan, data, 1)
    assert est["timed"] == 3
    assert 0 < est["low"] <= est["seconds"] <= est["high"]


def test_report_names_the_id_column(saved):
    _, out, _, _ = saved
    html = (out / "report.html").read_text(encoding="utf-8")
    assert "shown beside the row numbers in plan.json and predictions.csv" in html
