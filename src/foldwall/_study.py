"""A study: candidates + loops + search + metrics + seed, ready to plan and run."""

from __future__ import annotations

import difflib
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from sklearn.base import is_classifier, is_regressor
from sklearn.dummy import DummyClassifier, DummyRegressor
from sklearn.metrics import get_scorer_names

from ._candidate import Candidate, candidate_from_estimator
from ._data import Dataset, dataset_from_arrays
from .exceptions import DataError, SpecError, first_line
from .plan._compile import Plan, compile_plan
from .plan._folds import SplitRule, make_rule

__all__ = ["Study", "wrap", "REFERENCE_NAME"]

REFERENCE_NAME = "chance"


def check_metrics(metrics: Any, *, key: str = "metric") -> list[str]:
    if isinstance(metrics, str):
        metrics = [metrics]
    metrics = list(metrics)
    if not metrics:
        raise SpecError(f"{key}: give at least one scikit-learn scorer name, e.g. roc_auc")
    known = set(get_scorer_names())
    for m in metrics:
        if not isinstance(m, str) or m not in known:
            base = str(m).removesuffix("_score")
            # sklearn's function names (roc_auc_score) map onto scorer names (roc_auc)
            close = [base] if base in known else difflib.get_close_matches(str(m), sorted(known), n=1)
            hint = f"; did you mean '{close[0]}'?" if close else "; see sklearn.metrics.get_scorer_names()"
            raise SpecError(f"{key}: '{m}' is not a scikit-learn scorer name{hint}")
    return metrics


_TWO_CLASS_ONLY = {"roc_auc", "average_precision", "f1", "precision", "recall", "jaccard", "neg_brier_score"}
_REGRESSION_ONLY_PREFIX = ("r2", "explained_variance", "max_error", "neg_mean", "neg_median", "neg_root",
                           "d2_")


def check_metrics_fit(metrics: list[str], data: Dataset, *, key: str = "metrics") -> None:
    """Scorers that cannot work on this target fail now, not after the first fit."""
    for m in metrics:
        if data.task == "classification":
            n = len(data.classes)
            if m in _TWO_CLASS_ONLY and n > 2:
                raise SpecError(f"{key}: '{m}' is for two classes, but the target has {n} classes; use "
                                f"{'roc_auc_ovr' if m == 'roc_auc' else m + '_macro'} or balanced_accuracy")
            if m.startswith(_REGRESSION_ONLY_PREFIX):
                raise SpecError(f"{key}: '{m}' is a regression metric, but the target is a class label; use e.g. "
                                f"balanced_accuracy or roc_auc")
        elif not m.startswith(_REGRESSION_ONLY_PREFIX):
            raise SpecError(f"{key}: '{m}' is a classification metric, but the models are regressors (the study is a "
                            f"regression); use e.g. r2 or neg_mean_absolute_error, or classifiers")


def _reference(task: str) -> Candidate:
    est = DummyClassifier(strategy="prior") if task == "classification" else DummyRegressor(strategy="mean")
    c = candidate_from_estimator(REFERENCE_NAME, est, None, role="reference")
    return c


@dataclass
class Study:
    """A compiled-on-demand nested study. Build it with :func:`wrap` or from a study file.

    Calling :meth:`run` plans the outer/inner loops on the given rows, runs every
    unit of work, checks the row audit and returns a :class:`~foldwall.Result`.
    """

    candidates: list[Candidate]
    metrics: list[str]
    outer: Any = 5
    inner: Any = 5
    repeats: int = 1
    search_method: str = "grid"
    trials: int | None = None
    random_state: int = 0
    n_jobs: int | None = None
    n_permutations: int = 0
    control: dict[str, Any] = field(default_factory=dict)
    compare: dict[str, Any] = field(default_factory=dict)
    allow_failed: bool = False
    share_fits: bool = True
    clinical: bool = False
    task: str | None = None
    source: dict[str, Any] = field(default_factory=dict)
    backend: str = "local"
    scheduler: str | None = None
    positive_class: Any = None

    # -- checks -------------------------------------------------------------
    def _task(self) -> str:
        models = [c.steps[-1][1] for c in self.candidates]
        kinds = {"classification" if is_classifier(m) else "regression" if is_regressor(m) else "unknown" for m in models}
        if "unknown" in kinds:
            bad = next(c.name for c in self.candidates if not (is_classifier(c.steps[-1][1]) or is_regressor(c.steps[-1][1])))
            raise SpecError(f"the last step of '{bad}' is neither a classifier nor a regressor; end the pipeline with a model")
        if len(kinds) > 1:
            regs = [c.name for c in self.candidates if is_regressor(c.steps[-1][1])]
            clfs = [c.name for c in self.candidates if is_classifier(c.steps[-1][1])]
            raise SpecError(f"candidates mix classifiers ({', '.join(clfs)}) and regressors ({', '.join(regs)}); "
                            f"one study has one kind of target")
        inferred = kinds.pop()
        if self.task is not None and self.task != inferred:
            raise SpecError(f"data.task is {self.task}, but the candidates' models are for {inferred}")
        return inferred

    def _rules(self, task: str, grouped: bool) -> tuple[SplitRule, SplitRule]:
        outer = make_rule(self.outer, label="outer", classification=task == "classification", grouped=grouped)
        inner = make_rule(self.inner, label="inner", classification=task == "classification", grouped=grouped)
        return outer, inner

    def all_candidates(self, task: str) -> list[Candidate]:
        names = {c.name for c in self.candidates}
        if REFERENCE_NAME in names:
            raise SpecError(f"the name '{REFERENCE_NAME}' is kept for the trivial reference model; rename that candidate")
        return list(self.candidates) + [_reference(task)]

    def dataset(self, X: Any, y: Any, groups: Any = None) -> Dataset:
        return dataset_from_arrays(X, y, groups, task=self._task())

    def plan(self, X: Any = None, y: Any = None, groups: Any = None, *, data: Dataset | None = None) -> Plan:
        """Compile the plan without fitting anything."""
        if data is None:
            data = self.dataset(X, y, groups)
        task = data.task
        outer, inner = self._rules(task, data.groups is not None)
        check_metrics_fit(self.metrics, data, key="metrics" if self.source else "metric")
        if task == "classification":
            from ._scoring import positive_class_of

            data.positive_class = positive_class_of(data.classes, self.positive_class, self.metrics,
                                                    key="data.positive_class" if self.source else "positive_class")
        if self.n_permutations > 0:
            _check_permutable(data, key="control.permutations" if self.source else "n_permutations")
        if self.repeats > 1 and outer.splitter is not None:
            raise SpecError("repeats > 1 needs outer given as a number of folds; a splitter object brings its own repeats")
        if self.repeats > 1 and not outer.shuffle:
            raise SpecError("outer.repeats > 1 needs outer.shuffle: true; without shuffling every repeat has the same "
                            "folds, which only repeats the same numbers with false confidence")
        return compile_plan(
            y=data.y, groups=data.groups, task=task, candidates=self.all_candidates(task), outer=outer, inner=inner,
            repeats=self.repeats, seed=self.random_state, metrics=self.metrics, search_method=self.search_method,
            trials=self.trials, permutations=self.n_permutations, scheme=self.control.get("scheme", "within-outer"),
        )

    def run(self, X: Any = None, y: Any = None, groups: Any = None, *, data: Dataset | None = None,
            blocks: Any = None, on_progress: Any = None, store: Any = None, plan: Plan | None = None) -> Any:
        """Run the whole study; see :func:`foldwall.wrap` for an example.

        ``plan`` is a plan already compiled and checked (``plan`` + ``preflight``)
        for these rows; without it, both happen here.

        Returns
        -------
        Result
        """
        from .runners._run import run_plan

        if data is None:
            data = self.dataset(X, y, groups)
        if blocks is not None:
            data.extra["__blocks__"] = np.asarray(blocks).astype(str)
        if plan is None:
            plan = self.plan(data=data)
            self.preflight(plan, data)
        return run_plan(self, plan, data, on_progress=on_progress, store=store)

    def preflight(self, plan: Plan, data: Dataset) -> list[float]:
        """Fit every candidate once on the first outer-training part, before the run.

        Problems that only a fit reveals (text columns without an encoder,
        missing values without an imputer) then stop the study in its first
        second, with a message that names the columns. Nothing is kept.
        """
        from .runners._engine import RunContext, UnitKey, finish_unit

        ctx = RunContext(X=data.X, candidates=plan.candidates, metrics=plan.metrics, seed=plan.seed,
                         search_method=plan.search_method, trials=plan.trials, allow_failed=False, share_fits=False,
                         pos_label=getattr(data, "positive_class", None))
        f = plan.folds[0]
        seconds = []
        for ci, c in enumerate(plan.candidates):
            settings = plan.grids[ci][0] if plan.grids.get(ci) else {}
            try:
                out = finish_unit(ctx, UnitKey(0, 0, 0, ci), data.y, f.train, f.test, settings, keep_predictions=False)
            except Exception as exc:
                cause = exc.__cause__ or exc
                raise DataError(_explain_fit_failure(c.name, data, cause)) from None
            seconds.append(out["task_seconds"])
        return seconds


def _check_permutable(data: Dataset, *, key: str) -> None:
    """Group-wise permutation needs one label per group (and each group inside one block)."""
    if data.groups is None:
        return
    import pandas as pd

    frame = pd.DataFrame({"g": data.groups, "y": data.y})
    n_labels = frame.groupby("g", sort=True)["y"].nunique()
    mixed = n_labels[n_labels > 1]
    if len(mixed):
        g = mixed.index[0]
        vals = sorted(map(str, frame.loc[frame.g == g, "y"].unique()))[:2]
        raise DataError(
            f"{key}: the target '{data.target_name}' varies within group '{g}' of '{data.group_name or 'groups'}' "
            f"(values {' and '.join(vals)}; {len(mixed)} such group(s)); the random-label control permutes whole "
            f"groups, which needs one label per group: set {key} to 0 for this design"
        )
    blocks = data.extra.get("__blocks__")
    if blocks is not None:
        frame["b"] = blocks
        n_blocks = frame.groupby("g", sort=True)["b"].nunique()
        spread = n_blocks[n_blocks > 1]
        if len(spread):
            raise DataError(f"control.blocks: group '{spread.index[0]}' spans several blocks; every group must lie "
                            f"inside one block (choose a block column that is constant within groups)")


def _explain_fit_failure(name: str, data: Dataset, exc: BaseException) -> str:
    import pandas as pd

    first = first_line(exc)
    X = data.X
    if isinstance(X, pd.DataFrame):
        # text columns are the likely cause of any failure (an imputer or scaler meets them first)
        text = [str(c) for c in X.columns if not pd.api.types.is_numeric_dtype(X[c])]
        if text:
            return (f"candidate '{name}' cannot use the text column(s) {', '.join(repr(t) for t in text[:5])}: "
                    f"add them to data.drop, or encode them with a step (e.g. sklearn.preprocessing.OneHotEncoder)")
    frame = X if isinstance(X, pd.DataFrame) else pd.DataFrame(X, columns=data.feature_names)
    missing = frame.isna().sum()
    missing = missing[missing > 0]
    if len(missing) and "NaN" in first:
        cols = ", ".join(f"'{c}' ({n} missing)" for c, n in missing.head(5).items())
        return (f"candidate '{name}' cannot handle missing values in {cols}: add an imputer step "
                f"(e.g. sklearn.impute.SimpleImputer) before the model")
    return f"candidate '{name}' fails on this table before the run starts: {first}"


def wrap(
    pipeline: Any,
    space: Mapping[str, Any] | None = None,
    *,
    metric: str | list[str] = "accuracy",
    outer: Any = 5,
    inner: Any = 5,
    repeats: int = 1,
    trials: int | None = None,
    sampler: str = "tpe",
    random_state: int = 0,
    n_jobs: int | None = None,
    baselines: Mapping[str, Any] | None = None,
    n_permutations: int = 0,
    permutation_scheme: str = "within-outer",
    stop_early: bool = False,
    stop_after_exceedances: int = 10,
    alpha: float = 0.05,
    correction: str = "holm",
    between_candidates: bool = False,
    candidates: Mapping[str, Any] | None = None,
    allow_failed_trials: bool = False,
    share_fits: bool = True,
    clinical: bool = False,
    positive_class: Any = None,
) -> Study:
    """Wrap an existing scikit-learn pipeline into a sealed nested study.

    Parameters
    ----------
    pipeline : estimator or Pipeline
        Cloned for every fit; a pipeline passed in already fitted is reported
        (its fitted state may have seen test rows) and never used as it is.
    space : dict, default=None
        ``"step__param"`` -> list of values (a grid) or an optuna distribution.
        With any distribution present, ``trials`` sets the budget.
    metric : str or list of str, default="accuracy"
        scikit-learn scorer names; the first picks the winner.
    outer, inner : int or splitter, default=5
        Number of folds (stratified for classifiers, group-aware when groups are
        given) or any scikit-learn splitter object.
    repeats : int, default=1
        Repetitions of the outer loop with new recorded split seeds.
    trials : int, default=None
        Budget per search when the space holds distributions.
    sampler : {"tpe", "random"}, default="tpe"
        The optuna sampler used when ``trials`` is set.
    random_state : int, default=0
        Every split, search, model and permutation seed derives from it.
    n_jobs : int, default=None
        Workers of the flat pool (None or 1: this process; -1: all cores).
    baselines : dict, default=None
        ``name -> (estimator, space)``: searched with the same budget, compared,
        never chosen.
    n_permutations : int, default=0
        Random-label control: re-run the whole procedure this many times on
        permuted labels.
    candidates : dict, default=None
        More model families competing with ``pipeline``: ``name -> (estimator, space)``.
    positive_class : label, default=None
        The class that f1, precision, recall, jaccard, average_precision and the
        Brier score count as positive (two classes). Needed when the labels are
        not 0/1; ROC AUC does not depend on it.

    Returns
    -------
    Study

    Examples
    --------
    >>> from sklearn.datasets import load_breast_cancer
    >>> from sklearn.linear_model import LogisticRegression
    >>> from sklearn.pipeline import make_pipeline
    >>> from sklearn.preprocessing import StandardScaler
    >>> import foldwall
    >>> X, y = load_breast_cancer(return_X_y=True)
    >>> study = foldwall.wrap(make_pipeline(StandardScaler(), LogisticRegression()),
    ...                       space={"logisticregression__C": [0.1, 1.0]},
    ...                       metric="roc_auc", outer=3, inner=3)
    >>> result = study.run(X, y)
    >>> round(result.score, 2) > 0.9
    True
    """
    metrics = check_metrics(metric)
    if isinstance(space, Mapping):
        from optuna.distributions import BaseDistribution

        has_dist = any(isinstance(v, BaseDistribution) for v in space.values())
    else:
        has_dist = False
    if has_dist and trials is None:
        raise SpecError("space holds optuna distributions; pass trials=N to set the search budget")
    if sampler not in ("tpe", "random"):
        raise SpecError(f"sampler must be 'tpe' or 'random', got {sampler!r}")
    method = sampler if trials is not None else "grid"
    name = "model" if not hasattr(pipeline, "steps") else "pipeline"
    cands = [candidate_from_estimator(name, pipeline, space)]
    if cands[0].was_fitted:
        import warnings

        from .exceptions import FoldwallWarning

        warnings.warn("the pipeline passed to wrap() is already fitted; its fitted state may have seen test rows, so it "
                      "is discarded and the pipeline is cloned for every fit (reported in result.audit)",
                      FoldwallWarning, stacklevel=2)
    for cname, pair in (candidates or {}).items():
        est, sp = _pair(pair, f"candidates['{cname}']")
        cands.append(candidate_from_estimator(cname, est, sp))
    for bname, pair in (baselines or {}).items():
        est, sp = _pair(pair, f"baselines['{bname}']")
        cands.append(candidate_from_estimator(bname, est, sp, role="baseline"))
    names = [c.name for c in cands]
    dup = sorted({n for n in names if names.count(n) > 1})
    if dup:
        raise SpecError(f"names must be unique across the pipeline, candidates and baselines; repeated: {', '.join(dup)}")
    if n_permutations < 0:
        raise SpecError(f"n_permutations must be >= 0, got {n_permutations}")
    if permutation_scheme not in ("within-outer", "global"):
        raise SpecError(f"permutation_scheme must be 'within-outer' or 'global', got {permutation_scheme!r}")
    if correction not in ("holm", "bonferroni", "bh"):
        raise SpecError(f"correction must be 'holm', 'bonferroni' or 'bh', got {correction!r}")
    if isinstance(repeats, bool) or not isinstance(repeats, int) or repeats < 1:
        raise SpecError(f"repeats must be a whole number >= 1, got {repeats!r}")
    return Study(
        candidates=cands, metrics=metrics, outer=outer, inner=inner, repeats=repeats, search_method=method,
        trials=trials, random_state=int(random_state), n_jobs=n_jobs, n_permutations=int(n_permutations),
        control={"scheme": permutation_scheme, "stop_early": stop_early, "h": stop_after_exceedances, "alpha": alpha},
        compare={"correction": correction, "alpha": alpha, "between_candidates": between_candidates},
        allow_failed=allow_failed_trials, share_fits=share_fits, clinical=clinical, positive_class=positive_class,
    )


def _pair(pair: Any, where: str) -> tuple[Any, Any]:
    if isinstance(pair, tuple) and len(pair) == 2:
        return pair
    if hasattr(pair, "fit"):
        return pair, None
    raise SpecError(f"{where} must be an estimator or a tuple (estimator, space)")
