"""What a study knows about its sealed hold-out rows (never their labels or score)."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..audit import AuditCheck

__all__ = ["SealedRows"]

JSONDict = dict[str, Any]


@dataclass(frozen=True)
class SealedRows:
    """The hold-out of a study, as the development rows carry it.

    Parameters
    ----------
    description : dict
        How the rows were sealed and the counts on each side
        (:meth:`foldwall.plan.HoldoutSplit.describe`), JSON-ready.
    key : str
        SHA-256 of the table's key and the sealed row numbers: the same rows of
        the same table give the same key, however they were chosen and whichever
        columns a study uses. The ledger counts openings per key.
    audit_fingerprints : ndarray of uint64
        Fingerprints of the sealed rows that have no identical twin among the
        development rows; the row audit counts any of them reaching a fit.
    duplicates_across : int
        Sealed rows whose features equal a development row's (their twin may be
        fitted on; the audit cannot tell them apart, so they are reported).
    checks : tuple of AuditCheck, default=()
        The table audits that look across the boundary without the outcome
        (:func:`foldwall.audit.boundary_checks`); they join the run's ``audits``.
    """

    description: JSONDict
    key: str
    audit_fingerprints: np.ndarray = field(compare=False, repr=False)
    duplicates_across: int = 0
    checks: tuple[AuditCheck, ...] = field(default=(), compare=False, repr=False)

    @property
    def n_rows(self) -> int:
        """Number of sealed rows."""
        return int(self.description["rows"]["holdout"])

    def to_json(self) -> JSONDict:
        """The ``holdout`` section of results.json (without the audit count)."""
        return {
            **self.description,
            "key": self.key,
            "duplicates_across": self.duplicates_across,
            "score": "never in this file: `foldwall unseal` scores the hold-out "
            "once and writes opening.json",
        }
