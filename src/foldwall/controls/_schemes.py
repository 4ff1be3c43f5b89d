"""Restricted permutation schemes for groups whose outcome varies within the group.

:func:`foldwall.controls.permute_labels` permutes rows, or whole groups that carry one
label each. Two common grouped designs fit neither: repeated visits with a per-visit
outcome, and grouped regression. For them this module adds the two restricted schemes
of multi-level block permutation (Winkler et al. 2015), with plain names:

* ``"within-groups"``: labels are shuffled only among the rows of one group
  ("within-block" permutation). Null hypothesis: within each group, the outcomes are
  exchangeable across the group's rows, whatever the features; any link between the
  features and the outcome that runs *between* groups is kept in the null
  distribution. The test asks whether the procedure finds signal beyond what tells
  one group from another.
* ``"whole-groups"``: groups of the same size swap their whole label sequence,
  row ``i`` of one group receiving the label of row ``i`` of the other
  ("whole-block" permutation). Null hypothesis: a group's sequence of outcomes is
  exchangeable with that of any other group of the same size, i.e. the outcomes
  are independent of the features at the level of groups, while the structure
  inside each group (its spread and its order) is kept.

:func:`foldwall.controls.count_permutations` counts the distinct label vectors a
scheme can reach.

References
----------
Winkler, A. M., Webster, M. A., Vidaurre, D., Nichols, T. E., Smith, S. M. (2015).
Multi-level block permutation. *NeuroImage* 123:253-268.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from foldwall.controls._permute import (
    _codes,
    _fold_codes,
    _join,
    _show,
    _split_units,
    _split_values,
    permute_labels,
)
from foldwall.exceptions import DataError, SpecError

if TYPE_CHECKING:
    from collections.abc import Sequence

    from numpy.typing import ArrayLike, NDArray

__all__ = [
    "GROUP_SCHEMES",
    "PERMUTATION_SCHEMES",
    "permute_by_scheme",
    "permute_whole_groups",
    "permute_within_groups",
    "unit_scheme",
]

#: Every scheme :func:`count_permutations` and :func:`permute_by_scheme` know:
#: ``"rows"`` and ``"groups"`` are those of :func:`permute_labels` (without and with
#: a group column); the other two are the restricted schemes of this module.
PERMUTATION_SCHEMES = ("rows", "groups", "within-groups", "whole-groups")
#: The schemes for groups whose outcome varies within the group.
GROUP_SCHEMES = ("within-groups", "whole-groups")


def unit_scheme(control_scheme: str, *, grouped: bool) -> str:
    """The permutation scheme behind a study's ``control.scheme``.

    Parameters
    ----------
    control_scheme : {"within-outer", "global", "within-groups", "whole-groups"}
        The study-file value. ``within-outer`` and ``global`` permute rows, or whole
        groups with one label each when the study has a group column (they differ
        only in whether labels stay inside outer test folds).
    grouped : bool
        Whether the study has a group column.

    Returns
    -------
    str
        One of :data:`PERMUTATION_SCHEMES`.

    Raises
    ------
    SpecError
        On an unknown value.

    Examples
    --------
    >>> unit_scheme("within-outer", grouped=True), unit_scheme("global", grouped=False)
    ('groups', 'rows')
    """
    if control_scheme in GROUP_SCHEMES:
        return control_scheme
    if control_scheme in ("within-outer", "global"):
        return "groups" if grouped else "rows"
    raise SpecError(
        "control.scheme must be one of within-outer, global, within-groups, "
        f"whole-groups, got {control_scheme!r}."
    )


def _check_scheme(scheme: object) -> str:
    if not isinstance(scheme, str) or scheme not in PERMUTATION_SCHEMES:
        raise SpecError(
            f"permutation scheme must be one of {', '.join(PERMUTATION_SCHEMES)}, "
            f"got {scheme!r}."
        )
    return scheme


def _target(y: ArrayLike, target_name: str) -> NDArray[Any]:
    target = np.asarray(y)
    if target.ndim != 1:
        raise DataError(
            f"target {target_name!r} must be 1-d (one label per row), got shape "
            f"{target.shape}."
        )
    n_missing = int(pd.isna(target).sum())
    if n_missing:
        raise DataError(
            f"target {target_name!r} has {n_missing} missing values; drop those rows "
            "before running the random-label control."
        )
    return target


def _cells(
    n: int, folds: Sequence[ArrayLike] | None, blocks: ArrayLike | None
) -> tuple[NDArray[np.intp], NDArray[np.intp], NDArray[Any]]:
    """Cell code of every row (one cell per fold x block), fold codes, block names."""
    fold_of = np.zeros(n, dtype=np.intp) if folds is None else _fold_codes(folds, n)
    if blocks is None:
        block_of = np.zeros(n, dtype=np.intp)
        block_names: NDArray[Any] = np.array([None], dtype=object)
    else:
        block_of, block_names = _codes(blocks, n, "blocks")
    width = int(block_of.max(initial=0)) + 1
    cell_of = pd.factorize(fold_of * width + block_of)[0].astype(np.intp)
    return cell_of, fold_of, block_names


def _require_groups(groups: ArrayLike | None, scheme: str) -> None:
    if groups is None:
        raise SpecError(
            f"the {scheme!r} permutation scheme needs a group column (groups=...); "
            "without groups use the 'rows' scheme."
        )


def permute_within_groups(
    y: ArrayLike,
    *,
    rng: np.random.Generator,
    groups: ArrayLike,
    folds: Sequence[ArrayLike] | None = None,
    blocks: ArrayLike | None = None,
    target_name: str = "y",
) -> NDArray[Any]:
    """Shuffle the labels among the rows of each group, never across groups.

    Parameters
    ----------
    y : array-like of shape (n_samples,)
        The target, numeric or string labels; may vary within a group.
    rng : numpy.random.Generator
        Source of randomness; advanced by the call.
    groups : array-like of shape (n_samples,)
        Group id of each row (subject, patient). Labels never leave a group.
    folds : list of array-like of int, default=None
        Outer test folds of the first repeat (disjoint, covering every row).
        Labels also never leave a fold; with group-aware folds every group lies
        in one fold and this adds no restriction.
    blocks : array-like of shape (n_samples,), default=None
        Block id of each row (a site); labels also never leave a block.
    target_name : str, default="y"
        Name of the target column, used in messages.

    Returns
    -------
    numpy.ndarray of shape (n_samples,)
        A new array; each group (within each fold and block) keeps its multiset
        of labels.

    Raises
    ------
    DataError
        If ``y`` is not 1-d or has missing values, or ``groups`` / ``blocks`` has
        the wrong length or missing ids.
    SpecError
        If ``rng`` is not a Generator or ``folds`` do not partition the rows.

    Notes
    -----
    Within-block permutation of Winkler et al. (2015): the group acts as a block
    of :func:`foldwall.controls.permute_labels`. Under the null hypothesis that the
    outcomes of a group are exchangeable across its rows, every reachable label
    vector is equally likely, so the permutation p-value of the whole procedure
    is valid.

    Examples
    --------
    >>> import numpy as np
    >>> y = np.array([1.0, 2.0, 3.0, 10.0, 20.0])
    >>> groups = np.array(["a", "a", "a", "b", "b"])
    >>> out = permute_within_groups(y, rng=np.random.default_rng(0), groups=groups)
    >>> sorted(out[:3].tolist()), sorted(out[3:].tolist())
    ([1.0, 2.0, 3.0], [10.0, 20.0])
    """
    target = _target(y, target_name)
    n = target.shape[0]
    group_of, _ = _codes(groups, n, "groups")
    if blocks is None:
        cell = group_of
    else:
        block_of, _ = _codes(blocks, n, "blocks")
        cell = pd.factorize(group_of * (int(block_of.max(initial=0)) + 1) + block_of)[0]
    return permute_labels(
        target, rng=rng, folds=folds, blocks=cell, target_name=target_name
    )


def _group_layout(
    target: NDArray[Any],
    groups: ArrayLike,
    folds: Sequence[ArrayLike] | None,
    blocks: ArrayLike | None,
) -> tuple[list[NDArray[np.intp]], NDArray[np.intp]]:
    """Rows of every group (table order) and each group's cell; checks nesting."""
    n = target.shape[0]
    group_of, group_names = _codes(groups, n, "groups")
    cell_of, fold_of, block_names = _cells(n, folds, blocks)
    n_groups = group_names.size
    if folds is not None:
        split = _split_units(group_of, fold_of, n_groups)
        if split.size:
            bad = int(split[0])
            hit = _split_values(group_of, bad, fold_of, range(len(folds)))
            raise DataError(
                f"group {_show(group_names[bad])} has rows in outer test folds "
                f"{_join(hit)}: the 'whole-groups' scheme needs every group inside "
                "one fold. Build the outer folds with a group-aware splitter (e.g. "
                "GroupKFold), using the same groups."
            )
    if blocks is not None:
        block_of, _ = _codes(blocks, n, "blocks")
        split = _split_units(group_of, block_of, n_groups)
        if split.size:
            bad = int(split[0])
            hit = _split_values(group_of, bad, block_of, list(block_names))
            raise DataError(
                f"group {_show(group_names[bad])} has rows in blocks {_join(hit)}: "
                "with the 'whole-groups' scheme every group must lie inside one "
                "block. Check the block column, or leave out blocks."
            )
    order = np.argsort(group_of, kind="stable")
    bounds = np.flatnonzero(np.diff(group_of[order])) + 1
    rows = [r.astype(np.intp) for r in np.split(order, bounds)]
    group_cell = np.array([cell_of[r[0]] for r in rows], dtype=np.intp)
    return rows, group_cell


def _exchange_classes(
    rows: list[NDArray[np.intp]], group_cell: NDArray[np.intp]
) -> dict[tuple[int, int], list[int]]:
    """Groups that may swap: same cell and same size, in order of group code."""
    classes: dict[tuple[int, int], list[int]] = {}
    for g, r in enumerate(rows):
        classes.setdefault((int(group_cell[g]), int(r.size)), []).append(g)
    return classes


def permute_whole_groups(
    y: ArrayLike,
    *,
    rng: np.random.Generator,
    groups: ArrayLike,
    folds: Sequence[ArrayLike] | None = None,
    blocks: ArrayLike | None = None,
    target_name: str = "y",
) -> NDArray[Any]:
    """Swap whole label sequences between groups of the same size.

    Parameters
    ----------
    y : array-like of shape (n_samples,)
        The target; may vary within a group.
    rng : numpy.random.Generator
        Source of randomness; advanced by the call.
    groups : array-like of shape (n_samples,)
        Group id of each row. Groups of equal size (within one fold and block)
        are the exchangeable units.
    folds : list of array-like of int, default=None
        Outer test folds of the first repeat. When given, groups swap only with
        groups of the same fold, so every fold keeps its label multiset.
    blocks : array-like of shape (n_samples,), default=None
        Block id of each row; groups swap only within a block.
    target_name : str, default="y"
        Name of the target column, used in messages.

    Returns
    -------
    numpy.ndarray of shape (n_samples,)
        A new array. The ``i``-th row of a group (in table order) receives the
        ``i``-th label of the group it swaps with.

    Raises
    ------
    DataError
        If ``y`` is not 1-d or has missing values; if a group has rows in two
        outer test folds or two blocks.
    SpecError
        If ``rng`` is not a Generator or ``folds`` do not partition the rows.

    Notes
    -----
    Whole-block permutation of Winkler et al. (2015). Rows are matched by their
    position inside the group, so keep the rows of every group in a meaningful,
    shared order (visit 1, visit 2, ...). A group with no other group of its size
    in its cell keeps its labels; :func:`count_permutations` shows how many label
    vectors remain reachable.

    Examples
    --------
    >>> import numpy as np
    >>> y = np.array([1, 2, 3, 4])
    >>> groups = np.array(["a", "a", "b", "b"])
    >>> permute_whole_groups(y, rng=np.random.default_rng(3), groups=groups).tolist()
    [3, 4, 1, 2]
    """
    if not isinstance(rng, np.random.Generator):
        raise SpecError(
            f"rng must be a numpy.random.Generator, got {type(rng).__name__}. "
            "Pass np.random.default_rng(seed)."
        )
    target = _target(y, target_name)
    rows, group_cell = _group_layout(target, groups, folds, blocks)
    out = target.copy()
    for members in _exchange_classes(rows, group_cell).values():
        if len(members) < 2:
            continue
        sources = [members[i] for i in rng.permutation(len(members))]
        for dest, src in zip(members, sources, strict=True):
            out[rows[dest]] = target[rows[src]]
    return out


def permute_by_scheme(
    y: ArrayLike,
    *,
    scheme: str,
    rng: np.random.Generator,
    folds: Sequence[ArrayLike] | None = None,
    groups: ArrayLike | None = None,
    blocks: ArrayLike | None = None,
    target_name: str = "y",
) -> NDArray[Any]:
    """Permute the target under one of :data:`PERMUTATION_SCHEMES`.

    Parameters
    ----------
    y : array-like of shape (n_samples,)
        The target.
    scheme : {"rows", "groups", "within-groups", "whole-groups"}
        ``"rows"``: rows are shuffled (``groups`` ignored). ``"groups"``: whole
        groups with one label each swap labels (:func:`permute_labels` with
        groups). ``"within-groups"``: :func:`permute_within_groups`.
        ``"whole-groups"``: :func:`permute_whole_groups`.
    rng : numpy.random.Generator
        Source of randomness.
    folds, groups, blocks : optional
        As in :func:`permute_labels`.
    target_name : str, default="y"
        Name of the target column, used in messages.

    Returns
    -------
    numpy.ndarray of shape (n_samples,)
        The permuted copy of ``y``.

    Raises
    ------
    SpecError
        On an unknown scheme, or a group scheme without ``groups``.
    DataError
        As raised by the scheme's function.
    """
    scheme = _check_scheme(scheme)
    if scheme == "rows":
        return permute_labels(
            y, rng=rng, folds=folds, blocks=blocks, target_name=target_name
        )
    _require_groups(groups, scheme)
    assert groups is not None  # for the type checker; checked just above
    if scheme == "groups":
        return permute_labels(
            y,
            rng=rng,
            folds=folds,
            groups=groups,
            blocks=blocks,
            target_name=target_name,
        )
    if scheme == "within-groups":
        return permute_within_groups(
            y,
            rng=rng,
            groups=groups,
            folds=folds,
            blocks=blocks,
            target_name=target_name,
        )
    return permute_whole_groups(
        y, rng=rng, groups=groups, folds=folds, blocks=blocks, target_name=target_name
    )
