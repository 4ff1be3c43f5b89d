"""Statistics for one scored test part: a fixed model scored once on sealed rows.

When a sealed hold-out is opened, one model (the whole procedure fitted on all
development rows) is scored once on rows it never saw. There are no folds to average
and no fold-to-fold spread, so the uncertainty comes from the hold-out rows alone:

- :func:`accuracy_interval`: Wilson (1927) or Clopper-Pearson (1934) interval for the
  share of correct predictions;
- :func:`auc_interval`: DeLong et al. (1988) interval for one ROC AUC;
- :func:`row_bootstrap_interval`: a seeded percentile bootstrap over rows, for any
  other metric;
- :func:`fixed_model_permutation_test`: are the fixed model's predictions related to
  the labels at all? The labels are permuted over the hold-out rows (whole groups when
  a group shares one label) while the predictions stay as they are;
  ``p = (b + 1) / (m + 1)`` (Phipson & Smyth 2010).

All functions take plain arrays and callables; nothing is fitted here. The chance level
of a metric is in :func:`foldwall._metrics.chance_level` (one table of metric facts).
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable
from dataclasses import dataclass
from numbers import Integral
from typing import TYPE_CHECKING, Any

import numpy as np
from scipy import stats

from foldwall.compare._stats import delong_aucs, proportion_interval
from foldwall.exceptions import SpecError

if TYPE_CHECKING:
    from numpy.typing import ArrayLike, NDArray

    RandomState = int | np.random.Generator | np.random.SeedSequence | None

__all__ = [
    "FixedModelPermutation",
    "PartInterval",
    "accuracy_interval",
    "auc_interval",
    "fixed_model_permutation_test",
    "row_bootstrap_interval",
]

_SOURCES = {
    "wilson": "Wilson score interval (Wilson 1927)",
    "clopper-pearson": "exact binomial interval (Clopper & Pearson 1934)",
    "delong": "DeLong variance of one ROC AUC, normal interval (DeLong et al. 1988)",
    "bootstrap": "percentile bootstrap over the hold-out rows (Efron & Tibshirani 1993)",
}
# A null score counts as "at least as good" within this relative tolerance, so that
# ties computed in floating point in a different order are not lost.
_TIE_TOLERANCE = 1e-12


@dataclass(frozen=True)
class PartInterval:
    """A score on one test part with its confidence interval.

    Parameters
    ----------
    estimate : float
        The score on all rows of the part.
    lower, upper : float
        The interval's ends.
    confidence : float
        Its nominal two-sided coverage, e.g. 0.95.
    method : {"wilson", "clopper-pearson", "delong", "bootstrap"}
        How it was computed.
    n : int
        Rows of the part.
    note : str or None
        A caution about this interval, if any (e.g. failed bootstrap resamples).
    """

    estimate: float
    lower: float
    upper: float
    confidence: float
    method: str
    n: int
    note: str | None = None

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready values."""
        return {
            "estimate": float(self.estimate),
            "ci": [float(self.lower), float(self.upper)],
            "confidence": float(self.confidence),
            "method": self.method,
            "source": _SOURCES[self.method],
            "n": int(self.n),
            "note": self.note,
        }


def _check_confidence(confidence: object, where: str) -> float:
    if (
        isinstance(confidence, bool)
        or not isinstance(confidence, (int, float))
        or not 0.0 < float(confidence) < 1.0
    ):
        raise SpecError(
            f"{where}: confidence must lie strictly between 0 and 1, got {confidence!r}."
        )
    return float(confidence)


def _check_count(value: object, name: str, where: str, minimum: int = 1) -> int:
    if isinstance(value, bool) or not isinstance(value, Integral) or value < minimum:
        raise SpecError(
            f"{where}: {name} must be a whole number >= {minimum}, got {value!r}."
        )
    return int(value)


def _pair(y_true: ArrayLike, other: ArrayLike, where: str) -> tuple[NDArray[Any], ...]:
    y = np.asarray(y_true)
    o = np.asarray(other)
    if y.ndim != 1 or o.ndim != 1 or y.size != o.size or y.size == 0:
        raise SpecError(
            f"{where}: y_true and the predictions must be 1-d and of the same, "
            f"non-zero length, got shapes {y.shape} and {o.shape}."
        )
    return y, o


def accuracy_interval(
    y_true: ArrayLike,
    y_pred: ArrayLike,
    *,
    method: str = "wilson",
    confidence: float = 0.95,
) -> PartInterval:
    """Accuracy on one test part with a binomial interval.

    Parameters
    ----------
    y_true : array-like of shape (n_rows,)
        True labels.
    y_pred : array-like of shape (n_rows,)
        Predicted labels.
    method : {"wilson", "clopper-pearson"}, default="wilson"
        Passed to :func:`foldwall.compare.proportion_interval`.
    confidence : float, default=0.95
        Two-sided coverage.

    Returns
    -------
    PartInterval

    Notes
    -----
    The rows of a sealed hold-out are scored by one fixed model, so the correct
    predictions are independent trials given that model (when the rows are
    independent): the binomial interval is the textbook case here, unlike for
    predictions pooled over cross-validation folds.
    """
    where = "accuracy_interval"
    y, p = _pair(y_true, y_pred, where)
    confidence = _check_confidence(confidence, where)
    correct = int(np.sum(y == p))
    low, high = proportion_interval(
        correct, int(y.size), method=method, confidence=confidence
    )
    return PartInterval(
        estimate=correct / y.size,
        lower=low,
        upper=high,
        confidence=confidence,
        method=method,
        n=int(y.size),
    )


def auc_interval(
    y_true: ArrayLike, scores: ArrayLike, *, confidence: float = 0.95
) -> PartInterval:
    """ROC AUC on one test part with DeLong's interval.

    Parameters
    ----------
    y_true : array-like of shape (n_rows,)
        Two classes; the greater label (as sorted) is positive, as in scikit-learn.
    scores : array-like of shape (n_rows,)
        The model's scores for the positive class (higher means more likely).
    confidence : float, default=0.95
        Two-sided coverage.

    Returns
    -------
    PartInterval
        ``AUC +/- z * sqrt(V)``, clipped to [0, 1], where V is DeLong's variance
        of the AUC (:func:`foldwall.compare.delong_aucs`, ``variance_a``).

    Raises
    ------
    SpecError
        If there are not exactly two classes, or fewer than 2 rows of either.

    Notes
    -----
    The normal interval can be poor when the AUC is near 0 or 1 with few rows of
    one class; the clipping is noted when it happens.
    """
    where = "auc_interval"
    y, s = _pair(y_true, scores, where)
    confidence = _check_confidence(confidence, where)
    res = delong_aucs(y, s, s)
    auc = float(res["auc_a"])
    half = float(stats.norm.isf((1.0 - confidence) / 2.0)) * math.sqrt(
        max(res["variance_a"], 0.0)
    )
    low, high = auc - half, auc + half
    note = None
    if low < 0.0 or high > 1.0:
        note = (
            "the normal interval reached beyond [0, 1] and was cut there; with so "
            "few rows of one class it is rough"
        )
    return PartInterval(
        estimate=auc,
        lower=max(0.0, low),
        upper=min(1.0, high),
        confidence=confidence,
        method="delong",
        n=int(y.size),
        note=note,
    )


def row_bootstrap_interval(
    score_rows: Callable[[NDArray[np.intp]], float],
    n_rows: int,
    *,
    strata: ArrayLike | None = None,
    confidence: float = 0.95,
    n_resamples: int = 1999,
    random_state: RandomState = None,
) -> PartInterval:
    """Percentile bootstrap over the rows of one test part, for any metric.

    Parameters
    ----------
    score_rows : callable
        ``score_rows(rows)`` returns the metric on the given rows (an index array
        with repeats), e.g. ``lambda r: f1_score(y[r], pred[r])``. It may raise
        ``ValueError`` (or return NaN) for a resample it cannot score; such
        resamples are dropped and counted in the note, and warnings raised while
        scoring resamples are silenced.
    n_rows : int
        Rows of the part (at least 2).
    strata : array-like of shape (n_rows,), default=None
        Resample within each stratum (pass the class labels so every resample
        keeps the class counts; common practice for classification metrics).
    confidence : float, default=0.95
        Two-sided coverage.
    n_resamples : int, default=1999
        Bootstrap resamples.
    random_state : int, Generator, SeedSequence or None, default=None
        Seed of :func:`numpy.random.default_rng`.

    Returns
    -------
    PartInterval
        ``estimate = score_rows(arange(n_rows))``; the ends are the
        ``(1 - confidence)/2`` and ``(1 + confidence)/2`` quantiles of the resampled
        scores.

    Raises
    ------
    SpecError
        On bad arguments, or when more than half of the resamples cannot be scored.
    """
    where = "row_bootstrap_interval"
    n = _check_count(n_rows, "n_rows", where, minimum=2)
    confidence = _check_confidence(confidence, where)
    b = _check_count(n_resamples, "n_resamples", where)
    rng = np.random.default_rng(random_state)
    if strata is None:
        blocks = [np.arange(n)]
    else:
        s = np.asarray(strata)
        if s.shape != (n,):
            raise SpecError(f"{where}: strata must have one value per row ({n}).")
        blocks = [np.flatnonzero(s == v) for v in np.unique(s)]
    estimate = float(score_rows(np.arange(n)))
    values = []
    failed = 0
    with warnings.catch_warnings():
        # A resample the metric cannot score (one class left, ...) is counted in
        # the note below; the metric's own warning about it would only repeat that.
        warnings.simplefilter("ignore")
        for _ in range(b):
            rows = np.concatenate(
                [rng.choice(block, size=block.size) for block in blocks]
            )
            try:
                value = float(score_rows(rows))
            except ValueError:
                failed += 1
                continue
            if math.isfinite(value):
                values.append(value)
            else:
                failed += 1
    if len(values) < b / 2:
        raise SpecError(
            f"{where}: {failed} of {b} resamples could not be scored; this metric "
            "needs more rows in the test part (or pass strata=the class labels)."
        )
    alpha = 1.0 - confidence
    low, high = np.quantile(values, [alpha / 2.0, 1.0 - alpha / 2.0])
    note = (
        f"{failed} of {b} resamples could not be scored and were left out"
        if failed
        else None
    )
    return PartInterval(
        estimate=estimate,
        lower=float(low),
        upper=float(high),
        confidence=confidence,
        method="bootstrap",
        n=n,
        note=note,
    )


@dataclass(frozen=True)
class FixedModelPermutation:
    """Label-permutation test of one fixed model's predictions on one test part.

    Parameters
    ----------
    observed : float
        The score with the true labels.
    p_value : float
        ``(b + 1) / (m + 1)``.
    n_permutations : int
        m, the permutations drawn.
    n_at_least : int
        b, the permutations whose score was at least the observed one.
    null_mean, null_sd : float
        Mean and standard deviation of the permuted scores (an estimate of the
        chance level for these rows and predictions).
    scheme : {"rows", "groups"}
        What was permuted: row labels, or whole groups' labels.
    note : str or None
        A caution, e.g. when groups were given but labels vary within them.
    """

    observed: float
    p_value: float
    n_permutations: int
    n_at_least: int
    null_mean: float
    null_sd: float
    scheme: str
    note: str | None = None

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready values."""
        return {
            "test": "label permutation of a fixed model's predictions",
            "observed": float(self.observed),
            "p_value": float(self.p_value),
            "permutations": int(self.n_permutations),
            "at_least_observed": int(self.n_at_least),
            "null_mean": float(self.null_mean),
            "null_sd": float(self.null_sd),
            "scheme": self.scheme,
            "rule": "p = (b + 1) / (m + 1) (Phipson & Smyth 2010)",
            "note": self.note,
        }


def fixed_model_permutation_test(
    y_true: ArrayLike,
    score_labels: Callable[[NDArray[Any]], float],
    *,
    n_permutations: int = 999,
    groups: ArrayLike | None = None,
    random_state: RandomState = None,
    permutations: ArrayLike | None = None,
) -> FixedModelPermutation:
    """Test whether a fixed model's predictions are related to the labels at all.

    Parameters
    ----------
    y_true : array-like of shape (n_rows,)
        The true labels of the test part.
    score_labels : callable
        ``score_labels(labels)`` returns the score of the fixed predictions against
        ``labels`` (same row order); greater is better, as for scikit-learn
        scorers (use ``neg_...`` forms of losses).
    n_permutations : int, default=999
        m, the random permutations drawn (ignored when ``permutations`` is given).
    groups : array-like of shape (n_rows,), default=None
        Group of each row. When every group has one label, whole groups' labels are
        permuted among the groups (rows of a group are not independent). When
        labels vary within a group, rows are permuted and a note says so.
    random_state : int, Generator, SeedSequence or None, default=None
        Seed of :func:`numpy.random.default_rng`.
    permutations : array-like of shape (m, n_units), default=None
        Explicit permutations (of rows, or of groups in sorted order for the group
        scheme), for checking by hand.

    Returns
    -------
    FixedModelPermutation

    Notes
    -----
    Null hypothesis: the labels are exchangeable over the rows (groups) given the
    predictions, i.e. the model has learned nothing that holds on these rows. A
    permutation counts when its score is at least the observed score (within a
    relative 1e-12, so floating-point ties count). Unlike the study's random-label
    control, nothing is refitted: the model is fixed and only its agreement with
    the labels is tested.
    """
    where = "fixed_model_permutation_test"
    y = np.asarray(y_true)
    if y.ndim != 1 or y.size < 2:
        raise SpecError(f"{where}: y_true must be 1-d with at least 2 rows.")
    n = y.size
    scheme = "rows"
    note = None
    unit_of_row: NDArray[np.intp] | None = None
    unit_labels = y
    if groups is not None:
        g = np.asarray(groups)
        if g.shape != (n,):
            raise SpecError(f"{where}: groups must have one value per row ({n}).")
        uniq, inverse = np.unique(g, return_inverse=True)
        first = np.zeros(uniq.size, dtype=np.intp)
        first[inverse[::-1]] = np.arange(n)[::-1]  # first row of each group
        if np.array_equal(y[first][inverse], y):
            scheme = "groups"
            unit_of_row = inverse.astype(np.intp)
            unit_labels = y[first]
        else:
            note = (
                "labels vary within groups, so single rows were permuted; the test "
                "then treats rows of one group as independent"
            )
    n_units = unit_labels.size
    if permutations is None:
        m = _check_count(n_permutations, "n_permutations", where)
        rng = np.random.default_rng(random_state)
        perms = np.array([rng.permutation(n_units) for _ in range(m)])
    else:
        perms = np.asarray(permutations)
        if perms.ndim != 2 or perms.shape[1] != n_units or perms.shape[0] < 1:
            raise SpecError(
                f"{where}: permutations must have shape (m, {n_units}), got "
                f"{perms.shape}."
            )
        if not all(np.array_equal(np.sort(p), np.arange(n_units)) for p in perms):
            raise SpecError(
                f"{where}: every row of permutations must permute 0..{n_units - 1}."
            )
        m = int(perms.shape[0])
    observed = float(score_labels(y))
    null = np.empty(m)
    for i, perm in enumerate(perms):
        permuted = unit_labels[perm]
        labels = permuted if unit_of_row is None else permuted[unit_of_row]
        null[i] = float(score_labels(labels))
    tolerance = _TIE_TOLERANCE * max(1.0, abs(observed))
    b = int(np.sum(null >= observed - tolerance))
    return FixedModelPermutation(
        observed=observed,
        p_value=(b + 1) / (m + 1),
        n_permutations=m,
        n_at_least=b,
        null_mean=float(np.mean(null)),
        null_sd=float(np.std(null, ddof=1)) if m > 1 else 0.0,
        scheme=scheme,
        note=note,
    )
