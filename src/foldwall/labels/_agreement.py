"""All agreement statistics of a rating table, from one set of resamples."""

from __future__ import annotations

import itertools
import math
import warnings
from typing import TYPE_CHECKING

import numpy as np

from foldwall.exceptions import LowAgreementWarning, SpecError
from foldwall.labels._alpha import alpha, alpha_fn
from foldwall.labels._bootstrap import (
    check_confidence,
    check_resamples,
    percentile_interval,
    resample_weights,
)
from foldwall.labels._kappa import fleiss, kappa_fn, pair_kappa
from foldwall.labels._results import (
    AgreementEstimate,
    AgreementReport,
    PairAgreement,
    RaterAgreement,
    as_table,
    check_weights,
)
from foldwall.labels._table import RatingTable

if TYPE_CHECKING:
    from collections.abc import Callable

    from numpy.typing import ArrayLike, NDArray

    RandomState = int | np.random.Generator | np.random.SeedSequence | None

__all__ = [
    "LANDIS_KOCH_BANDS",
    "LANDIS_KOCH_SOURCE",
    "LowAgreementWarning",
    "agreement",
    "landis_koch_band",
    "low_agreement_message",
    "warn_low_agreement",
]


# ------------------------------------------------------------------ summary


def agreement(
    ratings: RatingTable | ArrayLike,
    *,
    weights: str | None = "default",
    confidence: float = 0.95,
    n_resamples: int = 1000,
    random_state: RandomState = None,
) -> AgreementReport:
    """All agreement statistics of a rating table, from one set of resamples.

    Parameters
    ----------
    ratings : RatingTable or array-like of shape (n_cases, n_raters)
        From :func:`rating_table`, or raw nominal ratings.
    weights : {"default", None, "linear", "quadratic"}, default="default"
        Weights of the pairwise Cohen's kappa. ``"default"`` means none for
        nominal ratings and quadratic for ordinal ratings (the usual choice for
        ordered grades). Not used for interval ratings.
    confidence : float, default=0.95
        Coverage of every bootstrap interval.
    n_resamples : int, default=1000
        Bootstrap resamples of the cases (0: no intervals). The same resamples
        serve every statistic.
    random_state : int, Generator, SeedSequence or None, default=None
        Seed of the resampling.

    Returns
    -------
    AgreementReport
        Krippendorff's alpha at the table's level; Fleiss' kappa (nominal,
        ordinal); for every pair of raters Cohen's kappa (nominal, ordinal) or
        Krippendorff's alpha (interval); and each rater's mean pairwise value
        with the others, with an interval from the same resamples.
    """
    where = "agreement"
    table = as_table(ratings, None)
    if weights == "default":
        weights = "quadratic" if table.scale == "ordinal" else None
    weights = check_weights(weights, where=where)
    confidence = check_confidence(confidence, where=where)
    boot = resample_weights(
        table.n_cases, check_resamples(n_resamples, where=where), random_state
    )
    alpha_est = alpha(table, table.scale, boot, confidence)
    fleiss_est = None if table.scale == "interval" else fleiss(table, boot, confidence)

    pair_fns: list[Callable[[NDArray[np.float64]], NDArray[np.float64]]] = []
    pairs: list[PairAgreement] = []
    index = list(itertools.combinations(range(table.n_raters), 2))
    for i, j in index:
        if table.scale == "interval":
            values = table.require_values("Krippendorff's alpha")
            two = RatingTable(
                scale="interval",
                raters=(table.raters[i], table.raters[j]),
                cases=table.cases,
                categories=None,
                codes=None,
                values=values[:, [i, j]],
            )
            fn, _ = alpha_fn(two, "interval")
            est = alpha(two, "interval", boot, confidence)
        else:
            codes = table.require_codes("Cohen's kappa")
            fn = kappa_fn(
                codes[:, i], codes[:, j], len(table.categories or ()), weights
            )
            est = pair_kappa(table, i, j, weights, boot, confidence)
        pair_fns.append(fn)
        pairs.append(PairAgreement(table.raters[i], table.raters[j], est))

    per_rater = []
    for r, name in enumerate(table.raters):
        mine = [p for p, (i, j) in enumerate(index) if r in (i, j)]
        fns = [pair_fns[p] for p in mine]

        def mean_fn(
            w: NDArray[np.float64],
            fns: list[Callable[[NDArray[np.float64]], NDArray[np.float64]]] = fns,
        ) -> NDArray[np.float64]:
            stacked = np.column_stack([f(w) for f in fns])
            ok = np.isfinite(stacked)
            with np.errstate(invalid="ignore", divide="ignore"):
                return np.asarray(
                    np.where(ok, stacked, 0.0).sum(axis=1) / ok.sum(axis=1)
                )

        values = np.array([pairs[p].estimate.value for p in mine])
        finite = values[np.isfinite(values)]
        ci, _ = percentile_interval(mean_fn, boot, confidence)
        per_rater.append(
            RaterAgreement(
                rater=name,
                value=float(finite.mean()) if finite.size else float("nan"),
                ci=ci,
                n_pairs=int(finite.size),
            )
        )
    return AgreementReport(
        scale=table.scale,
        pair_statistic=(
            "krippendorff_alpha" if table.scale == "interval" else "cohen_kappa"
        ),
        krippendorff=alpha_est,
        fleiss=fleiss_est,
        pairs=tuple(pairs),
        per_rater=tuple(per_rater),
    )


# ------------------------------------------------------------ low agreement

# Landis & Koch (1977) bands for kappa, read as half-open intervals on two
# decimals: 0.00-0.20 slight, 0.21-0.40 fair, and so on. They are a convention
# offered by the authors, not something derived from data.
LANDIS_KOCH_BANDS: tuple[tuple[float, str], ...] = (
    (0.0, "poor"),
    (0.21, "slight"),
    (0.41, "fair"),
    (0.61, "moderate"),
    (0.81, "substantial"),
    (math.inf, "almost perfect"),
)
LANDIS_KOCH_SOURCE = "Landis & Koch (1977) bands, a convention rather than a derivation"


def landis_koch_band(value: float) -> str:
    """Name of the Landis & Koch (1977) band that an agreement value falls in.

    Parameters
    ----------
    value : float
        A kappa (or, by the same convention, Krippendorff's alpha).

    Returns
    -------
    str
        ``"poor"`` (below 0), ``"slight"`` (0 to 0.20), ``"fair"`` (0.21 to
        0.40), ``"moderate"`` (0.41 to 0.60), ``"substantial"`` (0.61 to 0.80),
        ``"almost perfect"`` (0.81 to 1), or ``"undefined"`` for NaN. Values
        between two printed limits (0.205) belong to the lower band.

    Notes
    -----
    Landis, J. R., Koch, G. G. (1977). The measurement of observer agreement for
    categorical data. *Biometrics* 33(1):159-174. The authors present the bands as
    a convention for discussion; they are not derived from data, and other
    authors draw other lines. Report the value and its interval, not only the band.

    Examples
    --------
    >>> from foldwall.labels import landis_koch_band
    >>> landis_koch_band(0.43), landis_koch_band(0.2), landis_koch_band(-0.1)
    ('moderate', 'slight', 'poor')
    """
    if math.isnan(value):
        return "undefined"
    for upper, name in LANDIS_KOCH_BANDS:
        if value < upper:
            return name
    return LANDIS_KOCH_BANDS[-1][1]


def low_agreement_message(
    report: AgreementReport, *, threshold: float = 0.41
) -> str | None:
    """One line that warns of low agreement, or ``None`` when agreement is not low.

    Parameters
    ----------
    report : AgreementReport
        From :func:`agreement`.
    threshold : float, default=0.41
        Agreement below this is low. The default is the lower edge of the
        "moderate" band of Landis & Koch (1977): slight, fair or poor agreement
        is low. A convention; pick your own and say so.

    Returns
    -------
    str or None
        A message naming Krippendorff's alpha (and Fleiss' kappa when it is below
        the threshold too), its interval, its band and where the bands come from.
        ``None`` when Krippendorff's alpha is at or above the threshold or
        undefined.
    """
    if isinstance(threshold, bool) or not isinstance(threshold, (int, float)):
        raise SpecError(
            f"low_agreement_message: threshold must be a number, got {threshold!r}."
        )
    alpha_ = report.krippendorff
    if not (math.isfinite(alpha_.value) and alpha_.value < threshold):
        return None
    parts = [f"Krippendorff's alpha {_fmt_estimate(alpha_)}"]
    fleiss_ = report.fleiss
    if (
        fleiss_ is not None
        and math.isfinite(fleiss_.value)
        and fleiss_.value < threshold
    ):
        parts.append(f"Fleiss' kappa {_fmt_estimate(fleiss_)}")
    band = landis_koch_band(alpha_.value)
    return (
        f"low agreement between the raters: {' and '.join(parts)}, below "
        f"{threshold:g} ('{band}' in the {LANDIS_KOCH_SOURCE}); labels this noisy "
        f"cap what any model can score - read the scores on clear and ambiguous "
        f"cases and the human reference."
    )


def _fmt_estimate(est: AgreementEstimate) -> str:
    lo, hi = est.ci
    if math.isfinite(lo) and math.isfinite(hi):
        return f"{est.value:.2f} ({est.confidence * 100:g}% CI {lo:.2f} to {hi:.2f})"
    return f"{est.value:.2f}"


def warn_low_agreement(
    report: AgreementReport, *, threshold: float = 0.41, stacklevel: int = 2
) -> str | None:
    """Issue one :class:`LowAgreementWarning` when agreement is low.

    Parameters
    ----------
    report : AgreementReport
        From :func:`agreement`.
    threshold : float, default=0.41
        See :func:`low_agreement_message`.
    stacklevel : int, default=2
        Passed to :func:`warnings.warn` so the warning points at the caller.

    Returns
    -------
    str or None
        The message that was warned, or ``None`` when agreement is not low.
    """
    message = low_agreement_message(report, threshold=threshold)
    if message is not None:
        warnings.warn(message, LowAgreementWarning, stacklevel=stacklevel)
    return message
