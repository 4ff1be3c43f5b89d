"""Audits. The row audit proves that no fitted step saw rows outside its own training fold."""

from ._rows import (
    FitLedger,
    LedgerExport,
    digest_lines,
    row_fingerprints,
    rowset_digest,
    verify_ledger,
)

__all__ = [
    "row_fingerprints",
    "rowset_digest",
    "digest_lines",
    "FitLedger",
    "LedgerExport",
    "verify_ledger",
]
