"""Study + rows -> an explicit plan of outer folds, inner splits and units of work."""

from ._compile import OuterFold, Plan, compile_plan, make_folds
from ._folds import SplitRule, check_no_group_overlap, derive_seed, make_rule

__all__ = [
    "Plan",
    "OuterFold",
    "compile_plan",
    "make_folds",
    "SplitRule",
    "make_rule",
    "derive_seed",
    "check_no_group_overlap",
]
