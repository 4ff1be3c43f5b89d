"""A study: candidates + loops + search + metrics + seed, ready to plan and run."""

from __future__ import annotations

import dataclasses
import os
import sys
import warnings
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
from sklearn.base import is_classifier, is_regressor
from sklearn.dummy import DummyClassifier, DummyRegressor

from .._candidate import Candidate, candidate_from_estimator
from .._metrics import check_metrics, check_metrics_fit, positive_class_of
from ..exceptions import DataError, FoldwallWarning, SpecError, first_line
from ..plan import Plan, SplitRule, compile_plan, make_rule
from ..records import RunOutcome, StudySource, UnitRecord
from ..report import ConsoleProgress, Result, build_result, interactive_session
from ..runners import (
    PreflightError,
    Progress,
    RunOptions,
    preflight,
    run_audits,
    run_plan,
)
from ..search import check_searchable
from ..settings import (
    AuditSettings,
    CompareSettings,
    ControlSettings,
    HoldoutSettings,
    LoopSettings,
    RaterSettings,
    SearchSettings,
    settings_from_arguments,
)
from ..spec import PYTHON_CODE, check_pipeline
from ..store import UnitStore
from ..table import Dataset, attach_columns, dataset_from_arrays, join_features
from ._holdout import (
    HoldoutRows,
    holdout_key,
    seal,
    split_rows,
    take_marking_column,
)
from ._ledger import ledger_path, record_run, study_hash
from ._plan_checks import check_control, check_permutable, check_test_parts

__all__ = ["Study", "wrap", "REFERENCE_NAME"]

REFERENCE_NAME = "chance"


def _reference(task: str) -> Candidate:
    est = (
        DummyClassifier(strategy="prior")
        if task == "classification"
        else DummyRegressor(strategy="mean")
    )
    return candidate_from_estimator(REFERENCE_NAME, est, None, role="reference")


def _is_splitter(obj: Any) -> bool:
    return hasattr(obj, "split") and hasattr(obj, "get_n_splits")


@dataclass
class Study:
    """A compiled-on-demand nested study. Build it with :func:`wrap` or from a study file.

    Calling :meth:`run` plans the outer/inner loops on the given rows, runs every
    unit of work, checks the row audit and returns a :class:`~foldwall.Result`.

    ``outer`` and ``inner`` are :class:`~foldwall.settings.LoopSettings` or a
    scikit-learn splitter object used as it is.
    """

    candidates: list[Candidate]
    metrics: list[str]
    outer: Any = field(default_factory=LoopSettings)
    inner: Any = field(default_factory=LoopSettings)
    search: SearchSettings = field(default_factory=SearchSettings)
    control: ControlSettings = field(default_factory=ControlSettings)
    compare: CompareSettings = field(default_factory=CompareSettings)
    random_state: int = 0
    n_jobs: int | None = None
    share_fits: bool = True
    clinical: bool = False
    task: str | None = None
    positive_class: Any = None
    source: StudySource = field(default_factory=StudySource)
    backend: str = "local"
    scheduler: str | None = None
    raters: RaterSettings | None = None
    audits: AuditSettings = field(default_factory=AuditSettings)
    acquisition_as_features: bool = False
    holdout: HoldoutSettings | None = None
    ledger: str | bool | None = None

    # -- names in messages ------------------------------------------------------
    @property
    def from_file(self) -> bool:
        return self.source.sha256 is not None

    def _key(self, file_key: str, argument: str) -> str:
        """How a setting is named to the user: the study-file key or the wrap() argument."""
        return file_key if self.from_file else argument

    @property
    def repeats(self) -> int:
        return self.outer.repeats if isinstance(self.outer, LoopSettings) else 1

    # -- checks -------------------------------------------------------------
    def _task(self) -> str:
        models = [c.steps[-1][1] for c in self.candidates]
        kinds = {
            "classification"
            if is_classifier(m)
            else "regression"
            if is_regressor(m)
            else "unknown"
            for m in models
        }
        if "unknown" in kinds:
            bad = next(
                c.name
                for c in self.candidates
                if not (is_classifier(c.steps[-1][1]) or is_regressor(c.steps[-1][1]))
            )
            raise SpecError(
                f"the last step of '{bad}' is neither a classifier nor a regressor; end the pipeline with a model"
            )
        if len(kinds) > 1:
            regs = [c.name for c in self.candidates if is_regressor(c.steps[-1][1])]
            clfs = [c.name for c in self.candidates if is_classifier(c.steps[-1][1])]
            raise SpecError(
                f"candidates mix classifiers ({', '.join(clfs)}) and regressors ({', '.join(regs)}); "
                f"one study has one kind of target"
            )
        inferred = kinds.pop()
        if self.task is not None and self.task != inferred:
            raise SpecError(
                f"data.task is {self.task}, but the candidates' models are for {inferred}"
            )
        return inferred

    def _rules(self, task: str, grouped: bool) -> tuple[SplitRule, SplitRule]:
        outer = make_rule(
            self.outer,
            label="outer",
            classification=task == "classification",
            grouped=grouped,
        )
        inner = make_rule(
            self.inner,
            label="inner",
            classification=task == "classification",
            grouped=grouped,
        )
        return outer, inner

    def all_candidates(self, task: str) -> list[Candidate]:
        names = {c.name for c in self.candidates}
        if REFERENCE_NAME in names:
            raise SpecError(
                f"the name '{REFERENCE_NAME}' is kept for the trivial reference model; rename that candidate"
            )
        return list(self.candidates) + [_reference(task)]

    def dataset(
        self,
        X: Any,
        y: Any,
        groups: Any = None,
        ratings: Any = None,
        *,
        ids: Any = None,
        acquisition: Any = None,
        time: Any = None,
    ) -> Dataset:
        """The rows of a Python run: features, target (or ratings), groups, ids,
        acquisition and time."""
        if acquisition is not None and self.acquisition_as_features:
            X = join_features(X, acquisition)
        if ratings is None and self.raters is None:
            data = dataset_from_arrays(X, y, groups, task=self._task())
        else:
            data = self._rated_dataset(X, y, groups, ratings)
        return attach_columns(data, ids=ids, acquisition=acquisition, time=time)

    def _rated_dataset(self, X: Any, y: Any, groups: Any, ratings: Any) -> Dataset:
        """Rows whose target is the per-case consensus of several raters."""
        import pandas as pd

        from ._raters import rater_frame_of, rater_target

        if ratings is None:
            raise SpecError(
                "argument 'ratings': wrap(raters=...) makes the raters' per-case consensus "
                "the target; pass run(X, ratings=...) with one column per rater"
            )
        if y is not None:
            raise SpecError(
                "argument 'y': with ratings the target is the raters' per-case consensus; "
                "leave y out"
            )
        settings = self.raters or RaterSettings()
        frame = (
            ratings
            if isinstance(ratings, pd.DataFrame)
            else pd.DataFrame(np.asarray(ratings, dtype=object))
        )
        frame.columns = [str(c) for c in frame.columns]
        if settings.columns is not None:
            frame = rater_frame_of(frame, list(settings.columns), key="raters.columns")
        n_rows = len(X)
        if len(frame) != n_rows:
            raise DataError(
                f"ratings has {len(frame)} rows but X has {n_rows}; give one row of "
                f"ratings per row of X"
            )
        if isinstance(X, pd.DataFrame):
            clash = [c for c in frame.columns if c in {str(x) for x in X.columns}]
            if clash:
                raise DataError(
                    f"X holds the rater column '{clash[0]}'; ratings are the labels and "
                    f"must never be features - drop it from X"
                )
        target, table = rater_target(
            frame.reset_index(drop=True),
            settings,
            task=self._task(),
            key="ratings",
            random_state=self.random_state,
        )
        data = dataset_from_arrays(
            X, pd.Series(target, name="consensus"), groups, task=self._task()
        )
        data.ratings = table
        return data

    def _check_audit_inputs(self, data: Dataset) -> None:
        """Settings that need a column the rows do not have (checked before any fit)."""
        for loop in ("outer", "inner"):
            if getattr(getattr(self, loop), "forward", False) and data.time is None:
                raise SpecError(
                    f"{self._key(loop + '.forward', 'forward')} splits by time, but no time was given; "
                    + (
                        "name the column that orders the rows (data.time)"
                        if self.from_file
                        else "pass run(..., time=...)"
                    )
                )
        lo = self.audits.leave_one_out
        if lo is not None:
            have = [] if data.acquisition is None else list(data.acquisition.columns)
            if lo not in have:
                raise SpecError(
                    f"{self._key('audits.leave_one_out', 'audits.leave_one_out')} is {lo!r}, which is not an "
                    f"acquisition column ({', '.join(have) or 'none given'}); "
                    + (
                        "list it in data.acquisition"
                        if self.from_file
                        else "pass run(..., acquisition=DataFrame) with that column"
                    )
                )
        from ..audit import warn_removal_before_nonlinear

        for c in self.candidates:
            warn_removal_before_nonlinear(c.steps, name=f"candidate '{c.name}'")

    def _merge_duplicates(self, data: Dataset) -> None:
        """audits.merge_duplicates: copies join one group, so they never straddle a split."""
        if not self.audits.merge_duplicates or data.merged_duplicates is not None:
            return
        from ..audit import find_duplicates, merge_duplicates
        from ..runners import feature_frame

        dup = find_duplicates(feature_frame(data))
        merged = merge_duplicates(data.n_samples, dup, groups=data.groups)
        before = (
            data.n_samples if data.groups is None else int(np.unique(data.groups).size)
        )
        after = int(np.unique(merged).size)
        rows = dup.n_exact_rows + int(np.unique(dup.near).size)
        data.merged_duplicates = {
            "rows": rows,
            "groups": before - after,
            "exact_sets": len(dup.exact),
            "near_pairs": len(dup.near),
        }
        if rows:
            data.groups = np.asarray(merged).astype(str)
            data.group_name = (
                f"{data.group_name} + duplicates" if data.group_name else "duplicates"
            )

    def development(
        self,
        X: Any,
        y: Any,
        groups: Any = None,
        *,
        ratings: Any = None,
        holdout: Any = None,
        ids: Any = None,
        acquisition: Any = None,
        time: Any = None,
    ) -> Dataset:
        """The rows the study runs on: all of them, or those left after sealing a hold-out.

        ``holdout`` is a true/false mask over the rows (it wins over the study's
        ``holdout`` settings). The returned rows carry the seal's record
        (``Dataset.holdout``); the sealed rows themselves are not in them.
        """
        column = None
        settings = self.holdout
        if holdout is None and settings is not None and settings.column is not None:
            X, column = take_marking_column(
                X,
                settings.column,
                key=self._key("holdout.column", "argument 'holdout'"),
            )
        data = self.dataset(
            X, y, groups, ratings, ids=ids, acquisition=acquisition, time=time
        )
        mask = None if holdout is None else np.asarray(holdout)
        return self.seal(data, HoldoutRows(settings, column=column, mask=mask))

    def seal(self, data: Dataset, rows: HoldoutRows) -> Dataset:
        """``data`` without its hold-out rows (unchanged when nothing is sealed)."""
        if not rows.active:
            return data
        split = split_rows(rows, data, seed=self.random_state, from_file=self.from_file)
        return seal(data, split, holdout_key(split, data, rows))[0]

    def plan(
        self,
        X: Any = None,
        y: Any = None,
        groups: Any = None,
        *,
        data: Dataset | None = None,
        ratings: Any = None,
    ) -> Plan:
        """Compile the plan without fitting anything (on the development rows when
        the study seals a hold-out)."""
        if data is None:
            data = self.development(X, y, groups, ratings=ratings)
        self._check_audit_inputs(data)
        self._merge_duplicates(data)
        task = data.task
        outer, inner = self._rules(task, data.groups is not None)
        classes = data.classes
        check_metrics_fit(
            self.metrics,
            task=task,
            n_classes=None if classes is None else len(classes),
            key=self._key("metrics", "metric"),
        )
        if classes is not None:
            data.positive_class = positive_class_of(
                classes,
                self.positive_class,
                self.metrics,
                key=self._key("data.positive_class", "positive_class"),
            )
        perm_key = self._key("control.permutations", "n_permutations")
        scheme_key = self._key("control.scheme", "permutation_scheme")
        if self.control.permutations > 0:
            check_permutable(
                data, scheme=self.control.scheme, key=perm_key, scheme_key=scheme_key
            )
        if self.repeats > 1 and not outer.shuffle:
            raise SpecError(
                "outer.repeats > 1 needs outer.shuffle: true; without shuffling every repeat has the same "
                "folds, which only repeats the same numbers with false confidence"
            )
        plan = compile_plan(
            y=data.y,
            groups=data.groups,
            task=task,
            candidates=self.all_candidates(task),
            outer=outer,
            inner=inner,
            repeats=self.repeats,
            seed=self.random_state,
            metrics=self.metrics,
            search_method=self.search.method,
            trials=self.search.trials,
            permutations=self.control.permutations,
            scheme=self.control.scheme,
            time=data.time,
        )
        check_test_parts(plan, data, key=self._key("outer", "outer"))
        return check_control(
            plan, data, self.control, key=perm_key, scheme_key=scheme_key
        )

    def run(
        self,
        X: Any = None,
        y: Any = None,
        groups: Any = None,
        *,
        data: Dataset | None = None,
        ratings: Any = None,
        holdout: Any = None,
        blocks: Any = None,
        ids: Any = None,
        acquisition: Any = None,
        time: Any = None,
        on_progress: Progress | None = None,
        on_estimate: Callable[[Result], None] | None = None,
        progress: bool | None = None,
        store: UnitStore | None = None,
        plan: Plan | None = None,
        location: str | None = None,
    ) -> Result:
        """Run the whole study; see :func:`foldwall.wrap` for an example.

        Parameters
        ----------
        X, y, groups : array-like
            Features, target and (optionally) the group of every row.
        ids : array-like of shape (n_samples,), default=None
            An id per row (subject, sample): shown beside the row numbers in
            plan.json, predictions.csv and the report; never a feature.
        on_progress : callable, default=None
            ``on_progress(event, info)``, called as the run advances: ``"real:start"``
            and ``"permutations:start"`` with the number of tasks and units of the
            phase, ``"real"`` and ``"permutations"`` as each task finishes (tasks,
            fits, units), and ``"real:done"`` when every unit of the real labels is
            finished (see :class:`foldwall.runners.Progress`).
        on_estimate : callable, default=None
            Called with the :class:`Result` of the real labels (no control yet) as
            soon as it exists, before the permutations start.
        progress : bool, default=None
            Show a progress display (and the estimate as soon as it exists) while
            running; None shows it in an interactive session (a terminal or a
            notebook), False never.
        holdout : array-like of bool, default=None
            Seal these rows before anything else (wins over the study's
            ``holdout`` settings, which seal rows the same way); the study then
            runs on the other rows. See docs/holdout.md.
        plan : Plan, default=None
            A plan already compiled and checked (``plan`` + ``preflight``) for these
            rows; without it, both happen here.
        location : str, default=None
            The run folder, recorded in the table's ledger beside this run (the
            run is appended to the ledger when the study keeps one).

        ``ratings`` (a DataFrame or array, one column per rater, one row per row
        of ``X``, missing ratings allowed) replaces ``y``: the target is then each
        case's consensus (``wrap(raters=...)`` sets the rule; see docs/raters.md).
        ``acquisition`` (a DataFrame of columns that describe how rows were
        acquired: site, device, batch, ...) and ``time`` (numbers or dates) are
        never features (acquisition columns are, with
        ``wrap(acquisition_as_features=True)``); the audits use them
        (docs/audits.md).

        Returns
        -------
        Result
        """
        if data is None:
            data = self.development(
                X,
                y,
                groups,
                ratings=ratings,
                holdout=holdout,
                ids=ids,
                acquisition=acquisition,
                time=time,
            )
        else:
            if holdout is not None:
                raise SpecError(
                    "argument 'holdout': pass the mask with X and y, not with data="
                )
            if ids is not None or acquisition is not None or time is not None:
                data = attach_columns(data, ids=ids, acquisition=acquisition, time=time)
        if blocks is not None:
            data.extra["__blocks__"] = np.asarray(blocks).astype(str)
        if plan is None:
            plan = self.plan(data=data)
            self.preflight(plan, data)
        options = RunOptions(
            n_jobs=self.n_jobs,
            share_fits=self.share_fits,
            allow_failed=self.search.allow_failed_trials,
            backend=self.backend,
            scheduler=self.scheduler,
        )
        display = (
            ConsoleProgress()
            if progress or (progress is None and interactive_session())
            else None
        )
        the_plan, the_data = plan, data

        def events(event: str, info: dict[str, Any]) -> None:
            if on_progress is not None:
                on_progress(event, info)
            if display is not None:
                display(event, info)
            if event == "real:done" and (
                on_estimate is not None or display is not None
            ):
                partial = self._estimate_result(info["records"], the_plan, the_data)
                if display is not None and the_plan.permutations > 0:
                    _say(display, partial, the_plan.permutations)
                if on_estimate is not None:
                    on_estimate(partial)

        try:
            outcome = run_plan(
                plan,
                data,
                control=self.control,
                options=options,
                on_progress=events,
                store=store,
            )
        finally:
            if display is not None:
                display.stop()
        audits = run_audits(
            plan,
            data,
            outcome,
            settings=self.audits,
            control=self.control,
            options=options,
            merged=data.merged_duplicates,
            on_progress=on_progress,
        )
        outcome = dataclasses.replace(outcome, audits=audits)
        result = build_result(
            outcome,
            plan=plan,
            data=data,
            source=self.source,
            compare=self.compare,
            clinical=self.clinical,
            raters=self.raters
            or (RaterSettings() if data.ratings is not None else None),
        )
        result.data["ledger"] = self._record_in_ledger(
            result.data, data, plan, location
        )
        return result

    def _record_in_ledger(
        self, results: dict[str, Any], data: Dataset, plan: Plan, location: str | None
    ) -> dict[str, Any] | None:
        """Append this run to the table's ledger; results.json's ``ledger`` section."""
        base = Path(self.source.file).parent if self.source.file else None
        path = ledger_path(self.ledger, table=self.source.table, base_dir=base)
        if path is None:
            return None
        hash_ = study_hash(self.source.sha256, plan.to_dict(), data.feature_names)
        return record_run(
            path,
            results,
            data=data,
            name=self.source.name
            or (
                Path(self.source.file).stem
                if self.source.file
                else f"study {hash_[:8]}"
            ),
            hash_=hash_,
            location=location,
        )

    def _estimate_result(
        self, records: tuple[UnitRecord, ...], plan: Plan, data: Dataset
    ) -> Result:
        """The result of the real labels alone (no control yet); warnings wait for the end."""
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return build_result(
                RunOutcome(records=records, control=None, timing=None),
                plan=plan,
                data=data,
                source=self.source,
                compare=self.compare,
                clinical=self.clinical,
                raters=self.raters
                or (RaterSettings() if data.ratings is not None else None),
            )

    def preflight(self, plan: Plan, data: Dataset) -> list[float]:
        """Fit every candidate once on the first outer-training part, before the run.

        Problems that only a fit reveals (text columns without an encoder,
        missing values without an imputer) then stop the study in its first
        second, with a message that names the columns. Nothing is kept. Returns
        the seconds each candidate's fit (and scoring) took.
        """
        try:
            return preflight(plan, data)
        except PreflightError as exc:
            raise DataError(
                _explain_fit_failure(exc.candidate, data, exc.cause)
            ) from None


def _say(display: ConsoleProgress, partial: Result, permutations: int) -> None:
    sc = partial.to_dict()["score"]
    ci = sc.get("ci")
    ci_s = f" (95% CI {ci[0]:.3f} to {ci[1]:.3f})" if ci else ""
    line = (
        f"{sc['metric']} {sc['mean']:.3f}{ci_s} over {sc['n_folds']} outer folds with the "
        f"real labels; now {permutations} permutations for the random-label control"
    )
    if display.console is not None:
        display.console.print(line)
    else:
        print(f"foldwall: {line}", file=sys.stderr, flush=True)


def _explain_fit_failure(name: str, data: Dataset, exc: BaseException) -> str:
    import pandas as pd

    first = first_line(exc)
    X = data.X
    if isinstance(X, pd.DataFrame):
        # text columns are the likely cause of any failure (an imputer or scaler meets them first)
        text = [str(c) for c in X.columns if not pd.api.types.is_numeric_dtype(X[c])]
        if text:
            return (
                f"candidate '{name}' cannot use the text column(s) {', '.join(repr(t) for t in text[:5])}: "
                f"add them to data.drop, or encode them with a step (e.g. sklearn.preprocessing.OneHotEncoder)"
            )
    frame = (
        X
        if isinstance(X, pd.DataFrame)
        else pd.DataFrame(X, columns=data.feature_names)
    )
    missing = frame.isna().sum()
    missing = missing[missing > 0]
    if len(missing) and "NaN" in first:
        cols = ", ".join(f"'{c}' ({n} missing)" for c, n in missing.head(5).items())
        return (
            f"candidate '{name}' cannot handle missing values in {cols}: add an imputer step "
            f"(e.g. sklearn.impute.SimpleImputer) before the model"
        )
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
    smallest_difference: float | None = None,
    candidates: Mapping[str, Any] | None = None,
    allow_failed_trials: bool = False,
    share_fits: bool = True,
    clinical: bool = False,
    positive_class: Any = None,
    raters: Mapping[str, Any] | None = None,
    name: str | None = None,
    forward: bool = False,
    acquisition_as_features: bool = False,
    audits: Mapping[str, Any] | None = None,
    holdout: Mapping[str, Any] | None = None,
    ledger: str | os.PathLike[str] | bool | None = None,
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
        Workers of the flat pool (None or 1: this process; -1: all cores), the
        same default as ``foldwall run --jobs``; results never depend on it.
    name : str, default=None
        Name of the wrapped candidate in the results and the report (default
        ``"pipeline"`` for a Pipeline, ``"model"`` for a single estimator).
    baselines : dict, default=None
        ``name -> (estimator, space)``: searched with the same budget, compared,
        never chosen.
    n_permutations : int, default=0
        Random-label control: re-run the whole procedure this many times on
        permuted labels.
    permutation_scheme : {"within-outer", "global", "within-groups", \
"whole-groups"}, default="within-outer"
        How labels are permuted (docs/control.md). With groups whose outcome
        varies within the group: ``"within-groups"`` (labels shuffled among the
        rows of each group) or ``"whole-groups"`` (groups of equal size swap their
        whole label sequence).
    smallest_difference : float, default=None
        Smallest difference in the primary metric that would matter; adds an
        equivalence test (two one-sided tests, Schuirmann 1987) to every
        comparison and says whether a difference is smaller than this size.
    candidates : dict, default=None
        More model families competing with ``pipeline``: ``name -> (estimator, space)``.
    positive_class : label, default=None
        The class that f1, precision, recall, jaccard, average_precision and the
        Brier score count as positive (two classes). Needed when the labels are
        not 0/1; ROC AUC does not depend on it.
    raters : dict, default=None
        Labels from several raters, with the keys of the study file's ``raters``
        section (``scale``, ``classes``, ``consensus``, ``clear_share``,
        ``clear_spread``, ``reference_metric``, ``smallest_difference``,
        ``warn_below``; ``columns`` picks columns of the ratings). Then call
        ``run(X, ratings=...)`` without ``y``. See docs/raters.md.
    forward : bool, default=False
        Split the outer and inner loops forward in time (every training row
        strictly earlier than every test row); needs ``run(..., time=...)``.
    acquisition_as_features : bool, default=False
        Also give the acquisition columns (``run(..., acquisition=...)``) to
        the models as features.
    audits : dict, default=None
        The ``audits`` section of a study file: ``leave_one_out`` (an
        acquisition column), ``merge_duplicates``, ``permutations``
        (docs/audits.md).
    holdout : dict, default=None
        Seal rows before anything else: ``{"fraction": 0.2}`` (stratified,
        whole groups, seeded from ``random_state``) or ``{"column": NAME}`` (a
        true/false column of a DataFrame X, never a feature). ``run(...,
        holdout=mask)`` seals the rows of a mask instead. See docs/holdout.md.
    ledger : str, path or bool, default=None
        The ledger file that records every study run on this table (arrays from
        Python have no table file, so there is none unless a path is given;
        ``False`` keeps none).

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
    # the method is the sampler once there is a budget; a bad sampler name is reported as such
    method = (
        sampler if trials is not None or sampler not in ("tpe", "random") else "grid"
    )
    raw: dict[str, Any] = {
        "search": {
            "method": method,
            "trials": trials,
            "allow_failed_trials": allow_failed_trials,
        },
        "control": {
            "permutations": n_permutations,
            "scheme": permutation_scheme,
            "stop_early": stop_early,
            "stop_after_exceedances": stop_after_exceedances,
            "alpha": alpha,
        },
        "compare": {
            "correction": correction,
            "alpha": alpha,
            "between_candidates": between_candidates,
            "smallest_difference": smallest_difference,
        },
    }
    if raters is not None:
        raw["raters"] = _raters_raw(raters)
    if holdout is not None:
        raw["holdout"] = dict(holdout) if isinstance(holdout, Mapping) else holdout
    if ledger is not None:
        raw["ledger"] = os.fspath(ledger) if isinstance(ledger, os.PathLike) else ledger
    loops: dict[str, Any] = {}
    for loop_name, loop in (("outer", outer), ("inner", inner)):
        if _is_splitter(loop):
            loops[loop_name] = loop
        else:
            raw[loop_name] = (
                {"folds": loop, "forward": forward}
                if loop_name == "inner"
                else {"folds": loop, "repeats": repeats, "forward": forward}
            )
    if audits is not None:
        if not isinstance(audits, Mapping):
            raise SpecError(
                f"argument 'audits' must be a dict such as {{'leave_one_out': 'site'}}, got {type(audits).__name__}"
            )
        raw["audits"] = dict(audits)
    if not isinstance(acquisition_as_features, bool):
        raise SpecError(
            f"argument 'acquisition_as_features' must be True or False, got {acquisition_as_features!r}"
        )
    if _is_splitter(outer) and repeats != 1:
        raise SpecError(
            "argument 'repeats': repeats > 1 needs outer given as a number of folds; a splitter "
            "object brings its own repeats"
        )
    settings = settings_from_arguments(raw)
    if settings.holdout is not None and settings.holdout.table is not None:
        raise SpecError(
            "argument 'holdout': a second table is for study files (holdout.table); in "
            "Python, stack the rows and pass run(..., holdout=mask)"
        )
    if name is None:
        name = "model" if not hasattr(pipeline, "steps") else "pipeline"
    elif not isinstance(name, str) or not name.strip():
        raise SpecError(f"argument 'name': give a non-empty text, got {name!r}")
    cands = [candidate_from_estimator(name, pipeline, space)]
    if cands[0].was_fitted:
        warnings.warn(
            "the pipeline passed to wrap() is already fitted; its fitted state may have seen test rows, so it "
            "is discarded and the pipeline is cloned for every fit (reported in result.audit)",
            FoldwallWarning,
            stacklevel=2,
        )
    for cname, pair in (candidates or {}).items():
        est, sp = _pair(pair, f"candidates['{cname}']")
        cands.append(candidate_from_estimator(cname, est, sp))
    for bname, pair in (baselines or {}).items():
        est, sp = _pair(pair, f"baselines['{bname}']")
        cands.append(candidate_from_estimator(bname, est, sp, role="baseline"))
    names = [c.name for c in cands]
    dup = sorted({n for n in names if names.count(n) > 1})
    if dup:
        raise SpecError(
            f"names must be unique across the pipeline, candidates and baselines; repeated: {', '.join(dup)}"
        )
    for c in cands:
        check_searchable(c.space, method=settings.search.method, name=c.name)
        where = (
            "pipeline"
            if c is cands[0]
            else f"{'baselines' if c.role == 'baseline' else 'candidates'}['{c.name}']"
        )
        # the same file rules as for study files (no cache folders, no reading the
        # files named in the data); any callable is fine from Python code
        check_pipeline(c.steps, c.space, where=where, policy=PYTHON_CODE)
    return Study(
        candidates=cands,
        metrics=metrics,
        outer=loops.get("outer", settings.outer),
        inner=loops.get("inner", settings.inner),
        search=settings.search,
        control=settings.control,
        compare=settings.compare,
        random_state=int(random_state),
        n_jobs=n_jobs,
        share_fits=share_fits,
        clinical=clinical,
        positive_class=positive_class,
        raters=settings.raters,
        audits=settings.audits,
        acquisition_as_features=acquisition_as_features,
        holdout=settings.holdout,
        ledger=settings.ledger,
    )


def _raters_raw(raters: Any) -> dict[str, Any]:
    if not isinstance(raters, Mapping):
        raise SpecError(
            f"argument 'raters' must be a dict of raters settings (e.g. "
            f"dict(scale='nominal')), got {type(raters).__name__}"
        )
    return dict(raters)


def _pair(pair: Any, where: str) -> tuple[Any, Any]:
    if isinstance(pair, tuple) and len(pair) == 2:
        return pair
    if hasattr(pair, "fit"):
        return pair, None
    raise SpecError(f"{where} must be an estimator or a tuple (estimator, space)")
