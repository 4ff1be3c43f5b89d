"""Studies: ``wrap()`` and study files both build a :class:`Study`; run folders."""

from ._audit import audit_study, audit_study_file
from ._files import (
    STORE_NAME,
    checked_run,
    prepare_run_dir,
    run_study_file,
    study_from_file,
)
from ._study import REFERENCE_NAME, Study, wrap

__all__ = [
    "Study",
    "wrap",
    "REFERENCE_NAME",
    "study_from_file",
    "run_study_file",
    "prepare_run_dir",
    "checked_run",
    "STORE_NAME",
    "audit_study",
    "audit_study_file",
]
