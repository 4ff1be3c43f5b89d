"""Running a compiled plan: the real labels first, then the random-label control."""

from __future__ import annotations

import os
import time
from collections.abc import Callable
from typing import Any

import numpy as np

from .._data import Dataset
from ..plan._compile import OuterFold, Plan, make_folds
from ..plan._folds import derive_seed
from ._engine import RunContext, UnitKey
from ._execute import Executor, fold_winners

__all__ = ["run_plan", "resolve_jobs"]


def resolve_jobs(n_jobs: int | None) -> int:
    if n_jobs is None:
        return 1
    cores = os.cpu_count() or 1
    if n_jobs < 0:
        return max(1, cores + 1 + n_jobs)
    return max(1, int(n_jobs))


def _folds_by_key(folds: list[OuterFold], perm: int) -> dict[tuple[int, int, int], OuterFold]:
    return {(perm, f.repeat, f.fold): f for f in folds}


def permutation_folds(plan: Plan, data: Dataset, y_perm: np.ndarray, scheme: str) -> list[OuterFold]:
    """Folds for one permutation: the first repeat's outer partition is kept (within-outer
    scheme); inner splits and later repeats are re-derived from the permuted labels."""
    fixed = plan.folds if scheme == "within-outer" else None
    return make_folds(y_perm, data.groups, plan.outer, plan.inner, seed=plan.seed, repeats=plan.repeats, fixed=fixed)


def permute_for(plan: Plan, data: Dataset, p: int, scheme: str) -> np.ndarray:
    from ..controls import permute_labels

    rng = np.random.default_rng(derive_seed(plan.seed, "permutation", p))
    folds = [f.test for f in plan.folds if f.repeat == 0] if scheme == "within-outer" else None
    return permute_labels(data.y, rng=rng, folds=folds, groups=data.groups, blocks=data.extra.get("__blocks__"),
                          target_name=data.target_name)


def procedure_score(records: list[dict[str, Any]], metric: str) -> float:
    """The whole procedure's score: mean over outer folds of the winner's test score."""
    winners = fold_winners(records)
    return float(np.mean([w["test"][metric] for w in winners.values()]))


def run_plan(study: Any, plan: Plan, data: Dataset, *, on_progress: Callable[..., None] | None = None,
             store: Any = None) -> Any:
    from ..report._result import build_result

    t0 = time.perf_counter()
    n_jobs = resolve_jobs(study.n_jobs)
    ctx = RunContext(X=data.X, candidates=plan.candidates, metrics=plan.metrics, seed=plan.seed,
                     search_method=plan.search_method, trials=plan.trials, allow_failed=study.allow_failed,
                     share_fits=study.share_fits, token=f"{id(data)}-{time.time_ns()}",
                     pos_label=data.positive_class)
    done: dict[str, dict[str, Any]] = {}
    if store is not None:
        for row in store.iter_units():
            done[row["unit_id"]] = row["payload"]

    def progress(phase: str, info: dict[str, Any]) -> None:
        if on_progress is not None:
            on_progress(phase, info)

    real_units = [UnitKey(0, f.repeat, f.fold, ci) for f in plan.folds for ci in range(len(plan.candidates))]
    records: list[dict[str, Any]] = []
    control: dict[str, Any] | None = None
    with Executor(plan, ctx, data.fingerprints, n_jobs=n_jobs, on_task=progress, backend=study.backend,
                  scheduler=study.scheduler) as ex:
        todo = [u for u in real_units if u.uid not in done]
        if on_progress is not None:
            on_progress("real:start", {"tasks": _n_tasks(plan, todo), "units": len(todo)})
        fresh = []
        for rec in ex.run_units(todo, {0: data.y}, _folds_by_key(plan.folds, 0), keep_details=True, phase="real"):
            if store is not None:
                _store(store, [rec], plan)  # one transaction per finished unit
            fresh.append(rec)
        by_uid = {**{u: done[u] for u in done if u.startswith("p00000-")}, **{r["unit"]: r for r in fresh}}
        records = [by_uid[u.uid] for u in real_units]
        if plan.permutations > 0:
            from ._control import run_control

            control = run_control(study, plan, data, ex, records, done=done, store=store, on_progress=on_progress)
    wall = time.perf_counter() - t0
    from threadpoolctl import threadpool_info

    timing = {"threads_per_worker": 1, "math_library_threads_outside_runs": sorted({d.get("num_threads") for d in threadpool_info()}),
              "wall_seconds": wall, "busy_seconds": ex.busy_seconds, "fit_seconds": ex.fit_seconds, "n_jobs": n_jobs,
              "cpu_efficiency": (ex.busy_seconds / (n_jobs * wall)) if wall > 0 else None}
    return build_result(study, plan, data, records, control=control, timing=timing)


def _n_tasks(plan: Plan, units: list[UnitKey]) -> int:
    n = 0
    for u in units:
        if plan.needs_search(u.cand):
            n += len(plan.folds[0].inner) if plan.method_of(u.cand) == "grid" else 1
        n += 1
    return n


def _store(store: Any, records: list[dict[str, Any]], plan: Plan) -> None:
    rows = [{"unit_id": r["unit"], "kind": "real" if r["perm"] == 0 else "permutation",
             "seed": derive_seed(plan.seed, "unit", r["perm"], r["repeat"], r["fold"], r["candidate"]),
             "payload": r, "started": 0.0, "finished": time.time()} for r in records]
    store.write_units(rows)
