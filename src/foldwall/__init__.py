"""foldwall: honest nested evaluation of models on small data.

Every data-dependent step (imputation, scaling, feature selection, the
hyperparameter search, the choice between model families) is fitted only inside
its own training fold, and a row audit proves it. A random-label control and
paired comparisons with equally tuned baselines come built in.
"""

from __future__ import annotations

from ._version import __version__
from .audit import AuditCheck, audit_table, row_fingerprints
from .exceptions import (
    AuditWarning,
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
from .study import Study, run_study_file, wrap

__all__ = [
    "__version__",
    # entry points
    "wrap",
    "Study",
    "Result",
    "load_study",
    "study_json_schema",
    "run_study_file",
    # audit
    "row_fingerprints",
    "audit_table",
    "AuditCheck",
    # errors and warnings
    "FoldwallError",
    "SpecError",
    "DataError",
    "LeakageError",
    "RunError",
    "FoldwallWarning",
    "SmallSampleWarning",
    "BudgetWarning",
    "AuditWarning",
]
