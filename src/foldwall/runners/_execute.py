"""The driver: turns a plan into tasks on one flat joblib pool, checks the audit, yields unit results.

Each batch runs in two waves: first every inner evaluation (one task per inner
split of a grid search, or one per optuna search), then every refit on the
outer-training part. All tasks of a wave go to the same pool; nothing inside a
task is parallel (math-library threads are capped at one per worker), so there
are never more busy threads than workers.
"""

from __future__ import annotations

import json
from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from joblib import Parallel, delayed

from ..audit._rows import digest_lines, verify_ledger
from ..exceptions import LeakageError
from ..plan._compile import OuterFold, Plan
from ._engine import RunContext, UnitKey, evaluate_split, finish_unit, search_unit

__all__ = ["Executor", "jsonable_settings"]


def jsonable_settings(settings: dict[str, Any]) -> dict[str, Any]:
    out = {}
    for k, v in settings.items():
        if isinstance(v, (type(None), bool, int, float, str)):
            out[k] = v
        elif isinstance(v, (np.integer,)):
            out[k] = int(v)
        elif isinstance(v, (np.floating,)):
            out[k] = float(v)
        else:
            out[k] = repr(v)
    return out


@dataclass
class Executor:
    """Runs units of work for one plan and one data set.

    Parameters
    ----------
    plan : Plan
    ctx : RunContext
    fingerprints : ndarray of uint64
        Row fingerprints of the table (for the audit).
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
            self._parallel = Parallel(n_jobs=self.n_jobs, return_as="generator_unordered")
            self._parallel.__enter__()
        else:
            # In this process too, one math-library thread: tiny matrices run
            # faster single-threaded, and parallelism belongs to the pool.
            from threadpoolctl import threadpool_limits

            self._limits = threadpool_limits(1)
        return self

    def _enter_dask(self) -> None:
        """Run the same tasks on a dask.distributed cluster through joblib's dask backend.

        The run context (the feature table included) is scattered to the workers
        once; only this driver process writes the store.
        """
        try:
            from distributed import Client
        except ImportError:
            from ..exceptions import SpecError

            raise SpecError("--backend dask needs dask.distributed: pip install 'foldwall[dask]'") from None
        from joblib import parallel_config

        if not self.scheduler:
            from ..exceptions import SpecError

            raise SpecError("--backend dask needs --scheduler ADDRESS (e.g. tcp://127.0.0.1:8786)")
        try:
            self._client = Client(self.scheduler, timeout=30)
        except (OSError, TimeoutError) as exc:
            from ..exceptions import SpecError

            raise SpecError(f"--scheduler '{self.scheduler}': cannot reach a dask scheduler there ({exc})") from None
        self._config = parallel_config(backend="dask", scatter=[self.ctx])
        self._config.__enter__()
        self._parallel = Parallel(n_jobs=-1, return_as="generator_unordered")
        self._parallel.__enter__()

    def __exit__(self, *exc: Any) -> None:
        if self._parallel is not None:
            self._parallel.__exit__(*exc)
            self._parallel = None
        if getattr(self, "_config", None) is not None:
            self._config.__exit__(*exc)
            self._config = None
        if getattr(self, "_client", None) is not None:
            self._client.close()
            self._client = None
        limits = getattr(self, "_limits", None)
        if limits is not None:
            limits.restore_original_limits()
            self._limits = None

    def _map(self, calls: list[tuple[Callable[..., Any], tuple, dict]], phase: str) -> Iterator[Any]:
        """Run the calls on the pool; yield each result as soon as it is ready."""
        if not calls:
            return
        if self._parallel is None:
            for fn, args, kwargs in calls:
                r = fn(*args, **kwargs)
                if self.on_task:
                    self.on_task(phase, _progress_info(r))
                yield r
            return
        try:
            for r in self._parallel(delayed(fn)(*args, cap_threads=True, **kwargs) for fn, args, kwargs in calls):
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

    # -- units ------------------------------------------------------------------
    def run_units(self, units: list[UnitKey], labels: dict[int, np.ndarray],
                  folds: dict[tuple[int, int, int], OuterFold], *, keep_details: bool,
                  phase: str) -> Iterator[dict[str, Any]]:
        """Run units and yield one record per unit as soon as it is finished and audited.

        ``labels`` maps a permutation number (0: the real labels) to its label
        vector; ``folds`` maps (permutation, repeat, fold) to its outer fold.
        """
        plan = self.plan
        calls = []
        for u in units:
            if not plan.needs_search(u.cand):
                continue
            fold = folds[(u.perm, u.repeat, u.fold)]
            yu = labels[u.perm]
            if plan.method_of(u.cand) == "grid":
                for j, (tr, te) in enumerate(fold.inner):
                    calls.append((evaluate_split, (self.ctx, u, j, yu, tr, te, plan.grids[u.cand]), {}))
            else:
                calls.append((search_unit, (self.ctx, u, yu, list(fold.inner)), {}))
        wave1 = list(self._map(calls, phase))
        tables: dict[UnitKey, dict[str, Any]] = {}
        for r in wave1:
            u = r["unit"]
            t = tables.setdefault(u, {"ledgers": [], "errors": [], "fit_seconds": 0.0, "task_seconds": 0.0})
            t["ledgers"].append(r["ledger"])
            t["errors"] = sorted(t["errors"] + r["errors"])  # the same list whatever order tasks finish in
            t["fit_seconds"] += r["fit_seconds"]
            t["task_seconds"] += r["task_seconds"]
            if "split" in r:
                t.setdefault("splits", {})[r["split"]] = r["scores"]
            else:
                t["table"] = r["table"]
                t["settings"] = r["settings"]
        chosen: dict[UnitKey, dict[str, Any]] = {}
        calls = []
        for u in units:
            info = tables.get(u)
            if info is None:
                settings_list = [{}] if plan.candidates[u.cand].role == "reference" else plan.grids.get(u.cand) or [{}]
                table = None
            elif "splits" in info:
                settings_list = plan.grids[u.cand]
                table = np.column_stack([info["splits"][j] for j in sorted(info["splits"])])
            else:
                settings_list = info["settings"]
                table = info["table"]
            if table is None:
                best, mean, sd = 0, None, None
            else:
                means = np.array([np.mean(row) if np.all(np.isfinite(row)) else -np.inf for row in table])
                if not np.any(np.isfinite(means)):
                    from ..exceptions import RunError

                    raise RunError(
                        f"every setting of candidate '{plan.candidates[u.cand].name}' failed in repeat {u.repeat}, "
                        f"outer fold {u.fold}: {info['errors'][0] if info['errors'] else 'no score'}"
                    )
                best = int(np.argmax(means))  # first of equal means, as scikit-learn's search does
                mean, sd = float(means[best]), float(np.std(table[best]))
            chosen[u] = {"settings_list": settings_list, "table": table, "best": best, "mean": mean, "sd": sd}
            fold = folds[(u.perm, u.repeat, u.fold)]
            yu = labels[u.perm]
            calls.append((finish_unit, (self.ctx, u, yu, fold.train, fold.test, settings_list[best]),
                          {"keep_predictions": keep_details}))
        for r in self._map(calls, phase):
            u = r["unit"]
            yield self._record(u, r, tables.get(u), chosen[u], folds[(u.perm, u.repeat, u.fold)], keep_details)

    def _record(self, u: UnitKey, fin: dict[str, Any], search: dict[str, Any] | None, choice: dict[str, Any],
                fold: OuterFold, keep_details: bool) -> dict[str, Any]:
        cand = self.plan.candidates[u.cand]
        ledgers = (search["ledgers"] if search else []) + [fin["ledger"]]
        n_fits = seen_test = seen_val = 0
        lines: list[str] = []
        for led in ledgers:
            nf, st, sv, ls = verify_ledger(led, fingerprints=self.fingerprints, outer_train=fold.train,
                                           outer_test=fold.test, inner=list(fold.inner))
            n_fits += nf
            seen_test += st
            seen_val += sv
            lines += ls
        if seen_test or seen_val:
            raise LeakageError(
                f"row audit failed for candidate '{cand.name}', repeat {u.repeat}, outer fold {u.fold}: "
                f"{seen_test} outer-test row(s) and {seen_val} inner-validation row(s) reached a fit; "
                f"the result is not valid and nothing was written"
            )
        lines = sorted(f"{u.uid} {line}" for line in lines)
        fit_s = fin["fit_seconds"] + (search["fit_seconds"] if search else 0.0)
        task_s = fin["task_seconds"] + (search["task_seconds"] if search else 0.0)
        self.fit_seconds += fit_s
        self.busy_seconds += task_s
        rec: dict[str, Any] = {
            "unit": u.uid, "perm": u.perm, "repeat": u.repeat, "fold": u.fold, "candidate": cand.name,
            "role": cand.role, "settings": jsonable_settings(choice["settings_list"][choice["best"]]),
            "inner_score": choice["mean"], "inner_sd": choice["sd"],
            "test": fin["test_scores"], "train": fin["train_scores"],
            "n_train": int(len(fold.train)), "n_test": int(len(fold.test)),
            "audit": {"fits": n_fits, "test_rows_seen": seen_test, "validation_rows_seen": seen_val,
                      "digest": digest_lines(lines)},
            "fit_seconds": fit_s, "task_seconds": task_s,
            "errors": (search["errors"] if search else []),
        }
        if keep_details:
            if choice["table"] is not None:
                rec["trials"] = [
                    {"settings": jsonable_settings(s), "mean": float(np.mean(row)) if np.all(np.isfinite(row)) else None,
                     "sd": float(np.std(row)) if np.all(np.isfinite(row)) else None,
                     "splits": [None if not np.isfinite(v) else float(v) for v in row]}
                    for s, row in zip(choice["settings_list"], choice["table"])
                ]
            rec["test_rows"] = [int(i) for i in fold.test]
            rec["predicted"] = fin.get("predicted")
            rec["decision"] = fin.get("decision")
            if "selected_features" in fin:
                rec["selected_features"] = fin["selected_features"]
        # The canonical form the store keeps (sorted keys): a record read back on
        # resume is then identical to a fresh one, key order included.
        return json.loads(json.dumps(rec, sort_keys=True))


def _progress_info(task_result: dict[str, Any]) -> dict[str, Any]:
    """What a finished task tells the progress display: one task, its fits, whether it ended a unit."""
    fits = sum(n for _, _, n in task_result["ledger"]["fits"])
    return {"tasks": 1, "fits": fits, "units": 1 if "test_scores" in task_result else 0}


def fold_winners(records: list[dict[str, Any]]) -> dict[tuple[int, int, int], dict[str, Any]]:
    """Per (perm, repeat, fold): the candidate with the best inner score (first on ties)."""
    best: dict[tuple[int, int, int], dict[str, Any]] = {}
    for rec in sorted(records, key=lambda r: r["unit"]):
        if rec["role"] != "candidate":
            continue
        key = (rec["perm"], rec["repeat"], rec["fold"])
        cur = best.get(key)
        score = rec["inner_score"] if rec["inner_score"] is not None else -np.inf
        if cur is None or score > (cur["inner_score"] if cur["inner_score"] is not None else -np.inf):
            best[key] = rec
    return best

