"""Ratings of several raters as one checked table.

A rating table has one row per case and one column per rater. A missing rating is
``NaN``, ``None`` or ``pandas.NA``. Nominal and ordinal ratings are stored as the
index of each label in an ordered tuple of categories; interval ratings as numbers.
Every check here fails with a one-line message that names the rater, the case or the
label and says how to fix it.
"""

from __future__ import annotations

from dataclasses import dataclass
from numbers import Real
from typing import TYPE_CHECKING, Any, Literal

import numpy as np
import pandas as pd

from foldwall.exceptions import DataError, SpecError

if TYPE_CHECKING:
    from collections.abc import Sequence

    from numpy.typing import ArrayLike, NDArray

__all__ = ["SCALES", "RatingTable", "Scale", "rating_table"]

Scale = Literal["nominal", "ordinal", "interval"]
SCALES: tuple[str, ...] = ("nominal", "ordinal", "interval")

# How many names a message lists before it says "and N more".
_LIST_AT_MOST = 3


@dataclass(frozen=True)
class RatingTable:
    """Checked ratings: one row per case, one column per rater.

    Build it with :func:`rating_table`; the constructor does not check anything.

    Parameters
    ----------
    scale : {"nominal", "ordinal", "interval"}
        Kind of rating.
    raters : tuple of str
        Name of each rater (column), in column order.
    cases : tuple
        Identifier of each case (row), used in messages.
    categories : tuple or None
        The possible labels in order (nominal, ordinal); ``None`` for interval
        ratings.
    codes : ndarray of shape (n_cases, n_raters) or None
        Index of each rating in ``categories``, ``-1`` where the rating is missing
        (nominal, ordinal); ``None`` for interval ratings.
    values : ndarray of shape (n_cases, n_raters) or None
        The ratings as numbers, ``NaN`` where missing: the interval ratings
        themselves, or the labels of nominal/ordinal ratings when every category
        is a number; otherwise ``None``.
    """

    scale: Scale
    raters: tuple[str, ...]
    cases: tuple[Any, ...]
    categories: tuple[Any, ...] | None
    codes: NDArray[np.int64] | None
    values: NDArray[np.float64] | None

    @property
    def n_cases(self) -> int:
        """Number of cases (rows)."""
        return len(self.cases)

    @property
    def n_raters(self) -> int:
        """Number of raters (columns)."""
        return len(self.raters)

    def take(self, rows: ArrayLike) -> RatingTable:
        """The same ratings for the cases ``rows`` only (indices), in that order."""
        idx = np.asarray(rows, dtype=np.intp)
        return RatingTable(
            scale=self.scale,
            raters=self.raters,
            cases=tuple(self.cases[i] for i in idx),
            categories=self.categories,
            codes=None if self.codes is None else self.codes[idx],
            values=None if self.values is None else self.values[idx],
        )

    @property
    def observed(self) -> NDArray[np.bool_]:
        """Boolean matrix of shape (n_cases, n_raters): True where a rating exists."""
        if self.codes is not None:
            return np.asarray(self.codes >= 0)
        assert self.values is not None
        return np.asarray(~np.isnan(self.values))

    def counts(self) -> NDArray[np.float64]:
        """Number of ratings of each category per case.

        Returns
        -------
        ndarray of shape (n_cases, n_categories)
            ``counts[i, j]`` is how many raters gave case ``i`` the label
            ``categories[j]``.

        Raises
        ------
        SpecError
            For interval ratings, which have no categories.
        """
        codes = self.require_codes("a count of labels per case")
        k = len(self.categories or ())
        out = np.zeros((codes.shape[0], k), dtype=float)
        rows, cols = np.nonzero(codes >= 0)
        np.add.at(out, (rows, codes[rows, cols]), 1.0)
        return out

    def require_codes(self, what: str) -> NDArray[np.int64]:
        """Return :attr:`codes`, or fail in one line naming ``what`` needed them."""
        if self.codes is None:
            raise SpecError(
                f"{what} needs nominal or ordinal ratings, but these ratings are "
                f"{self.scale}; use Krippendorff's alpha with scale='interval' instead."
            )
        return self.codes

    def require_values(self, what: str) -> NDArray[np.float64]:
        """Return :attr:`values`, or fail in one line naming ``what`` needed them."""
        if self.values is None:
            raise SpecError(
                f"{what} needs numeric ratings, but the labels "
                f"{_names(self.categories or ())} are not numbers; use "
                f"scale='nominal' or 'ordinal'."
            )
        return self.values

    def subset(self, cases: ArrayLike) -> RatingTable:
        """The same raters on a subset (or resample) of the cases, by position."""
        idx = np.asarray(cases, dtype=np.int64)
        return RatingTable(
            scale=self.scale,
            raters=self.raters,
            cases=tuple(self.cases[i] for i in idx),
            categories=self.categories,
            codes=None if self.codes is None else self.codes[idx],
            values=None if self.values is None else self.values[idx],
        )


def _names(items: Sequence[Any], limit: int = _LIST_AT_MOST) -> str:
    """``'a', 'b', 'c' and 2 more`` for a message."""
    shown = ", ".join(repr(x) for x in list(items)[:limit])
    rest = len(items) - limit
    return shown if rest <= 0 else f"{shown} and {rest} more"


def _plain(value: Any) -> Any:
    """A numpy scalar as the Python value it stands for (for messages and JSON)."""
    if isinstance(value, np.generic):
        return value.item()
    return value


def _is_number(value: Any) -> bool:
    return isinstance(value, Real) and not isinstance(value, bool)


def _sorted_labels(labels: list[Any]) -> list[Any]:
    try:
        return sorted(labels)
    except TypeError:
        return sorted(labels, key=str)


def rating_table(
    ratings: ArrayLike,
    *,
    scale: str = "nominal",
    categories: Sequence[Any] | None = None,
    raters: Sequence[str] | None = None,
    cases: Sequence[Any] | None = None,
) -> RatingTable:
    """Check ratings and store them as a :class:`RatingTable`.

    Parameters
    ----------
    ratings : array-like or pandas.DataFrame of shape (n_cases, n_raters)
        One row per case, one column per rater. Missing ratings are ``NaN``,
        ``None`` or ``pandas.NA``. A DataFrame gives the rater names (columns) and
        case identifiers (index) unless ``raters`` / ``cases`` are passed.
    scale : {"nominal", "ordinal", "interval"}, default="nominal"
        Kind of rating: unordered labels, ordered labels, or numbers on a scale
        with equal steps.
    categories : sequence, default=None
        The possible labels (for a study: the target's classes), in order for
        ordinal ratings. A rating that is not one of them is an error. By default
        the sorted distinct labels found; ordinal labels that are not numbers need
        their order given here. Ignored for interval ratings.
    raters : sequence of str, default=None
        Rater names, one per column. Default: the DataFrame's columns, or
        ``"rater_0"``, ``"rater_1"``, ...
    cases : sequence, default=None
        Case identifiers, one per row, used in messages. Default: the DataFrame's
        index, or the row positions.

    Returns
    -------
    RatingTable

    Raises
    ------
    SpecError
        If ``scale`` is unknown, there are fewer than two raters, names do not
        match the shape, or ordinal text labels come without an order.
    DataError
        If a case has no rating at all, a rating is not one of ``categories``, or
        an interval rating is not a finite number.

    Examples
    --------
    >>> from foldwall.labels import rating_table
    >>> t = rating_table([["yes", "no"], ["yes", None]], raters=["ann", "bo"])
    >>> t.categories, t.codes.tolist()
    (('no', 'yes'), [[1, 0], [1, -1]])
    """
    if scale not in SCALES:
        raise SpecError(
            f"scale must be one of 'nominal', 'ordinal', 'interval', got {scale!r}."
        )
    arr, frame_raters, frame_cases = _as_array(ratings)
    names = _rater_names(raters, frame_raters, arr.shape[1])
    ids = _case_ids(cases, frame_cases, arr.shape[0])
    missing = np.asarray(pd.isna(arr), dtype=bool)
    _check_every_case_rated(missing, ids, names)
    if scale == "interval":
        return RatingTable(
            scale="interval",
            raters=tuple(names),
            cases=tuple(ids),
            categories=None,
            codes=None,
            values=_interval_values(arr, missing, names, ids),
        )
    found = {_plain(v) for v in arr[~missing]}
    labels = _labels(found, categories, scale)
    codes = _codes(arr, missing, labels, names)
    values: NDArray[np.float64] | None = None
    if all(_is_number(v) for v in labels):
        lookup = np.asarray([float(v) for v in labels], dtype=float)
        values = np.where(codes >= 0, lookup[np.maximum(codes, 0)], np.nan)
    return RatingTable(
        scale="nominal" if scale == "nominal" else "ordinal",
        raters=tuple(names),
        cases=tuple(ids),
        categories=tuple(labels),
        codes=codes,
        values=values,
    )


def _as_array(
    ratings: ArrayLike,
) -> tuple[NDArray[Any], list[str] | None, list[Any] | None]:
    """The ratings as a 2-d object array, with a DataFrame's column and row names."""
    frame_raters: list[str] | None = None
    frame_cases: list[Any] | None = None
    if isinstance(ratings, pd.DataFrame):
        arr = ratings.to_numpy(dtype=object)
        frame_raters = [str(c) for c in ratings.columns]
        frame_cases = [_plain(i) for i in ratings.index]
    else:
        arr = np.asarray(ratings, dtype=object)
        if arr.ndim == 1 and any(isinstance(r, (list, tuple)) for r in arr):
            raise SpecError(
                "ratings rows have different lengths; give every case one entry per "
                "rater (None for a missing rating)."
            )
    if arr.ndim != 2:
        raise SpecError(
            f"ratings must be a table of shape (n_cases, n_raters), got an array "
            f"with {arr.ndim} dimension(s); put one rater per column."
        )
    if arr.shape[0] == 0:
        raise DataError("ratings have no cases (rows); nothing to rate.")
    return arr, frame_raters, frame_cases


def _rater_names(
    raters: Sequence[str] | None, from_frame: list[str] | None, n_raters: int
) -> list[str]:
    names = [str(r) for r in raters] if raters is not None else from_frame
    if names is None:
        names = [f"rater_{j}" for j in range(n_raters)]
    if len(names) != n_raters:
        raise SpecError(
            f"raters names {len(names)} raters but the ratings have {n_raters} "
            f"columns; give one name per column."
        )
    if len(set(names)) != len(names):
        dup = sorted({n for n in names if names.count(n) > 1})
        raise SpecError(f"rater names must be distinct; {_names(dup)} repeat.")
    if n_raters < 2:
        only = f" ({names[0]!r})" if names else ""
        raise SpecError(
            f"ratings have {n_raters} rater column(s){only}; agreement and a "
            f"consensus need at least 2 raters per table - add the other raters' "
            f"columns."
        )
    return names


def _case_ids(
    cases: Sequence[Any] | None, from_frame: list[Any] | None, n_cases: int
) -> list[Any]:
    ids = list(cases) if cases is not None else from_frame
    if ids is None:
        ids = list(range(n_cases))
    if len(ids) != n_cases:
        raise SpecError(
            f"cases names {len(ids)} cases but the ratings have {n_cases} rows; "
            f"give one identifier per row."
        )
    return ids


def _check_every_case_rated(
    missing: NDArray[np.bool_], ids: list[Any], names: list[str]
) -> None:
    empty = np.flatnonzero(missing.all(axis=1))
    if empty.size == 0:
        return
    which = [_plain(ids[i]) for i in empty]
    one = empty.size == 1
    raise DataError(
        f"ratings: {'case' if one else 'cases'} {_names(which)} "
        f"{'has' if one else 'have'} no rating from any rater ({_names(names)}); "
        f"rate or drop {'it' if one else 'them'}."
    )


def _interval_values(
    arr: NDArray[Any], missing: NDArray[np.bool_], names: list[str], ids: list[Any]
) -> NDArray[np.float64]:
    numbers = np.full(arr.shape, np.nan)
    for i, j in zip(*np.nonzero(~missing), strict=True):
        v = _plain(arr[i, j])
        if not _is_number(v) or not np.isfinite(float(v)):
            raise DataError(
                f"ratings: rater {names[j]!r} gives {v!r} for case "
                f"{_plain(ids[i])!r}, which is not a finite number; interval "
                f"ratings must be numbers (or missing)."
            )
        numbers[i, j] = float(v)
    return numbers


def _labels(found: set[Any], categories: Sequence[Any] | None, scale: str) -> list[Any]:
    """The ordered categories: given, or the sorted labels found."""
    if categories is not None:
        labels = [_plain(c) for c in categories]
        if len(labels) < 2:
            raise SpecError(
                f"categories must list at least 2 labels, got {labels!r}; ratings "
                f"with one possible label cannot disagree."
            )
        if len(set(labels)) != len(labels):
            raise SpecError(f"categories must be distinct, got {labels!r}.")
        return labels
    labels = _sorted_labels(list(found))
    if labels and all(isinstance(v, float) and v.is_integer() for v in labels):
        # A column of whole numbers with gaps is read as floats (1.0, 2.0); its
        # labels are the whole numbers.
        labels = [int(v) for v in labels]
    if scale == "ordinal" and not all(_is_number(v) for v in labels):
        raise SpecError(
            f"ordinal ratings {_names([v for v in labels if not _is_number(v)])} "
            f"are not numbers, so their order is unknown; pass categories "
            f"(the labels from lowest to highest)."
        )
    return labels


def _codes(
    arr: NDArray[Any], missing: NDArray[np.bool_], labels: list[Any], names: list[str]
) -> NDArray[np.int64]:
    """Index of each rating in ``labels``; a label outside them names the rater."""
    index = {v: k for k, v in enumerate(labels)}
    codes = np.full(arr.shape, -1, dtype=np.int64)
    for j, name in enumerate(names):
        bad: dict[Any, int] = {}
        for i in np.flatnonzero(~missing[:, j]):
            v = _plain(arr[i, j])
            k = index.get(v)
            if k is None:
                bad[v] = bad.get(v, 0) + 1
            else:
                codes[i, j] = k
        if bad:
            first = next(iter(bad))
            n_bad = sum(bad.values())
            raise DataError(
                f"ratings: rater {name!r} gives {_names(list(bad))} "
                f"({n_bad} case{'s' if n_bad != 1 else ''}), not one of the "
                f"classes {_names(labels, limit=8)}; recode {first!r} or add it to "
                f"the classes."
            )
    return codes
