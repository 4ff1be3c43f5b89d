"""From a run's outcome to the content of results.json, one section at a time.

Each ``_section_*`` function builds one top-level section from typed records; the
order of the keys of results.json is the order in which :func:`build_result` adds
them (part of the file's format: the golden tests pin it).
"""

from __future__ import annotations

import platform
from collections.abc import Sequence
from typing import Any

import numpy as np
import pandas as pd

from .._version import __version__
from ..audit import digest_lines
from ..compare import degenerate_folds_note, prediction_flag
from ..exceptions import RunError
from ..plan import Plan
from ..records import ControlOutcome, RunOutcome, StudySource, UnitRecord, fold_winners
from ..settings import CompareSettings, RaterSettings
from ..table import Dataset
from ._predictions import predictions_frame
from ._raters import section_raters
from ._result import CAUTIONS, RESULTS_SCHEMA_VERSION, Result, edge_notes
from ._uncertainty import add_uncertainty

__all__ = ["build_result"]

JSONDict = dict[str, Any]

_DIGEST_RULE = (
    "covers the units of the real labels: sha256 over the sorted lines 'UNIT DIGEST', where each "
    "unit's DIGEST is sha256 over its sorted lines 'UNIT ROLE STEP N_ROWS XOR SUM' (fingerprint XOR "
    "and sum of the rows each step was fitted on); permutation units are checked the same way"
)
_ARRAYS_HASH = "the arrays passed in: X as float64 bytes in C order (or pandas row hashes), then y as text lines"


def summary_of(values: Sequence[float]) -> JSONDict:
    a = np.asarray(values, dtype=float)
    return {
        "mean": float(a.mean()),
        "sd": float(a.std(ddof=1)) if a.size > 1 else None,
        "min": float(a.min()),
        "max": float(a.max()),
        "n": int(a.size),
    }


def environment(seed: int) -> JSONDict:
    import joblib
    import optuna
    import scipy
    import sklearn
    from threadpoolctl import threadpool_info

    return {
        "foldwall": __version__,
        "python": platform.python_version(),
        "platform": platform.platform(),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "pandas": pd.__version__,
        "scikit-learn": sklearn.__version__,
        "joblib": joblib.__version__,
        "optuna": optuna.__version__,
        "seed": seed,
        "math_libraries": sorted(
            {f"{d.get('internal_api')} {d.get('version')}" for d in threadpool_info()}
        ),
        "note": "workers, threads and timings of this run are in timing.json (they never change a result)",
    }


def winners_in_plan_order(
    plan: Plan, records: Sequence[UnitRecord]
) -> list[UnitRecord]:
    winners = fold_winners(records)
    return [winners[(0, f.repeat, f.fold)] for f in plan.folds]


def _section_study(source: StudySource) -> JSONDict:
    return {"name": source.name, "file": source.file, "sha256": source.sha256}


def _section_data(source: StudySource, data: Dataset) -> JSONDict:
    classes = None
    if data.task == "classification":
        u, n = np.unique(data.y, return_counts=True)
        classes = {str(k): int(v) for k, v in zip(u, n, strict=True)}
    return {
        "table": source.table,
        "sha256": data.sha256,
        "sha256_of": "the table file"
        if data.sha256_of == "table file"
        else _ARRAYS_HASH,
        "n_samples": data.n_samples,
        "n_features": len(data.feature_names),
        "target": data.target_name,
        "groups": data.group_name,
        "n_groups": None if data.groups is None else int(np.unique(data.groups).size),
        "task": data.task,
        "classes": classes,
        "positive_class": None
        if data.positive_class is None
        else str(data.positive_class),
    }


def _section_score(metric: str, per_fold: list[float]) -> JSONDict:
    sd = summary_of(per_fold)
    return {
        "metric": metric,
        "mean": sd["mean"],
        "sd": sd["sd"],
        "min": sd["min"],
        "max": sd["max"],
        "per_fold": per_fold,
        "n_folds": len(per_fold),
        "rows": "each value is scored on one outer test part, by a model whose every step was fitted on "
        "that fold's outer-training part only",
        "procedure": "inner search and choice of candidate repeated inside every outer fold",
        "final_model": (
            "this estimates the whole procedure; to ship a model, run the same procedure "
            "(inner search included) on all rows, rather than picking one fold's model"
        ),
    }


def _section_folds(
    plan: Plan, data: Dataset, win: list[UnitRecord]
) -> tuple[list[JSONDict], dict[str, int]]:
    folds = []
    selection_counts: dict[str, int] = {}
    for w in win:
        row: JSONDict = {
            "repeat": w.repeat,
            "fold": w.fold,
            "n_train": w.n_train,
            "n_test": w.n_test,
            "chosen": w.candidate,
            "settings": dict(w.settings),
            "inner_score": w.inner_score,
            **{f"test_{m}": w.test[m] for m in plan.metrics},
            **{f"train_{m}": w.train[m] for m in plan.metrics},
        }
        row["degenerate_prediction"] = (
            None
            if w.predicted is None
            else prediction_flag(list(w.predicted), task=data.task)
        )
        if w.selected_features is not None:
            names = [data.feature_names[j] for j in w.selected_features]
            row["selected_features"] = names
            for n in names:
                selection_counts[n] = selection_counts.get(n, 0) + 1
        folds.append(row)
    return folds, selection_counts


def _section_feature_selection(
    folds: list[JSONDict], counts: dict[str, int]
) -> JSONDict | None:
    if not counts:
        return None
    return {
        "folds_with_selection": sum(1 for f in folds if "selected_features" in f),
        "n_folds": len(folds),
        "times_selected": dict(sorted(counts.items(), key=lambda kv: (-kv[1], kv[0]))),
        "note": "how often each input column was kept by the chosen model's selection steps, over outer folds",
    }


def _section_candidates(
    plan: Plan, records: Sequence[UnitRecord], win: list[UnitRecord]
) -> list[JSONDict]:
    metric = plan.metrics[0]
    cands = []
    for ci, c in enumerate(plan.candidates):
        scores = [r.test[metric] for r in records if r.candidate == c.name]
        cands.append(
            {
                "name": c.name,
                "role": c.role,
                "settings_per_search": plan.settings_count(ci),
                "score": {"metric": metric, **summary_of(scores), "per_fold": scores},
                "chosen_in_folds": sum(1 for w in win if w.candidate == c.name),
            }
        )
    return cands


def _duplicates(fps: np.ndarray) -> int:
    _, counts = np.unique(fps, return_counts=True)
    return int(counts[counts > 1].sum())


def _section_audit(
    plan: Plan,
    data: Dataset,
    records: Sequence[UnitRecord],
    control: ControlOutcome | None,
) -> JSONDict:
    ctl = control.audit if control is not None else None
    out: JSONDict = {
        "fits": int(sum(r.audit.fits for r in records) + (ctl.fits if ctl else 0)),
        "units": len(records) + (ctl.units if ctl else 0),
        "test_rows_seen": int(sum(r.audit.test_rows_seen for r in records))
        + (ctl.test_rows_seen if ctl else 0),
        "validation_rows_seen": int(sum(r.audit.validation_rows_seen for r in records)),
        "duplicate_rows": _duplicates(data.fingerprints),
        "digest": digest_lines(sorted(r.unit + " " + r.audit.digest for r in records)),
        "digest_rule": _DIGEST_RULE,
        "fits_counted": "step fits actually made (equal steps shared between settings count once), permutations included",
        "fingerprint": "SplitMix64 row hash of the float64 feature values (foldwall.audit.row_fingerprints)",
        "already_fitted_input": [c.name for c in plan.candidates if c.was_fitted],
    }
    if data.holdout is not None:
        out["holdout_rows_seen"] = int(
            sum(r.audit.holdout_rows_seen or 0 for r in records)
        ) + (ctl.holdout_rows_seen if ctl else 0)
        out["holdout_rows_checked"] = int(data.holdout.audit_fingerprints.size)
    return out


def _section_holdout(data: Dataset) -> JSONDict | None:
    """How rows were sealed and the counts on each side; never the hold-out's score."""
    return None if data.holdout is None else data.holdout.to_json()


def _section_audits(outcome: RunOutcome) -> JSONDict | None:
    """The table audits and confound checks (docs/audits.md); None when none ran."""
    return None if outcome.audits is None else outcome.audits.to_json()


def _section_plan(plan_dict: JSONDict) -> JSONDict:
    return {
        "metrics": list(plan_dict["metrics"]),
        "outer": plan_dict["outer"],
        "inner": plan_dict["inner"],
        "search": plan_dict["search"],
        "digest": plan_dict["digest"],
        "model_fits": plan_dict["model_fits"],
    }


def _fold_name(plan: Plan, repeat: int, fold: int) -> str:
    return f"outer fold {fold}" + (f" of repeat {repeat}" if plan.repeats > 1 else "")


def _refuse_undefined_scores(
    plan: Plan, data: Dataset, win: Sequence[UnitRecord]
) -> None:
    """A fold whose chosen model has no score stops the report: never a NaN headline."""
    for w in win:
        for m in plan.metrics:
            value = w.test[m]
            if value is not None and np.isfinite(value):
                continue
            cause = "the scorer returned no number (see scikit-learn's warning above)"
            if data.classes is not None and w.test_rows is not None:
                present = set(np.unique(data.y[list(w.test_rows)]).tolist())
                missing = [str(c) for c in data.classes if c not in present]
                if missing:
                    cause = f"its test part has no row of class {', '.join(map(repr, missing))}"
            raise RunError(
                f"{m} is undefined on {_fold_name(plan, w.repeat, w.fold)}: {cause}; use "
                "a stratified outer splitter, fewer outer folds, or another metric"
            )


def _degenerate_notes(plan: Plan, data: Dataset, out: JSONDict) -> list[str]:
    """Notes on chosen models that predicted one class (or one value), and on
    comparisons that could not be assessed."""
    folds = out["folds"]
    note = degenerate_folds_note(
        [f.get("degenerate_prediction") for f in folds],
        [_fold_name(plan, f["repeat"], f["fold"]) for f in folds],
        task=data.task,
    )
    notes = [] if note is None else [note]
    notes += [
        f"comparison {r['a']} - {r['b']}: no p-value, {r['reason']}"
        for r in out.get("comparisons") or []
        if r.get("reason")
    ]
    return notes


def build_result(
    outcome: RunOutcome,
    *,
    plan: Plan,
    data: Dataset,
    source: StudySource,
    compare: CompareSettings,
    clinical: bool,
    raters: RaterSettings | None = None,
) -> Result:
    """The result of a run: results.json's content, the records, plan.json."""
    metric = plan.metrics[0]
    records = outcome.records
    plan_dict = plan.to_dict()
    win = winners_in_plan_order(plan, records)
    _refuse_undefined_scores(plan, data, win)
    per_fold = [w.test[metric] for w in win]
    train_fold = [w.train[metric] for w in win]
    folds, selection_counts = _section_folds(plan, data, win)
    cands = _section_candidates(plan, records, win)
    other = {}
    for m in plan.metrics[1:]:
        vals = [w.test[m] for w in win]
        other[m] = {**summary_of(vals), "per_fold": vals}
    out: JSONDict = {
        "schema_version": RESULTS_SCHEMA_VERSION,
        "study": _section_study(source),
        "data": _section_data(source, data),
        "score": _section_score(metric, per_fold),
        "train_score": {
            "metric": metric,
            "mean": float(np.mean(train_fold)),
            "per_fold": train_fold,
            "gap": float(np.mean(train_fold) - np.mean(per_fold)),
        },
        "other_metrics": other,
        # the same dict as the candidates' entry, so its intervals appear in both
        "reference": next((c for c in cands if c["role"] == "reference"), None),
        "folds": folds,
        "feature_selection": _section_feature_selection(folds, selection_counts),
        "candidates": cands,
        "audit": _section_audit(plan, data, records, outcome.control),
        "failed_trials": sorted(e for r in records for e in r.errors),
        "control": None if outcome.control is None else outcome.control.to_json(),
        "comparisons": [],
        "plan": _section_plan(plan_dict),
        "environment": environment(plan.seed),
        "cautions": CAUTIONS if clinical else CAUTIONS[:1],
    }
    add_uncertainty(out, plan, data, records, compare)
    out["notes"] = (
        edge_notes(plan, win)
        + list(outcome.control.notes if outcome.control else [])
        + _degenerate_notes(plan, data, out)
    )
    out["raters"] = section_raters(
        raters, plan=plan, data=data, records=records, alpha=compare.alpha
    )
    out["audits"] = _section_audits(outcome)
    out["holdout"] = _section_holdout(data)
    return Result(
        data=out,
        records=list(records),
        plan_dict=plan_with_ids(plan_dict, data),
        study_text=source.text,
        timing=None if outcome.timing is None else outcome.timing.to_json(),
        predictions=_predictions(records, data, win),
    )


def _predictions(
    records: Sequence[UnitRecord], data: Dataset, win: list[UnitRecord]
) -> pd.DataFrame | None:
    """The predictions table, or None when the records kept no predictions."""
    if any(r.test_rows is None for r in records if r.perm == 0):
        return None
    chosen = {(w.repeat, w.fold): w.candidate for w in win}
    return predictions_frame(
        records, data.y, chosen=chosen, task=data.task, ids=data.ids
    )


def plan_with_ids(plan_dict: JSONDict, data: Dataset) -> JSONDict:
    """plan.json's content, with the ids beside the row numbers when the table has an id column."""
    if data.ids is None:
        return plan_dict
    ids = [str(v) for v in data.ids]

    def with_ids(split: JSONDict) -> JSONDict:
        out = dict(split)
        out["train_ids"] = [ids[i] for i in split["train"]]
        out["test_ids"] = [ids[i] for i in split["test"]]
        return out

    folds = []
    for f in plan_dict.get("folds", []):
        g = with_ids(f)
        g["inner"] = [with_ids(s) for s in f.get("inner", [])]
        folds.append(g)
    return {**plan_dict, "id_column": data.id_name, "folds": folds}
