"""Execution of a plan on one flat joblib pool: Plan -> RunOutcome."""

from ._audits import feature_frame, run_audits
from ._engine import RunContext, evaluate_split, finish_unit, search_unit
from ._preflight import PreflightError, preflight
from ._run import Progress, RunOptions, resolve_jobs, run_plan

__all__ = [
    "run_plan",
    "run_audits",
    "feature_frame",
    "RunOptions",
    "Progress",
    "resolve_jobs",
    "preflight",
    "PreflightError",
    "RunContext",
    "evaluate_split",
    "search_unit",
    "finish_unit",
]
