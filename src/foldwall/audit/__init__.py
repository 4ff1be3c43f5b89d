"""Audits.

The row audit proves that no fitted step saw rows outside its own training fold.
The table audits check the table itself: duplicates, hidden groups, leaky
columns, confounds with how rows were acquired, and time order.
"""

from ._checks import (
    SEVERITIES,
    AuditCheck,
    AuditWarning,
    Severity,
    checks_from_json,
    checks_to_json,
    infer_task,
    worst_severity,
)
from ._confounds import (
    ConfoundScore,
    acquisition_outcome_score,
    confound_checks,
    features_acquisition_scores,
    ridge_out_of_fold,
)
from ._duplicates import (
    DuplicateSets,
    duplicate_checks,
    find_duplicates,
    merge_duplicates,
)
from ._groups import id_column_checks, id_like_name, tight_cluster_check
from ._leaky import leaky_column_checks, single_column_scores
from ._neighbours import Neighbours, nearest_neighbours
from ._posthoc import PosthocTest, acquisition_design, posthoc_test
from ._removal import AcquisitionEffectRemover, warn_removal_before_nonlinear
from ._rows import (
    FitLedger,
    LedgerExport,
    digest_lines,
    row_fingerprints,
    rowset_digest,
    verify_ledger,
)
from ._sealed import (
    boundary_checks,
    sealed_audit_fingerprints,
    sealed_rows_seen,
    straddling_duplicates,
)
from ._table import TableAudit, audit_table, default_splits
from ._time import forward_splits, time_drift_check, time_values

__all__ = [
    # row audit
    "row_fingerprints",
    "rowset_digest",
    "digest_lines",
    "FitLedger",
    "LedgerExport",
    "verify_ledger",
    # results of table audits
    "AuditCheck",
    "AuditWarning",
    "Severity",
    "SEVERITIES",
    "worst_severity",
    "checks_to_json",
    "checks_from_json",
    "infer_task",
    # all table audits at once
    "TableAudit",
    "audit_table",
    "default_splits",
    # duplicates
    "Neighbours",
    "nearest_neighbours",
    "DuplicateSets",
    "find_duplicates",
    "duplicate_checks",
    "merge_duplicates",
    # hidden groups
    "id_like_name",
    "id_column_checks",
    "tight_cluster_check",
    # leaky columns
    "single_column_scores",
    "leaky_column_checks",
    # confounds
    "ConfoundScore",
    "acquisition_outcome_score",
    "features_acquisition_scores",
    "confound_checks",
    "ridge_out_of_fold",
    "PosthocTest",
    "posthoc_test",
    "acquisition_design",
    "AcquisitionEffectRemover",
    "warn_removal_before_nonlinear",
    # time order
    "time_values",
    "forward_splits",
    "time_drift_check",
    # sealed hold-out rows
    "boundary_checks",
    "sealed_audit_fingerprints",
    "sealed_rows_seen",
    "straddling_duplicates",
]
