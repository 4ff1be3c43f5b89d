"""Plain-language sentences generated from the numbers of a model comparison.

The sentence may never say more than the numbers allow: a direction is stated only
when the adjusted p-value is below ``alpha`` *and* the confidence interval lies
entirely on the same side of zero as the mean difference.
"""

from __future__ import annotations

import math
from numbers import Integral, Real

from foldwall.exceptions import SpecError

__all__ = ["comparison_statement"]

_CORRECTION_LABELS = {
    "holm": "Holm",
    "bonferroni": "Bonferroni",
    "bh": "Benjamini-Hochberg",
    "none": "none",
}


def _format_p(p: float, alpha: float) -> str:
    """Return ``"= 0.012"`` style text, or ``"< 0.001"``.

    Two significant digits, with more when rounding would put the printed value
    on the other side of ``alpha`` than the true one (0.0496 must not print as
    0.05 next to a claim).
    """
    if p < 0.001:
        return "< 0.001"
    text = ""
    for digits in range(2, 7):
        text = f"{p:.{digits}g}"
        if (float(text) < alpha) == (p < alpha):
            break
    return f"= {text}"


def _decimals(*values: float) -> int:
    """Decimals so that the largest magnitude shows at least 2 significant digits."""
    scale = max((abs(v) for v in values if math.isfinite(v)), default=0.0)
    if scale == 0.0 or scale >= 0.01:
        return 3
    return min(8, max(3, 1 - math.floor(math.log10(scale))))


def _fmt(value: float, decimals: int) -> str:
    if not math.isfinite(value):
        return "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf")
    text = f"{value:.{decimals}f}"
    # "-0.000" reads as a sign where there is none.
    if float(text) == 0.0:
        text = text.lstrip("-")
    return text


def _format_number(value: float) -> str:
    return f"{value:g}"


def _check_name(value: object, *, label: str) -> str:
    if not isinstance(value, str) or not value.strip():
        raise SpecError(
            f"comparison_statement: {label} must be a non-empty string, got {value!r}."
        )
    return value


def _check_real(value: object, *, label: str) -> float:
    if isinstance(value, bool) or not isinstance(value, Real):
        raise SpecError(
            f"comparison_statement: {label} must be a number, got {value!r}."
        )
    return float(value)


def comparison_statement(
    *,
    a: str,
    b: str,
    metric: str,
    mean_difference: float,
    ci: tuple[float, float],
    p_adjusted: float,
    alpha: float,
    correction: str,
    family_size: int,
    greater_is_better: bool = True,
    confidence: float = 0.95,
) -> str:
    """Write one plain sentence that reports a comparison of two models.

    Parameters
    ----------
    a : str
        Name of the first model.
    b : str
        Name of the second model.
    metric : str
        Name of the score (e.g. ``"roc_auc"``).
    mean_difference : float
        Mean of ``score(a) - score(b)`` over the splits.
    ci : tuple of (float, float)
        Confidence interval ``(lower, upper)`` for ``mean_difference``.
    p_adjusted : float
        p-value after correction for the ``family_size`` comparisons, in
        ``[0, 1]``. NaN means the comparison could not be tested; no claim is
        then made.
    alpha : float
        Level below which ``p_adjusted`` counts as evidence, strictly between
        0 and 1.
    correction : str
        Method used to adjust the p-value: ``"holm"``, ``"bonferroni"``,
        ``"bh"`` or ``"none"``; any other text is printed as given.
    family_size : int
        Number of comparisons the correction was applied over, at least 1.
    greater_is_better : bool, default=True
        Direction in which the metric is preferred. The sentence always reports
        the numbers as they are ("scored higher" means a larger score); when
        lower is preferred and a difference is claimed, the sentence says so.
    confidence : float, default=0.95
        Coverage of ``ci``, used only for its label ("95% CI").

    Returns
    -------
    str
        One sentence. It says that ``a`` scored higher (or lower) than ``b``
        only when ``p_adjusted < alpha`` and ``ci`` excludes zero on the side of
        ``mean_difference``. When the two criteria disagree it calls the
        evidence inconclusive; when neither holds it says the study shows no
        reliable difference. It never ranks the models in words such as
        "better" or "superior".

    Raises
    ------
    SpecError
        On empty names, non-numeric values, ``ci`` with lower > upper,
        ``p_adjusted`` outside ``[0, 1]``, ``alpha`` or ``confidence`` outside
        (0, 1), or ``family_size < 1``.

    Examples
    --------
    >>> from foldwall.compare import comparison_statement
    >>> print(comparison_statement(
    ...     a="svc", b="logreg", metric="roc_auc", mean_difference=0.042,
    ...     ci=(0.011, 0.073), p_adjusted=0.012, alpha=0.05, correction="holm",
    ...     family_size=3))
    svc scored higher than logreg on roc_auc by 0.042 (95% CI 0.011 to 0.073); \
the difference holds after Holm correction over 3 comparisons (adjusted p = 0.012).
    """
    a = _check_name(a, label="a")
    b = _check_name(b, label="b")
    metric = _check_name(metric, label="metric")
    correction = _check_name(correction, label="correction")
    diff = _check_real(mean_difference, label="mean_difference")
    try:
        lo_raw, hi_raw = ci
    except (TypeError, ValueError) as exc:
        raise SpecError(
            f"comparison_statement: ci must be a pair (lower, upper), got {ci!r}."
        ) from exc
    lo = _check_real(lo_raw, label="ci[0]")
    hi = _check_real(hi_raw, label="ci[1]")
    if lo > hi:
        raise SpecError(
            f"comparison_statement: ci must be (lower, upper) with lower <= upper, "
            f"got ({lo}, {hi})."
        )
    p = _check_real(p_adjusted, label="p_adjusted")
    if not math.isnan(p) and not 0.0 <= p <= 1.0:
        raise SpecError(
            f"comparison_statement: p_adjusted must lie in [0, 1] (or be NaN when "
            f"untested), got {p}."
        )
    alpha_ = _check_real(alpha, label="alpha")
    if not 0.0 < alpha_ < 1.0:
        raise SpecError(
            f"comparison_statement: alpha must lie strictly between 0 and 1 "
            f"(e.g. 0.05), got {alpha_}."
        )
    conf = _check_real(confidence, label="confidence")
    if not 0.0 < conf < 1.0:
        raise SpecError(
            f"comparison_statement: confidence must lie strictly between 0 and 1, "
            f"got {conf}."
        )
    if (
        isinstance(family_size, bool)
        or not isinstance(family_size, Integral)
        or family_size < 1
    ):
        raise SpecError(
            f"comparison_statement: family_size must be an integer >= 1, got "
            f"{family_size!r}."
        )
    k = int(family_size)

    ci_label = f"{conf * 100:g}% CI"
    label = _CORRECTION_LABELS.get(correction.lower(), correction)
    finite = all(math.isfinite(v) for v in (diff, lo, hi))
    tested = not math.isnan(p)
    p_below = tested and p < alpha_
    ci_same_side = finite and ((diff > 0 and lo > 0) or (diff < 0 and hi < 0))
    ci_finite = math.isfinite(lo) and math.isfinite(hi)
    ci_excludes_zero = ci_finite and (lo > 0 or hi < 0)

    # What the p-value is, in words, for every branch.
    p_text = _format_p(p, alpha_) if tested else ""
    if k == 1:
        p_clause = f"p {p_text} (single comparison)"
    elif label == "none":
        p_clause = f"p {p_text} (not corrected for {k} comparisons)"
    else:
        p_clause = f"adjusted p {p_text} ({label}, {k} comparisons)"

    if p_below and ci_same_side:
        dec = _decimals(diff, lo, hi)
        # Report the size of the gap with its interval on the same scale.
        size, s_lo, s_hi = (diff, lo, hi) if diff > 0 else (-diff, -hi, -lo)
        direction = "higher" if diff > 0 else "lower"
        preference = "" if greater_is_better else "; lower is preferred for this metric"
        if k == 1:
            holds = f"the difference holds for this single comparison (p {p_text})"
        elif label == "none":
            holds = (
                f"the difference holds without correction for {k} comparisons "
                f"(p {p_text})"
            )
        else:
            holds = (
                f"the difference holds after {label} correction over {k} "
                f"comparisons (adjusted p {p_text})"
            )
        return (
            f"{a} scored {direction} than {b} on {metric} by {_fmt(size, dec)} "
            f"({ci_label} {_fmt(s_lo, dec)} to {_fmt(s_hi, dec)}{preference}); "
            f"{holds}."
        )

    dec = _decimals(diff, lo, hi)
    numbers = (
        f"{a} minus {b} on {metric}: mean difference {_fmt(diff, dec)} "
        f"({ci_label} {_fmt(lo, dec)} to {_fmt(hi, dec)})"
    )
    if not tested:
        return (
            f"{numbers}; no p-value could be computed, so this study makes no claim "
            f"about a difference between {a} and {b}."
        )
    if p_below:
        # Below alpha, but the interval straddles zero (or, for an interval not
        # centred on the mean, sits on the other side of zero).
        if not math.isfinite(diff):
            where_ci = "the mean difference is not finite"
        elif not ci_finite:
            where_ci = "no finite interval is available"
        elif not ci_excludes_zero:
            where_ci = "the interval includes zero"
        else:
            where_ci = "the interval and the mean lie on different sides of zero"
        return (
            f"{numbers}; {p_clause} is below {_format_number(alpha_)} but "
            f"{where_ci}, so the evidence is inconclusive and this study makes no "
            f"claim about a difference between {a} and {b}."
        )
    if ci_excludes_zero:
        return (
            f"{numbers}; {p_clause} is not below {_format_number(alpha_)} although "
            f"the interval excludes zero, so the evidence is inconclusive and this "
            f"study makes no claim about a difference between {a} and {b}."
        )
    return (
        f"{numbers}; {p_clause}: this study shows no reliable difference between "
        f"{a} and {b}."
    )
