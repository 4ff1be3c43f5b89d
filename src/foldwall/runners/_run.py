"""Running a compiled plan: the real labels first, then the random-label control."""

from __future__ import annotations

import os
import time
from collections.abc import Callable, Iterator
from dataclasses import dataclass
from typing import Any, Protocol

from ..plan import OuterFold, Plan
from ..records import RunOutcome, Timing, UnitKey, UnitRecord
from ..settings import ControlSettings
from ..store import StoredUnit, UnitStore
from ..table import Dataset
from ._engine import RunContext
from ._execute import Executor

__all__ = ["run_plan", "resolve_jobs", "RunOptions", "Progress"]


class Progress(Protocol):
    """The progress hook: ``on_progress(event, info)``.

    Events: ``"real:start"`` and ``"permutations:start"`` with ``{"tasks": n,
    "units": n}`` before a phase; then ``"real"`` / ``"permutations"`` with
    ``{"tasks": 1, "fits": n, "units": 0 or 1}`` as each task finishes; and
    ``"real:done"`` with ``{"records": (UnitRecord, ...)}`` once every unit of the
    real labels is finished, before the permutations start (the estimate exists
    from then on; :meth:`foldwall.Study.run` turns it into ``on_estimate``).
    """

    def __call__(self, event: str, info: dict[str, Any], /) -> None: ...


@dataclass(frozen=True)
class RunOptions:
    """How to run (never what is computed: results do not depend on these)."""

    n_jobs: int | None = None
    share_fits: bool = True
    allow_failed: bool = False
    backend: str = "local"
    scheduler: str | None = None


def resolve_jobs(n_jobs: int | None) -> int:
    if n_jobs is None:
        return 1
    cores = os.cpu_count() or 1
    if n_jobs < 0:
        return max(1, cores + 1 + n_jobs)
    return max(1, int(n_jobs))


def folds_by_key(
    folds: list[OuterFold], perm: int
) -> dict[tuple[int, int, int], OuterFold]:
    return {(perm, f.repeat, f.fold): f for f in folds}


def store_record(store: UnitStore, rec: UnitRecord) -> None:
    """One transaction per finished, audited unit."""
    store.write_units(
        [
            StoredUnit(
                unit_id=rec.unit,
                kind="real" if rec.perm == 0 else "permutation",
                seed=rec.seeds.stored_seed(),
                payload=rec.to_json(),
                started=0.0,
                finished=time.time(),
            )
        ]
    )


def run_plan(
    plan: Plan,
    data: Dataset,
    *,
    control: ControlSettings,
    options: RunOptions,
    on_progress: Progress | None = None,
    store: UnitStore | None = None,
) -> RunOutcome:
    """Run every unit of the plan (resuming from ``store``), then the control."""
    from threadpoolctl import threadpool_info

    t0 = time.perf_counter()
    n_jobs = resolve_jobs(options.n_jobs)
    ctx = RunContext(
        X=data.X,
        candidates=plan.candidates,
        metrics=plan.metrics,
        seed=plan.seed,
        search_method=plan.search_method,
        trials=plan.trials,
        allow_failed=options.allow_failed,
        share_fits=options.share_fits,
        token=f"{id(data)}-{time.time_ns()}",
        pos_label=data.positive_class,
    )
    done: dict[str, UnitRecord] = {}
    if store is not None:
        for row in store.stored_units():
            done[row.unit_id] = UnitRecord.from_json(row.payload)

    def progress(phase: str, info: dict[str, Any]) -> None:
        if on_progress is not None:
            on_progress(phase, info)

    real_units = [
        UnitKey(0, f.repeat, f.fold, ci)
        for f in plan.folds
        for ci in range(len(plan.candidates))
    ]
    control_outcome = None
    with Executor(
        plan,
        ctx,
        data.fingerprints,
        n_jobs=n_jobs,
        on_task=progress,
        backend=options.backend,
        scheduler=options.scheduler,
        sealed=None if data.holdout is None else data.holdout.audit_fingerprints,
    ) as ex:
        todo = [u for u in real_units if u.uid not in done]
        progress("real:start", {"tasks": plan.n_tasks(todo), "units": len(todo)})
        by_uid = {u: r for u, r in done.items() if u.startswith("p00000-")}
        for rec in _stored(
            ex.run_units(
                todo,
                {0: data.y},
                folds_by_key(plan.folds, 0),
                keep_details=True,
                phase="real",
            ),
            store,
        ):
            by_uid[rec.unit] = rec
        records = tuple(by_uid[u.uid] for u in real_units)
        progress("real:done", {"records": records})
        if plan.permutations > 0:
            from ._control import run_control

            control_outcome = run_control(
                plan,
                data,
                ex,
                records,
                control=control,
                done=done,
                store=store,
                on_progress=on_progress,
            )
    wall = time.perf_counter() - t0
    timing = Timing(
        threads_per_worker=1,
        math_library_threads_outside_runs=sorted(
            {d.get("num_threads") for d in threadpool_info()}
        ),
        wall_seconds=wall,
        busy_seconds=ex.busy_seconds,
        fit_seconds=ex.fit_seconds,
        n_jobs=n_jobs,
    )
    return RunOutcome(records=records, control=control_outcome, timing=timing)


def _stored(
    records: Iterator[UnitRecord], store: UnitStore | None
) -> Iterator[UnitRecord]:
    for rec in records:
        if store is not None:
            store_record(store, rec)
        yield rec


Callback = Callable[[str, dict[str, Any]], None]
