"""The driver: turns a plan into tasks on one flat joblib pool, checks the audit, yields unit results.

Each batch runs in two waves: first every inner evaluation (one task per inner
split of a grid search, or one per optuna search), then every refit on the
outer-training part. All tasks of a wave go to the same pool; nothing inside a
task is parallel (math-library threads are capped at one per worker), so there
are never more busy threads than workers.
"""

from __future__ import annotations

import json
import time
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from joblib import Parallel, delayed

from ..audit import LedgerExport, digest_lines, sealed_rows_seen, verify_ledger
from ..exceptions import LeakageError, RunError
from ..plan import OuterFold, Plan
from ..records import (
    AuditStamp,
    Refit,
    SearchTable,
    SplitScores,
    TaskResult,
    TrialRow,
    UnitKey,
    UnitRecord,
    jsonable_settings,
)
from ._engine import RunContext, evaluate_split, finish_unit, search_unit, unit_seeds

__all__ = ["Executor"]


@dataclass
class Executor:
    """Runs units of work for one plan and one data set.

    Parameters
    ----------
    plan : Plan
    ctx : RunContext
    fingerprints : ndarray of uint64
        Row fingerprints of the table (for the audit).
    sealed : ndarray of uint64, optional
        Fingerprints of sealed hold-out rows: no fit may hold any of them.
    n_jobs : int
        Workers of the flat pool (1 runs in this process).
    """

    plan: Plan
    ctx: RunContext
    fingerprints: np.ndarray
    n_jobs: int = 1
    on_task: Callable[[str, dict[str, Any]], None] | None = None
    backend: str = "local"
    scheduler: str | None = None
    sealed: np.ndarray | None = None
    _parallel: Any = field(default=None, init=False, repr=False)
    busy_seconds: float = field(default=0.0, init=False)
    fit_seconds: float = field(default=0.0, init=False)

    # -- pool -------------------------------------------------------------------
    def __enter__(self) -> Executor:
        if self.backend == "dask":
            self._enter_dask()
        elif self.n_jobs != 1:
            # Default memmapping settings on purpose: joblib then reuses the same warm
            # worker processes as any other scikit-learn call in this session.
            self._parallel = Parallel(
                n_jobs=self.n_jobs, return_as="generator_unordered"
            )
            self._parallel.__enter__()
        else:
            # In this process too, one math-library thread: tiny matrices run
            # faster single-threaded, and parallelism belongs to the pool.
            from threadpoolctl import threadpool_limits

            self._limits = threadpool_limits(1)
        return self

    def _enter_dask(self) -> None:
        """Connect to a dask.distributed cluster; the tasks are submitted to it directly.

        The run context (the feature table included) goes to the cluster as the
        result of a task, not as scattered data: when the worker holding it is
        lost, the scheduler recomputes it instead of cancelling every task that
        needs it. A task whose worker dies is run again on another worker (the
        scheduler's ``allowed-failures``); only this driver process writes the store.
        """
        try:
            from distributed import Client
        except ImportError:
            from ..exceptions import SpecError

            raise SpecError(
                "--backend dask needs dask.distributed: pip install 'foldwall[dask]'"
            ) from None
        if not self.scheduler:
            from ..exceptions import SpecError

            raise SpecError(
                "--backend dask needs --scheduler ADDRESS (e.g. tcp://127.0.0.1:8786)"
            )
        try:
            self._client: Any = Client(
                self.scheduler, timeout=30
            )  # untyped (distributed)
        except (OSError, TimeoutError) as exc:
            from ..exceptions import SpecError

            raise SpecError(
                f"--scheduler '{self.scheduler}': cannot reach a dask scheduler there ({exc})"
            ) from None
        self._ctx_future: Any = self._client.submit(_identity, self.ctx, pure=False)

    def __exit__(self, *exc: Any) -> None:
        if self._parallel is not None:
            self._parallel.__exit__(*exc)
            self._parallel = None
        if getattr(self, "_client", None) is not None:
            self._ctx_future = None
            self._client.close()
            self._client = None
        limits = getattr(self, "_limits", None)
        if limits is not None:
            limits.restore_original_limits()
            self._limits = None

    def _map(
        self,
        calls: list[tuple[Callable[..., Any], tuple[Any, ...], dict[str, Any]]],
        phase: str,
    ) -> Iterator[Any]:
        """Run the calls on the pool; yield each result as soon as it is ready."""
        if not calls:
            return
        if self.backend == "dask":
            yield from self._map_dask(calls, phase)
            return
        if self._parallel is None:
            for fn, args, kwargs in calls:
                r = fn(*args, **kwargs)
                if self.on_task:
                    self.on_task(phase, _progress_info(r))
                yield r
            return
        try:
            for r in self._parallel(
                delayed(fn)(*args, cap_threads=True, **kwargs)
                for fn, args, kwargs in calls
            ):
                if self.on_task:
                    self.on_task(phase, _progress_info(r))
                yield r
        except Exception as exc:
            from joblib.externals.loky.process_executor import TerminatedWorkerError

            if isinstance(exc, TerminatedWorkerError):
                from ..exceptions import RunError

                units = sorted({c[1][1].uid for c in calls})
                raise RunError(
                    f"a worker process died (killed, or out of memory) while running {len(units)} unit(s) of the "
                    f"{phase} phase ({units[0]} ... {units[-1]}); finished units are kept: run the same command to "
                    f"resume, with fewer --jobs if memory is short"
                ) from None
            raise

    def _map_dask(self, calls: list[_Call], phase: str) -> Iterator[Any]:
        """Submit the calls to the dask cluster; yield each result as it is ready.

        A lost worker's tasks are retried by the scheduler. When a task cannot be
        finished (its workers keep dying, or the cluster has no worker left for
        ``DASK_NO_WORKER_SECONDS``), the run stops with the documented message
        naming the units that were running; finished units are kept for resume.
        """
        from distributed import wait
        from distributed.client import FutureCancelledError
        from distributed.scheduler import KilledWorker

        client = self._client
        futures: dict[Any, str] = {}
        for fn, args, kwargs in calls:
            args = (
                (self._ctx_future, *args[1:]) if args and args[0] is self.ctx else args
            )
            f = client.submit(fn, *args, cap_threads=True, pure=False, **kwargs)
            futures[f] = args[1].uid
        pending = set(futures)
        no_worker_since: float | None = None
        try:
            while pending:
                try:
                    done, pending = wait(
                        pending, timeout=2, return_when="FIRST_COMPLETED"
                    )
                except TimeoutError:
                    done = set()
                    if client.scheduler_info().get("workers"):
                        no_worker_since = None
                    else:
                        no_worker_since = no_worker_since or time.monotonic()
                        if time.monotonic() - no_worker_since > DASK_NO_WORKER_SECONDS:
                            raise _lost(
                                phase,
                                [futures[f] for f in pending],
                                "no worker is left",
                            ) from None
                for f in done:
                    r = f.result()
                    if self.on_task:
                        self.on_task(phase, _progress_info(r))
                    yield r
        except (KilledWorker, FutureCancelledError, OSError) as exc:
            running = [
                futures[f]
                for f in pending | {f for f in futures if f.status != "finished"}
            ]
            raise _lost(phase, running, type(exc).__name__) from None
        finally:
            for f in pending:
                f.cancel()

    # -- units ------------------------------------------------------------------
    def run_units(
        self,
        units: list[UnitKey],
        labels: dict[int, np.ndarray],
        folds: dict[tuple[int, int, int], OuterFold],
        *,
        keep_details: bool,
        phase: str,
    ) -> Iterator[UnitRecord]:
        """Run units and yield one record per unit as soon as it is finished and audited.

        ``labels`` maps a permutation number (0: the real labels) to its label
        vector; ``folds`` maps (permutation, repeat, fold) to its outer fold.
        """
        searches = self._search(units, labels, folds, phase)
        chosen: dict[UnitKey, _Choice] = {}
        calls: list[_Call] = []
        for u in units:
            choice = self._choose(u, searches.get(u))
            chosen[u] = choice
            fold = folds[(u.perm, u.repeat, u.fold)]
            calls.append(
                (
                    finish_unit,
                    (
                        self.ctx,
                        u,
                        labels[u.perm],
                        fold.train,
                        fold.test,
                        choice.settings,
                    ),
                    {"keep_predictions": keep_details},
                )
            )
        for r in self._map(calls, phase):
            assert isinstance(r, Refit)
            u = r.unit
            fold = folds[(u.perm, u.repeat, u.fold)]
            yield self._record(u, r, searches.get(u), chosen[u], fold, keep_details)

    def _search(
        self,
        units: list[UnitKey],
        labels: dict[int, np.ndarray],
        folds: dict[tuple[int, int, int], OuterFold],
        phase: str,
    ) -> dict[UnitKey, _Search]:
        """Wave 1: every inner evaluation of every unit that searches."""
        plan = self.plan
        calls: list[_Call] = []
        for u in units:
            if not plan.needs_search(u.cand):
                continue
            fold = folds[(u.perm, u.repeat, u.fold)]
            yu = labels[u.perm]
            if plan.method_of(u.cand) == "grid":
                grid = plan.settings_of(u.cand)
                for j, (tr, te) in enumerate(fold.inner):
                    calls.append(
                        (evaluate_split, (self.ctx, u, j, yu, tr, te, grid), {})
                    )
            else:
                calls.append((search_unit, (self.ctx, u, yu, list(fold.inner)), {}))
        out: dict[UnitKey, _Search] = {}
        for r in self._map(calls, phase):
            out.setdefault(r.unit, _Search()).add(r)
        return out

    def _choose(self, u: UnitKey, search: _Search | None) -> _Choice:
        """The setting a unit refits: the best inner mean (first of equal means)."""
        plan = self.plan
        if search is None:
            return _Choice(settings_list=plan.settings_of(u.cand), table=None, best=0)
        settings_list, table = search.settings_and_table(plan.settings_of(u.cand))
        means = np.array(
            [np.mean(row) if np.all(np.isfinite(row)) else -np.inf for row in table]
        )
        if not np.any(np.isfinite(means)):
            raise RunError(
                f"every setting of candidate '{plan.candidates[u.cand].name}' failed in repeat "
                f"{u.repeat}, outer fold {u.fold}: "
                f"{search.errors[0] if search.errors else 'no score'}"
            )
        best = int(
            np.argmax(means)
        )  # first of equal means, as scikit-learn's search does
        return _Choice(
            settings_list=settings_list,
            table=table,
            best=best,
            mean=float(means[best]),
            sd=float(np.std(table[best])),
        )

    def _audit(
        self, u: UnitKey, ledgers: list[LedgerExport], fold: OuterFold
    ) -> AuditStamp:
        n_fits = seen_test = seen_val = seen_sealed = 0
        lines: list[str] = []
        for led in ledgers:
            if self.sealed is not None:
                seen_sealed += sealed_rows_seen(led, self.sealed)
            nf, st, sv, ls = verify_ledger(
                led,
                fingerprints=self.fingerprints,
                outer_train=fold.train,
                outer_test=fold.test,
                inner=list(fold.inner),
            )
            n_fits += nf
            seen_test += st
            seen_val += sv
            lines += ls
        if seen_sealed:
            cand = self.plan.candidates[u.cand]
            raise LeakageError(
                f"row audit failed for candidate '{cand.name}', repeat {u.repeat}, outer fold "
                f"{u.fold}: {seen_sealed} sealed hold-out row(s) reached a fit; the study must "
                f"never see them, so the result is not valid and nothing was written"
            )
        if seen_test or seen_val:
            cand = self.plan.candidates[u.cand]
            raise LeakageError(
                f"row audit failed for candidate '{cand.name}', repeat {u.repeat}, outer fold "
                f"{u.fold}: {seen_test} outer-test row(s) and {seen_val} inner-validation row(s) "
                f"reached a fit; the result is not valid and nothing was written"
            )
        lines = sorted(f"{u.uid} {line}" for line in lines)
        return AuditStamp(
            fits=n_fits,
            test_rows_seen=seen_test,
            validation_rows_seen=seen_val,
            digest=digest_lines(lines),
            holdout_rows_seen=None if self.sealed is None else seen_sealed,
        )

    def _record(
        self,
        u: UnitKey,
        fin: Refit,
        search: _Search | None,
        choice: _Choice,
        fold: OuterFold,
        keep_details: bool,
    ) -> UnitRecord:
        cand = self.plan.candidates[u.cand]
        ledgers = (search.ledgers if search else []) + [fin.ledger]
        audit = self._audit(u, ledgers, fold)
        fit_s = fin.fit_seconds + (search.fit_seconds if search else 0.0)
        task_s = fin.task_seconds + (search.task_seconds if search else 0.0)
        self.fit_seconds += fit_s
        self.busy_seconds += task_s
        details: dict[str, Any] = {}
        if keep_details:
            if choice.table is not None:
                details["trials"] = tuple(
                    TrialRow.from_scores(jsonable_settings(s), [float(v) for v in row])
                    for s, row in zip(choice.settings_list, choice.table, strict=True)
                )
            details["test_rows"] = tuple(int(i) for i in fold.test)
            details["predicted"] = (
                None if fin.predicted is None else tuple(fin.predicted)
            )
            details["decision"] = None if fin.decision is None else tuple(fin.decision)
            details["decision_kind"] = fin.decision_kind
        if fin.selected_features is not None:
            # kept for real-label units only, as before (permutations keep scores)
            if keep_details:
                details["selected_features"] = tuple(fin.selected_features)
        rec = UnitRecord(
            unit=u.uid,
            perm=u.perm,
            repeat=u.repeat,
            fold=u.fold,
            candidate=cand.name,
            role=cand.role,
            settings=jsonable_settings(choice.settings),
            inner_score=choice.mean,
            inner_sd=choice.sd,
            test=dict(fin.test_scores),
            train=dict(fin.train_scores),
            n_train=int(len(fold.train)),
            n_test=int(len(fold.test)),
            audit=audit,
            fit_seconds=fit_s,
            task_seconds=task_s,
            errors=tuple(search.errors) if search else (),
            seeds=unit_seeds(
                self.ctx,
                u,
                sampled=self.plan.method_of(u.cand) != "grid"
                and self.plan.needs_search(u.cand),
            ),
            **details,
        )
        # The canonical form the store keeps: a record read back on resume is then
        # identical to a fresh one (numpy scalars become Python numbers).
        return UnitRecord.from_json(
            json.loads(json.dumps(rec.to_json(), sort_keys=True))
        )


_Call = tuple[Callable[..., Any], tuple[Any, ...], dict[str, Any]]


@dataclass
class _Search:
    """Wave-1 results of one unit, gathered as its tasks finish (in any order)."""

    ledgers: list[LedgerExport] = field(default_factory=list)
    errors: list[str] = field(default_factory=list)
    fit_seconds: float = 0.0
    task_seconds: float = 0.0
    splits: dict[int, np.ndarray] = field(default_factory=dict)
    sampled: SearchTable | None = None

    def add(self, r: TaskResult) -> None:
        self.ledgers.append(r.ledger)
        self.fit_seconds += r.fit_seconds
        self.task_seconds += r.task_seconds
        if isinstance(r, SplitScores):
            self.errors = sorted(
                self.errors + list(r.errors)
            )  # same list whatever the order
            self.splits[r.split] = r.scores
        elif isinstance(r, SearchTable):
            self.errors = sorted(self.errors + list(r.errors))
            self.sampled = r

    def settings_and_table(
        self, grid: list[dict[str, Any]]
    ) -> tuple[list[dict[str, Any]], np.ndarray]:
        if self.sampled is not None:
            return list(self.sampled.settings), self.sampled.table
        return grid, np.column_stack([self.splits[j] for j in sorted(self.splits)])


@dataclass(frozen=True)
class _Choice:
    settings_list: list[dict[str, Any]]
    table: np.ndarray | None
    best: int
    mean: float | None = None
    sd: float | None = None

    @property
    def settings(self) -> dict[str, Any]:
        return self.settings_list[self.best]


DASK_NO_WORKER_SECONDS = 120.0
"""How long a dask run waits with no worker in the cluster before it stops."""


def _identity(x: Any) -> Any:
    return x


def _lost(phase: str, uids: list[str], reason: str) -> Exception:
    from ..exceptions import RunError

    units = sorted(set(uids)) or ["?"]
    return RunError(
        f"the dask cluster lost the workers running {len(units)} unit(s) of the {phase} phase "
        f"({units[0]} ... {units[-1]}; {reason}) and could not finish them; finished units are kept: "
        f"run the same command to resume"
    )


def _progress_info(task: TaskResult) -> dict[str, Any]:
    """What a finished task tells the progress display: one task, its fits, whether it ended a unit."""
    return {
        "tasks": 1,
        "fits": task.ledger.n_fits,
        "units": 1 if isinstance(task, Refit) else 0,
    }
