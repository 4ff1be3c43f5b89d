"""Krippendorff's alpha for nominal, ordinal and interval ratings with gaps.

Source: Krippendorff, K. (2011). Computing Krippendorff's alpha-reliability.
Annenberg School for Communication, University of Pennsylvania, Departmental Papers
(ASC). Written here from the coincidence-matrix formulas of that paper.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from foldwall.exceptions import SpecError
from foldwall.labels._bootstrap import (
    check_confidence,
    check_resamples,
    resample_weights,
)
from foldwall.labels._results import (
    AgreementEstimate,
    as_table,
    check_level,
    make_estimate,
)
from foldwall.labels._table import RatingTable

if TYPE_CHECKING:
    from collections.abc import Callable

    from numpy.typing import ArrayLike, NDArray

    RandomState = int | np.random.Generator | np.random.SeedSequence | None

__all__ = ["alpha", "alpha_fn", "krippendorff_alpha"]


# ------------------------------------------------------------ Krippendorff


def _alpha_categorical_fn(
    counts: NDArray[np.float64], level: str
) -> Callable[[NDArray[np.float64]], NDArray[np.float64]]:
    """Krippendorff's alpha from the coincidence matrix (nominal, ordinal)."""
    m = counts.sum(axis=1)
    usable = m >= 2
    c = counts[usable]
    mu = m[usable]
    k = c.shape[1]
    # Each case's share of the coincidence matrix: o_ck gets 1/(m_u - 1) for every
    # ordered pair of values (c, k) from two different raters.
    per_case = np.einsum("ui,uj->uij", c, c)
    per_case[:, np.arange(k), np.arange(k)] -= c
    per_case = (per_case / (mu - 1.0)[:, None, None]).reshape(c.shape[0], k * k)
    nominal = (1.0 - np.eye(k))[None, :, :]

    def fn(case_weights: NDArray[np.float64]) -> NDArray[np.float64]:
        w = case_weights[:, usable]
        o = (w @ per_case).reshape(-1, k, k)
        n_c = o.sum(axis=2)
        n = n_c.sum(axis=1)
        if level == "nominal":
            delta = np.broadcast_to(nominal, o.shape)
        else:
            # Ordinal metric: (sum_{g=c..k} n_g - (n_c + n_k)/2)^2 equals the
            # squared difference of the mid-ranks cumsum(n)_c - n_c / 2.
            mid = np.cumsum(n_c, axis=1) - n_c / 2.0
            delta = np.square(mid[:, :, None] - mid[:, None, :])
        observed = np.einsum("bij,bij->b", o, delta)
        expected = np.einsum("bi,bj,bij->b", n_c, n_c, delta)
        with np.errstate(invalid="ignore", divide="ignore"):
            out = 1.0 - (n - 1.0) * observed / expected
        return np.where(expected > 0, out, np.nan)

    return fn


def _alpha_interval_fn(
    values: NDArray[np.float64],
) -> Callable[[NDArray[np.float64]], NDArray[np.float64]]:
    """Krippendorff's alpha with the interval metric, in closed form.

    With the squared-difference metric the coincidence sums reduce to per-case
    sums: sum_ck o_ck (c - k)^2 = sum_u 2 (m_u S2_u - S1_u^2) / (m_u - 1) and
    sum_ck n_c n_k (c - k)^2 = 2 (n S2 - S1^2), where S1, S2 are sums of the
    values and of their squares.
    """
    observed = ~np.isnan(values)
    m = observed.sum(axis=1).astype(float)
    usable = m >= 2
    v = np.where(observed, values, 0.0)[usable]
    mu = m[usable]
    # Centring keeps n*S2 - S1^2 from cancelling; alpha does not change with it.
    if mu.size:
        v = np.where(observed[usable], v - v.sum() / mu.sum(), 0.0)
    s1 = v.sum(axis=1)
    s2 = np.square(v).sum(axis=1)
    within = (mu * s2 - s1**2) / (mu - 1.0) if mu.size else np.zeros(0)

    def fn(case_weights: NDArray[np.float64]) -> NDArray[np.float64]:
        w = case_weights[:, usable]
        n = w @ mu
        expected = n * (w @ s2) - (w @ s1) ** 2
        with np.errstate(invalid="ignore", divide="ignore"):
            out = 1.0 - (n - 1.0) * (w @ within) / expected
        return np.where(expected > 1e-12 * np.maximum(n, 1.0) ** 2, out, np.nan)

    return fn


def alpha_fn(
    table: RatingTable, level: str
) -> tuple[Callable[[NDArray[np.float64]], NDArray[np.float64]], int]:
    if level == "interval":
        values = table.require_values("Krippendorff's alpha with the interval metric")
        m = (~np.isnan(values)).sum(axis=1)
        return _alpha_interval_fn(values), int((m >= 2).sum())
    if level == "ordinal" and table.scale == "nominal":
        raise SpecError(
            "Krippendorff's alpha: level 'ordinal' needs ordered labels, but the "
            "table is nominal; build it with scale='ordinal' and the labels in order."
        )
    counts = table.counts()
    return _alpha_categorical_fn(counts, level), int((counts.sum(axis=1) >= 2).sum())


def krippendorff_alpha(
    ratings: RatingTable | ArrayLike,
    *,
    level: str | None = None,
    confidence: float = 0.95,
    n_resamples: int = 1000,
    random_state: RandomState = None,
) -> AgreementEstimate:
    """Krippendorff's alpha with missing ratings, with a bootstrap interval.

    Parameters
    ----------
    ratings : RatingTable or array-like of shape (n_cases, n_raters)
        From :func:`rating_table`, or raw ratings (read as nominal, or as
        interval when ``level="interval"``).
    level : {"nominal", "ordinal", "interval"}, default=None
        Metric of differences; default: the table's scale. ``"ordinal"`` needs
        an ordinal table; ``"interval"`` needs numeric ratings.
    confidence : float, default=0.95
        Coverage of the bootstrap interval.
    n_resamples : int, default=1000
        Bootstrap resamples of the cases (0: no interval).
    random_state : int, Generator, SeedSequence or None, default=None
        Seed of the resampling.

    Returns
    -------
    AgreementEstimate
        ``n_cases`` counts the pairable cases (two ratings or more). ``value`` is
        NaN when all pairable ratings are equal.

    Notes
    -----
    Built from the coincidence matrix (Krippendorff 2011): every case ``u`` with
    ``m_u >= 2`` ratings adds ``1 / (m_u - 1)`` to ``o_ck`` for each ordered pair
    of ratings ``(c, k)`` from two different raters. With ``n_c = sum_k o_ck``
    and ``n = sum_c n_c``,
    ``alpha = 1 - (n - 1) sum_ck o_ck d_ck / sum_ck n_c n_k d_ck``, where the
    squared difference ``d_ck`` is ``[c != k]`` (nominal),
    ``(sum_{g=c..k} n_g - (n_c + n_k) / 2)**2`` (ordinal) or ``(c - k)**2``
    (interval). Cases with one rating are not pairable and are left out.

    The interval is a percentile bootstrap over cases (raters fixed);
    Krippendorff's own bootstrap resamples pairs of values instead, so the two
    intervals differ.

    Examples
    --------
    >>> from foldwall.labels import krippendorff_alpha
    >>> ratings = [[1, 1, None, 1], [2, 2, 3, 2], [3, 3, 3, 3], [3, 3, 3, 3],
    ...            [2, 2, 2, 2], [1, 2, 3, 4], [4, 4, 4, 4], [1, 1, 2, 1],
    ...            [2, 2, 2, 2], [None, 5, 5, 5], [None, None, 1, 1],
    ...            [None, 3, None, None]]
    >>> round(krippendorff_alpha(ratings, n_resamples=0).value, 6)  # 113/152
    0.743421
    """
    where = "krippendorff_alpha"
    table = as_table(ratings, "interval" if level == "interval" else None)
    level_ = check_level(level, table, where=where)
    confidence = check_confidence(confidence, where=where)
    boot = resample_weights(
        table.n_cases, check_resamples(n_resamples, where=where), random_state
    )
    return alpha(table, level_, boot, confidence)


def alpha(
    table: RatingTable, level: str, boot: NDArray[np.float64], confidence: float
) -> AgreementEstimate:
    fn, n_used = alpha_fn(table, level)
    method = (
        f"Krippendorff's alpha, {level} metric, from the coincidence matrix "
        f"(Krippendorff 2011); missing ratings allowed, cases with one rating are "
        f"not pairable and left out"
    )
    return make_estimate(
        "krippendorff_alpha", fn, table.n_cases, n_used, boot, confidence, method
    )
