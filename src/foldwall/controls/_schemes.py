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

:func:`count_permutations` counts the distinct label vectors a scheme can reach, so
that a plan can refuse a control that cannot reach the requested level:
with ``N`` reachable label vectors (the observed one included) the smallest
attainable p-value is ``1/N``, so a test at level ``alpha`` needs ``N >= 1/alpha``,
that is at least ``1/alpha - 1`` arrangements other than the observed one.

References
----------
Winkler, A. M., Webster, M. A., Vidaurre, D., Nichols, T. E., Smith, S. M. (2015).
Multi-level block permutation. *NeuroImage* 123:253-268.
"""

from __future__ import annotations

import math
from collections import Counter
from numbers import Real
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
    "check_permutations_possible",
    "control_budget_messages",
    "count_permutations",
    "permutations_needed",
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


def _multinomial(counts: Sequence[int]) -> int:
    """Distinct orderings of a multiset with these multiplicities."""
    total, out = 0, 1
    for c in counts:
        total += c
        out *= math.comb(total, c)
    return out


def _label_keys(target: NDArray[Any]) -> NDArray[np.intp]:
    return pd.factorize(target, sort=False)[0].astype(np.intp)


def count_permutations(
    y: ArrayLike,
    *,
    scheme: str,
    folds: Sequence[ArrayLike] | None = None,
    groups: ArrayLike | None = None,
    blocks: ArrayLike | None = None,
    target_name: str = "y",
) -> int:
    """Count the distinct label vectors a permutation scheme can reach.

    Parameters
    ----------
    y : array-like of shape (n_samples,)
        The target.
    scheme : {"rows", "groups", "within-groups", "whole-groups"}
        As in :func:`permute_by_scheme`.
    folds, groups, blocks : optional
        The same restrictions that the permutations will use.
    target_name : str, default="y"
        Name of the target column, used in messages.

    Returns
    -------
    int
        The number of distinct label vectors, the observed one included (exact,
        as a Python integer of any size). Equal labels are not told apart: two
        rows with the same label swapping places give the same vector.

    Raises
    ------
    SpecError
        On an unknown scheme, or a group scheme without ``groups``.
    DataError
        On the same malformed inputs the permutation itself rejects (for
        ``"groups"``: a label that varies within a group).

    See Also
    --------
    check_permutations_possible : Refuse a control that cannot reach ``alpha``.

    Notes
    -----
    Each scheme permutes exchangeable units uniformly within independent cells,
    so the count is a product over cells of multinomial coefficients
    ``k! / (k_1! k_2! ...)``, where ``k`` units fall into classes of identical
    units of sizes ``k_1, k_2, ...``: rows with equal labels (``"rows"``, and
    ``"within-groups"`` with one cell per group), groups with equal labels
    (``"groups"``), groups of one size with identical label sequences
    (``"whole-groups"``).

    Examples
    --------
    >>> count_permutations([0, 0, 1, 1], scheme="rows")  # 4! / (2! 2!)
    6
    >>> count_permutations([1, 2, 3, 4], scheme="whole-groups", groups=[0, 0, 1, 1])
    2
    """
    scheme = _check_scheme(scheme)
    target = _target(y, target_name)
    n = target.shape[0]
    labels = _label_keys(target)
    if scheme == "rows":
        cell_of, _, _ = _cells(n, folds, blocks)
        return _count_rows(labels, cell_of)
    _require_groups(groups, scheme)
    assert groups is not None
    if scheme == "within-groups":
        group_of, _ = _codes(groups, n, "groups")
        cell_of, _, _ = _cells(n, folds, blocks)
        width = int(cell_of.max(initial=0)) + 1
        return _count_rows(labels, (group_of * width + cell_of).astype(np.intp))
    if scheme == "groups":
        # Validates (one label per group, groups inside folds and blocks) exactly
        # as the permutation does, then counts groups per label in every cell.
        permute_labels(
            target,
            rng=np.random.default_rng(0),
            folds=folds,
            groups=groups,
            blocks=blocks,
            target_name=target_name,
        )
        group_of, _ = _codes(groups, n, "groups")
        cell_of, _, _ = _cells(n, folds, blocks)
        first = np.unique(group_of, return_index=True)[1]
        return _count_rows(labels[first], cell_of[first])
    rows, group_cell = _group_layout(target, groups, folds, blocks)
    total = 1
    for members in _exchange_classes(rows, group_cell).values():
        seqs = Counter(tuple(labels[rows[g]].tolist()) for g in members)
        total *= _multinomial(list(seqs.values()))
    return total


def _count_rows(labels: NDArray[np.intp], cell_of: NDArray[np.intp]) -> int:
    total = 1
    frame = pd.DataFrame({"cell": cell_of, "label": labels})
    for _, sizes in frame.groupby("cell", sort=False)["label"]:
        total *= _multinomial(sizes.value_counts(sort=False).tolist())
    return total


def _check_alpha(alpha: object, where: str) -> float:
    if (
        isinstance(alpha, bool)
        or not isinstance(alpha, Real)
        or not 0.0 < float(alpha) < 1.0
    ):
        raise SpecError(
            f"{where}: alpha must be a number strictly between 0 and 1 (e.g. 0.05), "
            f"got {alpha!r}."
        )
    return float(alpha)


def permutations_needed(alpha: float) -> int:
    """Smallest number of permutations whose p-value floor reaches ``alpha``.

    Parameters
    ----------
    alpha : float
        Level of the test, strictly between 0 and 1.

    Returns
    -------
    int
        The smallest ``m`` with ``1 / (m + 1) <= alpha``, i.e.
        ``ceil(1/alpha - 1)``: 19 for 0.05, 99 for 0.01.

    Raises
    ------
    SpecError
        If ``alpha`` is not strictly between 0 and 1.

    Notes
    -----
    The permutation p-value ``(b + 1)/(m + 1)`` (Phipson & Smyth 2010) is never
    below ``1/(m + 1)``. A tiny tolerance keeps ``1/0.05 - 1`` from rounding up
    to 20.

    Examples
    --------
    >>> permutations_needed(0.05), permutations_needed(0.01), permutations_needed(0.1)
    (19, 99, 9)
    """
    a = _check_alpha(alpha, "permutations_needed")
    return max(1, math.ceil(1.0 / a - 1.0 - 1e-9))


def check_permutations_possible(n_possible: int, *, alpha: float, scheme: str) -> None:
    """Refuse a control whose scheme cannot reach ``alpha``, in one line.

    Parameters
    ----------
    n_possible : int
        Distinct label vectors the scheme can reach, the observed one included
        (from :func:`count_permutations`).
    alpha : float
        Level of the control.
    scheme : str
        Name of the scheme, quoted in the message.

    Raises
    ------
    SpecError
        When ``n_possible - 1 < 1/alpha - 1`` (fewer arrangements besides the
        observed one than :func:`permutations_needed` asks for): the smallest
        attainable p-value, ``1 / n_possible``, is then above ``alpha``. The
        message names the permutation schemes to choose from.

    Examples
    --------
    >>> check_permutations_possible(6, alpha=0.05, scheme="whole-groups")
    Traceback (most recent call last):
    ...
    foldwall.exceptions.SpecError: control.scheme 'whole-groups' allows only 6 \
distinct label arrangements (5 besides the observed one), but alpha = 0.05 needs \
at least 19: the smallest possible p-value would be 0.17. Choose another scheme \
(rows, groups, within-groups, whole-groups), more groups, or a larger alpha.
    """
    a = _check_alpha(alpha, "check_permutations_possible")
    if isinstance(n_possible, bool) or not isinstance(n_possible, int | np.integer):
        raise SpecError(
            f"check_permutations_possible: n_possible must be an integer, got "
            f"{n_possible!r}."
        )
    needed = permutations_needed(a)
    if int(n_possible) - 1 >= needed:
        return
    floor = 1.0 / max(int(n_possible), 1)
    raise SpecError(
        f"control.scheme {scheme!r} allows only {int(n_possible)} distinct label "
        f"arrangements ({max(int(n_possible) - 1, 0)} besides the observed one), but "
        f"alpha = {a:g} needs at least {needed}: the smallest possible p-value would "
        f"be {floor:.2g}. Choose another scheme ({', '.join(PERMUTATION_SCHEMES)}), "
        "more groups, or a larger alpha."
    )


def control_budget_messages(
    n_permutations: int,
    *,
    alpha: float,
    n_fits: int | None = None,
    many_fits: int = 250_000,
    stop_early: bool = False,
    key: str = "control.permutations",
) -> list[str]:
    """Early words about a control that cannot reach ``alpha`` or costs a lot.

    Parameters
    ----------
    n_permutations : int
        Permutations asked for (``m``); 0 means no control.
    alpha : float
        Level of the control.
    n_fits : int, default=None
        Model fits the whole plan needs, permutations included, when known.
    many_fits : int, default=250_000
        Number of fits from which the plan counts as very large.
    stop_early : bool, default=False
        Whether sequential stopping is already on (then it is not suggested).
    key : str, default="control.permutations"
        How the number of permutations is named to the user (the study-file key,
        or ``n_permutations`` for ``wrap``).

    Returns
    -------
    list of str
        One line per problem, empty when there is none: ``m`` below
        ``1/alpha - 1`` (the control can never reject), and a very large number
        of fits (suggesting sequential early stopping, Besag & Clifford 1991).

    Raises
    ------
    SpecError
        If ``alpha`` is not strictly between 0 and 1 or the counts are negative.

    Examples
    --------
    >>> control_budget_messages(10, alpha=0.05)[0]
    'control.permutations = 10 cannot reach alpha = 0.05: the smallest possible \
p-value is 1/11 = 0.091; use at least 19 permutations.'
    """
    a = _check_alpha(alpha, "control_budget_messages")
    if isinstance(n_permutations, bool) or not isinstance(
        n_permutations, int | np.integer
    ):
        raise SpecError(
            f"control_budget_messages: n_permutations must be an integer, got "
            f"{n_permutations!r}."
        )
    m = int(n_permutations)
    if m < 0 or (n_fits is not None and n_fits < 0):
        raise SpecError("control_budget_messages: counts must not be negative.")
    out: list[str] = []
    needed = permutations_needed(a)
    if 0 < m < needed:
        out.append(
            f"{key} = {m} cannot reach alpha = {a:g}: the smallest "
            f"possible p-value is 1/{m + 1} = {1 / (m + 1):.2g}; use at least "
            f"{needed} permutations."
        )
    if n_fits is not None and n_fits >= many_fits:
        tip = (
            ""
            if stop_early or m == 0
            else "; sequential stopping (control.stop_early: true, or "
            "wrap(stop_early=True); Besag & Clifford 1991) ends a clearly null control "
            "after a few dozen permutations"
        )
        out.append(f"the plan fits about {n_fits:,} models; expect a long run{tip}.")
    return out
