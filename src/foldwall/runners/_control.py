"""The random-label control: the whole nested procedure re-run on permuted labels.

Each permutation is an ordinary set of units (outer fold x repeat x candidate)
with its own label vector; inner search, selection and the choice between
candidates are redone exactly as in the real run. Permutations are run in
batches, their unit records go to the store (when there is one) and are then
dropped: only the list of null scores grows with the number of permutations.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from .._metrics import chance_level
from ..controls import SequentialStop, null_summary, permutation_pvalue
from ..plan import OuterFold, Plan, derive_seed, make_folds
from ..records import AuditCounts, ControlOutcome, UnitKey, UnitRecord, procedure_score
from ..settings import ControlSettings
from ..store import UnitStore
from ..table import Dataset
from ._execute import Executor
from ._run import Progress, folds_by_key, store_record

__all__ = ["run_control"]

_WHAT_WAS_REPEATED = (
    "the whole procedure: every fitted step, the inner search and the choice of candidate, "
    "in every outer fold, for every permutation"
)


def permutation_folds(
    plan: Plan, data: Dataset, y_perm: np.ndarray, scheme: str
) -> list[OuterFold]:
    """Folds for one permutation: the first repeat's outer partition is kept (within-outer
    scheme); inner splits and later repeats are re-derived from the permuted labels."""
    fixed = plan.folds if scheme != "global" else None
    return make_folds(
        y_perm,
        data.groups,
        plan.outer,
        plan.inner,
        seed=plan.seed,
        repeats=plan.repeats,
        fixed=fixed,
        time=plan.time,
    )


def permute_for(plan: Plan, data: Dataset, p: int, scheme: str) -> np.ndarray:
    """Permuted target of permutation ``p`` under the study's scheme.

    within-outer / global: rows, or whole groups with one label each
    (:func:`foldwall.controls.permute_labels`), inside the first repeat's outer test
    folds or across all rows; within-groups / whole-groups: the restricted schemes of
    :mod:`foldwall.controls` for groups whose outcome varies within the group, inside
    the outer test folds.
    """
    from ..controls import permute_by_scheme, unit_scheme

    rng = np.random.default_rng(derive_seed(plan.seed, "permutation", p))
    folds = plan.permutation_cells(scheme)
    unit = unit_scheme(scheme, grouped=data.groups is not None)
    return permute_by_scheme(
        data.y,
        scheme=unit,
        rng=rng,
        folds=folds,
        groups=data.groups,
        blocks=data.extra.get("__blocks__"),
        target_name=data.target_name,
    )


@dataclass
class _Null:
    """The null scores drawn so far, and the audit of the units behind them."""

    scores: list[float] = field(default_factory=list)
    audit: AuditCounts = field(default_factory=AuditCounts)


def _batch_size(
    control: ControlSettings, m: int, n_jobs: int, units_per_perm: int
) -> int:
    # Enough permutations per batch to keep every worker busy through both waves.
    per_batch = max(1, min(m, math.ceil(16 * n_jobs / max(1, units_per_perm)), 64))
    if control.stop_early:
        per_batch = max(1, min(per_batch, control.stop_after_exceedances))
    return per_batch


def _run_batch(
    plan: Plan,
    data: Dataset,
    ex: Executor,
    batch: list[int],
    cands: list[int],
    scheme: str,
    done: dict[str, UnitRecord],
    store: UnitStore | None,
) -> dict[int, list[UnitRecord]]:
    labels: dict[int, np.ndarray] = {}
    folds: dict[tuple[int, int, int], OuterFold] = {}
    units: list[UnitKey] = []
    for q in batch:
        yq = permute_for(plan, data, q, scheme)
        labels[q] = yq
        folds.update(folds_by_key(permutation_folds(plan, data, yq, scheme), q))
        units += [UnitKey(q, f.repeat, f.fold, ci) for f in plan.folds for ci in cands]
    todo = [u for u in units if u.uid not in done]
    by_perm: dict[int, list[UnitRecord]] = {q: [] for q in batch}
    for rec in ex.run_units(
        todo, labels, folds, keep_details=False, phase="permutations"
    ):
        if store is not None:
            store_record(store, rec)  # one transaction per finished unit
        by_perm[rec.perm].append(rec)
    for u in units:
        if u.uid in done:
            by_perm[u.perm].append(done[u.uid])
    return by_perm


def run_control(
    plan: Plan,
    data: Dataset,
    ex: Executor,
    records: Sequence[UnitRecord],
    *,
    control: ControlSettings,
    done: dict[str, UnitRecord],
    store: UnitStore | None = None,
    on_progress: Progress | None = None,
) -> ControlOutcome:
    metric = plan.metrics[0]
    m = plan.permutations
    scheme = control.scheme
    observed = procedure_score(records, metric)
    cands = [i for i, c in enumerate(plan.candidates) if c.role == "candidate"]
    stop = None
    if control.stop_early:
        stop = SequentialStop(
            h=control.stop_after_exceedances, n_max=m + 1, greater_is_better=True
        )
    units_per_perm = len(plan.folds) * len(cands)
    per_batch = _batch_size(control, m, ex.n_jobs, units_per_perm)
    if on_progress is not None:
        tasks_per_perm = max(
            1,
            plan.n_tasks(
                [UnitKey(1, f.repeat, f.fold, ci) for f in plan.folds for ci in cands]
            ),
        )
        n_done = sum(
            1 for uid in done if not uid.startswith("p00000-")
        )  # finished before a resume
        share = max(0.0, 1 - n_done / max(1, units_per_perm * m))
        on_progress(
            "permutations:start",
            {
                "tasks": round(tasks_per_perm * m * share),
                "units": units_per_perm * m - n_done,
            },
        )
    null = _Null()
    stopped = False
    p = 1
    while p <= m and not stopped:
        batch = list(range(p, min(m, p + per_batch - 1) + 1))
        by_perm = _run_batch(plan, data, ex, batch, cands, scheme, done, store)
        for q in batch:
            for r in by_perm[q]:
                null.audit = null.audit.add(r)
            score = procedure_score(by_perm[q], metric)
            null.scores.append(score)
            if stop is not None and stop.update(observed, score):
                stopped = True
                break
        p = batch[-1] + 1
    return _outcome(plan, data, control, observed, null, stop)


def _outcome(
    plan: Plan,
    data: Dataset,
    control: ControlSettings,
    observed: float,
    null: _Null,
    stop: SequentialStop | None,
) -> ControlOutcome:
    metric = plan.metrics[0]
    null_arr = np.asarray(null.scores, dtype=float)
    if stop is not None:
        p_value = float(stop.p_value)
        rule = stop.to_dict()
        reason = stop.reason
        stopped_early = bool(stop.stopped_early)
    else:
        p_value = permutation_pvalue(observed, null_arr)
        rule = {
            "rule": "fixed number of permutations",
            "formula": "(b + 1) / (m + 1) (Phipson & Smyth 2010)",
        }
        reason = f"ran all {len(null.scores)} permutations"
        stopped_early = False
    summ = null_summary(null_arr, observed)
    alpha = control.alpha
    floor = 1.0 / (len(null.scores) + 1)
    notes = []
    if floor > alpha:
        notes.append(
            f"the random-label control ran {len(null.scores)} permutations, so its smallest possible "
            f"p is {floor:.3g}, above alpha = {alpha:g}: it cannot reach a decision; use at least "
            f"{int(np.ceil(1 / alpha)) - 1} permutations"
        )
    return ControlOutcome(
        metric=metric,
        observed=observed,
        p_value=p_value,
        permutations=int(len(null.scores)),
        permutations_asked=plan.permutations,
        exceedances=int(np.sum(null_arr >= observed)),
        p_floor=floor,
        null_scores=tuple(null_arr.tolist()),
        null_mean=summ["mean"],
        null_sd=summ["sd"],
        null_quantiles=summ["quantiles"],
        observed_rank_fraction=summ.get("observed_rank_fraction"),
        chance_level=chance_level(
            metric, data.y, task=data.task, positive_class=data.positive_class
        ),
        scheme=control.scheme,
        exchangeable_units="groups" if data.groups is not None else "rows",
        blocks=control.blocks,
        stopped_early=stopped_early,
        reason=reason,
        rule=rule,
        alpha=alpha,
        statement=_statement(metric, observed, p_value, alpha, summ["mean"]),
        what_was_repeated=_WHAT_WAS_REPEATED,
        notes=tuple(notes),
        audit=null.audit,
    )


def _statement(
    metric: str, observed: float, p_value: float, alpha: float, null_mean: float
) -> str:
    if p_value <= alpha:
        return (
            f"p = {p_value:.3g} <= {alpha:g}: the whole procedure scored {observed:.3f} in {metric}, "
            f"higher than on shuffled labels (null mean {null_mean:.3f}), so its score is unlikely "
            f"to be chance alone"
        )
    return (
        f"p = {p_value:.3g} > {alpha:g}: this study cannot tell the procedure's score "
        f"({observed:.3f} in {metric}) from what it scores on shuffled labels "
        f"(null mean {null_mean:.3f})"
    )
