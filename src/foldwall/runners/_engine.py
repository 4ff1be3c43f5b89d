"""What a worker does: fit a candidate's steps on training rows only, and score.

Three kinds of task, all pure functions of their arguments (so results never
depend on which worker ran them, or when):

- ``evaluate_split``: every grid setting of one candidate on one inner split;
- ``search_unit``: an optuna search of one candidate over all inner splits;
- ``finish_unit``: refit the chosen setting on the whole outer-training part,
  score it on the outer-test part (and on its own training rows).

Within a task, steps whose settings agree are fitted once and shared (a scaler
is the same for all 15 grid points of a split); univariate feature scores are
computed once per (rows, labels) and shared across every value of k. Fits of
label-free prefixes on the same rows are also kept in a small per-process cache,
so permutations of the labels reuse them. None of this changes a result: the
shared object is exactly the one a fresh fit would produce. ``share_fits=False``
turns all of it off (every setting fits every step afresh, as a hand-written
loop does); the tests compare both ways.
"""

from __future__ import annotations

import time
from collections import OrderedDict
from dataclasses import dataclass
from typing import Any

import numpy as np
from sklearn.base import clone
from sklearn.feature_selection import (
    GenericUnivariateSelect,
    SelectFdr,
    SelectFpr,
    SelectFwe,
    SelectKBest,
    SelectPercentile,
)

from .._candidate import Candidate
from .._metrics import scorer_for
from ..audit import FitLedger
from ..exceptions import RunError, first_line
from ..plan import derive_seed
from ..records import Refit, SearchTable, SplitScores, UnitKey, UnitSeeds
from ..search import optuna_space

__all__ = [
    "RunContext",
    "evaluate_split",
    "search_unit",
    "finish_unit",
    "unit_seeds",
    "step_seed",
    "search_seed",
]

_UNIVARIATE = (
    SelectKBest,
    SelectPercentile,
    SelectFpr,
    SelectFdr,
    SelectFwe,
    GenericUnivariateSelect,
)


@dataclass
class RunContext:
    """Everything a task needs besides its rows; sent to each worker once per call."""

    X: Any
    candidates: list[Candidate]
    metrics: list[str]
    seed: int
    search_method: str
    trials: int | None
    allow_failed: bool
    share_fits: bool = True
    token: str = ""
    pos_label: Any = None

    @property
    def primary(self) -> str:
        return self.metrics[0]


def _take(X: Any, rows: np.ndarray) -> Any:
    if hasattr(X, "iloc"):
        return X.iloc[rows]
    return X[rows]


def _freeze(params: dict[str, Any]) -> tuple[tuple[str, str], ...]:
    return tuple(sorted((k, repr(v)) for k, v in params.items()))


def _by_step(settings: dict[str, Any]) -> dict[str, dict[str, Any]]:
    out: dict[str, dict[str, Any]] = {}
    for key, value in settings.items():
        step, param = key.split("__", 1)
        out.setdefault(step, {})[param] = value
    return out


class _FixedScores:
    """Stands in for a score function whose result is already known (same rows, same labels)."""

    def __init__(self, result: Any) -> None:
        self.result = result

    def __call__(self, X: Any, y: Any) -> Any:
        return self.result


# Per-process cache of label-free prefix fits: key -> (fitted steps, Xt_train, Xt_test).
_SHARED: OrderedDict[tuple[Any, ...], tuple[Any, Any, Any]] = OrderedDict()
_SHARED_MAX = 16


class _Fitter:
    """Fits one candidate's chains on one (train, test) pair, sharing equal prefixes."""

    def __init__(
        self,
        ctx: RunContext,
        cand_index: int,
        unit: UnitKey,
        role: str,
        X_train: Any,
        y_train: np.ndarray,
        X_test: Any,
        ledger: FitLedger,
        rows_key: tuple[bytes, bytes],
    ) -> None:
        self.ctx = ctx
        self.cand: Candidate = ctx.candidates[cand_index]
        self.cand_index = cand_index
        self.unit = unit
        self.role = role
        self.X_train, self.y_train, self.X_test = X_train, y_train, X_test
        self.ledger = ledger
        self.rows_key = rows_key
        self.cache: dict[tuple[Any, ...], tuple[Any, Any, Any]] = {}
        self.score_cache: dict[tuple[Any, ...], Any] = {}
        self.fit_seconds = 0.0

    def _prepare(self, step_index: int, template: Any, params: dict[str, Any]) -> Any:
        est = clone(template)
        if params:
            est.set_params(**params)
        own = est.get_params(deep=False)
        if own.get("copy") is False:
            # Fitted outputs are shared between settings and permutations: a step
            # must not overwrite its input (copying never changes a result).
            est.set_params(copy=True)
        if own.get("n_jobs") not in (None, 1) and "n_jobs" in own:
            # No nested pools: parallelism lives in the one flat pool (n_jobs never changes a result).
            est.set_params(n_jobs=1)
        if "random_state" in own and own["random_state"] is None:
            # Seed from the unit's identity, never from the permutation: a label-free
            # step then fits identically under every permutation.
            est.set_params(random_state=step_seed(self.ctx.seed, self.unit, step_index))
        return est

    def _fit_transformer(
        self, i: int, name: str, est: Any, xtr: Any, xte: Any, prefix: tuple[Any, ...]
    ) -> tuple[Any, Any]:
        self.ledger.record(self.role, name, xtr if i == 0 else None)
        t0 = time.perf_counter()
        if self.ctx.share_fits and isinstance(est, _UNIVARIATE):
            skey = prefix + (("scores", name, repr(est.score_func)),)
            result = self.score_cache.get(skey)
            if result is None:
                result = est.score_func(xtr, self.y_train)
                self.score_cache[skey] = result
            original = est.score_func
            est.set_params(score_func=_FixedScores(result))
            out_tr = est.fit_transform(xtr, self.y_train)
            est.set_params(score_func=original)
        else:
            out_tr = est.fit_transform(xtr, self.y_train)
        out_te = est.transform(xte)
        self.fit_seconds += time.perf_counter() - t0
        return out_tr, out_te

    def fit(self, settings: dict[str, Any]) -> tuple[Any, Any, Any]:
        """Fit the chain for one setting; return (final estimator, Xt_train, Xt_test)."""
        by_step = _by_step(settings)
        xtr, xte = self.X_train, self.X_test
        prefix: tuple[Any, ...] = ()
        steps = self.cand.steps
        label_free_so_far = True
        for i, (name, template) in enumerate(steps[:-1]):
            params = by_step.get(name, {})
            prefix = prefix + ((name, _freeze(params)),)
            label_free_so_far = label_free_so_far and self.cand.label_free[i]
            hit = self.cache.get(prefix) if self.ctx.share_fits else None
            shared_key = None
            if hit is None and label_free_so_far and self.ctx.share_fits:
                # repeat and fold name the seeds a random label-free step gets
                shared_key = (
                    self.ctx.token,
                    self.cand.name,
                    self.unit.repeat,
                    self.unit.fold,
                    prefix,
                    self.rows_key,
                )
                hit = _SHARED.get(shared_key)
                if hit is not None:
                    _SHARED.move_to_end(shared_key)
                    # The rows reached this fit (in an earlier task): record it here too.
                    self.ledger.record(
                        self.role, name, self.X_train if i == 0 else None
                    )
            if hit is None:
                est = self._prepare(i, template, params)
                out_tr, out_te = self._fit_transformer(
                    i, name, est, xtr, xte, prefix[:-1]
                )
                hit = (est, out_tr, out_te)
                if shared_key is not None:
                    _SHARED[shared_key] = hit
                    while len(_SHARED) > _SHARED_MAX:
                        _SHARED.popitem(last=False)
            self.cache[prefix] = hit
            _, xtr, xte = hit
        name, template = steps[-1]
        est = self._prepare(len(steps) - 1, template, by_step.get(name, {}))
        self.ledger.record(self.role, name, xtr if len(steps) == 1 else None)
        t0 = time.perf_counter()
        est.fit(xtr, self.y_train)
        self.fit_seconds += time.perf_counter() - t0
        return est, xtr, xte


def step_seed(study_seed: int, unit: UnitKey, step_index: int) -> int:
    """The seed a step gets when its random_state is left unset.

    From the unit's identity, never from the permutation: a label-free step then
    fits identically under every permutation.
    """
    return derive_seed(
        study_seed, "model", unit.repeat, unit.fold, unit.cand, step_index
    )


def search_seed(study_seed: int, unit: UnitKey) -> int:
    """The seed of a unit's optuna sampler."""
    return derive_seed(
        study_seed, "search", unit.perm, unit.repeat, unit.fold, unit.cand
    )


def unit_seeds(ctx: RunContext, unit: UnitKey, *, sampled: bool) -> UnitSeeds:
    """The seeds a unit uses (computed from its identity, as the fits do)."""
    steps = {}
    for i, (name, template) in enumerate(ctx.candidates[unit.cand].steps):
        params = template.get_params(deep=False)
        if "random_state" in params and params["random_state"] is None:
            steps[name] = step_seed(ctx.seed, unit, i)
    return UnitSeeds(
        search=search_seed(ctx.seed, unit) if sampled else None, steps=steps
    )


def _rows_key(train: np.ndarray, test: np.ndarray) -> tuple[bytes, bytes]:
    import hashlib

    return (
        hashlib.blake2b(np.ascontiguousarray(train).tobytes(), digest_size=16).digest(),
        hashlib.blake2b(np.ascontiguousarray(test).tobytes(), digest_size=16).digest(),
    )


def _describe_failure(
    ctx: RunContext,
    unit: UnitKey,
    where: str,
    settings: dict[str, Any],
    exc: BaseException,
) -> str:
    cand = ctx.candidates[unit.cand].name
    last = f"{type(exc).__name__}: {first_line(exc)}"
    return (
        f"candidate '{cand}' failed in repeat {unit.repeat}, outer fold {unit.fold}, {where} "
        f"with settings {settings}: {last}"
    )


def _fitter(
    ctx: RunContext,
    unit: UnitKey,
    role: str,
    X: Any,
    y: np.ndarray,
    train: np.ndarray,
    test: np.ndarray,
    ledger: FitLedger,
) -> _Fitter:
    return _Fitter(
        ctx,
        unit.cand,
        unit,
        role,
        _take(X, train),
        y[train],
        _take(X, test),
        ledger,
        _rows_key(train, test),
    )


def _score(scorer: Any, est: Any, X: Any, y: np.ndarray) -> float:
    return float(scorer(est, X, y))


def _threads_capped() -> None:
    # One math-library thread per worker: parallelism lives in the flat pool only.
    from threadpoolctl import threadpool_limits

    global _CAPPED
    if not _CAPPED:
        threadpool_limits(1)
        _CAPPED = True


_CAPPED = False


def evaluate_split(
    ctx: RunContext,
    unit: UnitKey,
    split_index: int,
    y: np.ndarray,
    train: np.ndarray,
    test: np.ndarray,
    settings: list[dict[str, Any]],
    *,
    cap_threads: bool = False,
) -> SplitScores:
    """Score every setting of a grid on one inner split (primary metric)."""
    if cap_threads:
        _threads_capped()
    t_start = time.perf_counter()
    ledger = FitLedger()
    scorer = scorer_for(ctx.primary, ctx.pos_label)
    f = _fitter(ctx, unit, f"inner:{split_index}", ctx.X, y, train, test, ledger)
    scores = np.full(len(settings), np.nan)
    errors: list[str] = []
    y_test = y[test]
    for i, s in enumerate(settings):
        try:
            est, _, xte = f.fit(s)
            scores[i] = _score(scorer, est, xte, y_test)
        except Exception as exc:  # an estimator failing on one fold
            msg = _describe_failure(ctx, unit, f"inner split {split_index}", s, exc)
            if not ctx.allow_failed:
                raise RunError(msg) from exc
            errors.append(msg)
    return SplitScores(
        unit=unit,
        ledger=ledger.export(),
        fit_seconds=f.fit_seconds,
        task_seconds=time.perf_counter() - t_start,
        split=split_index,
        scores=scores,
        errors=tuple(errors),
    )


def search_unit(
    ctx: RunContext,
    unit: UnitKey,
    y: np.ndarray,
    inner: list[tuple[np.ndarray, np.ndarray]],
    *,
    cap_threads: bool = False,
) -> SearchTable:
    """An optuna search of one candidate: trials run one after another, seeded by the unit."""
    import optuna
    from optuna.trial import TrialState

    if cap_threads:
        _threads_capped()
    t_start = time.perf_counter()
    optuna.logging.set_verbosity(optuna.logging.WARNING)
    cand = ctx.candidates[unit.cand]
    seed = search_seed(ctx.seed, unit)
    n_trials = ctx.trials or 1
    # optuna's TPE starts with 10 random trials; with a small budget, start the
    # model-guided part after a third of it instead.
    sampler = (
        optuna.samplers.TPESampler(
            seed=seed, n_startup_trials=min(10, max(2, n_trials // 3))
        )
        if ctx.search_method == "tpe"
        else optuna.samplers.RandomSampler(seed=seed)
    )
    study = optuna.create_study(direction="maximize", sampler=sampler)
    dists, lookups = optuna_space(cand.space)
    ledger = FitLedger()
    scorer = scorer_for(ctx.primary, ctx.pos_label)
    fitters = [
        _fitter(ctx, unit, f"inner:{j}", ctx.X, y, tr, te, ledger)
        for j, (tr, te) in enumerate(inner)
    ]
    settings_list: list[dict[str, Any]] = []
    table = np.full((n_trials, len(inner)), np.nan)
    errors: list[str] = []
    for t in range(n_trials):
        trial = study.ask(dists)
        settings = {
            k: (lookups[k][v] if k in lookups else v) for k, v in trial.params.items()
        }
        settings_list.append(settings)
        failed = False
        for j, (_, te) in enumerate(inner):
            try:
                est, _, xte = fitters[j].fit(settings)
                table[t, j] = _score(scorer, est, xte, y[te])
            except Exception as exc:
                msg = _describe_failure(ctx, unit, f"inner split {j}", settings, exc)
                if not ctx.allow_failed:
                    raise RunError(msg) from exc
                errors.append(msg)
                failed = True
                break
        if failed:
            study.tell(trial, state=TrialState.FAIL)
        else:
            study.tell(trial, float(np.mean(table[t])))
    return SearchTable(
        unit=unit,
        ledger=ledger.export(),
        fit_seconds=sum(f.fit_seconds for f in fitters),
        task_seconds=time.perf_counter() - t_start,
        settings=tuple(settings_list),
        table=table,
        errors=tuple(errors),
    )


def _decision_values(est: Any, X: Any) -> tuple[np.ndarray | None, str | None]:
    """The value for the second class (sorted order) and its kind: probability or decision_function."""
    if hasattr(est, "predict_proba"):
        try:
            p = est.predict_proba(X)
            return (p[:, 1], "probability") if p.shape[1] == 2 else (None, None)
        except (AttributeError, NotImplementedError):
            pass
    if hasattr(est, "decision_function"):
        d = np.asarray(est.decision_function(X))
        return (d, "decision_function") if d.ndim == 1 else (None, None)
    return None, None


def finish_unit(
    ctx: RunContext,
    unit: UnitKey,
    y: np.ndarray,
    train: np.ndarray,
    test: np.ndarray,
    settings: dict[str, Any],
    *,
    keep_predictions: bool,
    cap_threads: bool = False,
) -> Refit:
    """Refit the chosen setting on the outer-training part; score on the outer-test part."""
    if cap_threads:
        _threads_capped()
    t_start = time.perf_counter()
    ledger = FitLedger()
    f = _fitter(ctx, unit, "outer", ctx.X, y, train, test, ledger)
    try:
        est, xtr, xte = f.fit(settings)
        test_scores = {
            m: _score(scorer_for(m, ctx.pos_label), est, xte, y[test])
            for m in ctx.metrics
        }
        train_scores = {
            m: _score(scorer_for(m, ctx.pos_label), est, xtr, y[train])
            for m in ctx.metrics
        }
    except Exception as exc:
        raise RunError(
            _describe_failure(
                ctx, unit, "the refit on the outer-training part", settings, exc
            )
        ) from exc
    predicted = decision = kind = None
    if keep_predictions:
        predicted = np.asarray(est.predict(xte)).tolist()
        dv, kind = _decision_values(est, xte)
        decision = None if dv is None else np.asarray(dv, dtype=float).tolist()
    selected = _selected_features(est_chain=f, settings=settings)
    return Refit(
        unit=unit,
        ledger=ledger.export(),
        fit_seconds=f.fit_seconds,
        task_seconds=time.perf_counter() - t_start,
        test_scores=test_scores,
        train_scores=train_scores,
        predicted=predicted,
        decision=decision,
        decision_kind=kind,
        selected_features=selected,
    )


def _selected_features(
    est_chain: _Fitter, settings: dict[str, Any]
) -> list[int] | None:
    """Indices of the input columns kept by the chain's selectors, when every step can tell."""
    mask = None
    by_step = _by_step(settings)
    prefix: tuple[Any, ...] = ()
    for name, _ in est_chain.cand.steps[:-1]:
        prefix = prefix + ((name, _freeze(by_step.get(name, {}))),)
        est = est_chain.cache[prefix][0]
        if hasattr(est, "get_support"):
            support = est.get_support()
            if mask is None:
                mask = np.arange(len(support))
            if len(support) != len(mask):
                return None
            mask = mask[support]
        elif mask is not None and not _keeps_columns(est):
            return None
        elif mask is None and not _keeps_columns(est):
            return None
    return None if mask is None else [int(i) for i in mask]


def _keeps_columns(est: Any) -> bool:
    """Whether a fitted step passes every input column through, in order."""
    from sklearn.impute import SimpleImputer
    from sklearn.preprocessing import (
        MaxAbsScaler,
        MinMaxScaler,
        RobustScaler,
        StandardScaler,
    )

    if isinstance(est, SimpleImputer):
        stats = np.asarray(est.statistics_, dtype=object)
        empty = [s is None or (isinstance(s, float) and np.isnan(s)) for s in stats]
        return not est.add_indicator and (est.keep_empty_features or not any(empty))
    return isinstance(est, (StandardScaler, MinMaxScaler, RobustScaler, MaxAbsScaler))
