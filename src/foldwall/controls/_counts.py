"""How many permutations a scheme allows, and whether that reaches the level.

:func:`count_permutations` counts the distinct label vectors a permutation scheme of
:mod:`foldwall.controls` can reach, so that a plan can refuse a control that cannot
reach the requested level: with ``N`` reachable label vectors (the observed one
included) the smallest attainable p-value is ``1/N``, so a test at level ``alpha``
needs ``N >= 1/alpha``, that is at least ``1/alpha - 1`` arrangements other than the
observed one. The p-value floor ``1/(m + 1)`` of ``m`` random permutations is that of
Phipson & Smyth (2010).
"""

from __future__ import annotations

import math
from collections import Counter
from numbers import Real
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from foldwall.controls._permute import _codes, permute_labels
from foldwall.controls._schemes import (
    PERMUTATION_SCHEMES,
    _cells,
    _check_scheme,
    _exchange_classes,
    _group_layout,
    _require_groups,
    _target,
)
from foldwall.exceptions import SpecError

if TYPE_CHECKING:
    from collections.abc import Sequence

    from numpy.typing import ArrayLike, NDArray

__all__ = [
    "check_permutations_possible",
    "control_budget_messages",
    "count_permutations",
    "permutations_needed",
]


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
