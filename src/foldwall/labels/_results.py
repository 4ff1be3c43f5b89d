"""Result records of the agreement statistics, and helpers they share.

Each statistic is written as a function of per-case sums with a weight per case.
With all weights 1 it is the published statistic; with bootstrap weights it is the
statistic of a resample of cases, so an interval costs one matrix product.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from foldwall.exceptions import SpecError
from foldwall.labels._bootstrap import percentile_interval
from foldwall.labels._table import RatingTable, rating_table

if TYPE_CHECKING:
    from collections.abc import Callable

    from numpy.typing import ArrayLike, NDArray

__all__ = [
    "AgreementEstimate",
    "AgreementReport",
    "PairAgreement",
    "RaterAgreement",
    "as_table",
    "check_level",
    "check_weights",
    "json_float",
    "make_estimate",
]

_WEIGHTS = (None, "linear", "quadratic")
_LEVELS = ("nominal", "ordinal", "interval")
_BOOTSTRAP_TEXT = (
    "percentile bootstrap over cases ({n} resamples; cases drawn with "
    "replacement, raters fixed)"
)


# --------------------------------------------------------------------- results


@dataclass(frozen=True)
class AgreementEstimate:
    """One agreement statistic with its bootstrap interval.

    Parameters
    ----------
    statistic : str
        ``"cohen_kappa"``, ``"fleiss_kappa"`` or ``"krippendorff_alpha"``.
    value : float
        The statistic on all cases; NaN when it is undefined (for instance when
        every rating is the same, so no disagreement was possible).
    ci : tuple of (float, float)
        Percentile bootstrap interval over cases; ``(nan, nan)`` when it could not
        be computed.
    confidence : float
        Coverage of ``ci``.
    n_cases : int
        Cases that entered the statistic (after the missing-rating rule).
    n_resamples : int
        Bootstrap resamples drawn.
    n_undefined : int
        Resamples in which the statistic was undefined; left out of ``ci``.
    method : str
        How the value and interval were computed, in words (weights, level of
        measurement, missing-rating rule, interval).
    """

    statistic: str
    value: float
    ci: tuple[float, float]
    confidence: float
    n_cases: int
    n_resamples: int
    n_undefined: int
    method: str

    def to_dict(self) -> dict[str, Any]:
        """The estimate as plain JSON-ready values (NaN becomes ``None``)."""
        return {
            "statistic": self.statistic,
            "value": json_float(self.value),
            "ci": [json_float(self.ci[0]), json_float(self.ci[1])],
            "confidence": self.confidence,
            "n_cases": self.n_cases,
            "n_resamples": self.n_resamples,
            "n_undefined": self.n_undefined,
            "method": self.method,
        }


@dataclass(frozen=True)
class PairAgreement:
    """Agreement of one pair of raters on the cases both rated."""

    first: str
    second: str
    estimate: AgreementEstimate

    def to_dict(self, *, brief: bool = False) -> dict[str, Any]:
        """Plain JSON-ready values; ``brief`` leaves out what every pair shares."""
        full = self.estimate.to_dict()
        if brief:
            for key in ("statistic", "confidence", "n_resamples", "method"):
                full.pop(key)
        return {"raters": [self.first, self.second], **full}


@dataclass(frozen=True)
class RaterAgreement:
    """Agreement of one rater with the others: the mean of the rater's pairs.

    Parameters
    ----------
    rater : str
        Rater name.
    value : float
        Mean of the pairwise statistic over the pairs that include this rater
        (pairs with an undefined value left out).
    ci : tuple of (float, float)
        Percentile bootstrap interval of that mean over the same resamples of
        cases as the pairs.
    n_pairs : int
        Pairs with a defined value that entered the mean.
    """

    rater: str
    value: float
    ci: tuple[float, float]
    n_pairs: int

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready values."""
        return {
            "rater": self.rater,
            "value": json_float(self.value),
            "ci": [json_float(self.ci[0]), json_float(self.ci[1])],
            "n_pairs": self.n_pairs,
        }


@dataclass(frozen=True)
class AgreementReport:
    """Every agreement statistic of one rating table.

    Parameters
    ----------
    scale : str
        Level of measurement of the ratings.
    pair_statistic : str
        Statistic used for pairs: ``"cohen_kappa"`` (nominal, ordinal) or
        ``"krippendorff_alpha"`` (interval).
    krippendorff : AgreementEstimate
        Krippendorff's alpha at the table's level of measurement, all raters.
    fleiss : AgreementEstimate or None
        Fleiss' kappa (nominal; ``None`` for interval ratings).
    pairs : tuple of PairAgreement
        Every pair of raters, in column order.
    per_rater : tuple of RaterAgreement
        Each rater's mean agreement with the others.
    """

    scale: str
    pair_statistic: str
    krippendorff: AgreementEstimate
    fleiss: AgreementEstimate | None
    pairs: tuple[PairAgreement, ...]
    per_rater: tuple[RaterAgreement, ...]

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready values."""
        return {
            "scale": self.scale,
            "pair_statistic": self.pair_statistic,
            "krippendorff_alpha": self.krippendorff.to_dict(),
            "fleiss_kappa": None if self.fleiss is None else self.fleiss.to_dict(),
            "pair_method": self.pairs[0].estimate.method if self.pairs else None,
            "pairs": [p.to_dict(brief=True) for p in self.pairs],
            "per_rater": [r.to_dict() for r in self.per_rater],
        }


def json_float(value: float) -> float | None:
    return float(value) if math.isfinite(value) else None


# ------------------------------------------------------------------- helpers


def as_table(ratings: RatingTable | ArrayLike, scale: str | None) -> RatingTable:
    """A :class:`RatingTable` as given, or one built from raw ratings."""
    if isinstance(ratings, RatingTable):
        return ratings
    return rating_table(ratings, scale=scale or "nominal")


def check_weights(weights: object, *, where: str) -> str | None:
    """Cohen's kappa weights: None, "linear" or "quadratic"."""
    if weights is None:
        return None
    if not isinstance(weights, str) or weights not in _WEIGHTS:
        raise SpecError(
            f"{where}: weights must be None, 'linear' or 'quadratic', got {weights!r}."
        )
    return weights


def check_level(level: object, table: RatingTable, *, where: str) -> str:
    level = table.scale if level is None else level
    if level not in _LEVELS:
        raise SpecError(
            f"{where}: level must be 'nominal', 'ordinal' or 'interval', got {level!r}."
        )
    return str(level)


def make_estimate(
    statistic: str,
    fn: Callable[[NDArray[np.float64]], NDArray[np.float64]],
    n_cases: int,
    n_used: int,
    boot: NDArray[np.float64],
    confidence: float,
    method: str,
) -> AgreementEstimate:
    value = float(fn(np.ones((1, n_cases)))[0])
    ci, n_undefined = percentile_interval(fn, boot, confidence)
    text = method
    if boot.shape[0]:
        text += "; interval: " + _BOOTSTRAP_TEXT.format(n=boot.shape[0])
    return AgreementEstimate(
        statistic=statistic,
        value=value,
        ci=ci,
        confidence=confidence,
        n_cases=n_used,
        n_resamples=int(boot.shape[0]),
        n_undefined=n_undefined,
        method=text,
    )
