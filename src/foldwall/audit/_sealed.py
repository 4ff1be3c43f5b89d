"""The row audit's check for sealed hold-out rows.

A study with a hold-out runs on its development rows only. The check below proves
it from what the fits were actually given: no fit may hold the fingerprint of a
sealed row. A sealed row whose features equal a development row's cannot be told
apart from its twin, so it is left out of the check and counted separately
(:func:`straddling_duplicates`).

:func:`boundary_checks` are the table audits that may look across the boundary
because they never use the outcome: copies, near copies and unusually close rows
with one row on each side.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from ..exceptions import DataError
from ._checks import AuditCheck, as_frame, count, listed, row_ids
from ._duplicates import DuplicateSets, find_duplicates
from ._groups import tight_pairs
from ._neighbours import Neighbours, nearest_neighbours
from ._rows import LedgerExport

if TYPE_CHECKING:
    from numpy.typing import ArrayLike, NDArray

__all__ = [
    "boundary_checks",
    "sealed_audit_fingerprints",
    "sealed_rows_seen",
    "straddling_duplicates",
]


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


def boundary_checks(
    development: Any,
    sealed: Any,
    *,
    ids_development: ArrayLike | None = None,
    ids_sealed: ArrayLike | None = None,
    near_ratio: float = 0.1,
    tight_ratio: float = 0.35,
    tight_share: float = 0.1,
) -> list[AuditCheck]:
    """Copies and tight neighbours across the boundary between development and sealed rows.

    These checks use the features only, never the outcome, so they may look at the
    sealed rows before the hold-out is opened. A sealed row with a copy (or a very
    close neighbour) among the development rows is not new to the models: the
    hold-out score is optimistic for it. The rules are those of
    :func:`find_duplicates` and :func:`tight_cluster_check`, computed on both
    tables stacked.

    Parameters
    ----------
    development, sealed : DataFrame or array-like
        The feature tables (same columns) of the development rows and of the
        sealed rows; no outcome, id, group or acquisition columns.
    ids_development, ids_sealed : array-like, default=None
        Ids shown in the evidence; by default row numbers of the stacked table
        (development rows first).
    near_ratio : float, default=0.1
        See :func:`find_duplicates`.
    tight_ratio, tight_share : float, default=0.35, 0.1
        See :func:`tight_cluster_check`; ``tight_share`` is here a share of the
        sealed rows.

    Returns
    -------
    list of AuditCheck
        ``holdout_exact_duplicates`` (``problem`` when a sealed row has an
        identical copy among the development rows), ``holdout_near_duplicates``
        (``warning`` for near copies) and ``holdout_tight_rows`` (``warning`` when
        at least ``tight_share`` of the sealed rows have a tight neighbour among
        the development rows and there are five or more numeric columns).
    """
    dev = as_frame(development, "development")
    sea = as_frame(sealed, "sealed")
    if [str(c) for c in dev.columns] != [str(c) for c in sea.columns]:
        raise DataError(
            "the development and sealed feature tables must have the same columns, "
            "in the same order."
        )
    n_dev, n_sea = len(dev), len(sea)
    frame = pd.concat([dev, sea], ignore_index=True)
    n = n_dev + n_sea
    default = np.arange(n)
    shown = np.concatenate(
        [
            row_ids(ids_development, n_dev)
            if ids_development is not None
            else default[:n_dev],
            row_ids(ids_sealed, n_sea) if ids_sealed is not None else default[n_dev:],
        ]
    )
    is_sealed = default >= n_dev
    nb = nearest_neighbours(frame)
    dup = find_duplicates(frame, neighbours=nb, near_ratio=near_ratio)
    advice = (
        "Declare the unit the copies come from (patient, device, batch) as "
        "data.groups so that the hold-out seals whole units, or remove the copies "
        "if they are entry errors; then seal again."
    )
    return [
        _exact_across(dup, is_sealed, shown, n_sea, advice),
        _near_across(dup, is_sealed, shown, n_sea, near_ratio, advice),
        _tight_across(
            nb, is_sealed, shown, n_sea, tight_ratio, tight_share, _copy_pairs(dup)
        ),
    ]


def _copy_pairs(dup: DuplicateSets) -> set[tuple[int, int]]:
    """Every pair (i < j) of exact or near copies: reported by the copy checks."""
    pairs = {(int(a), int(b)) for a, b in dup.near}
    for s in dup.exact:
        rows = sorted(int(r) for r in s)
        pairs.update((a, b) for i, a in enumerate(rows) for b in rows[i + 1 :])
    return pairs


def _show(shown: NDArray[Any], rows: NDArray[np.intp]) -> list[Any]:
    return [v.item() if isinstance(v, np.generic) else v for v in shown[rows]]


def _sealed_in(pairs: NDArray[np.intp], is_sealed: NDArray[np.bool_]) -> NDArray[Any]:
    """The pairs with one row on each side of the boundary."""
    across: NDArray[Any] = pairs[is_sealed[pairs[:, 0]] != is_sealed[pairs[:, 1]]]
    return across


def _exact_across(
    dup: DuplicateSets,
    is_sealed: NDArray[np.bool_],
    shown: NDArray[Any],
    n_sealed: int,
    advice: str,
) -> AuditCheck:
    cross = [s for s in dup.exact if is_sealed[s].any() and not is_sealed[s].all()]
    rows = int(sum(int(is_sealed[s].sum()) for s in cross))
    ev: dict[str, Any] = {
        "sealed_rows": n_sealed,
        "sealed_rows_with_copy": rows,
        "sets_across": len(cross),
        "examples": [_show(shown, s) for s in listed(cross)],
    }
    if not cross:
        return AuditCheck(
            "holdout_exact_duplicates",
            "info",
            "No sealed row has an identical copy among the development rows.",
            ev,
        )
    return AuditCheck(
        "holdout_exact_duplicates",
        "problem",
        f"{rows} of the {n_sealed} sealed rows have an identical copy among the "
        f"development rows ({count(len(cross), 'set')}): the models are trained on "
        "their copies, so the hold-out score is optimistic for them.",
        ev,
        advice,
    )


def _near_across(
    dup: DuplicateSets,
    is_sealed: NDArray[np.bool_],
    shown: NDArray[Any],
    n_sealed: int,
    near_ratio: float,
    advice: str,
) -> AuditCheck:
    across = _sealed_in(dup.near, is_sealed)
    rows = int(np.unique(across[is_sealed[across]]).size)
    ev: dict[str, Any] = {
        "sealed_rows": n_sealed,
        "sealed_rows_with_near_copy": rows,
        "pairs_across": len(across),
        "threshold": dup.threshold,
        "near_ratio": near_ratio,
        "rule": "distance on scaled features below near_ratio x typical distance",
        "examples": [_show(shown, p) for p in listed(across)],
    }
    if not len(across):
        return AuditCheck(
            "holdout_near_duplicates",
            "info",
            "No sealed row is a near copy of a development row.",
            ev,
        )
    return AuditCheck(
        "holdout_near_duplicates",
        "warning",
        f"{rows} of the {n_sealed} sealed rows are near copies of development rows "
        f"({count(len(across), 'pair')}): they may be the same case measured twice.",
        ev,
        advice,
    )


def _tight_across(
    nb: Neighbours,
    is_sealed: NDArray[np.bool_],
    shown: NDArray[Any],
    n_sealed: int,
    tight_ratio: float,
    tight_share: float,
    copies: set[tuple[int, int]],
) -> AuditCheck:
    if nb.distance.shape[1] == 0 or not np.isfinite(nb.typical) or nb.typical == 0:
        return AuditCheck(
            "holdout_tight_rows",
            "info",
            "Too few rows or numeric columns to judge how sealed rows sit among the "
            "development rows.",
            {"sealed_rows": n_sealed, "numeric_columns": len(nb.columns)},
        )
    across = _sealed_in(tight_pairs(nb, tight_ratio=tight_ratio), is_sealed)
    across = across[[(int(a), int(b)) not in copies for a, b in across]].reshape(-1, 2)
    rows = int(np.unique(across[is_sealed[across]]).size)
    share = rows / n_sealed if n_sealed else 0.0
    ev: dict[str, Any] = {
        "sealed_rows": n_sealed,
        "sealed_rows_with_tight_neighbour": rows,
        "share": share,
        "tight_pairs_across": len(across),
        "tight_ratio": tight_ratio,
        "tight_share": tight_share,
        "numeric_columns": len(nb.columns),
        "rule": "nearest row closer than tight_ratio x the distance to the 10th "
        "nearest, and less likely than 0.01 for a cluster-free table of this "
        "dimension; exact and near copies are counted by their own checks",
        "examples": [_show(shown, p) for p in listed(across)],
    }
    if len(nb.columns) < 5:
        return AuditCheck(
            "holdout_tight_rows",
            "info",
            f"{share:.0%} of the sealed rows have a tight neighbour among the "
            "development rows; with fewer than five numeric columns this is not "
            "judged.",
            ev,
        )
    if share >= tight_share:
        return AuditCheck(
            "holdout_tight_rows",
            "warning",
            f"{share:.0%} of the sealed rows sit far closer to a development row than "
            "chance allows: they may come from the same units (patients, devices, "
            "batches) as development rows, and then the hold-out is not new to the "
            "models.",
            ev,
            "Find out whether these rows share a unit; if so, declare it as "
            "data.groups so that the hold-out seals whole units.",
        )
    return AuditCheck(
        "holdout_tight_rows",
        "info",
        f"{share:.0%} of the sealed rows have a tight neighbour among the "
        "development rows; the sealed rows do not cluster with development rows.",
        ev,
    )
