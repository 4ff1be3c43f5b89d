"""Label permutation for the random-label control.

A permutation must respect whatever makes rows exchangeable under the null
hypothesis. :func:`permute_labels` supports three restrictions, which combine:

* **folds**: labels move only within each outer test fold, so every fold keeps its
  label multiset (and a stratified plan stays stratified);
* **groups**: the exchangeable unit is the group (subject, patient), so whole
  groups swap labels and each group keeps a single label;
* **blocks**: labels never cross a block (site, batch, scanner).
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from foldwall.exceptions import DataError, SpecError

if TYPE_CHECKING:
    from collections.abc import Sequence

    from numpy.typing import ArrayLike, NDArray

__all__ = ["permute_labels"]


def _show(value: Any) -> str:
    """Quote a label or id the way a user typed it (no ``np.str_(...)`` wrapper)."""
    if isinstance(value, np.generic):
        value = value.item()
    return repr(value)


def _codes(
    values: ArrayLike, n: int, what: str
) -> tuple[NDArray[np.intp], NDArray[Any]]:
    """Integer codes (in order of first appearance) and the distinct values."""
    arr = np.asarray(values)
    if arr.ndim != 1 or arr.shape[0] != n:
        raise DataError(
            f"{what} must be 1-d with one entry per row ({n} rows), got shape "
            f"{arr.shape}. Pass the {what} column of the same table as the target."
        )
    codes, uniques = pd.factorize(arr, sort=False, use_na_sentinel=True)
    n_missing = int((codes < 0).sum())
    if n_missing:
        raise DataError(
            f"{what} has {n_missing} missing values; every row needs a {what} id. "
            f"Fill them (for example with one id per row) or drop those rows."
        )
    return codes.astype(np.intp, copy=False), np.asarray(uniques)


def _fold_codes(folds: Sequence[ArrayLike], n: int) -> NDArray[np.intp]:
    """Fold number of every row; checks that the folds partition the rows."""
    if isinstance(folds, np.ndarray) and folds.ndim == 1 and folds.dtype != object:
        raise SpecError(
            "folds must be a list of index arrays (one per outer test fold), got a "
            "single 1-d array. Pass e.g. [test_idx for _, test_idx in cv.split(X, y)]."
        )
    fold_of = np.full(n, -1, dtype=np.intp)
    for i, fold in enumerate(folds):
        idx = np.asarray(fold)
        if idx.size == 0:
            continue
        if idx.dtype == bool:
            raise SpecError(
                f"outer test fold {i} is a boolean mask; pass row indices instead "
                "(np.flatnonzero(mask))."
            )
        if idx.ndim != 1 or idx.dtype.kind not in "iu":
            raise SpecError(
                f"outer test fold {i} must be a 1-d array of integer row indices, "
                f"got dtype {idx.dtype} and shape {idx.shape}."
            )
        if idx.min() < 0 or idx.max() >= n:
            raise SpecError(
                f"outer test fold {i} holds row indices outside 0..{n - 1} (min "
                f"{idx.min()}, max {idx.max()}); the folds do not belong to this "
                "target."
            )
        if np.unique(idx).size != idx.size:
            row = int(np.argmax(np.bincount(idx)))
            raise SpecError(
                f"row {row} appears more than once in outer test fold {i}; a fold "
                "must list each row once."
            )
        seen = fold_of[idx]
        clash = np.flatnonzero(seen >= 0)
        if clash.size:
            raise SpecError(
                f"row {int(idx[clash[0]])} appears in outer test folds "
                f"{int(seen[clash[0]])} and {i}: the folds must be disjoint. Pass the "
                "test folds of a single repeat of the outer plan."
            )
        fold_of[idx] = i
    missing = np.flatnonzero(fold_of < 0)
    if missing.size:
        raise SpecError(
            f"{missing.size} of {n} rows {'is' if missing.size == 1 else 'are'} in "
            f"no outer test fold (first: row {int(missing[0])}); the folds must "
            "cover every row. Pass all the test folds of the first repeat of the "
            "outer plan."
        )
    return fold_of


def _split_units(
    unit: NDArray[np.intp], attr: NDArray[np.intp], n_units: int
) -> NDArray[np.intp]:
    """Units (codes, ascending) whose rows carry more than one value of ``attr``."""
    lo = np.full(n_units, np.iinfo(np.intp).max, dtype=np.intp)
    hi = np.full(n_units, -1, dtype=np.intp)
    np.minimum.at(lo, unit, attr)
    np.maximum.at(hi, unit, attr)
    return np.flatnonzero(lo != hi)


def _split_values(
    unit: NDArray[np.intp],
    which: int,
    attr: NDArray[np.intp],
    names: Sequence[Any] | NDArray[Any],
) -> list[str]:
    """Distinct values of ``attr`` within one unit, in order of first appearance."""
    vals = pd.unique(attr[unit == which])
    return [_show(names[v]) for v in vals]


def _join(values: list[str]) -> str:
    if len(values) <= 3:
        return ", ".join(values[:-1]) + " and " + values[-1]
    return ", ".join(values[:3]) + f" and {len(values) - 3} more"


def permute_labels(
    y: ArrayLike,
    *,
    rng: np.random.Generator,
    folds: Sequence[ArrayLike] | None,
    groups: ArrayLike | None = None,
    blocks: ArrayLike | None = None,
    target_name: str = "y",
) -> NDArray[Any]:
    """Return a randomly permuted copy of the target, within the allowed cells.

    The rows are split into cells, one per (outer test fold, block); with
    ``folds=None`` and no blocks there is a single cell. Labels are shuffled
    uniformly at random within each cell and never leave it. With ``groups`` the
    shuffled units are the groups rather than the rows: each group keeps one label,
    and whole groups swap labels with other groups of the same cell.

    Parameters
    ----------
    y : array-like of shape (n_samples,)
        The target, numeric or string labels.
    rng : numpy.random.Generator
        Source of randomness. The result depends only on ``rng``'s state and the
        inputs, and ``rng`` is advanced.
    folds : list of array-like of int, or None
        The outer *test* folds of the first repeat of the plan: disjoint arrays of
        row indices that together cover every row. Labels move only within a fold,
        so each fold keeps its label multiset. ``None`` selects the global scheme:
        labels may move across all rows (the caller then re-splits).
    groups : array-like of shape (n_samples,), default=None
        Group id of each row (subject, patient). When given, ``y`` must be constant
        within each group, and group labels are permuted among groups.
    blocks : array-like of shape (n_samples,), default=None
        Block id of each row (for example a site). Labels never cross a block.
        With ``groups``, every group must lie inside one block.
    target_name : str, default="y"
        Name of the target column, used in error messages.

    Returns
    -------
    numpy.ndarray of shape (n_samples,)
        A new array with the permuted labels and the dtype of ``np.asarray(y)``.
        The inputs are never modified.

    Raises
    ------
    DataError
        If ``y`` is not 1-d or has missing values; if ``groups`` or ``blocks`` has
        the wrong length or missing ids; if ``y`` is not constant within a group
        (the message names the group and the values); if a group has rows in two
        outer test folds or in two blocks.
    SpecError
        If ``rng`` is not a :class:`numpy.random.Generator`, or if ``folds`` are
        not disjoint integer index arrays covering every row.

    Notes
    -----
    The permutation within a cell is uniform over all orderings
    (:meth:`numpy.random.Generator.permutation`), so under the null hypothesis of
    exchangeability within cells every reachable label vector is equally likely.
    Cells are visited in order of first appearance of their (fold, block) pair.
    Keeping labels within outer test folds means the permuted labels can be
    scored with the same outer plan as the true labels, which keeps the
    stratification and the group structure of that plan.

    Examples
    --------
    >>> import numpy as np
    >>> y = np.array([0, 0, 1, 1, 0, 1])
    >>> folds = [np.array([0, 1, 2]), np.array([3, 4, 5])]
    >>> y_perm = permute_labels(y, rng=np.random.default_rng(0), folds=folds)
    >>> sorted(y_perm[:3].tolist()), sorted(y_perm[3:].tolist())
    ([0, 0, 1], [0, 1, 1])
    """
    if not isinstance(rng, np.random.Generator):
        raise SpecError(
            f"rng must be a numpy.random.Generator, got {type(rng).__name__}. "
            "Pass np.random.default_rng(seed)."
        )
    target = np.asarray(y)
    if target.ndim != 1:
        raise DataError(
            f"target {target_name!r} must be 1-d (one label per row), got shape "
            f"{target.shape}."
        )
    n = target.shape[0]
    n_missing = int(pd.isna(target).sum())
    if n_missing:
        raise DataError(
            f"target {target_name!r} has {n_missing} missing values; drop those rows "
            "before running the random-label control."
        )

    fold_of = np.zeros(n, dtype=np.intp) if folds is None else _fold_codes(folds, n)
    if blocks is None:
        block_of = np.zeros(n, dtype=np.intp)
        block_names: NDArray[Any] = np.array([None], dtype=object)
    else:
        block_of, block_names = _codes(blocks, n, "blocks")
    # one code per (fold, block) cell, in order of first appearance
    cell_of = pd.factorize(fold_of * (int(block_of.max(initial=0)) + 1) + block_of)[0]

    if groups is None:
        unit_of = np.arange(n, dtype=np.intp)
        rep_row = unit_of
    else:
        unit_of, group_names = _codes(groups, n, "groups")
        n_groups = group_names.size
        y_codes, y_names = pd.factorize(target, sort=False)
        split = _split_units(unit_of, y_codes, n_groups)
        if split.size:
            bad = int(split[0])
            n_more = split.size - 1
            more = {0: "", 1: " (1 more group has mixed labels)"}.get(
                n_more, f" ({n_more} more groups have mixed labels)"
            )
            raise DataError(
                f"target {target_name!r} is not constant within group "
                f"{_show(group_names[bad])} (values "
                f"{_join(_split_values(unit_of, bad, y_codes, y_names))}){more}: a "
                "group-wise permutation needs one label per group. Use the "
                "'within-groups' scheme (labels shuffled among the rows of each group) "
                "or the 'whole-groups' scheme (groups of equal size swap their whole "
                "label sequence); see foldwall.controls.permute_by_scheme."
            )
        if folds is not None:
            split = _split_units(unit_of, fold_of, n_groups)
            if split.size:
                bad = int(split[0])
                folds_hit = _split_values(unit_of, bad, fold_of, range(len(folds)))
                raise DataError(
                    f"group {_show(group_names[bad])} has rows in outer test folds "
                    f"{_join(folds_hit)}: a group-wise permutation within folds "
                    "needs every group inside one fold. Build the outer folds with a "
                    "group-aware splitter (e.g. GroupKFold), using the same groups."
                )
        if blocks is not None:
            split = _split_units(unit_of, block_of, n_groups)
            if split.size:
                bad = int(split[0])
                raise DataError(
                    f"group {_show(group_names[bad])} has rows in blocks "
                    f"{_join(_split_values(unit_of, bad, block_of, block_names))}: "
                    "with groups and blocks, every group must lie inside one block. "
                    "Check the block column, or leave out blocks or groups."
                )
        # the first row of each group carries the group's label and cell
        rep_row = np.unique(unit_of, return_index=True)[1].astype(np.intp)

    unit_cell = cell_of[rep_row]
    source_of_unit = rep_row.copy()
    for cell in range(int(cell_of.max(initial=-1)) + 1):
        units = np.flatnonzero(unit_cell == cell)
        source_of_unit[units] = rep_row[units[rng.permutation(units.size)]]
    return target[source_of_unit[unit_of]]
