"""Study + rows -> an explicit plan of outer folds, inner splits and units of work."""

from ._compile import OuterFold, Plan, compile_plan, make_folds
from ._folds import SplitRule, derive_seed

__all__ = ["Plan", "OuterFold", "compile_plan", "make_folds", "SplitRule", "derive_seed"]
