"""Cohen's kappa for pairs of raters and Fleiss' kappa for several.

Sources
-------
Cohen, J. (1960). A coefficient of agreement for nominal scales. *Educational and
Psychological Measurement* 20(1):37-46. Weighted kappa: Cohen, J. (1968). Weighted
kappa. *Psychological Bulletin* 70(4):213-220.

Fleiss, J. L. (1971). Measuring nominal scale agreement among many raters.
*Psychological Bulletin* 76(5):378-382.
"""

from __future__ import annotations

import itertools
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from foldwall.labels._bootstrap import (
    check_confidence,
    check_resamples,
    resample_weights,
)
from foldwall.labels._results import (
    AgreementEstimate,
    PairAgreement,
    as_table,
    check_weights,
    make_estimate,
)
from foldwall.labels._table import RatingTable, rating_table

if TYPE_CHECKING:
    from collections.abc import Callable

    from numpy.typing import ArrayLike, NDArray

    RandomState = int | np.random.Generator | np.random.SeedSequence | None

__all__ = [
    "cohen_kappa",
    "fleiss",
    "fleiss_kappa",
    "kappa_fn",
    "pair_kappa",
    "pairwise_kappa",
]


# ------------------------------------------------------------------- Cohen


def _disagreement_weights(k: int, weights: str | None) -> NDArray[np.float64]:
    """Cohen's disagreement weights between category positions."""
    i, j = np.indices((k, k))
    if weights is None:
        out = (i != j).astype(float)
    elif weights == "linear":
        out = np.abs(i - j).astype(float)
    else:
        out = ((i - j) ** 2).astype(float)
    return np.asarray(out, dtype=np.float64)


def kappa_fn(
    a: NDArray[np.int64],
    b: NDArray[np.int64],
    k: int,
    weights: str | None,
) -> Callable[[NDArray[np.float64]], NDArray[np.float64]]:
    """Weighted-sum form of Cohen's kappa for two code vectors (-1 = missing)."""
    both = (a >= 0) & (b >= 0)
    cell = np.where(both, np.maximum(a, 0) * k + np.maximum(b, 0), 0)
    onehot = np.zeros((a.size, k * k))
    rows = np.flatnonzero(both)
    onehot[rows, cell[rows]] = 1.0
    w = _disagreement_weights(k, weights)

    def fn(case_weights: NDArray[np.float64]) -> NDArray[np.float64]:
        table = (case_weights @ onehot).reshape(-1, k, k)
        total = table.sum(axis=(1, 2))
        rows_ = table.sum(axis=2)
        cols = table.sum(axis=1)
        with np.errstate(invalid="ignore", divide="ignore"):
            observed = np.einsum("bij,ij->b", table, w) / total
            expected = np.einsum("bi,bj,ij->b", rows_, cols, w) / total**2
            out = 1.0 - observed / expected
        return np.where((total > 0) & (expected > 0), out, np.nan)

    return fn


def cohen_kappa(
    first: ArrayLike,
    second: ArrayLike,
    *,
    categories: ArrayLike | None = None,
    weights: str | None = None,
    confidence: float = 0.95,
    n_resamples: int = 1000,
    random_state: RandomState = None,
) -> AgreementEstimate:
    """Cohen's kappa of two raters, plain or weighted, with a bootstrap interval.

    Parameters
    ----------
    first, second : array-like of shape (n_cases,)
        The two raters' labels; missing ratings are ``NaN`` or ``None``. Cases
        where either rating is missing are skipped.
    categories : array-like, default=None
        The possible labels in order (the order sets the weights). Default: the
        sorted labels found.
    weights : {None, "linear", "quadratic"}, default=None
        Disagreement weights between category positions ``i`` and ``j``: none
        (plain kappa), ``|i - j|`` or ``(i - j)**2``, as in scikit-learn's
        ``cohen_kappa_score``.
    confidence : float, default=0.95
        Coverage of the bootstrap interval.
    n_resamples : int, default=1000
        Bootstrap resamples of the cases (0: no interval).
    random_state : int, Generator, SeedSequence or None, default=None
        Seed of the resampling.

    Returns
    -------
    AgreementEstimate
        ``value`` is NaN when the two raters share no case, or when both give
        one and the same label to every shared case (chance agreement is then 1).

    Notes
    -----
    With ``p_o`` the observed and ``p_e`` the chance agreement from the two
    raters' own label shares, plain kappa is ``(p_o - p_e) / (1 - p_e)``; the
    weighted form is ``1 - sum(w * observed) / sum(w * expected)`` (Cohen 1968).

    Examples
    --------
    >>> from foldwall.labels import cohen_kappa
    >>> a = [0] * 20 + [0] * 5 + [1] * 10 + [1] * 15
    >>> b = [0] * 20 + [1] * 5 + [0] * 10 + [1] * 15
    >>> round(cohen_kappa(a, b, n_resamples=0).value, 4)  # Cohen (1960) style table
    0.4
    """
    where = "cohen_kappa"
    weights = check_weights(weights, where=where)
    confidence = check_confidence(confidence, where=where)
    n_resamples = check_resamples(n_resamples, where=where)
    pair = np.column_stack(
        [np.asarray(first, dtype=object), np.asarray(second, dtype=object)]
    )
    keep = ~np.asarray(pd.isna(pair), dtype=bool).any(axis=1)
    table = rating_table(
        pair[keep],
        scale="nominal",
        categories=None if categories is None else list(np.asarray(categories)),
        raters=["first", "second"],
    )
    return pair_kappa(
        table,
        0,
        1,
        weights,
        resample_weights(table.n_cases, n_resamples, random_state),
        confidence,
    )


def pair_kappa(
    table: RatingTable,
    i: int,
    j: int,
    weights: str | None,
    boot: NDArray[np.float64],
    confidence: float,
) -> AgreementEstimate:
    codes = table.require_codes("Cohen's kappa")
    a, b = codes[:, i], codes[:, j]
    k = len(table.categories or ())
    fn = kappa_fn(a, b, k, weights)
    kind = "plain" if weights is None else f"{weights} weights"
    method = (
        f"Cohen's kappa ({kind}; Cohen 1960, 1968) on the cases both raters rated; "
        f"cases where either rating is missing are skipped"
    )
    n_used = int(((a >= 0) & (b >= 0)).sum())
    return make_estimate(
        "cohen_kappa", fn, table.n_cases, n_used, boot, confidence, method
    )


def pairwise_kappa(
    ratings: RatingTable | ArrayLike,
    *,
    weights: str | None = None,
    confidence: float = 0.95,
    n_resamples: int = 1000,
    random_state: RandomState = None,
) -> tuple[PairAgreement, ...]:
    """Cohen's kappa for every pair of raters.

    Parameters
    ----------
    ratings : RatingTable or array-like of shape (n_cases, n_raters)
        From :func:`rating_table`, or raw nominal ratings.
    weights : {None, "linear", "quadratic"}, default=None
        See :func:`cohen_kappa`; weights are meant for ordinal ratings.
    confidence, n_resamples, random_state
        See :func:`cohen_kappa`. One set of resamples of the cases serves every
        pair.

    Returns
    -------
    tuple of PairAgreement
        Pairs in column order: (0, 1), (0, 2), ..., (1, 2), ...
    """
    where = "pairwise_kappa"
    table = as_table(ratings, None)
    weights = check_weights(weights, where=where)
    confidence = check_confidence(confidence, where=where)
    boot = resample_weights(
        table.n_cases, check_resamples(n_resamples, where=where), random_state
    )
    return tuple(
        PairAgreement(
            table.raters[i],
            table.raters[j],
            pair_kappa(table, i, j, weights, boot, confidence),
        )
        for i, j in itertools.combinations(range(table.n_raters), 2)
    )


# ------------------------------------------------------------------- Fleiss


def fleiss_fn(
    counts: NDArray[np.float64],
) -> Callable[[NDArray[np.float64]], NDArray[np.float64]]:
    m = counts.sum(axis=1)
    usable = m >= 2
    c = counts[usable]
    mu = m[usable]
    agree = (np.square(c).sum(axis=1) - mu) / (mu * (mu - 1.0))

    def fn(case_weights: NDArray[np.float64]) -> NDArray[np.float64]:
        w = case_weights[:, usable]
        total = w.sum(axis=1)
        with np.errstate(invalid="ignore", divide="ignore"):
            p_bar = (w @ agree) / total
            p_j = (w @ c) / (w @ mu)[:, None]
            p_e = np.square(p_j).sum(axis=1)
            out = (p_bar - p_e) / (1.0 - p_e)
        return np.where((total > 0) & (p_e < 1.0), out, np.nan)

    return fn


def fleiss_kappa(
    ratings: RatingTable | ArrayLike,
    *,
    confidence: float = 0.95,
    n_resamples: int = 1000,
    random_state: RandomState = None,
) -> AgreementEstimate:
    """Fleiss' kappa of several raters, with a bootstrap interval over cases.

    Parameters
    ----------
    ratings : RatingTable or array-like of shape (n_cases, n_raters)
        From :func:`rating_table`, or raw nominal ratings. Ordinal labels are
        treated as unordered.
    confidence : float, default=0.95
        Coverage of the bootstrap interval.
    n_resamples : int, default=1000
        Bootstrap resamples of the cases (0: no interval).
    random_state : int, Generator, SeedSequence or None, default=None
        Seed of the resampling.

    Returns
    -------
    AgreementEstimate

    Notes
    -----
    With ``n_ij`` the number of ratings of case ``i`` in category ``j`` and
    ``n_i`` the case's number of ratings,
    ``P_i = (sum_j n_ij**2 - n_i) / (n_i (n_i - 1))``,
    ``p_j = sum_i n_ij / sum_i n_i``, ``P = mean_i P_i``, ``P_e = sum_j p_j**2``
    and ``kappa = (P - P_e) / (1 - P_e)`` (Fleiss 1971).

    **Missing ratings.** Cases with fewer than 2 ratings are left out (they hold
    no pair to agree or disagree). Fleiss (1971) assumes every case has the same
    number of ratings, from raters who may differ between cases; when that holds
    after the missing ratings are removed, the value is exactly his. When the
    numbers differ, each case's ``P_i`` uses its own ``n_i`` and ``p_j`` pools
    all ratings; this reduces to Fleiss's formula for equal numbers but is not
    in his paper. Krippendorff's alpha (:func:`krippendorff_alpha`) is the
    statistic designed for missing ratings.
    """
    where = "fleiss_kappa"
    table = as_table(ratings, None)
    confidence = check_confidence(confidence, where=where)
    boot = resample_weights(
        table.n_cases, check_resamples(n_resamples, where=where), random_state
    )
    return fleiss(table, boot, confidence)


def fleiss(
    table: RatingTable, boot: NDArray[np.float64], confidence: float
) -> AgreementEstimate:
    counts = table.counts()
    m = counts.sum(axis=1)
    used = m[m >= 2]
    equal = used.size > 0 and bool(np.all(used == used[0]))
    if equal:
        counted = f"every case has {int(used[0])} ratings (Fleiss's own setting)"
    else:
        counted = (
            "cases have unequal numbers of ratings: each case's P_i uses its own "
            "count and p_j pools all ratings, an extension of Fleiss (1971); "
            "Krippendorff's alpha is built for missing ratings"
        )
    method = (
        f"Fleiss' kappa (Fleiss 1971), labels unordered; cases with fewer than 2 "
        f"ratings left out; {counted}"
    )
    return make_estimate(
        "fleiss_kappa",
        fleiss_fn(counts),
        table.n_cases,
        int(used.size),
        boot,
        confidence,
        method,
    )
