"""Opening a sealed hold-out, once and on purpose.

The study's whole procedure (every candidate's inner search by cross-validation,
the choice between candidates) is fitted on all development rows, as one outer
fold whose test part is the hold-out; the row audit proves that no fit saw a
hold-out row. The chosen model is then scored once on the hold-out rows: the score
with an interval for a single test part, the chance level, and a label-permutation
test of the fixed model's predictions. The opening is recorded in the table's
ledger.
"""

from __future__ import annotations

import dataclasses
import json
import time
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
from sklearn.base import BaseEstimator, ClassifierMixin, RegressorMixin
from sklearn.model_selection import PredefinedSplit
from sklearn.utils.metaestimators import available_if

from .._metrics import chance_level, metric_info, scorer_for
from ..compare import (
    FixedModelPermutation,
    PartInterval,
    accuracy_interval,
    auc_interval,
    fixed_model_permutation_test,
    row_bootstrap_interval,
)
from ..exceptions import RunError, SpecError
from ..plan import HoldoutSplit, derive_seed
from ..records import UnitRecord, fold_winners
from ..report import CAUTIONS
from ..settings import ControlSettings
from ..store import append_or_explain, read_entries
from ..table import Dataset
from ._holdout import HoldoutRows, holdout_key, split_rows
from ._ledger import ONLY_FIRST, ledger_path, record_opening, study_hash, table_key
from ._study import Study

__all__ = [
    "OPENING_FILE",
    "check_ledger_writable",
    "check_out_dir",
    "open_holdout",
    "prior_openings",
    "write_opening",
]

OPENING_FILE = "opening.json"
JSONDict = dict[str, Any]
_NOTHING_SEALED = (
    "holdout: this study seals no rows, so there is nothing to open; add "
    "holdout: {fraction: 0.2} (or column/table) and run the study again"
)
_FIRST = (
    "this is the first opening of this hold-out: its score is an unbiased estimate "
    "for the chosen procedure"
)
_CHANCE_WORDS = {
    "majority_share": "share of the most frequent class on the hold-out rows",
    "one_over_k": "1/k for k classes",
    "half": "0.5: scores unrelated to the class",
    "positive_share": "share of the positive class on the hold-out rows",
    "zero": "0: predicting the mean of the hold-out rows",
    "none": "none for this metric",
}


class _Replay(BaseEstimator):  # type: ignore[misc]
    """Replays a fixed model's recorded outputs; ``X`` holds row numbers into them.

    Lets scikit-learn's own scorers score the fixed predictions against any labels
    (permuted ones included) and on any resample of the rows. Nothing is fitted.
    """

    def __init__(
        self,
        predicted: np.ndarray,
        decision: np.ndarray | None,
        classes: np.ndarray | None,
    ) -> None:
        self.predicted = predicted
        self.decision = decision
        self.classes = classes

    @property
    def classes_(self) -> np.ndarray | None:
        return self.classes

    def fit(self, X: Any, y: Any = None) -> _Replay:  # never called: a fixed model
        return self

    def _rows(self, X: Any) -> np.ndarray:
        return np.asarray(X)[:, 0].astype(int)

    def predict(self, X: Any) -> np.ndarray:
        out: np.ndarray = self.predicted[self._rows(X)]
        return out

    def _has_decision(self) -> bool:
        return self.decision is not None

    def _has_proba(self) -> bool:
        d = self.decision
        return d is not None and bool(np.all((d >= 0.0) & (d <= 1.0)))

    @available_if(_has_decision)  # type: ignore[untyped-decorator]
    def decision_function(self, X: Any) -> np.ndarray:
        assert self.decision is not None
        out: np.ndarray = self.decision[self._rows(X)]
        return out

    @available_if(_has_proba)  # type: ignore[untyped-decorator]
    def predict_proba(self, X: Any) -> np.ndarray:
        assert self.decision is not None
        d = self.decision[self._rows(X)]
        return np.column_stack([1.0 - d, d])


class _ReplayClassifier(ClassifierMixin, _Replay):  # type: ignore[misc]
    pass


class _ReplayRegressor(RegressorMixin, _Replay):  # type: ignore[misc]
    pass


def check_ledger_writable(path: Path | None) -> None:
    """Before an opening: the ledger must be writable, or the opening is refused.

    An opening that is not recorded is exactly what the ledger exists to prevent,
    so (unlike a run) it stops before anything is fitted.
    """
    if path is None:
        return
    from ..store import LedgerEntry

    probe = path.parent / f".{path.name}.probe-{time.time_ns()}"
    # Writing a throwaway ledger next to the real one checks the folder; opening the
    # real one (read-only) checks it is a ledger.
    stored, message = append_or_explain(
        probe,
        LedgerEntry(
            table_hash="probe", kind="run", study_name="probe", study_hash="probe"
        ),
    )
    for suffix in ("", "-wal", "-shm"):
        Path(str(probe) + suffix).unlink(missing_ok=True)
    if stored is None:
        raise SpecError(
            f"ledger: {message}; the opening was not started (an opening must be recorded)"
        )
    if path.exists():
        try:
            read_entries(path)
        except RunError as exc:
            raise SpecError(
                f"ledger: {exc}; the opening was not started (fix the ledger path)"
            ) from None


def _winner(records: list[UnitRecord]) -> UnitRecord:
    winners = fold_winners(records)
    if len(winners) != 1:
        raise RunError(f"the opening expected one outer fold, got {len(winners)}")
    return next(iter(winners.values()))


def _interval(
    metric: str,
    y: np.ndarray,
    predicted: np.ndarray,
    decision: np.ndarray | None,
    score_rows: Callable[[np.ndarray], float],
    *,
    classification: bool,
    seed: int,
) -> PartInterval:
    if metric == "accuracy":
        return accuracy_interval(y, predicted)
    if metric == "roc_auc" and decision is not None and np.unique(y).size == 2:
        return auc_interval(y, decision)
    return row_bootstrap_interval(
        score_rows,
        y.size,
        strata=y if classification else None,
        random_state=derive_seed(seed, "opening", "bootstrap"),
    )


def _chance(
    metric: str, y: np.ndarray, data: Dataset, reference: UnitRecord | None
) -> JSONDict:
    value = chance_level(metric, y, task=data.task, positive_class=data.positive_class)
    if value is not None:
        return {"value": value, "rule": _CHANCE_WORDS[metric_info(metric).chance]}
    if reference is not None:
        return {
            "value": float(reference.test[metric]),
            "rule": "the reference model that ignores the features, fitted on the "
            "development rows and scored on the hold-out",
        }
    return {"value": None, "rule": "none for this metric"}


def _fit_final(
    study: Study, data: Dataset, split: HoldoutSplit, on_progress: Any
) -> list[UnitRecord]:
    """The whole procedure as one outer fold: train on development rows, test on sealed."""
    final = dataclasses.replace(
        study,
        outer=PredefinedSplit(np.where(split.sealed, 0, -1)),
        control=ControlSettings(),
        candidates=[c for c in study.candidates if c.role != "baseline"],
        holdout=None,
        ledger=False,
    )
    plan = final.plan(data=data)
    final.preflight(plan, data)
    return list(final.run(data=data, plan=plan, on_progress=on_progress).records)


@dataclass(frozen=True)
class _Scored:
    """The fixed model's outputs on the hold-out rows, and the statistics about them."""

    rows: np.ndarray
    y: np.ndarray
    predicted: np.ndarray
    decision: np.ndarray | None
    interval: PartInterval
    permutation: FixedModelPermutation


def _score(
    study: Study, data: Dataset, win: UnitRecord, n_permutations: int
) -> _Scored:
    metric = study.metrics[0]
    rows = np.asarray(win.test_rows, dtype=int)
    y = data.y[rows]
    predicted = np.asarray(win.predicted)
    decision = None if win.decision is None else np.asarray(win.decision, dtype=float)
    classification = data.task == "classification"
    replay_cls = _ReplayClassifier if classification else _ReplayRegressor
    replay = replay_cls(predicted, decision, data.classes)
    scorer = scorer_for(metric, data.positive_class)
    numbered = np.arange(y.size)[:, None]

    def score_rows(r: np.ndarray) -> float:
        return float(scorer(replay, numbered[r], y[r]))

    def score_labels(labels: np.ndarray) -> float:
        return float(scorer(replay, numbered, labels))

    seed = study.random_state
    interval = _interval(
        metric,
        y,
        predicted,
        decision,
        score_rows,
        classification=classification,
        seed=seed,
    )
    permutation = fixed_model_permutation_test(
        y,
        score_labels,
        n_permutations=n_permutations,
        groups=None if data.groups is None else data.groups[rows],
        random_state=derive_seed(seed, "opening", "permutation"),
    )
    return _Scored(rows, y, predicted, decision, interval, permutation)


def open_holdout(
    study: Study,
    data: Dataset,
    rows: HoldoutRows,
    *,
    n_permutations: int = 999,
    location: str | None = None,
    on_progress: Any = None,
) -> JSONDict:
    """Fit on all development rows, score once on the hold-out, record the opening.

    Parameters
    ----------
    study : Study
        The study, as its file describes it.
    data : Dataset
        Every row of the table(s), unsealed.
    rows : HoldoutRows
        Where the hold-out rows are.
    n_permutations : int, default=999
        Permutations of the label-permutation test on the hold-out rows.
    location : str, default=None
        The opening's output folder, recorded in the ledger.

    Returns
    -------
    dict
        The content of ``opening.json``.
    """
    if not rows.active:
        raise SpecError(_NOTHING_SEALED)
    split = split_rows(rows, data, seed=study.random_state, from_file=study.from_file)
    base = Path(study.source.file).parent if study.source.file else None
    path = ledger_path(study.ledger, table=study.source.table, base_dir=base)
    check_ledger_writable(path)
    records = _fit_final(study, data, split, on_progress)
    win = _winner(records)
    if not np.array_equal(np.sort(np.asarray(win.test_rows)), split.holdout):
        raise RunError("the opening's test rows are not the hold-out rows")
    scored = _score(study, data, win, n_permutations)
    metric = study.metrics[0]
    score = float(win.test[metric])
    name = study.source.name or (
        Path(study.source.file).stem if study.source.file else "study"
    )
    key = holdout_key(split, data, rows)
    ledger = None
    if path is not None:
        ledger = record_opening(
            path,
            data=data,
            name=name,
            hash_=_study_hash(study, data, split),
            metric=metric,
            score=score,
            p_value=scored.permutation.p_value,
            holdout_key=key,
            location=location,
        )
    return _opening_json(
        study, data, split, records, win, scored, name=name, key=key, ledger=ledger
    )


def _study_hash(study: Study, data: Dataset, split: HoldoutSplit) -> str:
    """The study's file hash; from Python, the hash of its plan on the development rows."""
    if study.source.sha256:
        return study.source.sha256
    dev = data.take(split.development)
    return study_hash(None, study.plan(data=dev).to_dict(), data.feature_names)


def _opening_json(
    study: Study,
    data: Dataset,
    split: HoldoutSplit,
    records: list[UnitRecord],
    win: UnitRecord,
    scored: _Scored,
    *,
    name: str,
    key: str,
    ledger: JSONDict | None,
) -> JSONDict:
    """The content of opening.json."""
    metric = study.metrics[0]
    before = int((ledger or {}).get("holdout", {}).get("openings_before", 0))
    reference = next((r for r in records if r.role == "reference"), None)
    classification = data.task == "classification"
    return {
        "study": {
            "name": name,
            "file": study.source.file,
            "sha256": study.source.sha256,
        },
        "table": {"file": study.source.table, "sha256": table_key(data)},
        "holdout": {
            **split.describe(data.y if classification else None, groups=data.groups),
            "key": key,
        },
        "procedure": "every candidate's inner search by cross-validation on all "
        "development rows, the best candidate refitted on them, scored once on the "
        "hold-out rows (baselines are not part of the opening)",
        "chosen": {"candidate": win.candidate, "settings": dict(win.settings)},
        "metric": metric,
        "score": float(win.test[metric]),
        "interval": scored.interval.to_dict(),
        "chance_level": _chance(metric, scored.y, data, reference),
        "permutation_test": scored.permutation.to_dict(),
        "audit": {
            "fits": int(sum(r.audit.fits for r in records)),
            "holdout_rows_seen": int(sum(r.audit.test_rows_seen for r in records)),
        },
        "opening": {
            "openings_before": before,
            "first": before == 0,
            "note": _FIRST if before == 0 else ONLY_FIRST,
        },
        "ledger": ledger,
        "predictions": {
            "rows": [int(i) for i in scored.rows],
            "true": [_plain(v) for v in scored.y],
            "predicted": [_plain(v) for v in scored.predicted],
            "score": None
            if scored.decision is None
            else [float(v) for v in scored.decision],
        },
        "cautions": CAUTIONS if study.clinical else CAUTIONS[:1],
        "opened_at": time.strftime("%Y-%m-%d %H:%M:%S"),
    }


def _plain(v: Any) -> Any:
    return v.item() if isinstance(v, np.generic) else v


def check_out_dir(out: Path) -> None:
    """The opening's folder must be new or empty: an opening is never overwritten."""
    if out.exists() and not out.is_dir():
        raise SpecError(f"--out '{out}' is a file; give a folder")
    if out.exists() and any(out.iterdir()):
        raise SpecError(
            f"--out '{out}' is not empty; an opening is written to a new folder"
        )


def write_opening(out: Path, opening: JSONDict) -> Path:
    """Write opening.json into a new (or empty) folder; never overwrite one."""
    check_out_dir(out)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise SpecError(
            f"--out '{out}': cannot create the folder ({exc.strerror}); choose a writable path"
        ) from None
    target = out / OPENING_FILE
    target.write_text(json.dumps(opening, indent=2) + "\n", encoding="utf-8")
    return target


def prior_openings(study: Study, data: Dataset, rows: HoldoutRows) -> JSONDict:
    """Before an opening: how often this hold-out was opened already, and by whom first."""
    if not rows.active:
        raise SpecError(_NOTHING_SEALED)
    split = split_rows(rows, data, seed=study.random_state, from_file=study.from_file)
    key = holdout_key(split, data, rows)
    base = Path(study.source.file).parent if study.source.file else None
    path = ledger_path(study.ledger, table=study.source.table, base_dir=base)
    names: list[str] = []
    if path is not None and path.is_file():
        try:
            entries = read_entries(path, table_key(data))
        except RunError as exc:
            raise SpecError(f"ledger: {exc}") from None
        names = [
            e.study_name for e in entries if e.kind == "opening" and e.holdout == key
        ]
    return {
        "key": key,
        "rows": int(split.sealed.sum()),
        "ledger": None if path is None else str(path),
        "times": len(names),
        "first_by": names[0] if names else None,
    }
