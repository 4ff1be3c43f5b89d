"""All table audits in one call: what ``foldwall audit`` runs (no model search).

:func:`audit_table` runs, in this order: exact and near duplicates, id-like
columns, tight clusters, the four leaky-column audits, the outcome's drift with
time (with a time column), and the confound statistics that need no study
predictions (with acquisition columns). The nearest-neighbour distances are
computed once and shared.

Outer splits: pass the study's. Without them the audit makes its own five-fold
split (stratified for a categorical outcome, group-aware with groups; seeded by
``random_state``), and says so in the result.
"""

from __future__ import annotations

import time as _clock
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np
from sklearn.model_selection import (
    GroupKFold,
    KFold,
    StratifiedGroupKFold,
    StratifiedKFold,
)

from foldwall.audit._checks import (
    AuditCheck,
    Task,
    as_frame,
    checks_to_json,
    infer_task,
    worst_severity,
)
from foldwall.audit._confounds import confound_checks
from foldwall.audit._duplicates import DuplicateSets, duplicate_checks, find_duplicates
from foldwall.audit._groups import id_column_checks, tight_cluster_check
from foldwall.audit._leaky import leaky_column_checks
from foldwall.audit._neighbours import nearest_neighbours
from foldwall.audit._time import time_drift_check
from foldwall.exceptions import DataError

if TYPE_CHECKING:
    from numpy.typing import ArrayLike, NDArray

__all__ = ["TableAudit", "audit_table", "default_splits"]


@dataclass(frozen=True)
class TableAudit:
    """Result of :func:`audit_table`.

    Attributes
    ----------
    checks : list of AuditCheck
        Every check that ran, in order.
    duplicates : DuplicateSets
        The duplicates found (for :func:`merge_duplicates`).
    confounds : dict or None
        The numbers behind the confound checks (with acquisition columns).
    splits : str
        ``"study"`` when the study's outer splits were used, else how the audit
        split the rows.
    seconds : dict
        Wall time of each part, for the benchmark.
    """

    checks: list[AuditCheck]
    duplicates: DuplicateSets
    confounds: dict[str, Any] | None
    splits: str
    seconds: dict[str, float] = field(default_factory=dict, hash=False)

    @property
    def severity(self) -> str:
        """The most serious severity among the checks."""
        return worst_severity(self.checks)

    def to_json(self) -> dict[str, Any]:
        """The ``audits`` section of ``results.json`` (table part)."""
        return {
            "checks": checks_to_json(self.checks),
            "splits": self.splits,
            "confounds": self.confounds,
        }


def default_splits(
    y: ArrayLike,
    *,
    task: Task,
    groups: ArrayLike | None = None,
    n_splits: int = 5,
    random_state: int = 0,
) -> list[tuple[NDArray[np.intp], NDArray[np.intp]]]:
    """Five-fold outer splits for an audit run without the study's own."""
    yy = np.asarray(y)
    dummy = np.zeros((len(yy), 1))
    k = n_splits
    if task == "classification":
        k = max(2, min(k, int(np.unique(yy, return_counts=True)[1].min())))
    if groups is not None:
        g = np.asarray(groups)
        k = max(2, min(k, int(np.unique(g).size)))
        codes = np.random.default_rng(random_state).permutation(np.unique(g).size)[
            np.unique(g, return_inverse=True)[1].ravel()
        ]
        if task == "classification":
            parts = StratifiedGroupKFold(k).split(dummy, yy, codes)
        else:
            parts = GroupKFold(k).split(dummy, yy, codes)
    elif task == "classification":
        parts = StratifiedKFold(k, shuffle=True, random_state=random_state).split(
            dummy, yy
        )
    else:
        parts = KFold(k, shuffle=True, random_state=random_state).split(dummy)
    return [
        (np.sort(tr).astype(np.intp), np.sort(te).astype(np.intp)) for tr, te in parts
    ]


def audit_table(
    X: Any,
    y: ArrayLike,
    *,
    task: Task | None = None,
    splits: Sequence[tuple[ArrayLike, ArrayLike]] | None = None,
    ids: ArrayLike | None = None,
    groups: ArrayLike | None = None,
    acquisition: Any = None,
    time: ArrayLike | None = None,
    time_name: str = "time",
    forward: bool = False,
    n_permutations: int = 19,
    random_state: int = 0,
    near_ratio: float = 0.1,
) -> TableAudit:
    """Run every table audit (no model search).

    Parameters
    ----------
    X : DataFrame or array-like of shape (n_samples, n_features)
        The features, without target, id, group, time or acquisition columns
        (unless the study uses acquisition columns as features).
    y : array-like of shape (n_samples,)
        The outcome.
    task : {"classification", "regression"}, default=None
        Inferred from ``y`` when None.
    splits : list of (train, test) index pairs, default=None
        The study's outer splits; see the module doc when None.
    ids : array-like of shape (n_samples,), default=None
        Row ids shown in the evidence.
    groups : array-like of shape (n_samples,), default=None
        The study's groups.
    acquisition : DataFrame of shape (n_samples, n_columns), default=None
        Columns describing how rows were acquired.
    time : array-like of shape (n_samples,), default=None
        Time of every row.
    time_name : str, default="time"
        Name of the time column, for the evidence.
    forward : bool, default=False
        Whether the study splits forward in time.
    n_permutations : int, default=19
        Random-label shuffles for each confound statistic.
    random_state : int, default=0
        Seed of the audit's own splits and shuffles.
    near_ratio : float, default=0.1
        See :func:`find_duplicates`.

    Returns
    -------
    TableAudit
    """
    frame = as_frame(X)
    n = len(frame)
    yy = np.asarray(y)
    if yy.shape != (n,):
        raise DataError(
            f"the outcome must have one entry per row ({n}), got shape {yy.shape}."
        )
    task = task or infer_task(yy)
    seconds: dict[str, float] = {}
    how = "study"
    if splits is None:
        splits = default_splits(yy, task=task, groups=groups, random_state=random_state)
        how = f"{len(splits)}-fold split made by the audit (seed {random_state})"

    t0 = _clock.perf_counter()
    nb = nearest_neighbours(frame)
    dup = find_duplicates(frame, neighbours=nb, near_ratio=near_ratio)
    checks = duplicate_checks(
        frame, splits=splits, ids=ids, y=yy, duplicates=dup, near_ratio=near_ratio
    )
    seconds["duplicates"] = _clock.perf_counter() - t0

    t0 = _clock.perf_counter()
    checks += id_column_checks(frame)
    checks.append(tight_cluster_check(frame, ids=ids, groups=groups, neighbours=nb))
    seconds["hidden_groups"] = _clock.perf_counter() - t0

    t0 = _clock.perf_counter()
    checks += leaky_column_checks(frame, yy, splits=splits, task=task)
    seconds["leaky_columns"] = _clock.perf_counter() - t0

    if time is not None:
        t0 = _clock.perf_counter()
        checks.append(
            time_drift_check(time, yy, forward=forward, task=task, name=time_name)
        )
        seconds["time"] = _clock.perf_counter() - t0

    confounds = None
    if acquisition is not None:
        t0 = _clock.perf_counter()
        more, confounds = confound_checks(
            acquisition,
            yy,
            splits,
            X=frame,
            task=task,
            n_permutations=n_permutations,
            random_state=random_state,
        )
        checks += more
        seconds["confounds"] = _clock.perf_counter() - t0
    return TableAudit(
        checks=checks, duplicates=dup, confounds=confounds, splits=how, seconds=seconds
    )
