"""The row audit's check for sealed hold-out rows.

A study with a hold-out runs on its development rows only. The check below proves
it from what the fits were actually given: no fit may hold the fingerprint of a
sealed row. A sealed row whose features equal a development row's cannot be told
apart from its twin, so it is left out of the check and counted separately
(:func:`straddling_duplicates`).
"""

from __future__ import annotations

import numpy as np

from ._rows import LedgerExport

__all__ = ["sealed_audit_fingerprints", "sealed_rows_seen", "straddling_duplicates"]


def sealed_audit_fingerprints(
    development: np.ndarray, sealed: np.ndarray
) -> np.ndarray:
    """Sorted unique fingerprints of sealed rows that have no twin among development rows.

    Parameters
    ----------
    development, sealed : ndarray of uint64
        Row fingerprints of the development rows and of the sealed rows.

    Returns
    -------
    ndarray of uint64
    """
    dev = np.asarray(development, dtype=np.uint64)
    out: np.ndarray = np.setdiff1d(np.asarray(sealed, dtype=np.uint64), dev)
    return out


def straddling_duplicates(development: np.ndarray, sealed: np.ndarray) -> int:
    """Number of sealed rows whose fingerprint also occurs among the development rows."""
    dev = np.asarray(development, dtype=np.uint64)
    return int(np.isin(np.asarray(sealed, dtype=np.uint64), dev).sum())


def sealed_rows_seen(exported: LedgerExport, sealed: np.ndarray) -> int:
    """How many rows given to the unit's fits are sealed rows (must be 0).

    Parameters
    ----------
    exported : LedgerExport
        The fingerprints each role's first step was given.
    sealed : ndarray of uint64
        :func:`sealed_audit_fingerprints` of the study.

    Returns
    -------
    int
        Sealed rows counted with repetition, over every role of the unit.
    """
    if sealed.size == 0:
        return 0
    return int(sum(np.isin(fps, sealed).sum() for fps in exported.rowsets.values()))
