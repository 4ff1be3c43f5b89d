"""One table of facts per scikit-learn scorer.

Every module that needs to know something about a metric asks here: which kind
of target it is for, whether it needs exactly two classes or a positive class,
the values it can take, its chance level, and how to say it in words ("lower
mean absolute error", never "higher neg_mean_absolute_error").

scikit-learn's scorers are all "greater is better": losses are negated
(``neg_mean_absolute_error``). ``MetricInfo.loss`` says when the quantity people
talk about is the loss, so sentences can use its own direction.
"""

from __future__ import annotations

import difflib
import math
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
import pandas as pd
from sklearn.metrics import (
    average_precision_score,
    brier_score_loss,
    f1_score,
    get_scorer,
    get_scorer_names,
    jaccard_score,
    make_scorer,
    precision_score,
    recall_score,
)

from .exceptions import DataError, SpecError

__all__ = [
    "MetricInfo",
    "metric_info",
    "check_metrics",
    "check_metrics_fit",
    "scorer_for",
    "positive_class_of",
    "chance_level",
]

Task = Literal["classification", "regression"]
Chance = Literal[
    "majority_share", "one_over_k", "half", "positive_share", "zero", "none"
]


@dataclass(frozen=True)
class MetricInfo:
    """What foldwall knows about one scikit-learn scorer.

    Attributes
    ----------
    name : str
        The scorer name (``sklearn.metrics.get_scorer_names()``).
    label : str
        The quantity in words, e.g. "ROC AUC", "mean absolute error".
    task : {"classification", "regression"}
    two_class_only : bool
        Defined for exactly two classes.
    low, high : float
        The values the scorer can return (an interval is clipped to them).
    loss : bool
        The scorer is a negated loss: people speak of the loss, and lower is better.
    needs_positive_class : bool
        The score counts one class as positive (``pos_label``).
    chance : str
        How to compute the score of a model with no skill (see :func:`chance_level`).
    every_class : bool
        Undefined unless every class appears in the test part (ROC AUC, average
        precision, log loss): a test part with one class gives no score.
    """

    name: str
    label: str
    task: Task
    two_class_only: bool = False
    low: float = -math.inf
    high: float = math.inf
    loss: bool = False
    needs_positive_class: bool = False
    chance: Chance = "none"
    every_class: bool = False

    def better(self) -> str:
        """Direction words: "higher ROC AUC", "lower mean absolute error"."""
        return f"{'lower' if self.loss else 'higher'} {self.label}"

    def worse(self) -> str:
        return f"{'higher' if self.loss else 'lower'} {self.label}"


# (function, response_method) of the scorers that take a positive class.
_POSITIVE_CLASS_SCORERS: dict[str, tuple[Callable[..., float], Any, bool]] = {
    "f1": (f1_score, "predict", True),
    "precision": (precision_score, "predict", True),
    "recall": (recall_score, "predict", True),
    "jaccard": (jaccard_score, "predict", True),
    "average_precision": (
        average_precision_score,
        ("decision_function", "predict_proba"),
        True,
    ),
    "neg_brier_score": (brier_score_loss, "predict_proba", False),
}


def _table() -> dict[str, MetricInfo]:
    t: dict[str, MetricInfo] = {}

    def add(info: MetricInfo) -> None:
        t[info.name] = info

    # classification
    add(
        MetricInfo(
            "accuracy",
            "accuracy",
            "classification",
            chance="majority_share",
            low=0.0,
            high=1.0,
        )
    )
    add(
        MetricInfo(
            "balanced_accuracy",
            "balanced accuracy",
            "classification",
            chance="one_over_k",
            low=0.0,
            high=1.0,
        )
    )
    add(
        MetricInfo(
            "top_k_accuracy", "top-k accuracy", "classification", low=0.0, high=1.0
        )
    )
    add(
        MetricInfo(
            "roc_auc",
            "ROC AUC",
            "classification",
            True,
            chance="half",
            every_class=True,
            low=0.0,
            high=1.0,
        )
    )
    for suffix, words in (
        ("ovr", "one-vs-rest"),
        ("ovo", "one-vs-one"),
        ("ovr_weighted", "weighted one-vs-rest"),
        ("ovo_weighted", "weighted one-vs-one"),
    ):
        add(
            MetricInfo(
                f"roc_auc_{suffix}",
                f"{words} ROC AUC",
                "classification",
                chance="half",
                every_class=True,
                low=0.0,
                high=1.0,
            )
        )
    add(
        MetricInfo(
            "average_precision",
            "average precision",
            "classification",
            True,
            needs_positive_class=True,
            chance="positive_share",
            every_class=True,
            low=0.0,
            high=1.0,
        )
    )
    for base, words in (
        ("f1", "F1 score"),
        ("precision", "precision"),
        ("recall", "recall"),
        ("jaccard", "Jaccard index"),
    ):
        add(
            MetricInfo(
                base,
                words,
                "classification",
                True,
                needs_positive_class=True,
                low=0.0,
                high=1.0,
            )
        )
        for avg in ("macro", "micro", "weighted", "samples"):
            add(
                MetricInfo(
                    f"{base}_{avg}",
                    f"{avg}-averaged {words}",
                    "classification",
                    low=0.0,
                    high=1.0,
                )
            )
    add(
        MetricInfo(
            "matthews_corrcoef",
            "Matthews correlation",
            "classification",
            low=-1.0,
            high=1.0,
        )
    )
    add(
        MetricInfo(
            "neg_brier_score",
            "Brier score",
            "classification",
            True,
            low=-1.0,
            high=0.0,
            loss=True,
            needs_positive_class=True,
        )
    )
    add(
        MetricInfo(
            "neg_log_loss",
            "log loss",
            "classification",
            high=0.0,
            loss=True,
            every_class=True,
        )
    )
    add(MetricInfo("d2_brier_score", "D² Brier score", "classification", high=1.0))
    add(
        MetricInfo(
            "d2_log_loss_score",
            "D² log loss",
            "classification",
            high=1.0,
            every_class=True,
        )
    )
    add(
        MetricInfo(
            "positive_likelihood_ratio",
            "positive likelihood ratio",
            "classification",
            True,
            low=0.0,
        )
    )
    add(
        MetricInfo(
            "neg_negative_likelihood_ratio",
            "negative likelihood ratio",
            "classification",
            True,
            high=0.0,
            loss=True,
        )
    )
    # regression
    add(MetricInfo("r2", "R²", "regression", high=1.0, chance="zero"))
    add(MetricInfo("explained_variance", "explained variance", "regression", high=1.0))
    add(
        MetricInfo(
            "d2_absolute_error_score", "D² absolute error", "regression", high=1.0
        )
    )
    for name, words in (
        ("neg_mean_absolute_error", "mean absolute error"),
        ("neg_mean_squared_error", "mean squared error"),
        ("neg_root_mean_squared_error", "root mean squared error"),
        ("neg_mean_squared_log_error", "mean squared log error"),
        ("neg_root_mean_squared_log_error", "root mean squared log error"),
        ("neg_median_absolute_error", "median absolute error"),
        ("neg_mean_absolute_percentage_error", "mean absolute percentage error"),
        ("neg_mean_poisson_deviance", "mean Poisson deviance"),
        ("neg_mean_gamma_deviance", "mean gamma deviance"),
        ("neg_max_error", "maximum error"),
    ):
        add(MetricInfo(name, words, "regression", high=0.0, loss=True))
    return t


METRICS: dict[str, MetricInfo] = _table()

# Scorers for clustering: they compare two labellings without order and say
# nothing a supervised metric would not say better.
_CLUSTERING = frozenset(
    {
        "adjusted_mutual_info_score",
        "adjusted_rand_score",
        "completeness_score",
        "fowlkes_mallows_score",
        "homogeneity_score",
        "mutual_info_score",
        "normalized_mutual_info_score",
        "rand_score",
        "v_measure_score",
    }
)


def metric_info(name: str) -> MetricInfo:
    """The facts of one scorer (``name`` must have passed :func:`check_metrics`)."""
    try:
        return METRICS[name]
    except KeyError:
        raise SpecError(
            f"metric '{name}' is not a supported scikit-learn scorer name"
        ) from None


def check_metrics(metrics: str | Iterable[Any], *, key: str = "metric") -> list[str]:
    """Scorer names, checked; the first is the primary metric.

    Raises
    ------
    SpecError
        One line naming ``key`` and the bad name, with the closest valid name.
    """
    items = [metrics] if isinstance(metrics, str) else list(metrics)
    if not items:
        raise SpecError(
            f"{key}: give at least one scikit-learn scorer name, e.g. roc_auc"
        )
    known = set(get_scorer_names())
    out: list[str] = []
    for m in items:
        if isinstance(m, str) and m in _CLUSTERING:
            raise SpecError(
                f"{key}: '{m}' scores clusterings, not predictions of a known target; use "
                f"e.g. balanced_accuracy or roc_auc"
            )
        if not isinstance(m, str) or m not in known or m not in METRICS:
            base = str(m).removesuffix("_score")
            # sklearn's function names (roc_auc_score) map onto scorer names (roc_auc)
            close = (
                [base]
                if base in METRICS
                else difflib.get_close_matches(str(m), sorted(METRICS), n=1)
            )
            hint = (
                f"; did you mean '{close[0]}'?"
                if close
                else "; see sklearn.metrics.get_scorer_names()"
            )
            raise SpecError(f"{key}: '{m}' is not a scikit-learn scorer name{hint}")
        out.append(m)
    return out


def _suggest_multiclass(info: MetricInfo) -> str:
    if info.name == "roc_auc":
        return "roc_auc_ovr"
    if info.name in ("f1", "precision", "recall", "jaccard"):
        return f"{info.name}_macro"
    return "balanced_accuracy"


def check_metrics_fit(
    metrics: Sequence[str], *, task: str, n_classes: int | None, key: str = "metrics"
) -> None:
    """Scorers that cannot work on this target fail now, not after the first fit."""
    for m in metrics:
        info = metric_info(m)
        if task == "classification":
            if info.task == "regression":
                raise SpecError(
                    f"{key}: '{m}' is a regression metric, but the target is a class label; "
                    f"use e.g. balanced_accuracy or roc_auc"
                )
            if info.two_class_only and n_classes is not None and n_classes > 2:
                raise SpecError(
                    f"{key}: '{m}' is for two classes, but the target has {n_classes} classes; "
                    f"use {_suggest_multiclass(info)} or balanced_accuracy"
                )
        elif info.task == "classification":
            raise SpecError(
                f"{key}: '{m}' is a classification metric, but the models are regressors "
                f"(the study is a regression); use e.g. r2 or neg_mean_absolute_error, or "
                f"classifiers"
            )


def scorer_for(metric: str, pos_label: Any = None) -> Any:
    """The scorer ``get_scorer(metric)`` gives, with ``pos_label`` where it matters."""
    if pos_label is None or metric not in _POSITIVE_CLASS_SCORERS:
        return get_scorer(metric)
    fn, response, greater = _POSITIVE_CLASS_SCORERS[metric]
    return make_scorer(
        fn, response_method=response, greater_is_better=greater, pos_label=pos_label
    )


def positive_class_of(
    classes: Iterable[Any], given: Any, metrics: Sequence[str], *, key: str
) -> Any:
    """Check or infer the positive class of a two-class target.

    scikit-learn's default is the label 1 (or True); ROC AUC does not depend on
    it. Other labels need ``positive_class`` for the metrics that count one class.
    """
    labels = list(classes)
    if given is not None:
        if len(labels) != 2:
            raise SpecError(
                f"{key}: a positive class is for two-class targets; this target has "
                f"{len(labels)} classes"
            )
        match = [c for c in labels if str(c) == str(given)]
        if not match:
            raise SpecError(
                f"{key}: {given!r} is not a class of the target; the classes are "
                f"{', '.join(map(repr, map(str, labels)))}"
            )
        return match[0]
    if len(labels) != 2:
        return None
    needs = [m for m in metrics if metric_info(m).needs_positive_class]
    default = next((c for c in labels if str(c) in ("1", "True")), None)
    if needs and default is None:
        raise SpecError(
            f"{key}: the metric '{needs[0]}' counts one class as positive, and the classes "
            f"are {', '.join(repr(str(c)) for c in labels)}; name the positive one"
        )
    return default if default is not None else labels[-1]


def chance_level(
    metric: str, y: Any, *, task: str, positive_class: Any = None
) -> float | None:
    """Score a model with no skill would reach, where one is defined by ``y`` alone.

    Parameters
    ----------
    metric : str
        scikit-learn scorer name.
    y : array-like of shape (n_samples,)
        The true target.
    task : {"classification", "regression"}
    positive_class : scalar, default=None
        The positive class of a two-class target, for ``average_precision``. By
        default the larger of the two labels in sorted order (scikit-learn's
        ``classes_[1]``).

    Returns
    -------
    float or None
        ``accuracy``: share of the most frequent class (always predicting it
        reaches this). ``balanced_accuracy``: ``1 / k`` whatever the class balance
        (Brodersen et al. 2010). ROC AUC family: ``0.5``. ``average_precision``:
        two classes, the share of the positive class (the expected precision of a
        random ranking, approximately for small samples); more classes, ``1 / k``.
        ``r2``: ``0.0``, the score of predicting the mean of the evaluated rows
        (a model predicting the training-fold mean scores slightly below zero on a
        test fold, so 0.0 is a generous bar). ``None`` for every other metric.

    Raises
    ------
    SpecError
        A classification metric for a regression task, or an unknown task.
    DataError
        ``y`` empty, not 1-d, with missing values, with a single class, or a
        ``positive_class`` that does not occur in ``y``.

    References
    ----------
    Brodersen, K. H., Ong, C. S., Stephan, K. E., Buhmann, J. M. (2010). The
    balanced accuracy and its posterior distribution. *Proc. ICPR*, 3121-3124.

    Examples
    --------
    >>> chance_level("accuracy", [0, 0, 0, 1], task="classification")
    0.75
    >>> chance_level("balanced_accuracy", [0, 0, 0, 1], task="classification")
    0.5
    >>> chance_level("average_precision", ["a", "a", "a", "b"], task="classification",
    ...              positive_class="a")
    0.75
    """
    if task not in ("classification", "regression"):
        raise SpecError(f"task must be 'classification' or 'regression', got {task!r}.")
    info = metric_info(metric)
    if task == "regression" and info.task == "classification":
        raise SpecError(
            f"metric {metric!r} is a classification metric, but the task is 'regression'. "
            "Use a regression metric such as 'r2', or set task='classification'."
        )
    target = np.asarray(y)
    if target.ndim != 1:
        raise DataError(
            f"target must be 1-d (one value per row), got an array of shape {target.shape}."
        )
    if target.size == 0:
        raise DataError("target is empty: a chance level needs at least one row.")
    n_missing = int(pd.isna(target).sum())
    if n_missing:
        raise DataError(
            f"target has {n_missing} missing values; drop those rows (or fill them) "
            "before computing a chance level."
        )
    if info.chance == "zero":
        return 0.0
    if task == "regression" or info.chance == "none":
        return None
    codes, labels = pd.factorize(target, sort=True)
    counts = np.bincount(codes)
    k = counts.size
    if k < 2:
        raise DataError(
            f"target has a single class ({labels[0]!r}); no classification metric is "
            "meaningful. Check the target column."
        )
    if info.chance == "majority_share":
        return float(counts.max() / counts.sum())
    if info.chance == "one_over_k":
        return 1.0 / k
    if info.chance == "half":
        return 0.5
    # positive_share: with more than two classes scikit-learn macro-averages the
    # one-vs-rest scores, and the mean of the class shares is 1 / k.
    if k > 2:
        return 1.0 / k
    if positive_class is None:
        return float(counts[1] / counts.sum())
    matches = np.flatnonzero(np.asarray(labels) == positive_class)
    if matches.size == 0:
        shown = [lab.item() if hasattr(lab, "item") else lab for lab in labels]
        raise DataError(
            f"positive class {positive_class!r} does not occur in the target, whose classes "
            f"are {shown}. Pass one of them."
        )
    return float(counts[matches[0]] / counts.sum())
