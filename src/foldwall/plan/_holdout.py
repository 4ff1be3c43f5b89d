"""Sealing a hold-out: which rows are set aside before anything else looks at the table.

Three ways, one result (a boolean mask over the rows of the combined table):

- :func:`holdout_by_fraction`: a seeded share of the rows, stratified by the target
  (class labels, or quantile bins of a continuous target) and group-aware, so that no
  group has rows on both sides of the boundary;
- :func:`holdout_by_column`: a boolean column of the table marks the hold-out rows;
- :func:`holdout_from_table`: the hold-out rows come from a second table, appended
  after the development rows.

Every function is pure (arrays in, a frozen :class:`HoldoutSplit` out) and refuses a
split that puts one group on both sides, with a one-line message naming the group.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass
from numbers import Integral, Real
from typing import TYPE_CHECKING, Any

import numpy as np

from foldwall.exceptions import DataError, SpecError
from foldwall.plan._folds import derive_seed

if TYPE_CHECKING:
    from numpy.typing import ArrayLike, NDArray

__all__ = [
    "HoldoutSplit",
    "holdout_by_column",
    "holdout_by_fraction",
    "holdout_from_table",
]

_REGRESSION_BINS = 5  # common practice: stratify a continuous target by quintiles
_TRUE_TEXT = frozenset({"true", "yes", "1"})
_FALSE_TEXT = frozenset({"false", "no", "0"})


@dataclass(frozen=True)
class HoldoutSplit:
    """Which rows are sealed.

    Parameters
    ----------
    sealed : ndarray of shape (n_rows,), dtype bool
        True for a hold-out row.
    how : {"fraction", "column", "table"}
        How the rows were chosen.
    details : dict
        How exactly (fraction and seed, column name, or table name), JSON-ready.
    """

    sealed: NDArray[np.bool_]
    how: str
    details: dict[str, Any]

    @property
    def development(self) -> NDArray[np.intp]:
        """Indices of the development rows, ascending."""
        return np.flatnonzero(~self.sealed)

    @property
    def holdout(self) -> NDArray[np.intp]:
        """Indices of the hold-out rows, ascending."""
        return np.flatnonzero(self.sealed)

    def key(self, table: str) -> str:
        """A name for this hold-out: the table's key and the sealed row numbers, hashed.

        Parameters
        ----------
        table : str
            Names the table the rows are numbered in (its content hash; for a
            second table, both tables' hashes).

        Returns
        -------
        str
            64 hex digits; the same rows of the same table give the same key,
            however they were chosen and whichever columns a study uses.
        """
        h = hashlib.sha256(f"{table}\n{self.sealed.size}\n".encode())
        h.update(self.holdout.astype("<i8").tobytes())
        return h.hexdigest()

    def describe(
        self, y: ArrayLike | None = None, groups: ArrayLike | None = None
    ) -> dict[str, Any]:
        """How the rows were sealed, with counts on each side (never any score).

        Parameters
        ----------
        y : array-like of shape (n_rows,), default=None
            Class labels: adds the class counts on each side.
        groups : array-like of shape (n_rows,), default=None
            Adds the number of groups on each side.

        Returns
        -------
        dict
        """
        out: dict[str, Any] = {
            "how": self.how,
            **self.details,
            "rows": {
                "development": int((~self.sealed).sum()),
                "holdout": int(self.sealed.sum()),
            },
        }
        if groups is not None:
            g = np.asarray(groups)
            out["groups"] = {
                "development": int(np.unique(g[~self.sealed]).size),
                "holdout": int(np.unique(g[self.sealed]).size),
            }
        if y is not None:
            labels = np.asarray(y)
            if labels.dtype.kind not in "fc":
                out["classes"] = {
                    side: {
                        str(k): int(v)
                        for k, v in zip(
                            *np.unique(labels[mask], return_counts=True), strict=True
                        )
                    }
                    for side, mask in (
                        ("development", ~self.sealed),
                        ("holdout", self.sealed),
                    )
                }
        return out


def _plain(value: Any) -> Any:
    return value.item() if isinstance(value, np.generic) else value


def _check_groups_not_split(
    sealed: NDArray[np.bool_], groups: NDArray[Any] | None, *, key: str, fix: str
) -> None:
    if groups is None:
        return
    both = np.intersect1d(groups[sealed], groups[~sealed])
    if both.size:
        raise DataError(
            f"{key}: group {_plain(both[0])!r} has rows on both sides of the hold-out "
            f"boundary ({both.size} group(s) in all); {fix}"
        )


def _check_both_sides(sealed: NDArray[np.bool_], *, key: str, fix: str) -> None:
    n_sealed = int(sealed.sum())
    if n_sealed == 0:
        raise DataError(f"{key}: no row is in the hold-out; {fix}")
    if n_sealed == sealed.size:
        raise DataError(
            f"{key}: every row is in the hold-out, none left to develop on; {fix}"
        )


def _as_groups(groups: ArrayLike | None, n: int, key: str) -> NDArray[Any] | None:
    if groups is None:
        return None
    g = np.asarray(groups)
    if g.shape != (n,):
        raise SpecError(
            f"{key}: groups must have one value per row ({n}), got {g.shape}."
        )
    return g


def _strata(y: NDArray[Any], classification: bool) -> NDArray[np.intp]:
    """Stratum of each row: its class, or its quantile bin for a continuous target."""
    if classification:
        return np.unique(y, return_inverse=True)[1].astype(np.intp)
    values = np.asarray(y, dtype=float)
    n_bins = max(1, min(_REGRESSION_BINS, values.size // 2))
    edges = np.quantile(values, np.linspace(0, 1, n_bins + 1)[1:-1])
    return np.searchsorted(edges, values, side="right").astype(np.intp)


def holdout_by_fraction(
    y: ArrayLike,
    fraction: float,
    *,
    groups: ArrayLike | None = None,
    classification: bool = True,
    random_state: int = 0,
    key: str = "holdout.fraction",
) -> HoldoutSplit:
    """Seal a seeded, stratified, group-aware share of the rows.

    Parameters
    ----------
    y : array-like of shape (n_rows,)
        The target: class labels, or numbers for a continuous target.
    fraction : float
        Share of the rows to seal, strictly between 0 and 1.
    groups : array-like of shape (n_rows,), default=None
        Group of each row; a group is sealed whole or not at all.
    classification : bool, default=True
        Stratify by class; otherwise by quintiles of the target (common practice).
    random_state : int, default=0
        The study seed; the split uses its own stream derived from it
        (``derive_seed(random_state, "holdout")``), so it does not change the
        outer folds' seeds.
    key : str, default="holdout.fraction"
        Name of the setting, for messages.

    Returns
    -------
    HoldoutSplit

    Raises
    ------
    SpecError
        If ``fraction`` is not a number strictly between 0 and 1.
    DataError
        If the fraction seals no row or every row (too few rows or groups).

    Notes
    -----
    The units drawn are groups (each row is its own group when ``groups`` is
    None). They are visited in a seeded random order, and a unit is sealed when
    adding it brings the hold-out's count in each stratum closer to
    ``fraction`` times that stratum's total (squared distance over strata). Without
    groups this is a stratified random sample of ``round(fraction * n_c)`` rows of
    each stratum ``c`` (half rounds down); with groups the shares are as close as
    whole groups allow.
    """
    if (
        isinstance(fraction, bool)
        or not isinstance(fraction, Real)
        or not 0.0 < float(fraction) < 1.0
    ):
        raise SpecError(
            f"{key} must be a number strictly between 0 and 1 (e.g. 0.2), got "
            f"{fraction!r}."
        )
    if isinstance(random_state, bool) or not isinstance(random_state, Integral):
        raise SpecError(f"seed must be a whole number, got {random_state!r}.")
    labels = np.asarray(y)
    if labels.ndim != 1 or labels.size < 2:
        raise SpecError(
            f"{key}: y must be 1-d with at least 2 rows, got {labels.shape}."
        )
    n = labels.size
    g = _as_groups(groups, n, key)
    strata = _strata(labels, classification)
    n_strata = int(strata.max()) + 1
    if g is None:
        unit_of_row = np.arange(n)
    else:
        unit_of_row = np.unique(g, return_inverse=True)[1]
    n_units = int(unit_of_row.max()) + 1
    counts = np.zeros((n_units, n_strata))
    np.add.at(counts, (unit_of_row, strata), 1.0)
    target = float(fraction) * counts.sum(axis=0)
    rng = np.random.default_rng(derive_seed(int(random_state), "holdout"))
    held = np.zeros(n_strata)
    chosen = np.zeros(n_units, dtype=bool)
    for unit in rng.permutation(n_units):
        after = held + counts[unit]
        if np.sum((after - target) ** 2) < np.sum((held - target) ** 2):
            held = after
            chosen[unit] = True
    sealed = chosen[unit_of_row]
    what = "rows" if g is None else "groups"
    _check_both_sides(
        sealed,
        key=key,
        fix=f"use a larger {key} or collect more {what} ({n_units} {what} now)",
    )
    _check_groups_not_split(sealed, g, key=key, fix="this is a bug, please report it")
    return HoldoutSplit(
        sealed=sealed,
        how="fraction",
        details={
            "fraction": float(fraction),
            "seed": int(random_state),
            "stratified_by": "class" if classification else "target quintiles",
            "grouped": g is not None,
        },
    )


def _as_bool_column(values: ArrayLike, key: str) -> NDArray[np.bool_]:
    v = np.asarray(values)
    if v.ndim != 1:
        raise SpecError(f"{key}: the column must be 1-d, got shape {v.shape}.")
    if v.dtype.kind == "b":
        return v.astype(bool)
    if v.dtype.kind in "iuf":
        bad = ~np.isin(v, (0, 1))
        if not bad.any():
            return v.astype(bool)
        raise DataError(
            f"{key}: the column must hold true/false (or 1/0); row {int(np.argmax(bad))} "
            f"has {_plain(v[bad][0])!r}. Mark hold-out rows true and the rest false."
        )
    text = np.array([str(x).strip().lower() for x in v.tolist()])
    is_true, is_false = (
        np.isin(text, list(_TRUE_TEXT)),
        np.isin(text, list(_FALSE_TEXT)),
    )
    bad = ~(is_true | is_false)
    if bad.any():
        row = int(np.argmax(bad))
        raise DataError(
            f"{key}: the column must hold true/false (or 1/0); row {row} has "
            f"{_plain(v[row])!r}. Mark hold-out rows true and the rest false."
        )
    return np.asarray(is_true)


def holdout_by_column(
    column: ArrayLike,
    *,
    groups: ArrayLike | None = None,
    name: str = "sealed",
    key: str = "holdout.column",
) -> HoldoutSplit:
    """Seal the rows a boolean column marks.

    Parameters
    ----------
    column : array-like of shape (n_rows,)
        True (or 1, "true", "yes") for a hold-out row; False (0, "false", "no")
        otherwise. Missing values are refused.
    groups : array-like of shape (n_rows,), default=None
        Every group must lie on one side.
    name : str, default="sealed"
        The column's name, recorded in the description.
    key : str, default="holdout.column"
        Name of the setting, for messages.

    Returns
    -------
    HoldoutSplit

    Raises
    ------
    DataError
        If a value is not true/false, the column marks no row or every row, or a
        group has rows on both sides.
    """
    sealed = _as_bool_column(column, f"{key} '{name}'")
    _check_both_sides(
        sealed, key=f"{key} '{name}'", fix="mark some rows true and keep others false"
    )
    g = _as_groups(groups, sealed.size, key)
    _check_groups_not_split(
        sealed,
        g,
        key=f"{key} '{name}'",
        fix="mark every row of a group the same way",
    )
    return HoldoutSplit(sealed=sealed, how="column", details={"column": name})


def holdout_from_table(
    n_development: int,
    n_holdout: int,
    *,
    groups: ArrayLike | None = None,
    name: str = "holdout table",
    key: str = "holdout.table",
) -> HoldoutSplit:
    """Seal the rows of a second table, appended after the development rows.

    Parameters
    ----------
    n_development : int
        Rows of the main table (they come first).
    n_holdout : int
        Rows of the second table (they come last).
    groups : array-like of shape (n_development + n_holdout,), default=None
        Groups of the combined rows; a group may not appear in both tables.
    name : str, default="holdout table"
        The second table's name (its file name), recorded in the description.
    key : str, default="holdout.table"
        Name of the setting, for messages.

    Returns
    -------
    HoldoutSplit

    Raises
    ------
    DataError
        If either table is empty, or a group appears in both.
    """
    for label, value in (("n_development", n_development), ("n_holdout", n_holdout)):
        if isinstance(value, bool) or not isinstance(value, Integral) or value < 0:
            raise SpecError(
                f"{key}: {label} must be a whole number >= 0, got {value!r}."
            )
    sealed = np.zeros(int(n_development) + int(n_holdout), dtype=bool)
    sealed[int(n_development) :] = True
    _check_both_sides(
        sealed, key=f"{key} '{name}'", fix="give two tables that both have rows"
    )
    g = _as_groups(groups, sealed.size, key)
    _check_groups_not_split(
        sealed,
        g,
        key=f"{key} '{name}'",
        fix="a group's rows must all be in one of the two tables",
    )
    return HoldoutSplit(sealed=sealed, how="table", details={"table": name})
