"""Case-resampling bootstrap for statistics that are sums over cases.

Every agreement statistic in this package is a function of sums over cases (counts
of label pairs, coincidences, squared differences). Resampling cases with
replacement is then the same as giving each case a multinomial weight: how often it
was drawn. One weight matrix serves every statistic of a table, so the intervals of
all statistics come from the same resamples.
"""

from __future__ import annotations

from numbers import Integral, Real
from typing import TYPE_CHECKING

import numpy as np

from foldwall.exceptions import SpecError

if TYPE_CHECKING:
    from collections.abc import Callable

    from numpy.typing import NDArray

    RandomState = int | np.random.Generator | np.random.SeedSequence | None

__all__ = [
    "check_confidence",
    "check_resamples",
    "percentile_interval",
    "resample_weights",
]

# Resamples are drawn in blocks so memory stays bounded for large tables.
_BLOCK = 500


def check_confidence(confidence: object, *, where: str) -> float:
    """A confidence level strictly between 0 and 1, or a one-line SpecError."""
    if (
        isinstance(confidence, bool)
        or not isinstance(confidence, Real)
        or not 0.0 < float(confidence) < 1.0
    ):
        raise SpecError(
            f"{where}: confidence must lie strictly between 0 and 1 (e.g. 0.95), "
            f"got {confidence!r}."
        )
    return float(confidence)


def check_resamples(n_resamples: object, *, where: str) -> int:
    """A number of bootstrap resamples (0 turns the interval off)."""
    if (
        isinstance(n_resamples, bool)
        or not isinstance(n_resamples, Integral)
        or int(n_resamples) < 0
    ):
        raise SpecError(
            f"{where}: n_resamples must be a whole number >= 0 (0 skips the "
            f"interval), got {n_resamples!r}."
        )
    return int(n_resamples)


def resample_weights(
    n_cases: int, n_resamples: int, random_state: RandomState
) -> NDArray[np.float64]:
    """How often each case is drawn in each bootstrap resample.

    Parameters
    ----------
    n_cases : int
        Number of cases.
    n_resamples : int
        Number of resamples.
    random_state : int, numpy.random.Generator, numpy.random.SeedSequence or None
        Seed for :func:`numpy.random.default_rng`.

    Returns
    -------
    ndarray of shape (n_resamples, n_cases)
        Each row sums to ``n_cases``: a draw of ``n_cases`` cases with replacement.
    """
    rng = np.random.default_rng(random_state)
    if n_resamples == 0:
        return np.zeros((0, n_cases))
    out = np.empty((n_resamples, n_cases))
    for start in range(0, n_resamples, _BLOCK):
        stop = min(n_resamples, start + _BLOCK)
        draws = rng.integers(0, n_cases, size=(stop - start, n_cases))
        for row, d in enumerate(draws):
            out[start + row] = np.bincount(d, minlength=n_cases)
    return out


def percentile_interval(
    statistic: Callable[[NDArray[np.float64]], NDArray[np.float64]],
    weights: NDArray[np.float64],
    confidence: float,
) -> tuple[tuple[float, float], int]:
    """Percentile interval of a weighted statistic over bootstrap weights.

    Parameters
    ----------
    statistic : callable
        Maps case weights of shape (n_resamples, n_cases) to one value per row.
    weights : ndarray of shape (n_resamples, n_cases)
        From :func:`resample_weights`.
    confidence : float
        Coverage of the two-sided interval.

    Returns
    -------
    ci : tuple of (float, float)
        ``(nan, nan)`` when fewer than two resamples give a finite value (or no
        resamples were asked for).
    n_undefined : int
        Resamples in which the statistic was undefined (e.g. every resampled
        rating the same); they are left out of the percentiles.
    """
    if weights.shape[0] == 0:
        return (float("nan"), float("nan")), 0
    values = np.concatenate(
        [statistic(weights[s : s + _BLOCK]) for s in range(0, weights.shape[0], _BLOCK)]
    )
    finite = values[np.isfinite(values)]
    n_undefined = int(values.size - finite.size)
    if finite.size < 2:
        return (float("nan"), float("nan")), n_undefined
    tail = (1.0 - confidence) / 2.0
    lo, hi = np.quantile(finite, [tail, 1.0 - tail])
    return (float(lo), float(hi)), n_undefined
