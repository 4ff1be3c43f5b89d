"""The random-label control: the whole nested procedure re-run on permuted labels.

Each permutation is an ordinary set of units (outer fold x repeat x candidate)
with its own label vector; inner search, selection and the choice between
candidates are redone exactly as in the real run. Permutations are run in
batches, their unit results go to the store (when there is one) and are then
dropped: only the list of null scores grows with the number of permutations.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np

from ..plan._compile import Plan
from ._engine import UnitKey
from ._execute import Executor
from ._run import _folds_by_key, _n_tasks, _store, permutation_folds, permute_for, procedure_score

__all__ = ["run_control"]


def run_control(study: Any, plan: Plan, data: Any, ex: Executor, records: list[dict[str, Any]], *,
                done: dict[str, dict[str, Any]], store: Any = None,
                on_progress: Callable[..., None] | None = None) -> dict[str, Any]:
    from ..controls import SequentialStop, chance_level, null_summary, permutation_pvalue

    metric = plan.metrics[0]
    m = plan.permutations
    scheme = study.control.get("scheme", "within-outer")
    observed = procedure_score(records, metric)
    cands = [i for i, c in enumerate(plan.candidates) if c.role == "candidate"]
    stop = None
    if study.control.get("stop_early"):
        stop = SequentialStop(h=int(study.control.get("h", 10)), n_max=m + 1, greater_is_better=True)
    units_per_perm = len(plan.folds) * len(cands)
    tasks_per_perm = max(1, _n_tasks(plan, [UnitKey(1, f.repeat, f.fold, ci) for f in plan.folds for ci in cands]))
    # Enough permutations per batch to keep every worker busy through both waves.
    per_batch = max(1, min(m, math.ceil(16 * ex.n_jobs / max(1, units_per_perm)), 64))
    if stop is not None:
        per_batch = max(1, min(per_batch, int(study.control.get("h", 10))))
    if on_progress is not None:
        n_done = sum(1 for uid in done if not uid.startswith("p00000-"))  # finished before a resume
        share = max(0.0, 1 - n_done / max(1, units_per_perm * m))
        on_progress("permutations:start", {"tasks": round(tasks_per_perm * m * share),
                                           "units": units_per_perm * m - n_done})
    null: list[float] = []
    audit = {"audit_fits": 0, "audit_units": 0, "audit_test_rows_seen": 0}
    stopped = False
    p = 1
    while p <= m and not stopped:
        batch = list(range(p, min(m, p + per_batch - 1) + 1))
        labels: dict[int, np.ndarray] = {}
        folds: dict[tuple[int, int, int], Any] = {}
        units: list[UnitKey] = []
        for q in batch:
            yq = permute_for(plan, data, q, scheme)
            labels[q] = yq
            folds.update(_folds_by_key(permutation_folds(plan, data, yq, scheme), q))
            units += [UnitKey(q, f.repeat, f.fold, ci) for f in plan.folds for ci in cands]
        todo = [u for u in units if u.uid not in done]
        fresh = []
        for rec in ex.run_units(todo, labels, folds, keep_details=False, phase="permutations"):
            if store is not None:
                _store(store, [rec], plan)  # one transaction per finished unit
            fresh.append(rec)
        by_perm: dict[int, list[dict[str, Any]]] = {q: [] for q in batch}
        for r in fresh:
            by_perm[r["perm"]].append(r)
        for u in units:
            if u.uid in done:
                by_perm[u.perm].append(done[u.uid])
        for q in batch:
            recs = by_perm[q]
            for r in recs:
                audit["audit_fits"] += r["audit"]["fits"]
                audit["audit_units"] += 1
                audit["audit_test_rows_seen"] += r["audit"]["test_rows_seen"]
            score = procedure_score(recs, metric)
            null.append(score)
            if stop is not None and stop.update(observed, score):
                stopped = True
                break
        p = batch[-1] + 1
    null_arr = np.asarray(null, dtype=float)
    if stop is not None:
        p_value = float(stop.p_value)
        rule = stop.to_dict()
        reason = stop.reason
        stopped_early = bool(stop.stopped_early)
    else:
        p_value = permutation_pvalue(observed, null_arr)
        rule = {"rule": "fixed number of permutations", "formula": "(b + 1) / (m + 1) (Phipson & Smyth 2010)"}
        reason = f"ran all {len(null)} permutations"
        stopped_early = False
    summ = null_summary(null_arr, observed)
    b = int(np.sum(null_arr >= observed))
    alpha = float(study.control.get("alpha", 0.05))
    floor = 1.0 / (len(null) + 1)
    notes = []
    if floor > alpha:
        notes.append(f"the random-label control ran {len(null)} permutations, so its smallest possible p is "
                     f"{floor:.3g}, above alpha = {alpha:g}: it cannot reach a decision; use at least "
                     f"{int(np.ceil(1 / alpha)) - 1} permutations")
    if p_value <= alpha:
        statement = (f"p = {p_value:.3g} <= {alpha:g}: the whole procedure scored {observed:.3f} in {metric}, higher than "
                     f"on shuffled labels (null mean {summ['mean']:.3f}), so its score is unlikely to be chance alone")
    else:
        statement = (f"p = {p_value:.3g} > {alpha:g}: this study cannot tell the procedure's score ({observed:.3f} in "
                     f"{metric}) from what it scores on shuffled labels (null mean {summ['mean']:.3f})")
    return {
        "metric": metric,
        "observed": observed,
        "p_value": p_value,
        "permutations": int(len(null)),
        "permutations_asked": m,
        "exceedances": b,
        "p_floor": floor,
        "null_scores": null_arr.tolist(),
        "null_mean": summ["mean"],
        "null_sd": summ["sd"],
        "null_quantiles": summ["quantiles"],
        "observed_rank_fraction": summ.get("observed_rank_fraction"),
        "chance_level": chance_level(metric, data.y, task=data.task),
        "scheme": scheme,
        "exchangeable_units": "groups" if data.groups is not None else "rows",
        "blocks": study.control.get("blocks_column"),
        "stopped_early": stopped_early,
        "reason": reason,
        "rule": rule,
        "alpha": alpha,
        "statement": statement,
        "notes": notes,
        "what_was_repeated": "the whole procedure: every fitted step, the inner search and the choice of candidate, "
                             "in every outer fold, for every permutation",
        **audit,
    }
