"""Exact and near duplicate rows, and whether they fall on both sides of a split.

A row that appears twice, once in a training part and once in the test part,
is scored on a copy of what the model was trained on. Two audits look for such
rows:

* **exact duplicates**: rows whose feature values are identical, found by the
  row fingerprints of the row audit (:func:`foldwall.audit.row_fingerprints`)
  and then confirmed value by value;
* **near duplicates**: pairs of rows whose distance on scaled features is below
  ``near_ratio`` (default 0.1) times the table's typical distance, and closer
  than a cluster-free table of the same intrinsic dimension would put any pair
  by chance (probability below 0.01 over all rows; see
  :mod:`foldwall.audit._neighbours`): the same case measured twice, a copy with
  rounding differences, a row entered under two ids.

Given outer splits, each audit reports the copies that straddle a split (one
copy in the training part, another in the test part): how many, which row ids,
which folds. :func:`merge_duplicates` joins duplicates (with any existing
groups) into groups, so that a group-aware splitter never separates them.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from foldwall.audit._checks import (
    AuditCheck,
    as_frame,
    check_splits,
    count,
    listed,
    row_ids,
)
from foldwall.audit._neighbours import Neighbours, nearest_neighbours
from foldwall.audit._rows import row_fingerprints
from foldwall.exceptions import DataError

if TYPE_CHECKING:
    from numpy.typing import ArrayLike, NDArray

__all__ = ["DuplicateSets", "duplicate_checks", "find_duplicates", "merge_duplicates"]


@dataclass(frozen=True)
class DuplicateSets:
    """Duplicate rows of a table.

    Attributes
    ----------
    exact : list of ndarray
        Each a set (two or more row numbers, ascending) of rows with identical
        feature values.
    near : ndarray of shape (n_pairs, 2)
        Pairs of row numbers closer than ``threshold`` that are not exact copies.
    threshold : float
        The distance below which two rows count as near duplicates.
    typical : float
        The table's typical distance (see :mod:`foldwall.audit._neighbours`).
    """

    exact: list[NDArray[np.intp]]
    near: NDArray[np.intp]
    threshold: float
    typical: float

    @property
    def n_exact_rows(self) -> int:
        """Rows that have at least one identical copy."""
        return int(sum(len(s) for s in self.exact))


def _row_codes(block: pd.DataFrame) -> NDArray[np.intp]:
    """Equal codes for identical rows (NaN equals NaN, -0.0 equals 0.0)."""
    if _all_numeric(block):
        A = block.to_numpy(dtype=np.float64, na_value=np.nan) + 0.0
        A[np.isnan(A)] = np.nan
        _, codes = np.unique(A.view(np.uint64), axis=0, return_inverse=True)
        return np.asarray(codes, dtype=np.intp).ravel()
    rows = [tuple(r) for r in block.astype(str).itertuples(index=False)]
    return np.asarray(pd.factorize(pd.Series(rows))[0], dtype=np.intp)


def _exact_sets(frame: pd.DataFrame) -> list[NDArray[np.intp]]:
    if _all_numeric(frame):
        fps = row_fingerprints(frame.to_numpy(dtype=np.float64, na_value=np.nan))
    else:
        fps = row_fingerprints(frame)
    order = np.argsort(fps, kind="stable")
    sorted_fps = fps[order]
    starts = np.flatnonzero(np.r_[True, sorted_fps[1:] != sorted_fps[:-1]])
    sizes = np.diff(np.r_[starts, len(fps)])
    out: list[NDArray[np.intp]] = []
    for s, size in zip(starts, sizes, strict=True):
        if size < 2:
            continue
        rows = np.sort(order[s : s + size])
        # A fingerprint has 64 bits: confirm that the rows really are identical.
        codes = _row_codes(frame.iloc[rows])
        for code in np.unique(codes):
            members = rows[codes == code]
            if len(members) >= 2:
                out.append(members.astype(np.intp))
    out.sort(key=lambda r: int(r[0]))
    return out


def _all_numeric(frame: pd.DataFrame) -> bool:
    return all(
        pd.api.types.is_numeric_dtype(frame[c]) or pd.api.types.is_bool_dtype(frame[c])
        for c in frame.columns
    )


def find_duplicates(
    X: Any,
    *,
    neighbours: Neighbours | None = None,
    near_ratio: float = 0.1,
) -> DuplicateSets:
    """Find exact and near duplicate rows.

    Parameters
    ----------
    X : DataFrame or array-like of shape (n_samples, n_features)
        The feature table (without target, id, group or acquisition columns).
    neighbours : Neighbours, default=None
        Precomputed by :func:`nearest_neighbours` (computed here when None).
    near_ratio : float, default=0.1
        Two rows are near duplicates when their distance is below this share of
        the typical distance. Our rule, chosen so that the clean data sets that
        scikit-learn ships show no near duplicates.

    Returns
    -------
    DuplicateSets
    """
    if not 0 < near_ratio < 1:
        raise DataError(f"near_ratio must lie in (0, 1), got {near_ratio!r}.")
    frame = as_frame(X)
    exact = _exact_sets(frame)
    nb = neighbours if neighbours is not None else nearest_neighbours(frame)
    if nb.distance.shape[1] == 0 or not np.isfinite(nb.typical):
        near = np.empty((0, 2), dtype=np.intp)
        threshold = float("nan")
    else:
        threshold = near_ratio * nb.typical
        n = max(1, len(frame))
        unlikely = nb.chance_within(nb.local_ratio()) * n < 0.01
        pairs = nb.pairs_below(threshold, mask=unlikely | (nb.distance == 0))
        same = np.full(len(frame), -1, dtype=np.intp)
        for k, s in enumerate(exact):
            same[s] = k
        is_exact = (same[pairs[:, 0]] >= 0) & (same[pairs[:, 0]] == same[pairs[:, 1]])
        near = pairs[~is_exact]
    return DuplicateSets(
        exact=exact, near=near, threshold=threshold, typical=nb.typical
    )


def _sides(
    splits: list[tuple[NDArray[np.intp], NDArray[np.intp]]], n: int
) -> NDArray[np.int8]:
    """Role of every row in every split: 1 training, 2 test, 0 neither."""
    side = np.zeros((len(splits), n), dtype=np.int8)
    for k, (tr, te) in enumerate(splits):
        side[k, tr] = 1
        side[k, te] = 2
    return side


def _straddling(
    sets: Sequence[NDArray[np.intp]], side: NDArray[np.int8]
) -> list[tuple[NDArray[np.intp], list[int], int]]:
    """For each set that straddles a split: (rows, folds, test rows with a training copy)."""
    out = []
    for rows in sets:
        s = side[:, rows]
        both = ((s == 1).any(axis=1)) & ((s == 2).any(axis=1))
        if both.any():
            folds = [int(k) for k in np.flatnonzero(both)]
            exposed = int(sum(int((s[k] == 2).sum()) for k in folds))
            out.append((rows, folds, exposed))
    return out


def _show_ids(ids: NDArray[Any], rows: NDArray[np.intp]) -> list[Any]:
    return [v.item() if isinstance(v, np.generic) else v for v in ids[rows]]


def duplicate_checks(
    X: Any,
    *,
    splits: Sequence[tuple[ArrayLike, ArrayLike]] | None = None,
    ids: ArrayLike | None = None,
    y: ArrayLike | None = None,
    duplicates: DuplicateSets | None = None,
    neighbours: Neighbours | None = None,
    near_ratio: float = 0.1,
) -> list[AuditCheck]:
    """Audit exact and near duplicates, and report those that straddle a split.

    Parameters
    ----------
    X : DataFrame or array-like of shape (n_samples, n_features)
        The feature table.
    splits : list of (train, test) index pairs, default=None
        The study's outer splits. Without them the audit can only say that
        duplicates exist.
    ids : array-like of shape (n_samples,), default=None
        Row ids shown in the evidence (row numbers when None).
    y : array-like of shape (n_samples,), default=None
        The outcome; when given, exact copies with different outcomes are counted.
    duplicates : DuplicateSets, default=None
        Precomputed by :func:`find_duplicates`.
    neighbours : Neighbours, default=None
        Precomputed by :func:`nearest_neighbours`.
    near_ratio : float, default=0.1
        See :func:`find_duplicates`.

    Returns
    -------
    list of AuditCheck
        ``exact_duplicates`` then ``near_duplicates``. Severity: copies on both
        sides of an outer split are a ``problem`` (exact) or a ``warning``
        (near); copies without splits to judge them by are a ``warning``;
        otherwise ``info``.
    """
    frame = as_frame(X)
    n = len(frame)
    shown = row_ids(ids, n)
    dup = duplicates or find_duplicates(
        frame, neighbours=neighbours, near_ratio=near_ratio
    )
    side = _sides(check_splits(splits, n), n) if splits is not None else None
    merge_advice = (
        "Merge the copies into groups (audits.merge_duplicates: true, or "
        "foldwall.audit.merge_duplicates) so that they never straddle a split, or "
        "remove the copies if they are entry errors."
    )

    # ---- exact ----
    ev: dict[str, Any] = {
        "rows_with_copies": dup.n_exact_rows,
        "sets": len(dup.exact),
        "examples": [_show_ids(shown, s) for s in listed(dup.exact)],
    }
    if y is not None and dup.exact:
        yy = np.asarray(y)
        ev["sets_with_different_outcomes"] = int(
            sum(pd.Series(yy[s]).nunique(dropna=False) > 1 for s in dup.exact)
        )
    if not dup.exact:
        exact = AuditCheck(
            "exact_duplicates", "info", "No two rows have identical features.", ev
        )
    elif side is None:
        exact = AuditCheck(
            "exact_duplicates",
            "warning",
            f"{dup.n_exact_rows} rows have an identical copy "
            f"({count(len(dup.exact), 'set')}); "
            "a random split will put some copies on both sides.",
            ev,
            merge_advice,
        )
    else:
        cross = _straddling(dup.exact, side)
        ev["straddling_sets"] = len(cross)
        ev["test_rows_with_training_copy"] = int(sum(e for _, _, e in cross))
        ev["straddling"] = [
            {"ids": _show_ids(shown, r), "folds": f} for r, f, _ in listed(cross)
        ]
        if cross:
            exact = AuditCheck(
                "exact_duplicates",
                "problem",
                f"{count(len(cross), 'set')} of identical rows on both sides of an outer "
                f"split ({ev['test_rows_with_training_copy']} test rows have a "
                "copy in their training part).",
                ev,
                merge_advice,
            )
        else:
            exact = AuditCheck(
                "exact_duplicates",
                "info",
                f"{dup.n_exact_rows} rows have an identical copy, but no copy is on "
                "the other side of an outer split.",
                ev,
            )

    # ---- near ----
    pairs = list(dup.near)
    ev2: dict[str, Any] = {
        "pairs": len(pairs),
        "threshold": dup.threshold,
        "typical_distance": dup.typical,
        "rule": "distance on scaled features below near_ratio x typical distance",
        "near_ratio": near_ratio,
        "examples": [_show_ids(shown, p) for p in listed(pairs)],
    }
    if not pairs:
        near = AuditCheck(
            "near_duplicates",
            "info",
            "No two rows are near copies of each other.",
            ev2,
        )
    elif side is None:
        near = AuditCheck(
            "near_duplicates",
            "warning",
            f"{count(len(pairs), 'pair')} of near-identical rows (closer than "
            f"{near_ratio:g} x the typical distance between rows).",
            ev2,
            merge_advice,
        )
    else:
        cross2 = _straddling(pairs, side)
        ev2["straddling_pairs"] = len(cross2)
        ev2["straddling"] = [
            {"ids": _show_ids(shown, r), "folds": f} for r, f, _ in listed(cross2)
        ]
        if cross2:
            near = AuditCheck(
                "near_duplicates",
                "warning",
                f"{count(len(cross2), 'pair')} of near-identical rows on both sides of an "
                "outer split.",
                ev2,
                "Check whether these rows are the same case; if so, " + merge_advice,
            )
        else:
            near = AuditCheck(
                "near_duplicates",
                "info",
                f"{count(len(pairs), 'pair')} of near-identical rows, but none straddles an "
                "outer split.",
                ev2,
            )
    return [exact, near]


def merge_duplicates(
    n_samples: int,
    sets: DuplicateSets | Sequence[ArrayLike],
    *,
    groups: ArrayLike | None = None,
) -> NDArray[np.object_]:
    """Group labels under which duplicates (and existing groups) are never split.

    Rows joined by a duplicate set, and rows that already share a group, end up
    in one group (the union, closed transitively).

    Parameters
    ----------
    n_samples : int
        Number of rows.
    sets : DuplicateSets or list of array-like of int
        Duplicate sets (row numbers); a :class:`DuplicateSets` contributes its
        exact sets and its near pairs.
    groups : array-like of shape (n_samples,), default=None
        Existing group labels.

    Returns
    -------
    ndarray of shape (n_samples,), dtype object
        One string label per row. With ``groups``, a merged group is named by
        its original labels joined with ``+`` (a group that absorbed nothing
        keeps its label). Without, rows that were merged are named
        ``dup:<first row>`` and the other rows ``row:<row>``.

    Examples
    --------
    >>> merge_duplicates(4, [[0, 2]]).tolist()
    ['dup:0', 'row:1', 'dup:0', 'row:3']
    >>> merge_duplicates(4, [[1, 2]], groups=["a", "a", "b", "c"]).tolist()
    ['a+b', 'a+b', 'a+b', 'c']
    """
    if isinstance(sets, DuplicateSets):
        members: list[NDArray[np.intp]] = list(sets.exact) + list(sets.near)
    else:
        members = [np.asarray(s, dtype=np.intp).ravel() for s in sets]
    src: list[NDArray[np.intp]] = []
    dst: list[NDArray[np.intp]] = []
    for s in members:
        if s.size and (s.min() < 0 or s.max() >= n_samples):
            raise DataError(
                f"a duplicate set names row {int(s.max())}, outside 0..{n_samples - 1}."
            )
        if s.size >= 2:
            src.append(s[:-1])
            dst.append(s[1:])
    labels: NDArray[Any] | None = None
    if groups is not None:
        labels = np.asarray(groups)
        if labels.shape != (n_samples,):
            raise DataError(
                f"groups must have one entry per row ({n_samples}), got shape "
                f"{labels.shape}."
            )
        codes = pd.factorize(labels)[0]
        if (codes < 0).any():
            raise DataError(
                "groups has missing values; every row needs a group to merge duplicates."
            )
        order = np.argsort(codes, kind="stable")
        same = codes[order][1:] == codes[order][:-1]
        src.append(order[:-1][same])
        dst.append(order[1:][same])
    a = np.concatenate(src) if src else np.empty(0, dtype=np.intp)
    b = np.concatenate(dst) if dst else np.empty(0, dtype=np.intp)
    graph = coo_matrix(
        (np.ones(a.size, dtype=np.int8), (a, b)), shape=(n_samples, n_samples)
    )
    _, comp = connected_components(graph, directed=False)
    out = np.empty(n_samples, dtype=object)
    for c in np.unique(comp):
        rows = np.flatnonzero(comp == c)
        if labels is not None:
            names = sorted({str(v) for v in labels[rows]})
            out[rows] = "+".join(names)
        elif rows.size > 1:
            out[rows] = f"dup:{rows[0]}"
        else:
            out[rows] = f"row:{rows[0]}"
    return out
