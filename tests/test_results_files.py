"""Results files: every released schema version stays readable."""

from __future__ import annotations

from pathlib import Path

import pytest

import foldwall
from foldwall.report import RESULTS_SCHEMA_VERSION

REPORTS = Path(__file__).parent / "data" / "reports"


@pytest.mark.parametrize(
    "version_dir",
    sorted(p for p in REPORTS.iterdir() if p.is_dir()),
    ids=lambda p: p.name,
)
def test_released_results_still_load(version_dir):
    res = foldwall.Result.load(version_dir)
    assert res.to_dict()["schema_version"] <= RESULTS_SCHEMA_VERSION
    assert len(res.fold_scores) == res.to_dict()["score"]["n_folds"]
    assert res.audit["test_rows_seen"] == 0
    assert isinstance(res.score, float)


RUN_FOLDERS = sorted(p for p in REPORTS.iterdir() if (p / "plan.json").is_file())


def test_fixtures_cover_every_schema_version():
    # A version bump must come with a fixture written by that version (a real run).
    versions = {
        __import__("json").loads((p / "results.json").read_text())["schema_version"]
        for p in REPORTS.iterdir()
        if p.is_dir()
    }
    assert versions == set(range(1, RESULTS_SCHEMA_VERSION + 1))


@pytest.mark.parametrize("version_dir", RUN_FOLDERS, ids=lambda p: p.name)
def test_released_run_folders_render_a_report(version_dir, tmp_path, capsys):
    # Run folders written by released versions (v1: commit e0914f3, before this
    # round; v2: the many_variants and glaze_inspection recipes) render with today's
    # report: sections the old file lacks are left out, nothing fails.
    import shutil

    from foldwall.cli import main

    run = tmp_path / version_dir.name
    shutil.copytree(version_dir, run)
    assert main(["report", str(run)]) == 0
    html = (run / "report.html").read_text(encoding="utf-8")
    md = (run / "report.md").read_text(encoding="utf-8")
    assert "Headline estimate" in md and "Row audit" in md
    assert "<html" in html.lower()
    data = __import__("json").loads((version_dir / "results.json").read_text())
    if data.get("raters"):
        assert "Rater agreement" in md
    if data.get("holdout"):
        assert "Hold-out and ledger" in md
    if data["schema_version"] == 1 and data.get("comparisons"):
        assert "corrected resampled t-test" in md
    out = capsys.readouterr().out
    assert "report:" in out


def test_newer_schema_is_refused(tmp_path):
    (tmp_path / "results.json").write_text('{"schema_version": 999}')
    with pytest.raises(foldwall.SpecError, match="upgrade foldwall"):
        foldwall.Result.load(tmp_path)


def test_save_then_load_round_trip(tmp_path, noise_data):
    from sklearn.linear_model import LogisticRegression

    X, y = noise_data
    res = foldwall.wrap(LogisticRegression(), outer=3, inner=2).run(X, y)
    res.save(tmp_path / "run")
    back = foldwall.Result.load(tmp_path / "run")
    assert back.to_dict() == __import__("json").loads(res.to_json())
    for name in (
        "results.json",
        "folds.csv",
        "units.csv",
        "trials.csv",
        "plan.json",
        "timing.json",
    ):
        assert (tmp_path / "run" / name).exists()
    with pytest.raises(foldwall.SpecError, match="already holds results"):
        res.save(tmp_path / "run")
    # the tables come back too, and a loaded result saves the same tables again
    assert back.units_frame().shape == res.units_frame().shape
    assert back.trials_frame().shape == res.trials_frame().shape
    back.save(tmp_path / "again")
    for name in ("units.csv", "trials.csv", "folds.csv"):
        assert (tmp_path / "again" / name).read_text() == (
            tmp_path / "run" / name
        ).read_text()
