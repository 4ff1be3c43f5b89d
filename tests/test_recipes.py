"""Every recipe in recipes/ runs end to end and shows what its README says it shows.

Each recipe runs once per session (``tests/recipe_runs.py``: copied into a
temporary folder, ``make_data.py`` run there, the study run through the command
line with ``--quiet --jobs 1``); the browser tests open the same runs. Every recipe
must exit 0 and pass the row audit (no outer-test row seen by any fit); some
recipes have their own checks below. A few recipes have their number of
permutations lowered here so the whole file stays fast; the recipe-specific
check never depends on those permutations.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest
import yaml
from readme_numbers import check_numbers
from recipe_runs import ALL, RECIPES, run


def _check_breath_pilot(results: dict[str, Any], study: Path, out: Path) -> None:
    score = results["score"]
    assert score["metric"] == "roc_auc"
    assert score["mean"] > results["reference"]["score"]["mean"] == pytest.approx(0.5)
    assert score["mean"] > 0.55
    # issue 10: the headline model no longer predicts one class in any fold
    assert [f["degenerate_prediction"] for f in results["folds"]] == [None] * 5


def _check_wide_panel(results: dict[str, Any], study: Path, out: Path) -> None:
    # Pure-noise labels: the honest estimate is near chance and the control does not reject.
    assert results["data"]["n_features"] > 10 * results["data"]["n_samples"]
    assert results["score"]["metric"] in ("roc_auc", "accuracy")
    assert 0.25 <= results["score"]["mean"] <= 0.75
    assert results["control"]["permutations"] >= 19
    assert results["control"]["p_value"] > 0.05


def _check_repeated_visits(results: dict[str, Any], study: Path, out: Path) -> None:
    spec = yaml.safe_load(study.read_text(encoding="utf-8"))
    table = pd.read_csv(study.parent / spec["data"]["table"])
    groups = table[spec["data"]["groups"]].astype(str).to_numpy()
    plan = json.loads((out / "plan.json").read_text(encoding="utf-8"))
    assert plan["outer"]["grouped"] and plan["inner"]["grouped"]
    assert plan["search"]["method"] == "tpe"
    n = len(groups)
    for fold in plan["folds"]:
        train, test = np.asarray(fold["train"]), np.asarray(fold["test"])
        assert len(np.intersect1d(train, test)) == 0
        assert not set(groups[train]) & set(groups[test]), (
            f"outer fold {fold['fold']} splits a subject"
        )
        seen = set()
        for inner in fold["inner"]:
            itr, ite = np.asarray(inner["train"]), np.asarray(inner["test"])
            assert set(itr) | set(ite) == set(train)
            assert not set(groups[itr]) & set(groups[ite]), (
                f"an inner split of outer fold {fold['fold']} splits a subject"
            )
            seen |= set(ite)
        assert seen == set(train)
    assert sorted(
        np.concatenate([f["test"] for f in plan["folds"] if f["repeat"] == 0])
    ) == list(range(n))
    # Whole subjects swap labels in the control.
    assert results["control"]["exchangeable_units"] == "groups"
    # Both candidates were searched with optuna, with the same budget, in every outer fold.
    cands = [c for c in results["candidates"] if c["role"] == "candidate"]
    assert {c["name"] for c in cands} == {"logistic", "forest"}
    assert all(c["score"]["n"] == len(plan["folds"]) for c in cands)
    trials = pd.read_csv(out / "trials.csv")
    per_search = trials.groupby(["repeat", "fold", "candidate"]).size()
    assert len(per_search) == len(plan["folds"]) * len(cands)
    assert (per_search == spec["search"]["trials"]).all()


def _check_glaze_inspection(results: dict[str, Any], study: Path, out: Path) -> None:
    # Six inspectors, a third of the tiles borderline (calls near coin tosses):
    # the model is good on clear tiles and near chance on ambiguous ones.
    r = results["raters"]
    assert results["data"]["target"] == "consensus"
    assert (
        results["data"]["n_features"] == 6
    )  # the inspectors' columns are not features
    assert r["consensus"]["rule"] == "majority"
    scores = r["strata"]["scores"]
    assert scores["clear"]["mean"] > 0.75
    assert 0.3 < scores["ambiguous"]["mean"] < 0.65
    assert 0.41 <= r["agreement"]["krippendorff_alpha"]["value"] <= 0.8
    statement = r["human_reference"]["statement"]
    assert "as well as a typical rater" in statement
    assert len(r["human_reference"]["raters"]["raters"]) == 6


def _check_site_confound(results: dict[str, Any], study: Path, out: Path) -> None:
    # The score looks good, but it belongs to the clinic (issue 11).
    assert results["score"]["mean"] > 0.7
    checks = {c["check"]: c for c in results["audits"]["checks"]}
    assert checks["posthoc"]["severity"] == "problem"
    assert checks["acquisition_outcome"]["severity"] == "warning"
    assert checks["leave_one_out"]["severity"] == "warning"
    assert abs(results["audits"]["leave_one_out"]["mean"] - 0.5) < 0.1
    dup = checks["exact_duplicates"]
    assert dup["severity"] == "problem"
    assert dup["evidence"]["straddling"][0]["ids"] == ["rec_0017", "rec_0239"]
    assert checks["near_duplicates"]["evidence"]["examples"] == [
        ["rec_0042", "rec_0238"]
    ]


def _check_many_variants(results: dict[str, Any], study: Path, out: Path) -> None:
    # issue 14: every variant is recorded in the table's ledger; the hold-out is
    # sealed the same way in each, and opened once at the end
    from statsmodels.stats.multitest import multipletests

    from foldwall.cli import main

    assert results["holdout"]["rows"] == {"development": 90, "holdout": 30}
    assert results["audit"]["holdout_rows_seen"] == 0
    ps = [results["control"]["p_value"]]
    last: dict[str, Any] = {}
    for name in ("01_logistic_all_bands", "04_logistic_first_six_bands"):
        variant = study.parent / f"variant_{name}.yaml"
        spec = yaml.safe_load(variant.read_text(encoding="utf-8"))
        spec["control"]["permutations"] = 3
        variant.write_text(yaml.safe_dump(spec, sort_keys=False), encoding="utf-8")
        last = run(variant, out.parent / f"{out.name}-{name}")
        ps.append(last["control"]["p_value"])
        # a feature subset seals the same rows: one hold-out, one key
        assert last["holdout"]["key"] == results["holdout"]["key"]
    ledger = last["ledger"]
    assert ledger["studies_before"] == 2 and ledger["control"]["family_size"] == 3
    # source: statsmodels.stats.multitest.multipletests(method="holm")
    assert ledger["control"]["p_adjusted"] == pytest.approx(
        multipletests(ps, method="holm")[1][2]
    )
    opened = out.parent / f"{out.name}-opening"
    args = ["unseal", str(study), "--out", str(opened), "--yes", "--permutations", "19"]
    assert main([*args, "--jobs", "1"]) == 0
    opening = json.loads((opened / "opening.json").read_text(encoding="utf-8"))
    assert opening["opening"]["first"] and opening["audit"]["holdout_rows_seen"] == 0
    assert opening["holdout"]["key"] == results["holdout"]["key"]


CHECKS = {
    "glaze_inspection": _check_glaze_inspection,
    "breath_pilot": _check_breath_pilot,
    "wide_panel": _check_wide_panel,
    "repeated_visits": _check_repeated_visits,
    "site_confound": _check_site_confound,
    "many_variants": _check_many_variants,
}


def test_known_recipes_are_present() -> None:
    assert set(CHECKS) <= set(ALL)


@pytest.mark.parametrize("name", ALL)
def test_recipe_runs(name: str, recipe_run) -> None:
    r = recipe_run(name)
    results = r.results
    assert results["audit"]["test_rows_seen"] == 0
    assert results["audit"]["validation_rows_seen"] == 0
    if results["control"]:
        # the audit covers the permutation units too
        assert results["audit"]["units"] > len(results["folds"]) * len(
            results["candidates"]
        )
    for name_ in ("report.html", "report.md", "predictions.csv"):
        assert (r.out / name_).is_file(), name_
    if results.get("raters"):
        html = (r.out / "report.html").read_text(encoding="utf-8")
        alpha = results["raters"]["agreement"]["krippendorff_alpha"]["value"]
        assert "Rater agreement" in html and f"{alpha:.3f}" in html
    check = CHECKS.get(name)
    if check is not None:
        check(results, r.study, r.out)


@pytest.mark.parametrize("name", ALL)
def test_recipe_readme_numbers_match_a_fresh_run(name: str, recipe_run) -> None:
    # Every number a README marks with <!-- = path --> must equal the fresh run's
    # results.json (issue 13: a README once said 0.859 while the run gave 0.894).
    # Numbers of the control (and its fits) are checked only when the test ran the
    # recipe's own number of permutations.
    r = recipe_run(name)
    text = (RECIPES / name / "README.md").read_text(encoding="utf-8")
    skip = () if r.own_permutations else ("control.", "plan.model_fits.permutations")
    problems = check_numbers(text, r.results, skip=skip)
    assert not problems, f"recipes/{name}/README.md:\n" + "\n".join(problems)
    assert "<!-- =" in text, f"recipes/{name}/README.md marks none of its numbers"


def test_recipe_run_is_deterministic(recipe_run, tmp_path: Path) -> None:
    first = recipe_run("breath_pilot")
    run(first.study, tmp_path / "second")  # the same study file and table
    for name in ("results.json", "plan.json", "folds.csv", "predictions.csv"):
        assert (first.out / name).read_bytes() == (
            tmp_path / "second" / name
        ).read_bytes()
    # the report too (same results, same bytes), and `foldwall report` rebuilds it
    for name in ("report.html", "report.md", "report_files/roc.svg"):
        assert (first.out / name).read_bytes() == (
            tmp_path / "second" / name
        ).read_bytes()
