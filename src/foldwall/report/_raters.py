"""The ``raters`` section of results.json and its lines in the terminal summary.

Everything is computed from the checked ratings (``Dataset.ratings``) and the
out-of-fold predictions of the model chosen in each outer split: agreement
between the raters, the consensus rule, the score on clear and on ambiguous cases
(the same outer splits as the headline score), and the human reference.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from typing import Any

import numpy as np
from rich.console import Console
from sklearn.base import BaseEstimator, ClassifierMixin, RegressorMixin

from .._metrics import chance_level, metric_info, scorer_for
from ..exceptions import SpecError
from ..labels import (
    LANDIS_KOCH_SOURCE,
    Strata,
    agreement,
    ambiguity_strata,
    label_distribution,
    landis_koch_band,
    low_agreement_message,
    model_vs_raters,
    rater_reference,
)
from ..plan import Plan
from ..records import UnitRecord, fold_winners
from ..settings import RaterSettings
from ..table import Dataset

__all__ = ["section_raters", "block_raters"]

JSONDict = dict[str, Any]

# Bootstrap resamples of the agreement and human-reference intervals.
_RESAMPLES = 1000


class _ReplayClassifier(ClassifierMixin, BaseEstimator):  # type: ignore[misc]
    """Gives back stored out-of-fold outputs, so a scikit-learn scorer can score them.

    ``X`` is the positions of the rows to return. Only ``predict`` and, for two
    classes, ``decision_function`` (the stored positive-class score) exist: a
    scorer that needs class probabilities fails and the caller falls back.
    """

    def __init__(
        self, predicted: Any = None, decision: Any = None, classes: Any = None
    ) -> None:
        self.predicted = predicted
        self.decision = decision
        self.classes = classes

    def fit(self, X: Any, y: Any = None) -> _ReplayClassifier:
        return self

    @property
    def classes_(self) -> np.ndarray:
        return np.asarray(self.classes)

    def predict(self, X: Any) -> np.ndarray:
        picked = np.asarray(self.predicted)[np.asarray(X, dtype=int).ravel()]
        return np.asarray(picked)

    def decision_function(self, X: Any) -> np.ndarray:
        if self.decision is None:
            raise AttributeError("no stored decision values")
        picked = np.asarray(self.decision, dtype=float)[
            np.asarray(X, dtype=int).ravel()
        ]
        return np.asarray(picked)


class _ReplayRegressor(RegressorMixin, BaseEstimator):  # type: ignore[misc]
    """Gives back stored out-of-fold predictions of a regressor."""

    def __init__(self, predicted: Any = None) -> None:
        self.predicted = predicted

    def fit(self, X: Any, y: Any = None) -> _ReplayRegressor:
        return self

    def predict(self, X: Any) -> np.ndarray:
        values = np.asarray(self.predicted, dtype=float)
        return np.asarray(values[np.asarray(X, dtype=int).ravel()])


def _winners(plan: Plan, records: Sequence[UnitRecord]) -> list[UnitRecord]:
    win = fold_winners(records)
    return [win[(0, f.repeat, f.fold)] for f in plan.folds]


def _score_rows(
    metric: str, data: Dataset, w: UnitRecord, keep: np.ndarray
) -> float | None:
    """The metric on the rows of one outer test part that ``keep`` selects."""
    assert w.test_rows is not None and w.predicted is not None
    rows = np.asarray(w.test_rows)
    sel = np.flatnonzero(keep[rows])
    if sel.size == 0:
        return None
    if data.task == "classification":
        est: Any = _ReplayClassifier(
            np.asarray(w.predicted, dtype=object),
            None if w.decision is None else np.asarray(w.decision),
            data.classes,
        )
    else:
        est = _ReplayRegressor(np.asarray(w.predicted, dtype=float))
    scorer = scorer_for(metric, data.positive_class)
    with warnings.catch_warnings():
        # one class in a small stratum: scikit-learn warns and returns nan
        warnings.simplefilter("ignore")
        try:
            value = float(scorer(est, sel.reshape(-1, 1), data.y[rows][sel]))
        except ValueError:
            return None
    return value if math.isfinite(value) else None


def _stratum_metric(plan: Plan, data: Dataset, win: list[UnitRecord]) -> str:
    """The primary metric if stored predictions can give it, else a plain one."""
    metric = plan.metrics[0]
    everything = np.ones(data.n_samples, dtype=bool)
    try:
        _score_rows(metric, data, win[0], everything)
    except (AttributeError, TypeError):
        return "balanced_accuracy" if data.task == "classification" else "r2"
    return metric


def _stratum_scores(
    plan: Plan,
    data: Dataset,
    win: list[UnitRecord],
    strata: Strata,
    metric: str,
    n_train: int,
    n_test: int,
) -> JSONDict:
    from ..compare import corrected_t_interval

    out: JSONDict = {}
    info = metric_info(metric)
    for name in ("clear", "ambiguous"):
        keep = np.asarray(strata.stratum == name)
        per_split = [_score_rows(metric, data, w, keep) for w in win]
        values = [v for v in per_split if v is not None]
        a = np.asarray(values, dtype=float)
        ci = None
        if a.size >= 2 and np.ptp(a) > 0:
            lo, hi = corrected_t_interval(a, n_train=n_train, n_test=n_test)
            # clipped to the values the metric can take, as the headline interval is
            ci = [max(lo, info.low), min(hi, info.high)]
        chance = (
            chance_level(
                metric,
                data.y[keep],
                task=data.task,
                positive_class=data.positive_class,
            )
            if keep.any()
            else None
        )
        out[name] = {
            "n_cases": int(keep.sum()),
            "mean": float(a.mean()) if a.size else None,
            "ci": ci,
            "per_split": per_split,
            "n_splits_scored": int(a.size),
            "chance_level": chance,
        }
    return out


def section_raters(
    raters: RaterSettings | None,
    *,
    plan: Plan,
    data: Dataset,
    records: Sequence[UnitRecord],
    alpha: float,
) -> JSONDict | None:
    """The ``raters`` section, or ``None`` for a study with a plain target."""
    table = data.ratings
    if raters is None or table is None:
        return None
    seed = plan.seed
    dist = label_distribution(table, rule=raters.consensus)
    strata = ambiguity_strata(
        dist, clear_share=raters.clear_share, clear_spread=raters.clear_spread
    )
    agree = agreement(table, n_resamples=_RESAMPLES, random_state=seed)
    n_train = round(float(np.mean([len(f.train) for f in plan.folds])))
    n_test = round(float(np.mean([len(f.test) for f in plan.folds])))
    win = _winners(plan, records)
    metric = _stratum_metric(plan, data, win)
    strata_scores = _stratum_scores(plan, data, win, strata, metric, n_train, n_test)
    reference = rater_reference(
        table,
        metric=raters.reference_metric,
        rule=raters.consensus,
        n_resamples=_RESAMPLES,
        random_state=seed,
    )
    splits = [
        (np.asarray(w.test_rows, dtype=np.int64), list(w.predicted or ())) for w in win
    ]
    model = model_vs_raters(
        table,
        splits,
        metric=raters.reference_metric,
        rule=raters.consensus,
        n_train=n_train,
        n_test=n_test,
        alpha=alpha,
        margin=raters.smallest_difference,
    )
    note = None
    if metric != plan.metrics[0]:
        note = (
            f"{plan.metrics[0]} needs outputs that are not stored per row, so the strata "
            f"are scored with {metric}"
        )
    return {
        "columns": list(table.raters),
        "scale": table.scale,
        "classes": None
        if table.categories is None
        else [str(c) for c in table.categories],
        "n_cases": table.n_cases,
        "consensus": {
            **dist.summary(),
            "target": "each case's training label is the consensus of its own "
            "ratings (no other case is read)",
        },
        "agreement": {
            **agree.to_dict(),
            "band": landis_koch_band(agree.krippendorff.value),
            "bands": LANDIS_KOCH_SOURCE,
            "warning": low_agreement_message(agree, threshold=raters.warn_below),
        },
        "strata": {
            "rule": strata.rule,
            "counts": strata.counts(),
            "metric": metric,
            "scores": strata_scores,
            "rows": "out-of-fold predictions of the model chosen in each outer split "
            "(the splits of the headline score), scored on the split's cases of "
            "each stratum; interval: corrected resampled t over splits",
            "note": note,
        },
        "human_reference": {
            "raters": reference.to_dict(),
            "model": model.to_dict(),
            "statement": model.statement("the model"),
        },
    }


def _f(v: Any, nd: int = 3) -> str:
    return "-" if v is None else f"{v:.{nd}f}" if isinstance(v, float) else str(v)


def block_raters(c: Console, d: JSONDict) -> None:
    """Terminal lines: agreement, consensus, strata and the human reference."""
    r = d.get("raters")
    if not r:
        return
    a = r["agreement"]
    k = a["krippendorff_alpha"]
    fl = a.get("fleiss_kappa")
    fleiss = f", Fleiss' kappa {_f(fl['value'], 2)}" if fl else ""
    ci = k["ci"]
    c.print(
        f"[bold]raters[/bold]: {len(r['columns'])} raters ({r['scale']}); "
        f"Krippendorff's alpha {_f(k['value'], 2)} (95% CI {_f(ci[0], 2)} to "
        f"{_f(ci[1], 2)}){fleiss}: '{a['band']}' in the {a['bands']}"
    )
    cons = r["consensus"]
    c.print(
        f"target: the {cons['rule']} consensus of each case ({cons['n_tied']} ties "
        f"broken by the stated rule)"
    )
    s = r["strata"]
    parts = []
    for name in ("clear", "ambiguous"):
        x = s["scores"][name]
        ci_s = f", 95% CI {_f(x['ci'][0])} to {_f(x['ci'][1])}" if x["ci"] else ""
        chance = (
            f", chance {_f(x['chance_level'])}"
            if x.get("chance_level") is not None
            else ""
        )
        parts.append(f"{name} {_f(x['mean'])} ({x['n_cases']} cases{ci_s}{chance})")
    c.print(f"{s['metric']} by stratum ({s['rule']}): " + "; ".join(parts))
    h = r["human_reference"]
    m = h["model"]
    label = metric_info_label(m["metric"])
    c.print(
        f"human reference ({label} against the consensus of the other raters): "
        f"model {_f(m['model'])}, typical rater {_f(m['typical_rater'])}"
    )
    c.print(f"- {h['statement']}")
    if a.get("warning"):
        c.print(f"[yellow]note[/yellow]: {a['warning']}")


def metric_info_label(metric: str) -> str:
    """Words for a human-reference metric (not all are scikit-learn scorers)."""
    try:
        return metric_info(metric).label
    except SpecError:  # cohen_kappa_linear and the like are not scorer names
        return metric.replace("_", " ")
