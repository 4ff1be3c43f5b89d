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
    reason: str | None = None,
    detectable_difference: float | None = None,
    power: float = 0.8,
    smallest_difference: float | None = None,
    equivalence_p: float | None = None,
    direction_words: tuple[str, str] | None = None,
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
    reason : str, default=None
        Why the comparison cannot be assessed (for example
        :func:`foldwall.compare.no_spread_reason`). When given, the sentence
        reports the reason and makes no claim, whatever the other numbers say.
    detectable_difference : float, default=None
        Smallest difference the test detects with ``power`` (from
        :func:`foldwall.compare.detectable_difference`). When given, a result
        that is not below ``alpha`` is worded as "could not detect a difference"
        with this size, never as evidence of no difference.
    power : float, default=0.8
        The power ``detectable_difference`` was computed for (its label).
    smallest_difference : float, default=None
        Smallest relevant difference (> 0, units of the metric). With
        ``equivalence_p`` the sentence says whether a difference is smaller than
        this size (two one-sided tests, Schuirmann 1987).
    equivalence_p : float, default=None
        p-value of the equivalence test within ``+/- smallest_difference``
        (:func:`foldwall.compare.equivalence_test`); below ``alpha`` means
        equivalence is shown.
    direction_words : tuple of (str, str), default=None
        Words for a positive and a negative difference in the units of
        ``mean_difference``, e.g. ``("higher ROC AUC", "lower ROC AUC")`` or
        ``("lower mean absolute error", "higher mean absolute error")`` for a
        negated loss. The claim then reads "a had <words> than b by ...". When
        given, the "lower is preferred" remark is left to the words.

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
    if reason is not None:
        reason = _check_name(reason, label="reason")
    dd = None
    if detectable_difference is not None:
        dd = _check_real(detectable_difference, label="detectable_difference")
    power_ = _check_real(power, label="power")
    if not 0.0 < power_ < 1.0:
        raise SpecError(
            f"comparison_statement: power must lie strictly between 0 and 1, got "
            f"{power_}."
        )
    delta = None
    if smallest_difference is not None:
        delta = _check_real(smallest_difference, label="smallest_difference")
        if not (math.isfinite(delta) and delta > 0.0):
            raise SpecError(
                "comparison_statement: smallest_difference must be a positive "
                f"number, got {delta}."
            )
    eq_p = None
    if equivalence_p is not None:
        eq_p = _check_real(equivalence_p, label="equivalence_p")
        if not math.isnan(eq_p) and not 0.0 <= eq_p <= 1.0:
            raise SpecError(
                f"comparison_statement: equivalence_p must lie in [0, 1], got {eq_p}."
            )
        if delta is None:
            raise SpecError(
                "comparison_statement: equivalence_p needs smallest_difference, the "
                "margin it was tested against."
            )
    words = None
    if direction_words is not None:
        try:
            up, down = direction_words
        except (TypeError, ValueError) as exc:
            raise SpecError(
                "comparison_statement: direction_words must be a pair of phrases "
                f"(for a positive and a negative difference), got {direction_words!r}."
            ) from exc
        words = (
            _check_name(up, label="direction_words[0]"),
            _check_name(down, label="direction_words[1]"),
        )

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

    if reason is not None:
        return (
            f"{a} minus {b} on {metric}: the difference {reason}; this study makes "
            f"no claim about a difference between {a} and {b}."
        )

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
        if words is not None:
            verb = f"had {words[0] if diff > 0 else words[1]} than {b}"
            preference = ""
        else:
            verb = f"scored {direction} than {b} on {metric}"
        relevance = ""
        if delta is not None:
            dec = max(dec, _decimals(delta))
            d_text = _fmt(delta, dec)
            if eq_p is not None and not math.isnan(eq_p) and eq_p < alpha_:
                relevance = (
                    f"; it is smaller than the smallest relevant difference of "
                    f"{d_text} (equivalence test p {_format_p(eq_p, alpha_)}), so it "
                    "may not matter in practice"
                )
            elif s_lo > delta:
                relevance = (
                    f"; the whole interval lies beyond the smallest relevant "
                    f"difference of {d_text}"
                )
            else:
                relevance = (
                    f"; whether it reaches the smallest relevant difference of "
                    f"{d_text} is not settled"
                )
        return (
            f"{a} {verb} by {_fmt(size, dec)} "
            f"({ci_label} {_fmt(s_lo, dec)} to {_fmt(s_hi, dec)}{preference}); "
            f"{holds}{relevance}."
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
    if delta is not None and eq_p is not None and not math.isnan(eq_p):
        d_text = _fmt(delta, max(dec, _decimals(delta)))
        if eq_p < alpha_:
            return (
                f"{numbers}; {p_clause}; {a} and {b} are equivalent within "
                f"+/-{d_text} (two one-sided tests, p {_format_p(eq_p, alpha_)}): any "
                f"difference is smaller than the smallest relevant difference."
            )
    if dd is not None and math.isfinite(dd):
        sentence = (
            f"{numbers}; {p_clause}: this study could not detect a difference "
            f"between {a} and {b}; with the spread seen here it would detect a "
            f"difference of {_fmt(dd, max(dec, _decimals(dd)))} or more with "
            f"{power_ * 100:g}% power"
        )
        if delta is not None and eq_p is not None and not math.isnan(eq_p):
            sentence += (
                f", and it does not show that any difference is smaller than "
                f"{_fmt(delta, max(dec, _decimals(delta)))} (equivalence test p "
                f"{_format_p(eq_p, alpha_)})"
            )
        return sentence + "."
    return (
        f"{numbers}; {p_clause}: this study shows no reliable difference between "
        f"{a} and {b}."
    )
