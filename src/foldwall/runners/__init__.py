"""Execution of a plan on one flat joblib pool."""

from ._run import run_plan

__all__ = ["run_plan"]
