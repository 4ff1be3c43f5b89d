"""Power, equivalence and degenerate cases of the corrected resampled t-test.

Three questions that the p-value alone does not answer:

* **Could the study have seen a difference?** :func:`detectable_difference` gives the
  smallest true mean difference that the corrected resampled t-test would detect
  with the requested power, given the spread of the per-split differences seen in
  this study.
* **Is any difference too small to matter?** :func:`equivalence_test` runs two
  one-sided corrected t-tests against a stated smallest relevant difference
  (Schuirmann 1987).
* **Can the difference be assessed at all?** :func:`assess_differences` bundles the
  decision test, its interval, the detectable difference and (optionally) the
  equivalence test, and refuses to produce a p-value when every split shows the
  same difference: with zero spread the t statistic is infinite and any "p = 0"
  would be an artefact of too few or too coarse test parts, not evidence.

All functions use the variance of Nadeau & Bengio (2003) / Bouckaert & Frank (2004):
``se = sqrt((1/J + n_test/n_train) * var(d))`` with ``J - 1`` degrees of freedom.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from numbers import Real
from typing import TYPE_CHECKING, Any

import numpy as np
from scipy import optimize, stats

from foldwall.compare._stats import (
    TestResult,
    _as_differences,
    _check_confidence,
    _check_positive_int,
    check_df,
    corrected_se,
    corrected_t_interval,
    corrected_ttest,
)
from foldwall.exceptions import SpecError

if TYPE_CHECKING:
    from numpy.typing import ArrayLike, NDArray

__all__ = [
    "DifferenceAssessment",
    "EquivalenceResult",
    "assess_differences",
    "detectable_difference",
    "equivalence_test",
    "no_spread_reason",
]


def _check_probability(value: object, *, name: str, where: str) -> float:
    if (
        isinstance(value, bool)
        or not isinstance(value, Real)
        or not 0.0 < float(value) < 1.0
    ):
        raise SpecError(
            f"{where}: {name} must be a number strictly between 0 and 1, got {value!r}."
        )
    return float(value)


def _check_margin(value: object, *, where: str) -> float:
    if (
        isinstance(value, bool)
        or not isinstance(value, Real)
        or not math.isfinite(float(value))
        or float(value) <= 0.0
    ):
        raise SpecError(
            f"{where}: smallest_difference must be a positive number in the units "
            f"of the metric (e.g. 0.02 for ROC AUC), got {value!r}."
        )
    return float(value)


def _has_spread(d: NDArray[np.float64]) -> bool:
    return bool(np.ptp(d) > 0.0)


def no_spread_reason(differences: ArrayLike) -> str | None:
    """Say why a set of per-split differences cannot be tested, or return None.

    Parameters
    ----------
    differences : array-like of shape (n_splits,) or (n_repetitions, n_folds)
        ``score(a) - score(b)`` on each split.

    Returns
    -------
    str or None
        ``None`` when the differences vary; otherwise one clause explaining that
        every split shows the same difference and what to change.

    Raises
    ------
    SpecError
        On fewer than 2 or non-finite differences.

    Examples
    --------
    >>> no_spread_reason([0.1, 0.1, 0.1])
    'cannot be assessed: every split shows the same difference (0.1), so there is \
no spread to measure its uncertainty; use more folds or repeats'
    >>> no_spread_reason([0.1, 0.2]) is None
    True
    """
    d = _as_differences(differences, where="no_spread_reason")
    if _has_spread(d):
        return None
    return (
        f"cannot be assessed: every split shows the same difference ({d[0]:.3g}), so "
        "there is no spread to measure its uncertainty; use more folds or repeats"
    )


def _noncentrality_for_power(df: float, alpha: float, power: float) -> float:
    """Noncentrality at which a two-sided t-test at ``alpha`` has ``power``."""
    crit = float(stats.t.ppf(1.0 - alpha / 2.0, df))

    def excess(nc: float) -> float:
        upper = float(stats.nct.sf(crit, df, nc))
        if not math.isfinite(upper):
            upper = 1.0 - float(stats.nct.cdf(crit, df, nc))
        # P(T < -crit | nc) = P(T > crit | -nc); scipy's lower tail can return NaN
        # for large nc, where the term is negligible anyway.
        lower = float(stats.nct.sf(crit, df, -nc))
        if not math.isfinite(lower):
            lower = 0.0
        return upper + lower - power

    # The normal approximation brackets the root from below; widen until it holds.
    hi = float(stats.norm.ppf(1.0 - alpha / 2.0) + stats.norm.ppf(power)) + 1.0
    while excess(hi) < 0.0:
        hi *= 2.0
    return float(optimize.brentq(excess, 0.0, hi, xtol=1e-12, rtol=1e-12))


def detectable_difference(
    differences: ArrayLike,
    *,
    n_train: int,
    n_test: int,
    alpha: float = 0.05,
    power: float = 0.8,
    df: float | None = None,
) -> float:
    """Smallest true mean difference the corrected t-test detects with ``power``.

    Parameters
    ----------
    differences : array-like of shape (n_splits,) or (n_repetitions, n_folds)
        ``score(a) - score(b)`` on each split; their spread is taken as the
        spread a true difference would show.
    n_train : int
        Training rows in one split.
    n_test : int
        Test rows in one split.
    alpha : float, default=0.05
        Two-sided level of the test. With a family of comparisons adjusted by
        Holm or Bonferroni, pass ``alpha / family_size`` for the level of the
        strictest step.
    power : float, default=0.8
        Requested probability of rejecting when the true difference is the
        returned size.

    Returns
    -------
    float
        The detectable difference in the units of the metric (positive), or
        ``nan`` when the differences have no spread (nothing to scale by; see
        :func:`no_spread_reason`).

    Raises
    ------
    SpecError
        On fewer than 2 or non-finite differences, non-positive row counts, or
        ``alpha`` / ``power`` outside (0, 1).

    See Also
    --------
    corrected_ttest : The test whose power this is.

    Notes
    -----
    With ``J`` differences of sample variance :math:`\\hat\\sigma^2`, the
    corrected standard error is
    :math:`se = \\sqrt{(1/J + n_2/n_1)\\,\\hat\\sigma^2}` and the test statistic
    :math:`T = \\bar d / se` follows, for a true mean difference
    :math:`\\delta`, a noncentral t distribution with ``J - 1`` degrees of
    freedom and noncentrality :math:`\\lambda = \\delta / se`. The power of the
    two-sided test is

    .. math:: P(T > t_{1-\\alpha/2}) + P(T < -t_{1-\\alpha/2}),

    and the function solves power = ``power`` for :math:`\\lambda` (scipy's
    ``nct`` and ``brentq``), returning :math:`\\delta = \\lambda\\,se`. This is
    the textbook power function of the one-sample t-test (e.g. Cohen 1988,
    ch. 2) with the effective sample size :math:`1/(1/J + n_2/n_1)` in place of
    ``J``; statsmodels' ``ttest_power(effect_size, nobs=1/(1/J + n2/n1),
    alpha, df=J - 1)`` returns ``power`` at :math:`\\delta/\\hat\\sigma`. For
    large ``J`` it approaches
    :math:`(z_{1-\\alpha/2} + z_{\\text{power}})\\,se`.

    It is a statement about the design at the spread observed here (the
    "minimal detectable effect"), not the "observed power" of the observed
    difference, which adds nothing to the p-value.

    Examples
    --------
    >>> d = [0.02, 0.05, -0.01, 0.04, 0.03, 0.00, 0.06, 0.02, 0.01, 0.03]
    >>> round(detectable_difference(d, n_train=90, n_test=10), 4)
    0.0314
    """
    where = "detectable_difference"
    d = _as_differences(differences, where=where)
    n_train = _check_positive_int(n_train, name="n_train", where=where)
    n_test = _check_positive_int(n_test, name="n_test", where=where)
    alpha = _check_probability(alpha, name="alpha", where=where)
    power = _check_probability(power, name="power", where=where)
    if not _has_spread(d):
        return math.nan
    dof = check_df(df, d.size, where=where)
    se = corrected_se(d, n_train, n_test)
    return _noncentrality_for_power(dof, alpha, power) * se


@dataclass(frozen=True)
class EquivalenceResult:
    """Two one-sided tests against a smallest relevant difference.

    Parameters
    ----------
    smallest_difference : float
        The margin ``delta`` (> 0): differences within ``(-delta, delta)`` are
        deemed too small to matter.
    p_lower : float
        p-value of the test of ``mean <= -delta``.
    p_upper : float
        p-value of the test of ``mean >= delta``.
    p_value : float
        ``max(p_lower, p_upper)``: equivalence is shown at level ``alpha`` when
        it is below ``alpha``. ``nan`` when the differences have no spread.
    ci : tuple of (float, float)
        The ``1 - 2 alpha`` corrected t interval; it lies inside
        ``(-delta, delta)`` exactly when equivalence is shown.
    alpha : float
        Level of each one-sided test.
    equivalent : bool
        Whether ``p_value < alpha``.
    reason : str or None
        Why no p-value was computed (zero spread), else ``None``.
    """

    smallest_difference: float
    p_lower: float
    p_upper: float
    p_value: float
    ci: tuple[float, float]
    alpha: float
    equivalent: bool
    reason: str | None = None

    def to_dict(self) -> dict[str, Any]:
        """Plain-Python dictionary (NaN becomes ``None``).

        Returns
        -------
        dict
            Every field, with ``ci`` as a two-element list.
        """

        def num(v: float) -> float | None:
            return None if math.isnan(v) else float(v)

        return {
            "test": "two one-sided corrected t-tests (Schuirmann 1987)",
            "smallest_difference": float(self.smallest_difference),
            "p_lower": num(self.p_lower),
            "p_upper": num(self.p_upper),
            "p_value": num(self.p_value),
            "ci": [num(self.ci[0]), num(self.ci[1])],
            "ci_level": 1.0 - 2.0 * float(self.alpha),
            "alpha": float(self.alpha),
            "equivalent": bool(self.equivalent),
            "reason": self.reason,
        }


def equivalence_test(
    differences: ArrayLike,
    *,
    n_train: int,
    n_test: int,
    smallest_difference: float,
    alpha: float = 0.05,
    df: float | None = None,
) -> EquivalenceResult:
    """Two one-sided corrected t-tests for equivalence within ``+/- delta``.

    Parameters
    ----------
    differences : array-like of shape (n_splits,) or (n_repetitions, n_folds)
        ``score(a) - score(b)`` on each split.
    n_train : int
        Training rows in one split.
    n_test : int
        Test rows in one split.
    smallest_difference : float
        ``delta`` > 0, in the units of the metric: the smallest difference that
        would matter.
    alpha : float, default=0.05
        Level of each one-sided test (must be below 0.5).

    Returns
    -------
    EquivalenceResult
        Both one-sided p-values, their maximum, the ``1 - 2 alpha`` interval and
        the verdict. With zero spread: NaN p-values, ``equivalent=False`` and a
        ``reason``.

    Raises
    ------
    SpecError
        On invalid differences, row counts, ``smallest_difference`` or ``alpha``.

    Notes
    -----
    Schuirmann (1987): with :math:`se` the corrected standard error of
    :func:`detectable_difference` and ``J - 1`` degrees of freedom,

    .. math:: p_{lower} = P(T_{J-1} \\ge (\\bar d + \\delta)/se), \\qquad
              p_{upper} = P(T_{J-1} \\le (\\bar d - \\delta)/se),

    and equivalence is shown when both are below ``alpha``, i.e. when the
    ``1 - 2 alpha`` interval lies inside :math:`(-\\delta, \\delta)`. With
    :math:`n_2/n_1 \\to 0` the statistics are those of statsmodels'
    ``ttost_paired``.

    Examples
    --------
    >>> d = [0.002, 0.004, -0.001, 0.003, 0.001, 0.000, 0.005, 0.002, 0.001, 0.003]
    >>> res = equivalence_test(d, n_train=90, n_test=10, smallest_difference=0.004)
    >>> res.equivalent, round(res.p_value, 4)
    (True, 0.0205)
    """
    where = "equivalence_test"
    d = _as_differences(differences, where=where)
    n_train = _check_positive_int(n_train, name="n_train", where=where)
    n_test = _check_positive_int(n_test, name="n_test", where=where)
    delta = _check_margin(smallest_difference, where=where)
    alpha = _check_probability(alpha, name="alpha", where=where)
    if alpha >= 0.5:
        raise SpecError(f"{where}: alpha must be below 0.5, got {alpha}.")
    mean = float(np.mean(d))
    if not _has_spread(d):
        return EquivalenceResult(
            smallest_difference=delta,
            p_lower=math.nan,
            p_upper=math.nan,
            p_value=math.nan,
            ci=(mean, mean),
            alpha=alpha,
            equivalent=False,
            reason=no_spread_reason(d),
        )
    se = corrected_se(d, n_train, n_test)
    dof = check_df(df, d.size, where=where)
    p_lower = float(stats.t.sf((mean + delta) / se, dof))
    p_upper = float(stats.t.cdf((mean - delta) / se, dof))
    p = max(p_lower, p_upper)
    ci = corrected_t_interval(
        d, n_train=n_train, n_test=n_test, confidence=1.0 - 2.0 * alpha, df=dof
    )
    return EquivalenceResult(
        smallest_difference=delta,
        p_lower=p_lower,
        p_upper=p_upper,
        p_value=p,
        ci=ci,
        alpha=alpha,
        equivalent=p < alpha,
    )


@dataclass(frozen=True)
class DifferenceAssessment:
    """Everything the decision about one comparison needs, before adjustment.

    Parameters
    ----------
    n_splits : int
        Number of per-split differences ``J``.
    mean_difference : float
        Mean of ``score(a) - score(b)``.
    test : TestResult or None
        The decision test (corrected resampled t-test); ``None`` when the
        differences cannot be assessed.
    ci : tuple of (float, float) or None
        Corrected t interval at ``confidence``; ``None`` when not assessable.
    confidence : float
        Coverage of ``ci``.
    detectable_difference : float or None
        Smallest difference detectable with ``power`` at ``power_alpha``.
    power : float
        The power used for ``detectable_difference``.
    power_alpha : float
        The level used for ``detectable_difference``.
    equivalence : EquivalenceResult or None
        Present when a smallest relevant difference was given and the
        differences can be assessed.
    reason : str or None
        Why no test was run (zero spread); ``None`` otherwise.
    """

    n_splits: int
    mean_difference: float
    test: TestResult | None
    ci: tuple[float, float] | None
    confidence: float
    detectable_difference: float | None
    power: float
    power_alpha: float
    equivalence: EquivalenceResult | None
    reason: str | None

    @property
    def assessable(self) -> bool:
        """Whether a p-value exists (the differences have spread)."""
        return self.test is not None

    def to_dict(self) -> dict[str, Any]:
        """Plain-Python dictionary for results files.

        Returns
        -------
        dict
            ``n_splits``, ``mean_difference``, the decision ``test`` (its
            dictionary or ``None``), ``ci``, ``confidence``,
            ``detectable_difference``, ``power``, ``power_alpha``,
            ``equivalence`` (dictionary or ``None``) and ``reason``.
        """
        return {
            "n_splits": int(self.n_splits),
            "mean_difference": float(self.mean_difference),
            "test": None if self.test is None else self.test.to_dict(),
            "ci": None if self.ci is None else [float(v) for v in self.ci],
            "confidence": float(self.confidence),
            "detectable_difference": self.detectable_difference,
            "power": float(self.power),
            "power_alpha": float(self.power_alpha),
            "equivalence": (
                None if self.equivalence is None else self.equivalence.to_dict()
            ),
            "reason": self.reason,
        }


def assess_differences(
    differences: ArrayLike,
    *,
    n_train: int,
    n_test: int,
    alpha: float = 0.05,
    power: float = 0.8,
    power_alpha: float | None = None,
    smallest_difference: float | None = None,
    confidence: float = 0.95,
    df: float | None = None,
) -> DifferenceAssessment:
    """Decision test, interval, detectable difference and equivalence in one call.

    Parameters
    ----------
    differences : array-like of shape (n_splits,) or (n_repetitions, n_folds)
        ``score(a) - score(b)`` on each split.
    n_train : int
        Training rows in one split.
    n_test : int
        Test rows in one split.
    alpha : float, default=0.05
        Level of the equivalence test's one-sided tests.
    power : float, default=0.8
        Power for :func:`detectable_difference`.
    power_alpha : float, default=None
        Two-sided level for :func:`detectable_difference`; ``None`` uses
        ``alpha``. Pass ``alpha / family_size`` for a Holm or Bonferroni family.
    smallest_difference : float, default=None
        Smallest relevant difference; when given, the equivalence test runs.
    confidence : float, default=0.95
        Coverage of the reported interval.
    df : float, default=None
        Degrees of freedom of the test, the interval, the detectable difference and
        the equivalence test; ``None`` uses ``J - 1`` (see
        :func:`foldwall.compare.calibrated_df`).

    Returns
    -------
    DifferenceAssessment
        With zero spread: no test, no interval, no detectable difference, no
        equivalence test, and a ``reason``. Such a comparison must not enter a
        family of adjusted p-values or produce a claim.

    Raises
    ------
    SpecError
        On invalid inputs (see the functions used).

    Examples
    --------
    >>> res = assess_differences([0.05, 0.05, 0.05, 0.05], n_train=30, n_test=10)
    >>> res.assessable, res.test, res.reason.split(":")[0]
    (False, None, 'cannot be assessed')
    """
    where = "assess_differences"
    d = _as_differences(differences, where=where)
    n_train = _check_positive_int(n_train, name="n_train", where=where)
    n_test = _check_positive_int(n_test, name="n_test", where=where)
    alpha = _check_probability(alpha, name="alpha", where=where)
    power = _check_probability(power, name="power", where=where)
    level = alpha if power_alpha is None else power_alpha
    level = _check_probability(level, name="power_alpha", where=where)
    confidence = _check_confidence(confidence, where=where)
    if smallest_difference is not None:
        _check_margin(smallest_difference, where=where)
    mean = float(np.mean(d))
    reason = no_spread_reason(d)
    if reason is not None:
        return DifferenceAssessment(
            n_splits=int(d.size),
            mean_difference=mean,
            test=None,
            ci=None,
            confidence=confidence,
            detectable_difference=None,
            power=power,
            power_alpha=level,
            equivalence=None,
            reason=reason,
        )
    test = corrected_ttest(d, n_train=n_train, n_test=n_test, df=df)
    ci = corrected_t_interval(
        d, n_train=n_train, n_test=n_test, confidence=confidence, df=df
    )
    dd = detectable_difference(
        d, n_train=n_train, n_test=n_test, alpha=level, power=power, df=df
    )
    eq = (
        None
        if smallest_difference is None
        else equivalence_test(
            d,
            n_train=n_train,
            n_test=n_test,
            smallest_difference=smallest_difference,
            alpha=alpha,
            df=df,
        )
    )
    return DifferenceAssessment(
        n_splits=int(d.size),
        mean_difference=mean,
        test=test,
        ci=ci,
        confidence=confidence,
        detectable_difference=dd,
        power=power,
        power_alpha=level,
        equivalence=eq,
        reason=None,
    )
