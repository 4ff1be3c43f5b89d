"""The sentence for "the model agrees with the consensus as well as a typical rater".

The sentence never says more than the numbers: a difference in either direction
is stated only when the p-value is below ``alpha`` *and* the interval lies on the
same side of zero as the mean difference; "as well as" is stated only when a
smallest difference of interest was given and the ``1 - 2 alpha`` interval lies
inside it (two one-sided tests, Schuirmann 1987). A difference that was not shown
is never read as "as good as": the sentence then says it could not tell, and
gives the interval.
"""

from __future__ import annotations

import math
from numbers import Integral, Real

from foldwall.exceptions import SpecError

__all__ = ["human_reference_statement"]


def _format_p(p: float, alpha: float) -> str:
    """``"= 0.012"`` or ``"< 0.001"``, never rounded across ``alpha``."""
    if p < 0.001:
        return "< 0.001"
    text = ""
    for digits in range(2, 7):
        text = f"{p:.{digits}g}"
        if (float(text) < alpha) == (p < alpha):
            break
    return f"= {text}"


def _fmt(value: float) -> str:
    if not math.isfinite(value):
        return "nan" if math.isnan(value) else ("inf" if value > 0 else "-inf")
    decimals = (
        3
        if value == 0 or abs(value) >= 0.01
        else 1 - math.floor(math.log10(abs(value)))
    )
    text = f"{value:.{min(8, max(3, decimals))}f}"
    return text.lstrip("-") if float(text) == 0.0 else text


def _real(value: object, label: str) -> float:
    if isinstance(value, bool) or not isinstance(value, Real):
        raise SpecError(
            f"human_reference_statement: {label} must be a number, got {value!r}."
        )
    return float(value)


def _pair(value: object, label: str) -> tuple[float, float]:
    if not isinstance(value, (tuple, list)) or len(value) != 2:
        raise SpecError(
            f"human_reference_statement: {label} must be a pair (lower, upper), "
            f"got {value!r}."
        )
    lo, hi = value[0], value[1]
    lo_, hi_ = _real(lo, f"{label}[0]"), _real(hi, f"{label}[1]")
    if lo_ > hi_:
        raise SpecError(
            f"human_reference_statement: {label} must have lower <= upper, got "
            f"({lo_}, {hi_})."
        )
    return lo_, hi_


def human_reference_statement(
    *,
    model: str,
    metric: str,
    model_score: float,
    rater_score: float,
    mean_difference: float,
    ci: tuple[float, float],
    p_value: float,
    alpha: float,
    n_splits: int,
    n_raters: int,
    greater_is_better: bool = True,
    confidence: float = 0.95,
    margin: float | None = None,
    equivalence_ci: tuple[float, float] | None = None,
) -> str:
    """One sentence on whether the model agrees with the raters' consensus as
    well as a typical rater does.

    Parameters
    ----------
    model : str
        Name of the model, as the sentence should call it.
    metric : str
        Score against the leave-one-rater-out consensus.
    model_score, rater_score : float
        Mean scores of the model and of a typical rater.
    mean_difference : float
        Mean of ``model - rater`` over the outer splits.
    ci : tuple of (float, float)
        Confidence interval of ``mean_difference``.
    p_value : float
        Two-sided p-value of the difference (NaN: untested).
    alpha : float
        Level of the test.
    n_splits : int
        Outer splits the difference was measured on.
    n_raters : int
        Raters in the panel.
    greater_is_better : bool, default=True
        Direction of the metric: ``True`` when a higher score means closer
        agreement (accuracy, kappa), ``False`` for an error (mean absolute error).
    confidence : float, default=0.95
        Coverage of ``ci`` (used for its label).
    margin : float, default=None
        Smallest difference of interest, in metric units. Without it "as well as"
        is never stated.
    equivalence_ci : tuple of (float, float), default=None
        The ``1 - 2 alpha`` interval of ``mean_difference``; needed with
        ``margin``.

    Returns
    -------
    str
        One sentence: closer or less close agreement than a typical rater when
        the test and the interval both show it; "as well as, within the margin"
        when the equivalence interval lies inside ``(-margin, margin)``; a
        shortfall ruled out when only the unfavourable end lies inside;
        otherwise that it could not tell, with the interval.

    Raises
    ------
    SpecError
        On non-numeric values, reversed intervals, ``p_value`` outside [0, 1],
        ``alpha`` or ``confidence`` outside (0, 1), counts below 1, or a
        ``margin`` without ``equivalence_ci``.

    Examples
    --------
    >>> from foldwall.labels import human_reference_statement
    >>> print(human_reference_statement(
    ...     model="logreg", metric="accuracy", model_score=0.80, rater_score=0.82,
    ...     mean_difference=-0.02, ci=(-0.09, 0.05), p_value=0.52, alpha=0.05,
    ...     n_splits=5, n_raters=4))  # doctest: +NORMALIZE_WHITESPACE
    Could not tell whether logreg agrees with the consensus of the other raters as
    well as a typical rater of these 4 does: accuracy 0.800 against 0.820,
    difference -0.020 (95% CI -0.090 to 0.050; corrected resampled t-test over 5
    outer splits, p = 0.52); no smallest difference of interest was given, so
    agreement as close as a rater's cannot be shown, only a difference.
    """
    for label, text in (("model", model), ("metric", metric)):
        if not isinstance(text, str) or not text.strip():
            raise SpecError(
                f"human_reference_statement: {label} must be a non-empty string, "
                f"got {text!r}."
            )
    ms = _real(model_score, "model_score")
    rs = _real(rater_score, "rater_score")
    d = _real(mean_difference, "mean_difference")
    lo, hi = _pair(ci, "ci")
    p = _real(p_value, "p_value")
    if not math.isnan(p) and not 0.0 <= p <= 1.0:
        raise SpecError(
            f"human_reference_statement: p_value must lie in [0, 1] (or be NaN), "
            f"got {p}."
        )
    a = _real(alpha, "alpha")
    conf = _real(confidence, "confidence")
    for label, v in (("alpha", a), ("confidence", conf)):
        if not 0.0 < v < 1.0:
            raise SpecError(
                f"human_reference_statement: {label} must lie strictly between 0 "
                f"and 1, got {v}."
            )
    for label, n in (("n_splits", n_splits), ("n_raters", n_raters)):
        if isinstance(n, bool) or not isinstance(n, Integral) or n < 1:
            raise SpecError(
                f"human_reference_statement: {label} must be a whole number >= 1, "
                f"got {n!r}."
            )
    delta = None if margin is None else _real(margin, "margin")
    if delta is not None and not delta > 0:
        raise SpecError(f"human_reference_statement: margin must be > 0, got {delta}.")
    eq = None
    if delta is not None:
        if equivalence_ci is None:
            raise SpecError(
                "human_reference_statement: a margin needs equivalence_ci, the "
                "1 - 2 alpha interval of the difference."
            )
        eq = _pair(equivalence_ci, "equivalence_ci")

    typical = f"a typical rater of these {n_raters}"
    scores = f"{metric} {_fmt(ms)} against {_fmt(rs)}"
    where = f"corrected resampled t-test over {n_splits} outer splits"
    ci_text = f"{conf * 100:g}% CI {_fmt(lo)} to {_fmt(hi)}"
    numbers = f"{scores}, difference {_fmt(d)} ({ci_text}; {where}, p "
    finite = all(math.isfinite(v) for v in (ms, rs, d, lo, hi))
    if math.isnan(p) or not finite:
        return (
            f"Could not test whether {model} agrees with the consensus of the "
            f"other raters as well as {typical} does ({scores}); no claim is made."
        )
    p_text = _format_p(p, a)
    numbers += f"{p_text})"
    significant = p < a and ((d > 0 and lo > 0) or (d < 0 and hi < 0))
    # Positive differences mean closer agreement when higher scores are better.
    closer = (d > 0) == greater_is_better
    eq_label = f"{(1 - 2 * a) * 100:g}% CI"
    within = eq is not None and delta is not None and -delta < eq[0] and eq[1] < delta

    if significant:
        how = "more closely" if closer else "less closely"
        sentence = (
            f"{model} agreed with the consensus of the other raters {how} than "
            f"{typical} did: {numbers}"
        )
        if within and eq is not None and delta is not None:
            sentence += (
                f"; the gap lies within the smallest difference of interest "
                f"±{_fmt(delta)} ({eq_label} {_fmt(eq[0])} to {_fmt(eq[1])})"
            )
        elif not closer:
            sentence += "; the claim that it agrees as well as a rater is not supported"
        return sentence + "."
    if within and eq is not None and delta is not None:
        return (
            f"{model} agreed with the consensus of the other raters as well as "
            f"{typical} did, within the smallest difference of interest "
            f"±{_fmt(delta)}: {scores}, difference {_fmt(d)} ({eq_label} "
            f"{_fmt(eq[0])} to {_fmt(eq[1])}, inside ±{_fmt(delta)}; two one-sided "
            f"tests at {a:g} with the {where})."
        )
    if eq is not None and delta is not None:
        # The end of the interval on the model's unfavourable side.
        worse_end = eq[0] if greater_is_better else -eq[1]
        if worse_end > -delta:
            return (
                f"{model} fell short of {typical} in agreement with the consensus "
                f"of the other raters by less than {_fmt(delta)} (one-sided test at "
                f"{a:g}: {eq_label} {_fmt(eq[0])} to {_fmt(eq[1])}), but whether it "
                f"agrees as well could not be told: {numbers}."
            )
        tail = (
            f"the interval reaches beyond the smallest difference of interest "
            f"±{_fmt(delta)}, so this study cannot tell"
        )
    else:
        tail = (
            "no smallest difference of interest was given, so agreement as close "
            "as a rater's cannot be shown, only a difference"
        )
    if p < a:
        tail = "the p-value and the interval disagree, so the evidence is inconclusive"
    return (
        f"Could not tell whether {model} agrees with the consensus of the other "
        f"raters as well as {typical} does: {numbers}; {tail}."
    )
