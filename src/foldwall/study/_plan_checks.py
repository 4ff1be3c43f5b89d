"""Checks made when a plan is compiled, before any fit: the control and the test parts.

- The random-label control: does the chosen scheme fit the groups (one label per
  group, or a restricted scheme for outcomes that vary within a group)? How many
  distinct label arrangements does it allow, and is that enough for the level? Is the
  number of permutations enough for the level, and is the whole plan very large?
- Every outer test part must hold every class when a metric is undefined otherwise
  (ROC AUC, average precision, log loss): such a fold would give no score.
"""

from __future__ import annotations

import dataclasses
import warnings
from typing import TYPE_CHECKING

import numpy as np

from ..exceptions import ControlWarning, DataError, SpecError

if TYPE_CHECKING:
    from ..plan import Plan
    from ..settings import ControlSettings
    from ..table import Dataset

__all__ = ["check_control", "check_permutable", "check_test_parts"]


def check_permutable(data: Dataset, *, scheme: str, key: str, scheme_key: str) -> None:
    """The scheme fits the groups: refuse in one line, naming the schemes, if not."""
    grouped = data.groups is not None
    if scheme in ("within-groups", "whole-groups") and not grouped:
        raise SpecError(
            f"{scheme_key}: the {scheme!r} scheme permutes labels inside groups and "
            "needs a group column (data.groups, or run(..., groups=...)); without "
            "groups use within-outer or global"
        )
    if not grouped:
        return
    import pandas as pd

    assert data.groups is not None
    frame = pd.DataFrame({"g": data.groups, "y": data.y})
    if scheme in ("within-outer", "global"):
        n_labels = frame.groupby("g", sort=True)["y"].nunique()
        mixed = n_labels[n_labels > 1]
        if len(mixed):
            g = mixed.index[0]
            vals = sorted(map(str, frame.loc[frame.g == g, "y"].unique()))[:2]
            raise DataError(
                f"{key}: the target '{data.target_name}' varies within group '{g}' of "
                f"'{data.group_name or 'groups'}' (values {' and '.join(vals)}; "
                f"{len(mixed)} such group(s)); the {scheme} scheme permutes whole groups, "
                f"which needs one label per group: set {scheme_key} to within-groups "
                "(labels shuffled among each group's rows) or whole-groups (groups of "
                f"equal size swap their label sequences), or set {key} to 0"
            )
    blocks = data.extra.get("__blocks__")
    if blocks is not None:
        frame["b"] = blocks
        n_blocks = frame.groupby("g", sort=True)["b"].nunique()
        spread = n_blocks[n_blocks > 1]
        if len(spread):
            raise DataError(
                f"control.blocks: group '{spread.index[0]}' spans several blocks; every "
                "group must lie inside one block (choose a block column that is "
                "constant within groups)"
            )


def check_control(
    plan: Plan,
    data: Dataset,
    control: ControlSettings,
    *,
    key: str,
    scheme_key: str,
    many_fits: int = 250_000,
) -> Plan:
    """Count the arrangements the scheme allows; refuse or warn; return the plan with it.

    Raises
    ------
    SpecError
        When the scheme allows fewer than ``1/alpha`` distinct label vectors (the
        smallest attainable p-value would be above alpha).

    Warns
    -----
    ControlWarning
        When ``m < 1/alpha - 1`` or the plan needs very many fits.
    """
    from ..controls import (
        check_permutations_possible,
        control_budget_messages,
        count_permutations,
        unit_scheme,
    )

    fits = plan.model_fits()
    for message in control_budget_messages(
        control.permutations,
        alpha=control.alpha,
        n_fits=fits["real"] + fits["permutations"],
        many_fits=many_fits,
        stop_early=control.stop_early,
        key=key,
    ):
        warnings.warn(message, ControlWarning, stacklevel=4)
    if control.permutations == 0:
        return plan
    folds = plan.permutation_cells(control.scheme)
    n = count_permutations(
        data.y,
        scheme=unit_scheme(control.scheme, grouped=data.groups is not None),
        folds=folds,
        groups=data.groups,
        blocks=data.extra.get("__blocks__"),
        target_name=data.target_name,
    )
    check_permutations_possible(n, alpha=control.alpha, scheme=control.scheme)
    return dataclasses.replace(plan, permutations_possible=n)


def _fold_name(plan: Plan, i: int) -> str:
    f = plan.folds[i]
    return f"outer fold {f.fold}" + (
        f" of repeat {f.repeat}" if plan.repeats > 1 else ""
    )


def check_test_parts(plan: Plan, data: Dataset, *, key: str) -> None:
    """Refuse a plan whose test part lacks a class a metric needs, naming the fold."""
    from .._metrics import metric_info
    from ..compare import classes_missing_from_test_parts

    if data.classes is None:
        return
    needy = [m for m in plan.metrics if metric_info(m).every_class]
    if not needy:
        return
    lacking = classes_missing_from_test_parts(
        data.y, [f.test for f in plan.folds], classes=np.asarray(data.classes)
    )
    if not lacking:
        return
    i, missing = lacking[0]
    more = f" ({len(lacking) - 1} more test part(s) too)" if len(lacking) > 1 else ""
    shown = ", ".join(repr(str(c)) for c in missing)
    raise DataError(
        f"{key}: the test part of {_fold_name(plan, i)} has no row of class {shown}"
        f"{more}, so {needy[0]} cannot be computed there; use a stratified outer "
        "splitter, fewer outer folds, or a metric defined on one class"
    )
