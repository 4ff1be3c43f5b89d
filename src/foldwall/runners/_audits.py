"""The audits of a run: table checks and confound checks on the study's own outer folds.

After the real labels (and the control) have run, :func:`run_audits` adds:

* the table audits (:func:`foldwall.audit.audit_table`) on the first repeat's
  outer splits;
* with acquisition columns, the in-fold confound statistics on the same splits,
  the post-hoc test on the chosen models' out-of-fold predictions, and a report
  of the within-level random-label control (``control.blocks``);
* with ``audits.leave_one_out``, the whole procedure once more with each level
  of that acquisition column held out in turn (inner search and choice of
  candidate redone on the other levels), summarised beside the main estimate.

Nothing here touches the real run's records; the leave-one-level-out units are
not stored (a resumed run recomputes them).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from typing import Any, Literal

import numpy as np
import pandas as pd

from ..audit import AuditCheck, audit_table, confound_checks
from ..exceptions import DataError
from ..plan import OuterFold, Plan, SplitRule, derive_seed, make_folds
from ..records import (
    AuditOutcome,
    ControlOutcome,
    RunOutcome,
    UnitRecord,
    fold_winners,
)
from ..settings import AuditSettings, ControlSettings
from ..table import Dataset
from ._run import Progress, RunOptions, run_plan

__all__ = ["run_audits", "feature_frame", "study_splits"]

JSONDict = dict[str, Any]
# A held-out level counts as "at chance" when the model's edge over the trivial
# reference shrinks to less than half of its edge in the main estimate (our rule).
_KEPT_SHARE = 0.5


def feature_frame(data: Dataset) -> pd.DataFrame:
    """The features as a DataFrame, without acquisition columns used as features."""
    X = data.X
    frame = (
        X.reset_index(drop=True)
        if isinstance(X, pd.DataFrame)
        else pd.DataFrame(np.asarray(X), columns=data.feature_names)
    )
    if data.acquisition is not None:
        frame = frame.drop(
            columns=[c for c in data.acquisition.columns if c in frame.columns]
        )
    return frame


def study_splits(plan: Plan) -> list[tuple[np.ndarray, np.ndarray]]:
    """The first repeat's outer (train, test) splits."""
    return [(f.train, f.test) for f in plan.folds if f.repeat == 0]


Scale = Literal["auto", "probability", "raw"]


def _predictions(
    records: Sequence[UnitRecord], data: Dataset
) -> tuple[np.ndarray, np.ndarray, Scale] | None:
    """Out-of-fold predictions of the chosen models (repeat 0): rows, values, scale."""
    rows: list[int] = []
    values: list[Any] = []
    use_decision = data.task == "classification" and len(np.unique(data.y)) == 2
    for (perm, rep, _), w in sorted(fold_winners(records).items()):
        if perm != 0 or rep != 0 or w.test_rows is None:
            continue
        if use_decision and w.decision is None:
            use_decision = False
        rows += list(w.test_rows)
        values += [w]
    if not rows:
        return None
    idx = np.asarray(rows, dtype=np.intp)
    if data.task == "regression":
        pred = np.concatenate([np.asarray(w.predicted, dtype=float) for w in values])
        return idx, pred, "raw"
    if use_decision:
        pred = np.concatenate([np.asarray(w.decision, dtype=float) for w in values])
        scale: Scale = "probability" if pred.min() >= 0 and pred.max() <= 1 else "raw"
        return idx, pred, scale
    # predicted classes: one indicator column per class but the first
    classes = np.unique(data.y)
    labels = np.concatenate([np.asarray(w.predicted, dtype=object) for w in values])
    ind = np.column_stack(
        [np.asarray([str(v) == str(c) for v in labels], dtype=float) for c in classes]
    )
    return idx, ind[:, 1:], "raw"


def _blocks_name(control: ControlSettings, data: Dataset) -> str | None:
    """The column the control's labels never leave (control.blocks, or run(blocks=))."""
    if control.blocks is not None:
        return control.blocks
    blocks = data.extra.get("__blocks__")
    if blocks is None:
        return None
    if data.acquisition is not None:
        for c in data.acquisition.columns:
            if np.array_equal(data.acquisition[c].astype(str).to_numpy(), blocks):
                return str(c)
    return "blocks"


def _within_level_check(
    control: ControlSettings, outcome: ControlOutcome | None, data: Dataset
) -> AuditCheck | None:
    acq = [] if data.acquisition is None else list(data.acquisition.columns)
    blocks = _blocks_name(control, data)
    if blocks is None:
        if not acq:
            return None
        return AuditCheck(
            "within_level_control",
            "info",
            "No within-level control was run: set control.blocks (run(blocks=...)) to "
            f"an acquisition column ({', '.join(map(repr, acq))}) and "
            "control.permutations > 0 to ask whether the model beats what the "
            "acquisition alone explains.",
            {"acquisition": acq},
        )
    if outcome is None:
        return AuditCheck(
            "within_level_control",
            "info",
            f"Labels are to be kept within levels of {blocks!r}, but the control did "
            "not run (control.permutations is 0).",
            {"blocks": blocks},
        )
    ev = {
        "blocks": blocks,
        "p_value": outcome.p_value,
        "permutations": outcome.permutations,
        "observed": outcome.observed,
        "null_mean": outcome.null_mean,
        "alpha": outcome.alpha,
        "rule": "labels permuted only within levels of the blocks column (and within outer test folds)",
    }
    if outcome.p_floor > outcome.alpha:
        return AuditCheck(
            "within_level_control",
            "info",
            f"Labels were shuffled only within levels of {blocks!r}, but "
            f"{outcome.permutations} permutations cannot reach p <= {outcome.alpha:g} "
            f"(smallest possible p {outcome.p_floor:.3g}); nothing is judged.",
            ev,
            "Use control.permutations: 19 or more.",
        )
    if outcome.p_value > outcome.alpha:
        return AuditCheck(
            "within_level_control",
            "warning",
            f"With labels shuffled only within levels of {blocks!r}, the model "
            f"does not beat the shuffles (p = {outcome.p_value:.3g}): its score may come "
            "from the differences between levels.",
            ev,
            "Read the score as evidence about the levels (sites, devices), not about "
            "the features within them.",
        )
    return AuditCheck(
        "within_level_control",
        "info",
        f"With labels shuffled only within levels of {blocks!r}, the model "
        f"still beats the shuffles (p = {outcome.p_value:.3g}).",
        ev,
    )


def _level_folds(
    plan: Plan, data: Dataset, column: str
) -> tuple[list[OuterFold], list[JSONDict], np.ndarray]:
    assert data.acquisition is not None
    levels = data.acquisition[column].astype(str).to_numpy()
    uniq = sorted(set(levels))
    key = "audits.leave_one_out"
    if len(uniq) < 2:
        raise DataError(
            f"{key}: column '{column}' has a single level ({uniq[0]!r}); nothing to hold out"
        )
    if data.groups is not None:
        per_group = pd.Series(levels).groupby(data.groups).nunique()
        spread = per_group[per_group > 1]
        if len(spread):
            raise DataError(
                f"{key}: group '{spread.index[0]}' has rows at several levels of '{column}'; "
                f"holding out a level would split it (choose a column constant within groups)"
            )
    folds: list[OuterFold] = []
    skipped: list[JSONDict] = []
    classes = np.unique(data.y) if data.task == "classification" else None
    for lv in uniq:
        te = np.flatnonzero(levels == lv)
        tr = np.flatnonzero(levels != lv)
        if classes is not None:
            if np.unique(data.y[te]).size < 2:
                skipped.append({"level": lv, "why": "one class only among its rows"})
                continue
            if np.unique(data.y[tr]).size < classes.size:
                skipped.append(
                    {"level": lv, "why": "a class is missing from the other levels"}
                )
                continue
        folds.append(OuterFold(0, len(folds), tr, te, ()))
    if not folds:
        raise DataError(
            f"{key}: no level of '{column}' can be held out and scored "
            f"({'; '.join(s['level'] + ': ' + s['why'] for s in skipped)})"
        )
    return folds, skipped, levels


def _leave_one_out(
    plan: Plan,
    data: Dataset,
    records: Sequence[UnitRecord],
    column: str,
    options: RunOptions,
    on_progress: Progress | None,
) -> tuple[JSONDict, AuditCheck]:
    from sklearn.model_selection import LeaveOneGroupOut

    fixed, skipped, levels = _level_folds(plan, data, column)
    rule = SplitRule(
        len(fixed), False, splitter=LeaveOneGroupOut(), label="audits.leave_one_out"
    )
    folds = make_folds(
        data.y,
        data.groups,
        rule,
        plan.inner,
        seed=plan.seed,
        repeats=1,
        fixed=fixed,
        check=True,
        time=plan.time,
    )
    loo_plan = dataclasses.replace(
        plan, outer=rule, folds=folds, repeats=1, permutations=0
    )

    def progress(event: str, info: dict[str, Any]) -> None:
        if on_progress is not None:
            on_progress(event.replace("real", "leave_one_out"), info)

    outcome: RunOutcome = run_plan(
        loo_plan,
        data,
        control=ControlSettings(),
        options=options,
        on_progress=progress,
        store=None,
    )
    metric = plan.metrics[0]
    win = fold_winners(outcome.records)
    ref = {r.fold: r for r in outcome.records if r.role == "reference"}
    per_level: list[JSONDict] = []
    for f in folds:
        w = win[(0, 0, f.fold)]
        lv = str(levels[f.test[0]])
        per_level.append(
            {
                "level": lv,
                "n_test": len(f.test),
                "score": w.test[metric],
                "chance": ref[f.fold].test[metric] if f.fold in ref else None,
                "chosen": w.candidate,
            }
        )
    mean = float(np.mean([float(p["score"]) for p in per_level]))
    chance_vals = [float(p["chance"]) for p in per_level if p["chance"] is not None]
    chance = float(np.mean(chance_vals)) if chance_vals else None
    main_win = [w for (perm, _, _), w in fold_winners(records).items() if perm == 0]
    main = float(np.mean([w.test[metric] for w in main_win]))
    main_ref = [r.test[metric] for r in records if r.role == "reference"]
    main_chance = float(np.mean(main_ref)) if main_ref else None
    summary: JSONDict = {
        "column": column,
        "metric": metric,
        "mean": mean,
        "chance": chance,
        "main_mean": main,
        "main_chance": main_chance,
        "levels": per_level,
        "skipped": skipped,
        "rows": "each level held out in turn and scored on its own rows, by a model whose inner search "
        "and choice of candidate ran on the other levels only",
    }
    check = _leave_one_out_check(summary)
    return summary, check


def _leave_one_out_check(s: JSONDict) -> AuditCheck:
    metric, col = s["metric"], s["column"]
    main_edge = None if s["main_chance"] is None else s["main_mean"] - s["main_chance"]
    loo_edge = None if s["chance"] is None else s["mean"] - s["chance"]
    shown = (
        f"{metric} {s['main_mean']:.3f} in the main estimate, {s['mean']:.3f} with one "
        f"level of {col!r} held out at a time"
        + ("" if s["chance"] is None else f" (trivial model: {s['chance']:.3f})")
    )
    if (
        main_edge is not None
        and loo_edge is not None
        and main_edge > 0.02
        and loo_edge < _KEPT_SHARE * main_edge
    ):
        return AuditCheck(
            "leave_one_out",
            "warning",
            f"The score does not carry over to a new level of {col!r}: {shown}.",
            s,
            f"The model may have learned the levels of {col!r} rather than the outcome; "
            "report the held-out-level estimate beside the main one.",
        )
    return AuditCheck("leave_one_out", "info", f"Held-out levels: {shown}.", s)


def run_audits(
    plan: Plan,
    data: Dataset,
    outcome: RunOutcome,
    *,
    settings: AuditSettings,
    control: ControlSettings,
    options: RunOptions,
    merged: JSONDict | None = None,
    on_progress: Progress | None = None,
) -> AuditOutcome:
    """Table audits and confound checks of a finished run (see module doc)."""
    from threadpoolctl import threadpool_limits

    splits = study_splits(plan)
    features = feature_frame(data)
    seed = derive_seed(plan.seed, "audits")
    with threadpool_limits(1):
        table = audit_table(
            features,
            data.y,
            task="classification" if data.task == "classification" else "regression",
            splits=splits,
            ids=data.ids,
            groups=data.groups,
            time=data.time,
            time_name=data.time_name or "time",
            forward=plan.outer.forward,
            random_state=seed,
        )
        checks = list(table.checks)
        if data.holdout is not None:
            # copies and close rows across the hold-out boundary (no outcome used)
            checks += data.holdout.checks
        if merged:
            checks.insert(
                0,
                AuditCheck(
                    "merge_duplicates",
                    "info",
                    f"{merged['rows']} duplicate rows were joined into "
                    f"{merged['groups']} groups before splitting "
                    "(audits.merge_duplicates).",
                    merged,
                ),
            )
        confounds: JSONDict | None = None
        if data.acquisition is not None:
            pred = _predictions(outcome.records, data)
            more, confounds = confound_checks(
                data.acquisition,
                data.y,
                splits,
                X=features,
                predictions=None if pred is None else pred[1],
                tested=None if pred is None else pred[0],
                prediction_scale="auto" if pred is None else pred[2],
                task="classification"
                if data.task == "classification"
                else "regression",
                n_permutations=settings.permutations,
                random_state=seed,
            )
            checks += more
    within = _within_level_check(control, outcome.control, data)
    if within is not None:
        checks.append(within)
    loo = None
    if settings.leave_one_out is not None and data.acquisition is not None:
        loo, loo_check = _leave_one_out(
            plan, data, outcome.records, settings.leave_one_out, options, on_progress
        )
        checks.append(loo_check)
    return AuditOutcome(
        checks=tuple(checks),
        confounds=confounds,
        leave_one_out=loo,
        splits="the study's outer splits (first repeat)",
    )
