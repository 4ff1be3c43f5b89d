"""Per-case label distribution, consensus label and clear/ambiguous strata.

Every rule here looks at one case's own ratings only, so the consensus of a case
never depends on other cases (which may sit in another fold).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from numbers import Real
from typing import TYPE_CHECKING, Any

import numpy as np

from foldwall.exceptions import SpecError
from foldwall.labels._results import as_table, json_float

if TYPE_CHECKING:
    from numpy.typing import ArrayLike, NDArray

    from foldwall.labels._table import RatingTable

__all__ = [
    "CONSENSUS_RULES",
    "LabelDistribution",
    "Strata",
    "ambiguity_strata",
    "check_rule",
    "consensus_from_codes",
    "consensus_from_values",
    "label_distribution",
    "rule_text",
]

CONSENSUS_RULES: dict[str, tuple[str, ...]] = {
    "majority": ("nominal", "ordinal"),
    "median": ("ordinal", "interval"),
    "mean": ("interval",),
}

_RULE_TEXT = {
    "majority": (
        "majority: the label most raters gave the case; a tie goes to the tied "
        "label listed first in the classes (the case is marked tied)"
    ),
    "median": (
        "median: the middle rating of the case; with an even number of ratings "
        "and two different middle ratings, the lower one (the case is marked tied)"
    ),
    "mean": "mean: the average of the case's ratings",
}

# Shares are ratios of small integers; this keeps 3/4 >= 0.75 exact in floats.
_SHARE_TOLERANCE = 1e-9


def rule_text(rule: str) -> str:
    """The documented wording of a consensus rule."""
    return _RULE_TEXT[rule]


def check_rule(rule: str | None, scale: str, *, where: str) -> str:
    """The consensus rule to use for a scale, or a one-line SpecError.

    ``None`` picks the default: majority (nominal), median (ordinal), mean
    (interval).
    """
    if rule is None:
        return {"nominal": "majority", "ordinal": "median", "interval": "mean"}[scale]
    if rule not in CONSENSUS_RULES:
        raise SpecError(
            f"{where}: consensus must be 'majority', 'median' or 'mean', got {rule!r}."
        )
    if scale not in CONSENSUS_RULES[rule]:
        fits = [r for r, scales in CONSENSUS_RULES.items() if scale in scales]
        raise SpecError(
            f"{where}: consensus {rule!r} does not fit {scale} ratings; use "
            f"{' or '.join(repr(r) for r in fits)}."
        )
    return rule


def consensus_from_codes(
    counts: NDArray[np.float64], rule: str
) -> tuple[NDArray[np.int64], NDArray[np.bool_]]:
    """Consensus category and tie flag per case from label counts.

    Parameters
    ----------
    counts : ndarray of shape (n_cases, n_categories)
        Ratings per category and case.
    rule : {"majority", "median"}
        See :func:`label_distribution`.

    Returns
    -------
    code : ndarray of shape (n_cases,)
        Index of the consensus category, ``-1`` for a case without ratings.
    tied : ndarray of shape (n_cases,)
        True where the rule had to break a tie.
    """
    m = counts.sum(axis=1)
    rated = m > 0
    if rule == "majority":
        top = counts.max(axis=1, keepdims=True)
        winners = (counts == top) & rated[:, None]
        code = np.argmax(winners, axis=1)
        tied = winners.sum(axis=1) > 1
    else:
        cum = np.cumsum(counts, axis=1)
        low_pos = np.floor((m - 1) / 2.0)
        high_pos = np.floor(m / 2.0)
        low = np.argmax(cum > low_pos[:, None], axis=1)
        high = np.argmax(cum > high_pos[:, None], axis=1)
        code = low
        tied = (low != high) & rated
    return (
        np.where(rated, code, -1).astype(np.int64),
        np.asarray(tied & rated, dtype=bool),
    )


def consensus_from_values(
    values: NDArray[np.float64], rule: str
) -> NDArray[np.float64]:
    """Consensus number per case (``NaN`` for a case without ratings)."""
    rated = ~np.isnan(values).all(axis=1)
    out = np.full(values.shape[0], np.nan)
    if rated.any():
        rows = values[rated]
        out[rated] = np.nanmean(rows, axis=1) if rule == "mean" else _median(rows)
    return out


def _median(rows: NDArray[np.float64]) -> NDArray[np.float64]:
    """Lower median of each row, ignoring NaN (the rule used for ordinal codes)."""
    s = np.sort(rows, axis=1)  # NaN sorts last
    m = (~np.isnan(rows)).sum(axis=1)
    pos = ((m - 1) // 2).astype(int)
    return np.asarray(s[np.arange(rows.shape[0]), pos], dtype=np.float64)


@dataclass(frozen=True)
class LabelDistribution:
    """How the ratings of each case spread over the labels, and their consensus.

    Parameters
    ----------
    scale : str
        Level of measurement of the ratings.
    rule : str
        Consensus rule: ``"majority"``, ``"median"`` or ``"mean"``.
    rule_text : str
        The rule in words, including how ties are broken.
    categories : tuple or None
        The labels, in order (``None`` for interval ratings).
    n_ratings : ndarray of shape (n_cases,)
        Ratings per case.
    shares : ndarray of shape (n_cases, n_categories) or None
        Share of each label among the case's ratings (nominal, ordinal).
    entropy : ndarray of shape (n_cases,) or None
        Shannon entropy of ``shares`` in bits: 0 when all raters agree,
        ``log2(n_categories)`` at most.
    consensus : ndarray of shape (n_cases,)
        Consensus label per case (labels from ``categories``, or numbers).
    consensus_code : ndarray of shape (n_cases,) or None
        Index of the consensus label in ``categories``.
    consensus_share : ndarray of shape (n_cases,) or None
        Share of the case's ratings that equal its consensus label.
    tied : ndarray of shape (n_cases,)
        True where the rule broke a tie.
    spread : ndarray of shape (n_cases,) or None
        Standard deviation (``ddof=0``) of the case's ratings (interval only).
    """

    scale: str
    rule: str
    rule_text: str
    categories: tuple[Any, ...] | None
    n_ratings: NDArray[np.int64]
    shares: NDArray[np.float64] | None
    entropy: NDArray[np.float64] | None
    consensus: NDArray[Any]
    consensus_code: NDArray[np.int64] | None
    consensus_share: NDArray[np.float64] | None
    tied: NDArray[np.bool_]
    spread: NDArray[np.float64] | None

    def summary(self) -> dict[str, Any]:
        """Counts and averages for results files (plain JSON-ready values)."""
        out: dict[str, Any] = {
            "rule": self.rule,
            "rule_text": self.rule_text,
            "n_cases": int(self.n_ratings.size),
            "n_tied": int(self.tied.sum()),
            "ratings_per_case": {
                "min": int(self.n_ratings.min()),
                "mean": float(self.n_ratings.mean()),
                "max": int(self.n_ratings.max()),
            },
        }
        if self.categories is not None and self.consensus_code is not None:
            k = len(self.categories)
            counts = np.bincount(self.consensus_code, minlength=k)
            out["consensus_counts"] = {
                str(c): int(n) for c, n in zip(self.categories, counts, strict=True)
            }
        if self.entropy is not None:
            out["mean_entropy_bits"] = float(self.entropy.mean())
        if self.consensus_share is not None:
            out["mean_consensus_share"] = float(self.consensus_share.mean())
        if self.spread is not None:
            out["mean_spread"] = json_float(float(np.nanmean(self.spread)))
        return out


def label_distribution(
    ratings: RatingTable | ArrayLike, *, rule: str | None = None
) -> LabelDistribution:
    """Share of each label per case, its entropy, and the consensus label.

    Parameters
    ----------
    ratings : RatingTable or array-like of shape (n_cases, n_raters)
        From :func:`rating_table`, or raw nominal ratings.
    rule : {"majority", "median", "mean"}, default=None
        Consensus rule. Default: majority (nominal), median (ordinal), mean
        (interval).

        - ``"majority"`` (nominal, ordinal): the label most raters gave. A tie
          goes to the tied label listed first in the table's categories (the
          classes, in the order given); the case is marked ``tied``. The rule
          reads the case's own ratings only, so one case's consensus never
          depends on other cases.
        - ``"median"`` (ordinal, interval): the middle rating; with an even
          number of ratings and two different middle ratings, the lower one
          (marked ``tied``).
        - ``"mean"`` (interval): the average rating.

    Returns
    -------
    LabelDistribution

    Raises
    ------
    SpecError
        If the rule is unknown or does not fit the scale.

    Examples
    --------
    >>> from foldwall.labels import label_distribution
    >>> d = label_distribution([["a", "a", "b"], ["a", "b", None]])
    >>> d.consensus.tolist(), d.consensus_share.tolist(), d.tied.tolist()
    (['a', 'a'], [0.6666666666666666, 0.5], [False, True])
    """
    table = as_table(ratings, None)
    rule_ = check_rule(rule, table.scale, where="label_distribution")
    n_ratings = table.observed.sum(axis=1).astype(np.int64)
    if table.scale == "interval" or table.codes is None:
        values = table.require_values("an interval consensus")
        consensus = consensus_from_values(values, rule_)
        with np.errstate(invalid="ignore"):
            spread = np.nanstd(values, axis=1)
        return LabelDistribution(
            scale=table.scale,
            rule=rule_,
            rule_text=rule_text(rule_),
            categories=None,
            n_ratings=n_ratings,
            shares=None,
            entropy=None,
            consensus=consensus,
            consensus_code=None,
            consensus_share=None,
            tied=np.zeros(table.n_cases, dtype=bool),
            spread=spread,
        )
    counts = table.counts()
    shares = counts / counts.sum(axis=1, keepdims=True)
    with np.errstate(divide="ignore", invalid="ignore"):
        terms = np.where(shares > 0, -shares * np.log2(shares), 0.0)
    code, tied = consensus_from_codes(counts, rule_)
    categories = table.categories or ()
    labels = np.empty(table.n_cases, dtype=object)
    labels[:] = [categories[c] for c in code]
    return LabelDistribution(
        scale=table.scale,
        rule=rule_,
        rule_text=rule_text(rule_),
        categories=table.categories,
        n_ratings=n_ratings,
        shares=shares,
        entropy=terms.sum(axis=1),
        consensus=labels,
        consensus_code=code,
        consensus_share=shares[np.arange(table.n_cases), code],
        tied=tied,
        spread=None,
    )


@dataclass(frozen=True)
class Strata:
    """Clear and ambiguous cases.

    Parameters
    ----------
    stratum : ndarray of shape (n_cases,)
        ``"clear"``, ``"ambiguous"`` or ``"one rating"`` (a case with a single
        rating, whose ambiguity cannot be seen; it belongs to neither stratum).
    rule : str
        The rule in words, with its threshold.
    """

    stratum: NDArray[np.str_]
    rule: str

    @property
    def clear(self) -> NDArray[np.bool_]:
        """True for clear cases."""
        return np.asarray(self.stratum == "clear")

    @property
    def ambiguous(self) -> NDArray[np.bool_]:
        """True for ambiguous cases."""
        return np.asarray(self.stratum == "ambiguous")

    def counts(self) -> dict[str, int]:
        """Number of cases in each stratum."""
        return {
            name: int((self.stratum == name).sum())
            for name in ("clear", "ambiguous", "one rating")
        }


def _check_fraction(value: object, *, name: str) -> float:
    if isinstance(value, bool) or not isinstance(value, Real):
        raise SpecError(f"{name} must be a number, got {value!r}.")
    v = float(value)
    if not (0.0 < v <= 1.0) or math.isnan(v):
        raise SpecError(
            f"{name} must lie in (0, 1] (e.g. 0.75: three raters in four agree), "
            f"got {v}."
        )
    return v


def ambiguity_strata(
    distribution: LabelDistribution,
    *,
    clear_share: float = 0.75,
    clear_spread: float | None = None,
) -> Strata:
    """Split the cases into clear and ambiguous ones.

    Parameters
    ----------
    distribution : LabelDistribution
        From :func:`label_distribution`.
    clear_share : float, default=0.75
        Nominal and ordinal ratings: a case is clear when at least this share of
        its ratings equals its consensus label (0.75: three raters in four).
        A tied case has a share of 0.5 or less, so it is ambiguous whenever
        ``clear_share`` is above 0.5.
    clear_spread : float, default=None
        Interval ratings (required there): a case is clear when the standard
        deviation of its ratings is at most this, in rating units.

    Returns
    -------
    Strata
        Cases with a single rating form their own group, ``"one rating"``.

    Raises
    ------
    SpecError
        On a threshold outside its range, or interval ratings without
        ``clear_spread``.
    """
    single = distribution.n_ratings < 2
    if distribution.consensus_share is not None:
        share = _check_fraction(clear_share, name="clear_share")
        clear = distribution.consensus_share >= share - _SHARE_TOLERANCE
        rule = (
            f"clear when at least {share:g} of a case's ratings equal its "
            f"consensus label ({distribution.rule}); otherwise ambiguous"
        )
    else:
        if clear_spread is None:
            raise SpecError(
                "clear_spread is needed for interval ratings: the largest standard "
                "deviation of a case's ratings that still counts as clear."
            )
        if (
            isinstance(clear_spread, bool)
            or not isinstance(clear_spread, Real)
            or not float(clear_spread) >= 0.0
        ):
            raise SpecError(
                f"clear_spread must be a number >= 0, got {clear_spread!r}."
            )
        assert distribution.spread is not None
        clear = distribution.spread <= float(clear_spread) + _SHARE_TOLERANCE
        rule = (
            f"clear when the standard deviation of a case's ratings is at most "
            f"{float(clear_spread):g}; otherwise ambiguous"
        )
    stratum = np.where(single, "one rating", np.where(clear, "clear", "ambiguous"))
    return Strata(stratum=stratum, rule=rule + "; cases with one rating apart")
