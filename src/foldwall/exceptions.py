"""Public errors and warnings.

Every error shares the root :class:`FoldwallError` and also inherits the built-in
exception it stands for, so ``except ValueError`` in user code keeps working.
"""

from __future__ import annotations

__all__ = [
    "FoldwallError",
    "SpecError",
    "DataError",
    "LeakageError",
    "RunError",
    "FoldwallWarning",
    "SmallSampleWarning",
    "BudgetWarning",
    "LowAgreementWarning",
    "ControlWarning",
    "AuditWarning",
]


class FoldwallError(Exception):
    """Root of every error raised by foldwall."""


class SpecError(FoldwallError, ValueError):
    """The study (file or Python arguments) is malformed or inconsistent."""


class DataError(FoldwallError, ValueError):
    """The data table does not fit the study (missing column, NaN target, ...)."""


class LeakageError(FoldwallError, RuntimeError):
    """The row audit found a fitted step that saw rows it must never see."""


class RunError(FoldwallError, RuntimeError):
    """A unit of work failed while running (an estimator raised, a worker died)."""


class FoldwallWarning(UserWarning):
    """Root of foldwall's warnings."""


class SmallSampleWarning(FoldwallWarning):
    """Folds so small that the estimate is very uncertain."""


class AuditWarning(FoldwallWarning):
    """A table audit found something the study should change (e.g. linear confound
    removal before a non-linear model)."""


class BudgetWarning(FoldwallWarning):
    """Candidates and baselines were not searched with the same budget."""


class LowAgreementWarning(FoldwallWarning):
    """The raters agree so little that the labels cap what any model can reach."""


class ControlWarning(FoldwallWarning):
    """The random-label control cannot reach its level, or the plan is very large."""


def first_line(exc: BaseException) -> str:
    """The first line of an exception's message (scikit-learn's run to several), or its type."""
    return (str(exc).strip().splitlines() or [type(exc).__name__])[0]
