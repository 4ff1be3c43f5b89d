"""Study + rows -> an explicit plan of outer folds, inner splits and units of work."""

from ._budget import (
    MAX_FITS,
    MAX_SECONDS,
    WorkEstimate,
    check_work,
    duration_text,
    estimate_work,
    over_limit,
)
from ._compile import OuterFold, Plan, compile_plan, make_folds
from ._folds import SplitRule, check_no_group_overlap, derive_seed, make_rule
from ._holdout import (
    HoldoutSplit,
    holdout_by_column,
    holdout_by_fraction,
    holdout_from_table,
)

__all__ = [
    "Plan",
    "OuterFold",
    "compile_plan",
    "make_folds",
    "SplitRule",
    "make_rule",
    "derive_seed",
    "check_no_group_overlap",
    # how much work, and whether it may start unconfirmed
    "WorkEstimate",
    "estimate_work",
    "check_work",
    "over_limit",
    "duration_text",
    "MAX_FITS",
    "MAX_SECONDS",
    # sealing a hold-out
    "HoldoutSplit",
    "holdout_by_fraction",
    "holdout_by_column",
    "holdout_from_table",
]
