"""Human reference: each rater, and the model, against the other raters' consensus.

A claim that a model "agrees with the raters as well as a rater does" needs both
sides judged by the same yardstick. Scoring a rater against a consensus that
includes the rater's own vote flatters the rater; scoring the model against the
consensus of *all* raters while each rater only has the others' gives the model a
steadier reference than the raters had. Here every rater ``r`` is scored against
the consensus of the raters other than ``r`` (leave one rater out), and the model
is scored against that *same* reference on the *same* cases.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from numbers import Integral, Real
from typing import TYPE_CHECKING, Any

import numpy as np

from foldwall.compare import TestResult, corrected_t_interval, corrected_ttest
from foldwall.exceptions import DataError, SpecError
from foldwall.labels._bootstrap import check_confidence
from foldwall.labels._consensus import check_rule, rule_text
from foldwall.labels._loo import (
    REFERENCE_METRICS,
    check_metric,
    leave_one_rater_out,
    reference_arrays,
    score_fn,
)
from foldwall.labels._results import as_table, json_float
from foldwall.labels._table import RatingTable

if TYPE_CHECKING:
    from collections.abc import Callable, Sequence

    from numpy.typing import ArrayLike, NDArray

    RandomState = int | np.random.Generator | np.random.SeedSequence | None
    WeightedStat = Callable[[NDArray[np.float64]], NDArray[np.float64]]

__all__ = [
    "ModelVsRaters",
    "RaterComparison",
    "SplitComparison",
    "model_vs_raters",
]

# ---------------------------------------------------------- model vs raters


@dataclass(frozen=True)
class SplitComparison:
    """Model and typical rater on the test cases of one outer split.

    Parameters
    ----------
    model : float
        Mean over raters ``r`` of the model's score against rater ``r``'s
        reference (the others' consensus) on the split's cases that ``r`` rated.
    typical_rater : float
        Mean over the same raters of rater ``r``'s score against the same
        reference on the same cases.
    difference : float
        ``model - typical_rater`` (the mean of the per-rater differences).
    n_raters : int
        Raters with at least one scored case in the split.
    """

    model: float
    typical_rater: float
    difference: float
    n_raters: int

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready values."""
        return {
            "model": json_float(self.model),
            "typical_rater": json_float(self.typical_rater),
            "difference": json_float(self.difference),
            "n_raters": self.n_raters,
        }


@dataclass(frozen=True)
class RaterComparison:
    """The model and one rater against that rater's reference, over the splits.

    Parameters
    ----------
    rater : str
        Rater name.
    model : float
        Mean over splits of the model's score against the consensus of the
        raters other than this one, on the cases this rater rated.
    rater_score : float
        Mean over the same splits of this rater's score against that reference.
    n_splits : int
        Splits in which both scores were defined.
    """

    rater: str
    model: float
    rater_score: float
    n_splits: int

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready values."""
        return {
            "rater": self.rater,
            "model": json_float(self.model),
            "rater_score": json_float(self.rater_score),
            "n_splits": self.n_splits,
        }


@dataclass(frozen=True)
class ModelVsRaters:
    """The model against the raters, on the raters' own terms.

    Parameters
    ----------
    metric : str
        Score used.
    greater_is_better : bool
        Direction in which the metric is preferred.
    rule : str
        Consensus rule of the references, in words.
    model : float
        Mean over splits of :attr:`SplitComparison.model`.
    model_ci : tuple of (float, float)
        Corrected resampled t interval over the splits.
    typical_rater : float
        Mean over splits of :attr:`SplitComparison.typical_rater`.
    typical_rater_ci : tuple of (float, float)
        Corrected resampled t interval over the splits.
    difference : float
        Mean over splits of ``model - typical_rater``.
    difference_ci : tuple of (float, float)
        Corrected resampled t interval of ``difference``.
    test : TestResult
        Corrected resampled t-test of ``difference`` against 0 (two-sided).
    alpha : float
        Level of the test.
    confidence : float
        Coverage of the intervals.
    margin : float or None
        Smallest difference of interest, if one was given.
    equivalence_ci : tuple of (float, float) or None
        The ``1 - 2 alpha`` corrected interval of ``difference``; lying inside
        ``(-margin, margin)`` is the two one-sided tests' (TOST) equivalence.
    splits : tuple of SplitComparison
        One per split that could be scored.
    per_rater : tuple of RaterComparison
        The model and each rater against that rater's reference.
    n_splits_skipped : int
        Splits in which no rater had a scored case.
    n_train, n_test : int
        Row counts used by the correction.
    n_raters : int
        Raters in the table.
    method : str
        How the comparison was made, in words.
    """

    metric: str
    greater_is_better: bool
    rule: str
    model: float
    model_ci: tuple[float, float]
    typical_rater: float
    typical_rater_ci: tuple[float, float]
    difference: float
    difference_ci: tuple[float, float]
    test: TestResult
    alpha: float
    confidence: float
    margin: float | None
    equivalence_ci: tuple[float, float] | None
    splits: tuple[SplitComparison, ...]
    per_rater: tuple[RaterComparison, ...]
    n_splits_skipped: int
    n_train: int
    n_test: int
    n_raters: int
    method: str

    def statement(self, model: str = "the model") -> str:
        """The plain sentence for "agrees as well as a typical rater" (see
        :func:`human_reference_statement`)."""
        from foldwall.labels._statements import human_reference_statement

        return human_reference_statement(
            model=model,
            metric=self.metric,
            model_score=self.model,
            rater_score=self.typical_rater,
            mean_difference=self.difference,
            ci=self.difference_ci,
            p_value=self.test.p_value,
            alpha=self.alpha,
            n_splits=len(self.splits),
            n_raters=self.n_raters,
            greater_is_better=self.greater_is_better,
            confidence=self.confidence,
            margin=self.margin,
            equivalence_ci=self.equivalence_ci,
        )

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-ready values."""

        def pair(ci: tuple[float, float] | None) -> list[float | None] | None:
            return None if ci is None else [json_float(ci[0]), json_float(ci[1])]

        return {
            "metric": self.metric,
            "greater_is_better": self.greater_is_better,
            "rule": self.rule,
            "model": json_float(self.model),
            "model_ci": pair(self.model_ci),
            "typical_rater": json_float(self.typical_rater),
            "typical_rater_ci": pair(self.typical_rater_ci),
            "difference": json_float(self.difference),
            "difference_ci": pair(self.difference_ci),
            "test": self.test.to_dict(),
            "alpha": self.alpha,
            "confidence": self.confidence,
            "margin": self.margin,
            "equivalence_ci": pair(self.equivalence_ci),
            "splits": [s.to_dict() for s in self.splits],
            "per_rater": [r.to_dict() for r in self.per_rater],
            "n_splits_skipped": self.n_splits_skipped,
            "n_train": self.n_train,
            "n_test": self.n_test,
            "n_raters": self.n_raters,
            "method": self.method,
            "statement": self.statement(),
        }


def _predicted_numbers(
    table: RatingTable, predicted: ArrayLike, *, split: int
) -> NDArray[np.float64]:
    """Model predictions as category indices (as floats) or numbers."""
    arr = np.asarray(predicted, dtype=object).ravel()
    if table.categories is None or table.scale == "interval":
        try:
            out = np.asarray(arr, dtype=float)
        except (TypeError, ValueError) as exc:
            raise DataError(
                f"predictions of split {split} must be numbers for interval "
                f"ratings ({exc})."
            ) from exc
        if not np.isfinite(out).all():
            raise DataError(
                f"predictions of split {split} hold NaN or infinite values; "
                f"every test case needs a prediction."
            )
        return out
    index = {v: k for k, v in enumerate(table.categories)}
    out = np.empty(arr.size)
    for i, v in enumerate(arr):
        key = v.item() if isinstance(v, np.generic) else v
        k = index.get(key)
        if k is None:
            raise DataError(
                f"predictions of split {split}: {key!r} is not one of the classes "
                f"{', '.join(map(repr, table.categories))}; predict the raters' "
                f"labels."
            )
        out[i] = k
    return out


def _check_count(value: object, *, name: str, where: str) -> int:
    if isinstance(value, bool) or not isinstance(value, Integral) or int(value) < 1:
        raise SpecError(f"{where}: {name} must be a whole number >= 1, got {value!r}.")
    return int(value)


def model_vs_raters(
    ratings: RatingTable | ArrayLike,
    splits: Sequence[tuple[ArrayLike, ArrayLike]],
    *,
    metric: str | None = None,
    rule: str | None = None,
    drop_ties: bool = True,
    n_train: int | None = None,
    n_test: int | None = None,
    alpha: float = 0.05,
    confidence: float = 0.95,
    margin: float | None = None,
) -> ModelVsRaters:
    """Compare a model's out-of-fold predictions with a typical rater.

    Parameters
    ----------
    ratings : RatingTable or array-like of shape (n_cases, n_raters)
        From :func:`rating_table`, or raw nominal ratings.
    splits : sequence of (test_cases, predicted)
        One pair per outer split (all repetitions): the positions of the
        split's test cases in ``ratings``, and the model's predictions for them
        (labels; numbers for interval ratings), from a model that never saw
        those cases.
    metric : str, default=None
        As in :func:`rater_reference`.
    rule : {"majority", "median", "mean"}, default=None
        Consensus rule of the references.
    drop_ties : bool, default=True
        Leave out cases whose reference needed a tie broken (for model and
        rater alike).
    n_train, n_test : int, default=None
        Training and test rows of one split, for the variance correction.
        Default: ``n_test`` is the mean test size over the splits (rounded) and
        ``n_train = n_cases - n_test``.
    alpha : float, default=0.05
        Level of the test.
    confidence : float, default=0.95
        Coverage of the intervals.
    margin : float, default=None
        Smallest difference of interest (in metric units). When given, the
        ``1 - 2 alpha`` interval is reported so that "as well as" can be shown
        by two one-sided tests (Schuirmann 1987).

    Returns
    -------
    ModelVsRaters

    Raises
    ------
    SpecError
        On bad settings or split positions.
    DataError
        On predictions that are not labels of the table.

    Notes
    -----
    **The pairing.** In each outer split ``f`` and for each rater ``r``, two
    scores are computed against the same reference, the consensus of the raters
    other than ``r``, on the same cases, the split's test cases that ``r`` rated
    (and whose reference is defined and, by default, not tied):

    - ``model[r, f]``: the model's out-of-fold predictions;
    - ``rater[r, f]``: rater ``r``'s own ratings.

    The split's difference is ``d_f = mean_r (model[r, f] - rater[r, f])``, the
    model minus a typical rater (each rater counting once). The differences are
    tested with the corrected resampled t-test (Nadeau & Bengio 2003) with
    ``n_test / n_train`` of the outer splits.

    **Why this is fair.** (1) Neither side is part of its own reference: the
    rater is left out of the consensus it is scored against, and the model never
    is in it. (2) Both sides face exactly the same reference, built from the same
    number of raters, on exactly the same cases, so differences in case
    difficulty and in the reliability of the reference cancel within each split.
    A model scored against the consensus of all raters would face a steadier
    reference than any rater can, and look better for it. (3) The model's
    predictions are out of fold, so it never saw the labels of the cases it is
    scored on. (4) The correction accounts for the overlap of the training sets
    behind the model's predictions in different splits; the raters' scores need
    no correction, and the differences inherit it (so the test is, if anything,
    conservative). One asymmetry remains and is stated: the model was trained on
    the consensus of *all* raters on other cases, rater ``r`` included, which
    teaches it the panel's habits rather than the left-out panel's; if anything
    this tilts the comparison against the model.
    """
    where = "model_vs_raters"
    table = as_table(ratings, None)
    metric_ = check_metric(metric, table.scale, where=where)
    rule_ = check_rule(rule, table.scale, where=where)
    confidence = check_confidence(confidence, where=where)
    alpha_ = _check_alpha(alpha, where=where)
    margin_ = _check_margin(margin, where=where)
    if not isinstance(splits, (list, tuple)) or len(splits) < 2:
        raise SpecError(
            f"{where}: splits must be a list of at least 2 (test_cases, predicted) "
            f"pairs, one per outer split."
        )
    loo = leave_one_rater_out(table, rule=rule_)
    given, ref = reference_arrays(table, loo, bool(drop_ties))
    scorer = _SplitScorer(table, metric_, given, ref)
    rows: list[SplitComparison] = []
    test_sizes = []
    for s, pair in enumerate(splits):
        cases, pred = _checked_split(table, pair, s, where=where)
        test_sizes.append(cases.size)
        row = scorer.compare(cases, pred)
        if row is not None:
            rows.append(row)
    if len(rows) < 2:
        raise DataError(
            f"{where}: only {len(rows)} split(s) had cases scored against a "
            f"defined reference; the comparison needs at least 2."
        )
    n_test_ = (
        _check_count(n_test, name="n_test", where=where)
        if n_test is not None
        else max(1, round(float(np.mean(test_sizes))))
    )
    n_train_ = (
        _check_count(n_train, name="n_train", where=where)
        if n_train is not None
        else max(1, table.n_cases - n_test_)
    )
    d = np.array([r.difference for r in rows])
    m = np.array([r.model for r in rows])
    t = np.array([r.typical_rater for r in rows])

    def interval(v: NDArray[np.float64], conf: float) -> tuple[float, float]:
        return corrected_t_interval(
            v, n_train=n_train_, n_test=n_test_, confidence=conf
        )

    method = (
        f"per outer split and rater r: the model's and rater r's {metric_} against "
        f"the {rule_} consensus of the raters other than r, on the split's test "
        f"cases that r rated{' (tied references left out)' if drop_ties else ''}; "
        f"split difference = mean over raters of model minus rater; corrected "
        f"resampled t-test and interval over {len(rows)} splits (Nadeau & Bengio "
        f"2003; n_test/n_train = {n_test_}/{n_train_})"
    )
    return ModelVsRaters(
        metric=metric_,
        greater_is_better=REFERENCE_METRICS[metric_][0],
        rule=rule_text(rule_),
        model=float(m.mean()),
        model_ci=interval(m, confidence),
        typical_rater=float(t.mean()),
        typical_rater_ci=interval(t, confidence),
        difference=float(d.mean()),
        difference_ci=interval(d, confidence),
        test=corrected_ttest(d, n_train=n_train_, n_test=n_test_),
        alpha=alpha_,
        confidence=confidence,
        margin=margin_,
        equivalence_ci=None if margin_ is None else interval(d, 1.0 - 2.0 * alpha_),
        splits=tuple(rows),
        per_rater=scorer.per_rater(),
        n_splits_skipped=len(splits) - len(rows),
        n_train=n_train_,
        n_test=n_test_,
        n_raters=table.n_raters,
        method=method,
    )


def _check_alpha(alpha: object, *, where: str) -> float:
    if (
        isinstance(alpha, bool)
        or not isinstance(alpha, Real)
        or not 0.0 < float(alpha) < 0.5
    ):
        raise SpecError(
            f"{where}: alpha must lie strictly between 0 and 0.5 (e.g. 0.05), got "
            f"{alpha!r}."
        )
    return float(alpha)


def _check_margin(margin: object, *, where: str) -> float | None:
    if margin is None:
        return None
    if (
        isinstance(margin, bool)
        or not isinstance(margin, Real)
        or not float(margin) > 0
    ):
        raise SpecError(f"{where}: margin must be a number > 0, got {margin!r}.")
    return float(margin)


def _checked_split(
    table: RatingTable, pair: object, s: int, *, where: str
) -> tuple[NDArray[np.int64], NDArray[np.float64]]:
    """Test-case positions and predictions (as numbers) of one split, checked."""
    if not isinstance(pair, (list, tuple)) or len(pair) != 2:
        raise SpecError(f"{where}: split {s} must be a pair (test_cases, predicted).")
    cases = np.asarray(pair[0])
    n = table.n_cases
    if cases.ndim != 1 or not np.issubdtype(cases.dtype, np.integer):
        raise SpecError(
            f"{where}: test cases of split {s} must be whole-number positions."
        )
    if cases.size == 0 or cases.min() < 0 or cases.max() >= n:
        raise SpecError(
            f"{where}: test cases of split {s} must be positions 0..{n - 1}."
        )
    if np.unique(cases).size != cases.size:
        raise SpecError(f"{where}: test cases of split {s} repeat a position.")
    pred = _predicted_numbers(table, pair[1], split=s)
    if pred.size != cases.size:
        raise SpecError(
            f"{where}: split {s} has {cases.size} test cases but {pred.size} "
            f"predictions."
        )
    return cases.astype(np.int64), pred


class _SplitScorer:
    """Scores the model and every rater against each rater's reference, per split."""

    def __init__(
        self,
        table: RatingTable,
        metric: str,
        given: NDArray[np.float64],
        ref: NDArray[np.float64],
    ) -> None:
        self.table = table
        self.metric = metric
        self.given = given
        self.ref = ref
        self.k = len(table.categories or ())
        self.rater_fns = [
            score_fn(metric, given[:, j], ref[:, j], self.k)
            for j in range(table.n_raters)
        ]
        self.pairs: list[list[tuple[float, float]]] = [[] for _ in table.raters]

    def compare(
        self, cases: NDArray[np.int64], pred: NDArray[np.float64]
    ) -> SplitComparison | None:
        n = self.table.n_cases
        model_given = np.full(n, np.nan)
        model_given[cases] = pred
        weight = np.zeros((1, n))
        weight[0, cases] = 1.0
        models, raters = [], []
        for j in range(self.table.n_raters):
            # The model is scored only where rater j is, so both face the same cases.
            scored = ~np.isnan(self.given[:, j])
            m_fn = score_fn(
                self.metric,
                np.where(scored, model_given, np.nan),
                self.ref[:, j],
                self.k,
            )
            m_score = float(m_fn(weight)[0])
            r_score = float(self.rater_fns[j](weight)[0])
            if math.isfinite(m_score) and math.isfinite(r_score):
                models.append(m_score)
                raters.append(r_score)
                self.pairs[j].append((m_score, r_score))
        if not models:
            return None
        return SplitComparison(
            model=float(np.mean(models)),
            typical_rater=float(np.mean(raters)),
            difference=float(np.mean(models) - np.mean(raters)),
            n_raters=len(models),
        )

    def per_rater(self) -> tuple[RaterComparison, ...]:
        return tuple(
            RaterComparison(
                rater=name,
                model=float(np.mean([a for a, _ in got])) if got else math.nan,
                rater_score=float(np.mean([b for _, b in got])) if got else math.nan,
                n_splits=len(got),
            )
            for name, got in zip(self.table.raters, self.pairs, strict=True)
        )
