"""P-values and summaries for the random-label (permutation) control.

Everything here is a pure function of scores that were already computed: the
permutation runs themselves live elsewhere. Two ways of turning null scores into a
p-value are offered:

* :func:`permutation_pvalue`, for a fixed number of permutations
  (Phipson & Smyth 2010; test 1 of Ojala & Garriga 2010);
* :class:`SequentialStop`, which stops drawing permutations once the answer is clear
  (Besag & Clifford 1991).

In both, a null score counts against the model when it is *at least as good* as the
observed score, so ties count against the model and the p-value is never too small.
"""

from __future__ import annotations

import math
from numbers import Integral, Real
from typing import TYPE_CHECKING, Any

import numpy as np

from foldwall.exceptions import DataError, RunError, SpecError

if TYPE_CHECKING:
    from numpy.typing import ArrayLike, NDArray

__all__ = [
    "permutation_pvalue",
    "SequentialStop",
    "null_summary",
]

_QUANTILES = (0.05, 0.25, 0.5, 0.75, 0.95)


def _is_real(x: object) -> bool:
    return isinstance(x, (Real, np.number)) and not isinstance(x, (bool, np.bool_))


def _is_int(x: object) -> bool:
    return isinstance(x, Integral) and not isinstance(x, (bool, np.bool_))


def _check_direction(greater_is_better: object) -> bool:
    if not isinstance(greater_is_better, (bool, np.bool_)):
        raise SpecError(
            f"greater_is_better must be True or False, got {greater_is_better!r}. "
            "Pass True for scores such as accuracy and False for errors or losses."
        )
    return bool(greater_is_better)


def _check_observed(observed: object) -> float:
    if not _is_real(observed):
        raise DataError(
            f"the observed score must be a real number, got {observed!r}. "
            "Pass the score of the model fitted on the true labels."
        )
    value = float(observed)  # type: ignore[arg-type]
    if math.isnan(value):
        raise DataError(
            "the observed score is NaN, so no p-value can be computed. "
            "Check why the model scored NaN on the true labels (a failed fit, or a "
            "metric that is undefined on a fold)."
        )
    return value


def _check_null_scores(null_scores: ArrayLike) -> NDArray[np.float64]:
    try:
        scores = np.asarray(null_scores, dtype=float)
    except (TypeError, ValueError) as exc:
        raise DataError(
            f"null scores must be real numbers; could not read them as floats ({exc})."
        ) from exc
    if scores.ndim != 1:
        raise DataError(
            f"null scores must be a 1-d sequence (one score per permutation), got an "
            f"array of shape {scores.shape}. Pass one score per permuted label vector."
        )
    if scores.size == 0:
        raise DataError(
            "no null scores were given: at least one permutation is needed. "
            "Run the control with n_permutations >= 1."
        )
    n_nan = int(np.isnan(scores).sum())
    if n_nan:
        raise DataError(
            f"{n_nan} of {scores.size} null scores are NaN. A p-value that silently "
            "dropped them would be biased; find out why those permutation runs "
            "failed, or rerun them."
        )
    return scores


def _at_least_as_good(
    scores: NDArray[np.float64], observed: float, greater_is_better: bool
) -> NDArray[np.bool_]:
    return scores >= observed if greater_is_better else scores <= observed


def permutation_pvalue(
    observed: float, null_scores: ArrayLike, *, greater_is_better: bool = True
) -> float:
    """P-value of an observed score against scores on permuted labels.

    With ``m`` null scores, of which ``b`` are at least as good as the observed score,
    the p-value is ``(b + 1) / (m + 1)``. It is never zero and is valid (slightly
    conservative) for any number of randomly drawn permutations.

    Parameters
    ----------
    observed : float
        Score of the model evaluated on the true labels.
    null_scores : array-like of shape (n_permutations,)
        Scores of the same whole procedure rerun on permuted labels, one per
        permutation.
    greater_is_better : bool, default=True
        ``True`` for scores where larger is better (accuracy, ROC AUC, R²); then a
        null score counts when it is ``>= observed``. ``False`` for errors and losses;
        then a null score counts when it is ``<= observed``.

    Returns
    -------
    float
        The p-value, in ``[1 / (m + 1), 1]``.

    Raises
    ------
    DataError
        If ``observed`` is NaN or not a number, if ``null_scores`` is empty or not
        1-d, or if any null score is NaN (the message says how many).
    SpecError
        If ``greater_is_better`` is not a bool.

    See Also
    --------
    SequentialStop : the same test, stopping once the answer is clear.

    Notes
    -----
    This is the p-value recommended by Phipson & Smyth (2010) for randomly drawn
    permutations, and the one of test 1 in Ojala & Garriga (2010), where the null
    hypothesis is that the labels are independent of the features. Ties count as
    "at least as good", so they never make the p-value smaller.

    References
    ----------
    Phipson, B., Smyth, G. K. (2010). Permutation p-values should never be zero.
    *Statistical Applications in Genetics and Molecular Biology* 9(1), Article 39.

    Ojala, M., Garriga, G. C. (2010). Permutation tests for studying classifier
    performance. *Journal of Machine Learning Research* 11.

    Examples
    --------
    >>> permutation_pvalue(0.8, [0.5, 0.6, 0.85, 0.4])
    0.4
    >>> permutation_pvalue(0.2, [0.5, 0.6, 0.15, 0.4], greater_is_better=False)
    0.4
    """
    greater = _check_direction(greater_is_better)
    obs = _check_observed(observed)
    scores = _check_null_scores(null_scores)
    b = int(_at_least_as_good(scores, obs, greater).sum())
    return (b + 1) / (scores.size + 1)


class SequentialStop:
    """Sequential Monte Carlo p-value of Besag & Clifford (1991).

    Feed null scores one at a time, in the order they were drawn, with
    :meth:`update`. The run stops as soon as ``h`` null scores were at least as good
    as the observed score, or after ``n_max - 1`` null scores, whichever comes first.

    * If the ``h``-th such score arrives at draw ``L``, the p-value is ``h / L``.
    * If all ``n_max - 1`` draws are used with only ``g < h`` such scores, the p-value
      is ``(g + 1) / n_max``, the fixed-size p-value of :func:`permutation_pvalue`.

    Parameters
    ----------
    h : int, default=10
        Number of null scores at least as good as the observed one that stops the
        run. Must be >= 1. If ``h >= n_max`` the run can never stop early and this
        is the plain fixed-size test with ``n_max - 1`` permutations.
    n_max : int, default=1000
        At most ``n_max - 1`` null scores are drawn. Must be >= 2.
    greater_is_better : bool, default=True
        ``True`` when larger scores are better (a null score counts when it is
        ``>= observed``), ``False`` for errors and losses (counts when
        ``<= observed``).

    Attributes
    ----------
    n_drawn : int
        Number of null scores fed so far.
    exceedances : int
        How many of them were at least as good as the observed score.
    stopped_early : bool
        ``True`` once the ``h``-th such score has arrived (possibly on the very last
        allowed draw); ``False`` while running and when all draws were used.

    Raises
    ------
    SpecError
        If ``h`` or ``n_max`` is out of range or ``greater_is_better`` is not a bool.

    See Also
    --------
    permutation_pvalue : fixed number of permutations.

    Notes
    -----
    Under the null hypothesis, with a continuous statistic, the number of
    exceedances among the first ``L0 - 1`` draws is uniform on ``{0, ..., L0 - 1}``,
    so ``P(p <= h / L0) = h / L0`` at every attainable level: the test has exactly
    its nominal size. The attainable values are ``1/n_max, ..., h/n_max`` and
    ``h/(n_max - 1), h/(n_max - 2), ..., h/h = 1``. Under the null hypothesis with
    ``h = 10`` and ``n_max = 1000`` the expected number of draws is about 56,
    against 999 for the fixed-size test; when the model is genuinely good, the run
    goes on to ``n_max - 1`` draws and reaches the small p-values that need them.

    Unlike scikit-learn estimators, the arguments are checked when the object is
    made: this is an accumulator with no ``fit``, and a wrong ``h`` should fail
    before any permutation is run.

    References
    ----------
    Besag, J., Clifford, P. (1991). Sequential Monte Carlo p-values. *Biometrika*
    78(2):301-304.

    Examples
    --------
    >>> rule = SequentialStop(h=2, n_max=100)
    >>> [rule.update(0.8, s) for s in [0.5, 0.9, 0.6, 0.85]]
    [False, False, False, True]
    >>> rule.p_value
    0.5
    """

    def __init__(
        self, *, h: int = 10, n_max: int = 1000, greater_is_better: bool = True
    ) -> None:
        if not _is_int(h) or h < 1:
            raise SpecError(
                f"h (the number of exceedances that stops the run) must be an "
                f"integer >= 1, got {h!r}. Besag & Clifford suggest small values "
                "such as h = 10."
            )
        if not _is_int(n_max) or n_max < 2:
            raise SpecError(
                f"n_max must be an integer >= 2 (at most n_max - 1 permutations are "
                f"drawn), got {n_max!r}. For up to 999 permutations pass n_max=1000."
            )
        self.h = int(h)
        self.n_max = int(n_max)
        self.greater_is_better = _check_direction(greater_is_better)
        self.n_drawn = 0
        self.exceedances = 0
        self.stopped_early = False
        self._observed: float | None = None

    @property
    def n_limit(self) -> int:
        """Largest number of null scores the run may draw, ``n_max - 1``."""
        return self.n_max - 1

    @property
    def finished(self) -> bool:
        """Whether the run has stopped (by ``h`` exceedances or by ``n_max``)."""
        return self.stopped_early or self.n_drawn >= self.n_limit

    def update(self, observed: float, null_score: float) -> bool:
        """Feed the next null score, in the order the permutations were drawn.

        Parameters
        ----------
        observed : float
            Score on the true labels; must be the same on every call.
        null_score : float
            Score of the next permutation.

        Returns
        -------
        bool
            ``True`` when the run should stop (no further null score may be fed).

        Raises
        ------
        DataError
            If ``observed`` or ``null_score`` is NaN or not a number, or if
            ``observed`` differs from the value given on the first call.
        RunError
            If the run has already stopped.
        """
        if self.finished:
            raise RunError(
                f"the sequential rule already stopped after {self.n_drawn} "
                f"permutations ({self.reason}); no more null scores may be fed. "
                "Check the value returned by update() and stop drawing when it is True."
            )
        obs = _check_observed(observed)
        if not _is_real(null_score):
            raise DataError(
                f"null score {self.n_drawn + 1} must be a real number, got "
                f"{null_score!r}."
            )
        score = float(null_score)
        if math.isnan(score):
            raise DataError(
                f"null score {self.n_drawn + 1} is NaN. A sequential p-value that "
                "skipped it would be biased; find out why that permutation run failed, "
                "or rerun it."
            )
        if self._observed is None:
            self._observed = obs
        elif obs != self._observed:
            raise DataError(
                f"the observed score changed between calls: {self._observed!r} at the "
                f"first call, {obs!r} now. Pass the same observed score with every "
                "null score, or start a new SequentialStop."
            )
        self.n_drawn += 1
        good = score >= obs if self.greater_is_better else score <= obs
        if good:
            self.exceedances += 1
            if self.exceedances >= self.h:
                self.stopped_early = True
        return self.finished

    @property
    def p_value(self) -> float:
        """The Besag & Clifford p-value, available once the run has stopped.

        ``h / L`` if the ``h``-th exceedance arrived at draw ``L``, else
        ``(g + 1) / n_max`` after ``n_max - 1`` draws with ``g < h`` exceedances.

        Raises
        ------
        RunError
            If the run has not stopped yet.
        """
        if self.stopped_early:
            return self.h / self.n_drawn
        if self.n_drawn >= self.n_limit:
            return (self.exceedances + 1) / self.n_max
        raise RunError(
            f"the sequential p-value is not defined yet: {self.n_drawn} of at most "
            f"{self.n_limit} permutations were fed and only {self.exceedances} of the "
            f"h = {self.h} exceedances that stop the run have arrived. Keep feeding "
            "null scores until update() returns True."
        )

    @property
    def reason(self) -> str:
        """Plain sentence saying why the run stopped (or that it is still running)."""
        if self.stopped_early:
            return (
                f"stopped after {self.exceedances} of {self.n_drawn} permutations "
                "scored at least as well as the observed score (sequential rule of "
                f"Besag & Clifford 1991, h = {self.h})"
            )
        if self.n_drawn >= self.n_limit:
            return (
                f"ran all {self.n_drawn} permutations; {self.exceedances} scored at "
                "least as well as the observed score, fewer than the "
                f"h = {self.h} that would have stopped the run early"
            )
        return (
            f"still running: {self.n_drawn} of at most {self.n_limit} permutations "
            f"drawn, {self.exceedances} of h = {self.h} scored at least as well as "
            "the observed score"
        )

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready summary of the run.

        Returns
        -------
        dict
            Keys ``rule``, ``h``, ``n_max``, ``greater_is_better``, ``observed``
            (``None`` before the first update), ``n_drawn``, ``exceedances``,
            ``stopped_early``, ``finished``, ``p_value`` (``None`` until the run has
            stopped) and ``reason``.
        """
        return {
            "rule": "besag_clifford_1991",
            "h": self.h,
            "n_max": self.n_max,
            "greater_is_better": self.greater_is_better,
            "observed": self._observed,
            "n_drawn": self.n_drawn,
            "exceedances": self.exceedances,
            "stopped_early": self.stopped_early,
            "finished": self.finished,
            "p_value": self.p_value if self.finished else None,
            "reason": self.reason,
        }

    def __repr__(self) -> str:
        return (
            f"SequentialStop(h={self.h}, n_max={self.n_max}, "
            f"greater_is_better={self.greater_is_better}; n_drawn={self.n_drawn}, "
            f"exceedances={self.exceedances})"
        )


def null_summary(
    null_scores: ArrayLike,
    observed: float | None = None,
    *,
    greater_is_better: bool = True,
) -> dict[str, Any]:
    """Describe the distribution of scores on permuted labels.

    Parameters
    ----------
    null_scores : array-like of shape (n_permutations,)
        One score per permutation.
    observed : float, default=None
        Score on the true labels. When given, the share of null scores at least as
        good as it is reported.
    greater_is_better : bool, default=True
        Direction used for that share: ``>= observed`` when ``True``,
        ``<= observed`` when ``False``.

    Returns
    -------
    dict
        ``n`` (int), ``mean``, ``sd`` (sample standard deviation, ``ddof=1``; NaN
        when ``n == 1``), ``min``, ``max``, ``quantiles`` (a dict with keys
        ``"0.05"``, ``"0.25"``, ``"0.5"``, ``"0.75"``, ``"0.95"``, computed with
        numpy's default linear interpolation), ``observed`` (the value given, or
        ``None``) and ``observed_rank_fraction`` (share of null scores at least as
        good as ``observed``, or ``None`` when no observed score is given). All
        values are plain Python numbers.

    Raises
    ------
    DataError
        If ``null_scores`` is empty or not 1-d, if any null score is NaN, or if
        ``observed`` is NaN.

    Examples
    --------
    >>> s = null_summary([0.4, 0.5, 0.6], observed=0.55)
    >>> s["mean"], s["observed_rank_fraction"]
    (0.5, 0.3333333333333333)
    """
    greater = _check_direction(greater_is_better)
    scores = _check_null_scores(null_scores)
    obs = None if observed is None else _check_observed(observed)
    q = np.quantile(scores, _QUANTILES)
    sd = float(np.std(scores, ddof=1)) if scores.size > 1 else float("nan")
    return {
        "n": int(scores.size),
        "mean": float(np.mean(scores)),
        "sd": sd,
        "min": float(np.min(scores)),
        "max": float(np.max(scores)),
        "quantiles": {str(p): float(v) for p, v in zip(_QUANTILES, q, strict=True)},
        "observed": obs,
        "observed_rank_fraction": (
            None
            if obs is None
            else float(_at_least_as_good(scores, obs, greater).mean())
        ),
    }
