"""Studies: ``wrap()`` and study files both build a :class:`Study`; run folders."""

from ._audit import audit_study, audit_study_file
from ._files import (
    STORE_NAME,
    checked_run,
    prepare_run_dir,
    run_study_file,
    study_and_table,
    study_from_file,
)
from ._ledger import ledger_listing, ledger_path
from ._study import REFERENCE_NAME, Study, wrap
from ._unseal import (
    OPENING_FILE,
    check_out_dir,
    open_holdout,
    prior_openings,
    write_opening,
)

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
    # hold-out and ledger (issue 14)
    "study_and_table",
    "open_holdout",
    "prior_openings",
    "write_opening",
    "check_out_dir",
    "OPENING_FILE",
    "ledger_listing",
    "ledger_path",
]
