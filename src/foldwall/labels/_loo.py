"""Each rater against the consensus of the other raters (leave one rater out).

Scoring a rater against a consensus that includes the rater's own vote flatters
the rater, so every rater ``r`` is scored against the consensus of the raters
other than ``r``. The same references serve the model in
:func:`foldwall.labels.model_vs_raters`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from foldwall.exceptions import SpecError
from foldwall.labels._bootstrap import (
    check_confidence,
    check_resamples,
    percentile_interval,
    resample_weights,
)
from foldwall.labels._consensus import (
    check_rule,
    consensus_from_codes,
    consensus_from_values,
    rule_text,
)
from foldwall.labels._kappa import kappa_fn
from foldwall.labels._results import as_table, json_float
from foldwall.labels._table import RatingTable

if TYPE_CHECKING:
    from collections.abc import Callable

    from numpy.typing import ArrayLike, NDArray

    RandomState = int | np.random.Generator | np.random.SeedSequence | None
    WeightedStat = Callable[[NDArray[np.float64]], NDArray[np.float64]]

__all__ = [
    "REFERENCE_METRICS",
    "HumanReference",
    "LeaveOneOut",
    "RaterScore",
    "check_metric",
    "leave_one_rater_out",
    "rater_reference",
    "reference_arrays",
    "score_fn",
]

# metric -> (greater is better, scales it fits)
REFERENCE_METRICS: dict[str, tuple[bool, tuple[str, ...]]] = {
    "accuracy": (True, ("nominal", "ordinal")),
    "cohen_kappa": (True, ("nominal", "ordinal")),
    "cohen_kappa_linear": (True, ("ordinal",)),
    "cohen_kappa_quadratic": (True, ("ordinal",)),
    "mean_absolute_error": (False, ("ordinal", "interval")),
}
_DEFAULT_METRIC = {
    "nominal": "accuracy",
    "ordinal": "mean_absolute_error",
    "interval": "mean_absolute_error",
}
_KAPPA_WEIGHTS = {
    "cohen_kappa": None,
    "cohen_kappa_linear": "linear",
    "cohen_kappa_quadratic": "quadratic",
}


# ------------------------------------------------------------ leave one out


@dataclass(frozen=True)
class LeaveOneOut:
    """The consensus of the other raters, for every rater and case.

    Parameters
    ----------
    rule : str
        Consensus rule used (as in :func:`label_distribution`).
    raters : tuple of str
        Rater names; column ``r`` below leaves rater ``r`` out.
    consensus : ndarray of shape (n_cases, n_raters)
        Consensus of the raters other than ``r`` (labels, or numbers for interval
        ratings); ``None`` (or NaN) where none of the others rated the case.
    codes : ndarray of shape (n_cases, n_raters) or None
        The same as category indices, ``-1`` where undefined (nominal, ordinal).
    tied : ndarray of shape (n_cases, n_raters)
        True where the rule had to break a tie among the other raters.
    defined : ndarray of shape (n_cases, n_raters)
        True where at least one other rater rated the case.
    """

    rule: str
    raters: tuple[str, ...]
    consensus: NDArray[Any]
    codes: NDArray[np.int64] | None
    tied: NDArray[np.bool_]
    defined: NDArray[np.bool_]


def leave_one_rater_out(
    ratings: RatingTable | ArrayLike, *, rule: str | None = None
) -> LeaveOneOut:
    """For each rater, the consensus of the other raters on every case.

    Parameters
    ----------
    ratings : RatingTable or array-like of shape (n_cases, n_raters)
        From :func:`rating_table`, or raw nominal ratings.
    rule : {"majority", "median", "mean"}, default=None
        Consensus rule, with the same defaults and tie rules as
        :func:`label_distribution`.

    Returns
    -------
    LeaveOneOut

    Examples
    --------
    >>> from foldwall.labels import leave_one_rater_out
    >>> loo = leave_one_rater_out([["a", "a", "b"], ["b", "b", "b"]])
    >>> loo.consensus.tolist()  # column r: everyone but rater r
    [['a', 'a', 'a'], ['b', 'b', 'b']]
    """
    table = as_table(ratings, None)
    rule_ = check_rule(rule, table.scale, where="leave_one_rater_out")
    n, r = table.n_cases, table.n_raters
    tied = np.zeros((n, r), dtype=bool)
    if table.codes is not None and table.scale != "interval":
        k = len(table.categories or ())
        counts = table.counts()
        codes = np.full((n, r), -1, dtype=np.int64)
        for j in range(r):
            own = np.zeros((n, k))
            mine = table.codes[:, j] >= 0
            own[np.flatnonzero(mine), table.codes[mine, j]] = 1.0
            codes[:, j], tied[:, j] = consensus_from_codes(counts - own, rule_)
        labels = np.empty((n, r), dtype=object)
        categories = table.categories or ()
        for j in range(r):
            labels[:, j] = [None if c < 0 else categories[c] for c in codes[:, j]]
        return LeaveOneOut(
            rule=rule_,
            raters=table.raters,
            consensus=labels,
            codes=codes,
            tied=tied,
            defined=codes >= 0,
        )
    values = table.require_values("an interval consensus")
    out = np.full((n, r), np.nan)
    for j in range(r):
        others = np.delete(values, j, axis=1)
        out[:, j] = consensus_from_values(others, rule_)
    return LeaveOneOut(
        rule=rule_,
        raters=table.raters,
        consensus=out,
        codes=None,
        tied=tied,
        defined=~np.isnan(out),
    )


# ------------------------------------------------------------------ metrics


def check_metric(metric: str | None, scale: str, *, where: str) -> str:
    if metric is None:
        return _DEFAULT_METRIC[scale]
    if metric not in REFERENCE_METRICS:
        raise SpecError(
            f"{where}: metric must be one of {', '.join(map(repr, REFERENCE_METRICS))}"
            f", got {metric!r}."
        )
    if scale not in REFERENCE_METRICS[metric][1]:
        fits = [m for m, (_, s) in REFERENCE_METRICS.items() if scale in s]
        raise SpecError(
            f"{where}: metric {metric!r} does not fit {scale} ratings; use "
            f"{' or '.join(repr(m) for m in fits)}."
        )
    return metric


def score_fn(
    metric: str,
    given: NDArray[np.float64],
    reference: NDArray[np.float64],
    k: int,
) -> WeightedStat:
    """A weighted score of ``given`` against ``reference`` (NaN = leave out).

    For nominal and ordinal ratings both arrays hold category indices as floats.
    """
    both = ~np.isnan(given) & ~np.isnan(reference)
    if metric in _KAPPA_WEIGHTS:
        a = np.where(both, given, -1).astype(np.int64)
        b = np.where(both, reference, -1).astype(np.int64)
        return kappa_fn(a, b, k, _KAPPA_WEIGHTS[metric])
    g = np.where(both, given, 0.0)
    ref = np.where(both, reference, 0.0)
    if metric == "accuracy":
        per_case = (g == ref).astype(float)
    else:
        per_case = np.abs(g - ref)
    per_case = np.where(both, per_case, 0.0)
    present = both.astype(float)

    def fn(case_weights: NDArray[np.float64]) -> NDArray[np.float64]:
        total = case_weights @ present
        with np.errstate(invalid="ignore", divide="ignore"):
            out = (case_weights @ per_case) / total
        return np.where(total > 0, out, np.nan)

    return fn


def reference_arrays(
    table: RatingTable, loo: LeaveOneOut, drop_ties: bool
) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """Ratings and leave-one-out references as floats, NaN where not scored."""
    if loo.codes is not None:
        assert table.codes is not None
        given = np.where(table.codes >= 0, table.codes, np.nan).astype(float)
        ref = np.where(loo.codes >= 0, loo.codes, np.nan).astype(float)
    else:
        given = table.require_values("a score of interval ratings")
        ref = np.asarray(loo.consensus, dtype=float)
    if drop_ties:
        ref = np.where(loo.tied, np.nan, ref)
    return given, ref


# ------------------------------------------------------------- raters only


@dataclass(frozen=True)
class RaterScore:
    """One rater scored against the consensus of the other raters.

    Parameters
    ----------
    rater : str
        Rater name (``"typical rater"`` for the mean over raters).
    value : float
        Score on the cases this rater rated whose leave-one-out consensus is
        defined (and not tied, when ties are dropped).
    ci : tuple of (float, float)
        Percentile bootstrap interval over cases.
    n_cases : int
        Cases scored.
    """

    rater: str
    value: float
    ci: tuple[float, float]
    n_cases: int

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready values."""
        return {
            "rater": self.rater,
            "value": json_float(self.value),
            "ci": [json_float(self.ci[0]), json_float(self.ci[1])],
            "n_cases": self.n_cases,
        }


@dataclass(frozen=True)
class HumanReference:
    """How well each rater agrees with the consensus of the others.

    Parameters
    ----------
    metric : str
        Score used (see :data:`REFERENCE_METRICS`).
    greater_is_better : bool
        Direction in which the metric is preferred.
    rule : str
        Consensus rule in words.
    drop_ties : bool
        Whether cases with a tied leave-one-out consensus were left out.
    raters : tuple of RaterScore
        One per rater.
    typical : RaterScore
        Mean of the raters' scores (each rater counts once), with an interval
        from the same resamples.
    confidence : float
        Coverage of the intervals.
    method : str
        How the scores and intervals were computed, in words.
    """

    metric: str
    greater_is_better: bool
    rule: str
    drop_ties: bool
    raters: tuple[RaterScore, ...]
    typical: RaterScore
    confidence: float
    method: str

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready values."""
        return {
            "metric": self.metric,
            "greater_is_better": self.greater_is_better,
            "rule": self.rule,
            "drop_ties": self.drop_ties,
            "raters": [r.to_dict() for r in self.raters],
            "typical": self.typical.to_dict(),
            "confidence": self.confidence,
            "method": self.method,
        }


def _mean_of(fns: list[WeightedStat]) -> WeightedStat:
    def fn(w: NDArray[np.float64]) -> NDArray[np.float64]:
        stacked = np.column_stack([f(w) for f in fns])
        ok = np.isfinite(stacked)
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.asarray(np.where(ok, stacked, 0.0).sum(axis=1) / ok.sum(axis=1))

    return fn


def rater_reference(
    ratings: RatingTable | ArrayLike,
    *,
    metric: str | None = None,
    rule: str | None = None,
    drop_ties: bool = True,
    confidence: float = 0.95,
    n_resamples: int = 1000,
    random_state: RandomState = None,
) -> HumanReference:
    """Score each rater against the consensus of the other raters.

    Parameters
    ----------
    ratings : RatingTable or array-like of shape (n_cases, n_raters)
        From :func:`rating_table`, or raw nominal ratings.
    metric : str, default=None
        ``"accuracy"`` (share of cases where the rating equals the reference),
        ``"cohen_kappa"``, ``"cohen_kappa_linear"``, ``"cohen_kappa_quadratic"``
        or ``"mean_absolute_error"`` (in category steps for ordinal ratings).
        Default: accuracy (nominal), mean absolute error (ordinal, interval).
    rule : {"majority", "median", "mean"}, default=None
        Consensus rule of the reference (see :func:`label_distribution`).
    drop_ties : bool, default=True
        Leave out cases whose leave-one-out consensus needed a tie broken. A
        broken tie would favour whoever leans to the label listed first.
    confidence : float, default=0.95
        Coverage of the bootstrap intervals.
    n_resamples : int, default=1000
        Bootstrap resamples of the cases (0: no intervals).
    random_state : int, Generator, SeedSequence or None, default=None
        Seed of the resampling.

    Returns
    -------
    HumanReference
    """
    where = "rater_reference"
    table = as_table(ratings, None)
    metric_ = check_metric(metric, table.scale, where=where)
    rule_ = check_rule(rule, table.scale, where=where)
    confidence = check_confidence(confidence, where=where)
    boot = resample_weights(
        table.n_cases, check_resamples(n_resamples, where=where), random_state
    )
    loo = leave_one_rater_out(table, rule=rule_)
    given, ref = reference_arrays(table, loo, bool(drop_ties))
    k = len(table.categories or ())
    ones = np.ones((1, table.n_cases))
    fns = []
    scores = []
    for j, name in enumerate(table.raters):
        fn = score_fn(metric_, given[:, j], ref[:, j], k)
        fns.append(fn)
        ci, _ = percentile_interval(fn, boot, confidence)
        n_used = int((~np.isnan(given[:, j]) & ~np.isnan(ref[:, j])).sum())
        scores.append(RaterScore(name, float(fn(ones)[0]), ci, n_used))
    typical_fn = _mean_of(fns)
    ci, _ = percentile_interval(typical_fn, boot, confidence)
    typical = RaterScore(
        "typical rater",
        float(typical_fn(ones)[0]),
        ci,
        int((~np.isnan(given) & ~np.isnan(ref)).any(axis=1).sum()),
    )
    method = (
        f"each rater's {metric_} against the {rule_} consensus of the other raters "
        f"(leave one rater out){'; cases with a tied reference left out' if drop_ties else ''}"
        f"; typical rater = mean over raters; intervals: percentile bootstrap over "
        f"cases ({boot.shape[0]} resamples)"
    )
    return HumanReference(
        metric=metric_,
        greater_is_better=REFERENCE_METRICS[metric_][0],
        rule=rule_text(rule_),
        drop_ties=bool(drop_ties),
        raters=tuple(scores),
        typical=typical,
        confidence=confidence,
        method=method,
    )
