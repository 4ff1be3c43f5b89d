"""foldwall: honest nested evaluation of models on small data.

Every data-dependent step (imputation, scaling, feature selection, the
hyperparameter search, the choice between model families) is fitted only inside
its own training fold, and a row audit proves it. A random-label control and
paired comparisons with equally tuned baselines come built in.
"""

from __future__ import annotations

__version__ = "0.1.0"

from ._study import Study, wrap
from .audit import row_fingerprints
from .exceptions import (
    BudgetWarning,
    DataError,
    FoldwallError,
    FoldwallWarning,
    LeakageError,
    RunError,
    SmallSampleWarning,
    SpecError,
)
from .report import Result
from .spec import load_study, study_json_schema

__all__ = [
    # entry points
    "wrap",
    "Study",
    "Result",
    "load_study",
    "study_json_schema",
    "run_study_file",
    # audit
    "row_fingerprints",
    # errors and warnings
    "FoldwallError",
    "SpecError",
    "DataError",
    "LeakageError",
    "RunError",
    "FoldwallWarning",
    "SmallSampleWarning",
    "BudgetWarning",
]


def __getattr__(name: str):  # lazy: the study-file runner pulls in the whole stack
    if name == "run_study_file":
        from ._files import run_study_file

        return run_study_file
    raise AttributeError(f"module 'foldwall' has no attribute {name!r}")
