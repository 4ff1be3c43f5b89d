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
