"""The row audit: a fingerprint for every row, a ledger of what each fit was given.

Every fit of every step is recorded with the fingerprints of the rows it was
given, hashed from the content that actually reached ``fit`` (not from the
indices the harness meant to pass). After each unit of work the harness checks
that no fitted step saw a row of its outer test part, and that no inner fit saw
its own validation rows.

Fingerprint of a numeric row (documented so a reviewer can recompute it): the
row's float64 values, with -0.0 read as 0.0 and every NaN as the one quiet NaN,
are taken as 64-bit words w_j; each is mixed with its column number by the
SplitMix64 finaliser, ``m(w_j XOR (j * 0x9E3779B97F4A7C15))``, the mixed words are
summed modulo 2**64 and the sum mixed once more. A table with non-numeric
columns uses ``pandas.util.hash_pandas_object(frame, index=False)``.
"""

from __future__ import annotations

import hashlib
from collections import Counter
from collections.abc import Iterable
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

__all__ = [
    "row_fingerprints",
    "FitLedger",
    "LedgerExport",
    "verify_ledger",
    "rowset_digest",
    "digest_lines",
]

_GOLDEN = np.uint64(0x9E3779B97F4A7C15)
_M1 = np.uint64(0xBF58476D1CE4E5B9)
_M2 = np.uint64(0x94D049BB133111EB)


def _mix(z: np.ndarray) -> np.ndarray:
    z = z ^ (z >> np.uint64(30))
    z = z * _M1
    z = z ^ (z >> np.uint64(27))
    z = z * _M2
    out: np.ndarray = z ^ (z >> np.uint64(31))
    return out


def row_fingerprints(X: Any) -> np.ndarray:
    """64-bit fingerprint of each row of X (numpy array or DataFrame).

    Returns
    -------
    ndarray of shape (n_samples,), dtype uint64
    """
    if isinstance(X, pd.DataFrame):
        return pd.util.hash_pandas_object(X, index=False).to_numpy(dtype=np.uint64)
    A = np.asarray(X)
    if A.ndim == 1:
        A = A[:, None]
    if A.dtype.kind not in "biuf":
        return pd.util.hash_pandas_object(pd.DataFrame(A), index=False).to_numpy(
            dtype=np.uint64
        )
    A = np.ascontiguousarray(A, dtype=np.float64) + 0.0  # -0.0 -> 0.0
    A[np.isnan(A)] = np.nan
    words = A.view(np.uint64)
    salt = np.arange(A.shape[1], dtype=np.uint64) * _GOLDEN
    with np.errstate(over="ignore"):
        mixed = _mix(words ^ salt[None, :])
        return _mix(mixed.sum(axis=1, dtype=np.uint64))


def rowset_digest(fps: np.ndarray) -> tuple[int, int]:
    """Order-free summary of a set of rows: (XOR, sum mod 2**64) of their fingerprints."""
    fps = np.asarray(fps, dtype=np.uint64)
    with np.errstate(over="ignore"):
        return int(np.bitwise_xor.reduce(fps)) if fps.size else 0, int(
            fps.sum(dtype=np.uint64)
        )


@dataclass(frozen=True)
class LedgerExport:
    """What a ledger sends back from a worker: row fingerprints per role, fit counts.

    ``rowsets`` maps a role ("outer", "inner:J") to the fingerprints of the rows
    its first step was given; ``fits`` lists ``(role, step, n)`` in sorted order.
    """

    rowsets: dict[str, np.ndarray]
    fits: tuple[tuple[str, str, int], ...]

    @property
    def n_fits(self) -> int:
        return sum(n for _, _, n in self.fits)


@dataclass
class FitLedger:
    """What one unit of work fitted, and on which rows (kept inside the worker)."""

    rowsets: dict[str, np.ndarray] = field(default_factory=dict)
    fits: Counter[tuple[str, str]] = field(default_factory=Counter)

    def record(self, role: str, step: str, X_given: Any | None = None) -> None:
        """Record a fit of ``step`` for ``role`` ("inner:J" or "outer").

        ``X_given`` is the input of the pipeline's first step for this role; its
        rows are fingerprinted once per role.
        """
        if X_given is not None:
            self.rowsets[role] = row_fingerprints(X_given)
        self.fits[(role, step)] += 1

    def export(self) -> LedgerExport:
        return LedgerExport(
            rowsets=dict(self.rowsets),
            fits=tuple((r, s, n) for (r, s), n in sorted(self.fits.items())),
        )


def _excess(given: np.ndarray, allowed: np.ndarray) -> np.ndarray:
    """Fingerprints (with repetition) that a fit holds more often than its allowed rows do.

    Counting copies, not set membership, keeps the check sharp when the table has
    identical rows: a fit may hold a duplicated row only as often as that row
    occurs among its own training rows.
    """
    a_val, a_cnt = np.unique(allowed, return_counts=True)
    g_val, g_cnt = np.unique(given, return_counts=True)
    have = np.zeros(len(g_val), dtype=np.int64)
    if len(a_val):
        pos = np.clip(np.searchsorted(a_val, g_val), 0, len(a_val) - 1)
        hit = a_val[pos] == g_val
        have[hit] = a_cnt[pos[hit]]
    return np.repeat(g_val, np.maximum(g_cnt - have, 0))


def verify_ledger(
    exported: LedgerExport,
    *,
    fingerprints: np.ndarray,
    outer_train: np.ndarray,
    outer_test: np.ndarray,
    inner: list[tuple[np.ndarray, np.ndarray]],
) -> tuple[int, int, int, list[str]]:
    """Check one unit's ledger against the plan.

    Every role's fit must hold exactly rows of its own training part: ``outer``
    the outer-training rows, ``inner:J`` the training rows of inner split J.
    Rows beyond those count as outer-test rows seen (or, for an inner fit,
    inner-validation rows seen when they belong to that split's validation part).

    Returns (fits, test rows seen, validation rows seen, digest lines).
    """
    seen_test = 0
    seen_val = 0
    lines = []
    steps_by_role: dict[str, list[str]] = {}
    n_fits = 0
    for role, step, n in exported.fits:
        steps_by_role.setdefault(role, []).append(step)
        n_fits += int(n)
    for role, fps in exported.rowsets.items():
        if role.startswith("inner:"):
            j = int(role.split(":", 1)[1])
            allowed = fingerprints[inner[j][0]]
            extra = _excess(fps, allowed)
            in_val = np.isin(extra, fingerprints[inner[j][1]])
            seen_val += int(in_val.sum())
            seen_test += int((~in_val).sum())
        else:
            extra = _excess(fps, fingerprints[outer_train])
            seen_test += int(extra.size)
        x, s = rowset_digest(fps)
        for step in sorted(set(steps_by_role.get(role, []))):
            lines.append(f"{role} {step} {fps.size} {x:016x} {s:016x}")
    missing = set(steps_by_role) - set(exported.rowsets)
    if missing:
        # A fit whose rows were never fingerprinted cannot be audited: count it as a leak.
        seen_test += len(missing)
    return n_fits, seen_test, seen_val, lines


def digest_lines(lines: Iterable[str]) -> str:
    h = hashlib.sha256()
    for line in lines:
        h.update(line.encode("utf-8"))
        h.update(b"\n")
    return h.hexdigest()
