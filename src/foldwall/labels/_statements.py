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
from dataclasses import dataclass
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
    ev = _Evidence(
        model=_text(model, "model"),
        metric=_text(metric, "metric"),
        model_score=_real(model_score, "model_score"),
        rater_score=_real(rater_score, "rater_score"),
        d=_real(mean_difference, "mean_difference"),
        ci=_pair(ci, "ci"),
        p=_probability(p_value),
        alpha=_unit_open(alpha, "alpha"),
        confidence=_unit_open(confidence, "confidence"),
        n_splits=_count(n_splits, "n_splits"),
        n_raters=_count(n_raters, "n_raters"),
        greater_is_better=bool(greater_is_better),
        margin=_margin(margin),
        eq=None if margin is None else _equivalence(equivalence_ci),
    )
    return ev.sentence()


def _text(value: object, label: str) -> str:
    if not isinstance(value, str) or not value.strip():
        raise SpecError(
            f"human_reference_statement: {label} must be a non-empty string, "
            f"got {value!r}."
        )
    return value


def _probability(value: object) -> float:
    p = _real(value, "p_value")
    if not math.isnan(p) and not 0.0 <= p <= 1.0:
        raise SpecError(
            f"human_reference_statement: p_value must lie in [0, 1] (or be NaN), "
            f"got {p}."
        )
    return p


def _unit_open(value: object, label: str) -> float:
    v = _real(value, label)
    if not 0.0 < v < 1.0:
        raise SpecError(
            f"human_reference_statement: {label} must lie strictly between 0 and 1, "
            f"got {v}."
        )
    return v


def _count(value: object, label: str) -> int:
    if isinstance(value, bool) or not isinstance(value, Integral) or int(value) < 1:
        raise SpecError(
            f"human_reference_statement: {label} must be a whole number >= 1, "
            f"got {value!r}."
        )
    return int(value)


def _margin(value: object) -> float | None:
    if value is None:
        return None
    delta = _real(value, "margin")
    if not delta > 0:
        raise SpecError(f"human_reference_statement: margin must be > 0, got {delta}.")
    return delta


def _equivalence(value: object) -> tuple[float, float]:
    if value is None:
        raise SpecError(
            "human_reference_statement: a margin needs equivalence_ci, the "
            "1 - 2 alpha interval of the difference."
        )
    return _pair(value, "equivalence_ci")


@dataclass(frozen=True)
class _Evidence:
    """The checked numbers of one comparison, and the sentence they allow."""

    model: str
    metric: str
    model_score: float
    rater_score: float
    d: float
    ci: tuple[float, float]
    p: float
    alpha: float
    confidence: float
    n_splits: int
    n_raters: int
    greater_is_better: bool
    margin: float | None
    eq: tuple[float, float] | None

    @property
    def typical(self) -> str:
        return f"a typical rater of these {self.n_raters}"

    @property
    def scores(self) -> str:
        return (
            f"{self.metric} {_fmt(self.model_score)} against {_fmt(self.rater_score)}"
        )

    @property
    def test(self) -> str:
        return f"corrected resampled t-test over {self.n_splits} outer splits"

    @property
    def numbers(self) -> str:
        lo, hi = self.ci
        return (
            f"{self.scores}, difference {_fmt(self.d)} ({self.confidence * 100:g}% CI "
            f"{_fmt(lo)} to {_fmt(hi)}; {self.test}, p {_format_p(self.p, self.alpha)})"
        )

    @property
    def eq_text(self) -> str:
        assert self.eq is not None
        return (
            f"{(1 - 2 * self.alpha) * 100:g}% CI {_fmt(self.eq[0])} to "
            f"{_fmt(self.eq[1])}"
        )

    def within_margin(self) -> bool:
        """The 1 - 2 alpha interval lies inside (-margin, margin): TOST equivalence."""
        if self.eq is None or self.margin is None:
            return False
        return -self.margin < self.eq[0] and self.eq[1] < self.margin

    def shortfall_ruled_out(self) -> bool:
        """Only the end on the model's unfavourable side lies inside the margin."""
        if self.eq is None or self.margin is None:
            return False
        worse_end = self.eq[0] if self.greater_is_better else -self.eq[1]
        return worse_end > -self.margin

    def sentence(self) -> str:
        lo, hi = self.ci
        finite = all(
            math.isfinite(v)
            for v in (self.model_score, self.rater_score, self.d, lo, hi)
        )
        if math.isnan(self.p) or not finite:
            return (
                f"Could not test whether {self.model} agrees with the consensus of the "
                f"other raters as well as {self.typical} does ({self.scores}); no "
                f"claim is made."
            )
        same_side = (self.d > 0 and lo > 0) or (self.d < 0 and hi < 0)
        if self.p < self.alpha and same_side:
            return self._difference()
        if self.within_margin():
            assert self.margin is not None
            return (
                f"{self.model} agreed with the consensus of the other raters as well "
                f"as {self.typical} did, within the smallest difference of interest "
                f"±{_fmt(self.margin)}: {self.scores}, difference {_fmt(self.d)} "
                f"({self.eq_text}, inside ±{_fmt(self.margin)}; two one-sided tests "
                f"at {self.alpha:g} with the {self.test})."
            )
        if self.shortfall_ruled_out():
            assert self.margin is not None
            return (
                f"{self.model} agreed with the consensus of the other raters no less "
                f"closely than {self.typical} did, up to the smallest difference of "
                f"interest: a shortfall of {_fmt(self.margin)} or more is ruled out "
                f"(one-sided test at {self.alpha:g}: {self.eq_text}); {self.numbers}."
            )
        if self.p < self.alpha:
            tail = (
                "the p-value and the interval disagree, so the evidence is inconclusive"
            )
        elif self.margin is not None:
            tail = (
                f"the interval reaches beyond the smallest difference of interest "
                f"±{_fmt(self.margin)}, so this study cannot tell"
            )
        else:
            tail = (
                "no smallest difference of interest was given, so agreement as close "
                "as a rater's cannot be shown, only a difference"
            )
        return (
            f"Could not tell whether {self.model} agrees with the consensus of the "
            f"other raters as well as {self.typical} does: {self.numbers}; {tail}."
        )

    def _difference(self) -> str:
        # Positive differences mean closer agreement when higher scores are better.
        closer = (self.d > 0) == self.greater_is_better
        how = "more closely" if closer else "less closely"
        sentence = (
            f"{self.model} agreed with the consensus of the other raters {how} than "
            f"{self.typical} did: {self.numbers}"
        )
        if self.within_margin():
            assert self.margin is not None
            sentence += (
                f"; the gap lies within the smallest difference of interest "
                f"±{_fmt(self.margin)} ({self.eq_text})"
            )
        elif not closer:
            sentence += "; the claim that it agrees as well as a rater is not supported"
        return sentence + "."
