"""``foldwall audit``: the table audits of a study, without any model search."""

from __future__ import annotations

import os
from collections.abc import Iterable
from typing import Any

from ..audit import AuditCheck, audit_table
from ..plan import derive_seed
from ..records import AuditOutcome
from ..runners import feature_frame
from ..spec import LoadedStudy
from ..table import Dataset
from ._files import study_from_file
from ._study import Study

__all__ = ["audit_study", "audit_study_file"]


def audit_study(study: Study, data: Dataset) -> AuditOutcome:
    """Run the table audits on the study's own outer splits (first repeat).

    The plan is compiled (folds only, nothing is fitted); the confound
    statistics that need no study predictions run when the data have
    acquisition columns. Returns the ``audits`` section a run would start from.
    """
    plan = study.plan(data=data)
    splits = [(f.train, f.test) for f in plan.folds if f.repeat == 0]
    table = audit_table(
        feature_frame(data),
        data.y,
        task="classification" if data.task == "classification" else "regression",
        splits=splits,
        ids=data.ids,
        groups=data.groups,
        acquisition=data.acquisition,
        time=data.time,
        time_name=data.time_name or "time",
        forward=plan.outer.forward,
        n_permutations=study.audits.permutations,
        random_state=derive_seed(plan.seed, "audits"),
    )
    checks = list(table.checks)
    if data.holdout is not None:
        checks += data.holdout.checks
    merged = data.merged_duplicates
    if merged:
        checks.insert(
            0,
            AuditCheck(
                "merge_duplicates",
                "info",
                f"{merged['rows']} duplicate rows were joined into {merged['groups']} "
                "groups before splitting (audits.merge_duplicates).",
                merged,
            ),
        )
    return AuditOutcome(
        checks=tuple(checks),
        confounds=table.confounds,
        leave_one_out=None,
        splits="the study's outer splits (first repeat)",
    )


def audit_study_file(
    loaded: LoadedStudy | str | os.PathLike[str],
    *,
    allow: Iterable[str] = (),
    table: str | os.PathLike[str] | None = None,
    max_table_bytes: int | None = None,
) -> AuditOutcome:
    """:func:`audit_study` for a study file (``table`` and ``max_table_bytes`` as
    for :func:`study_from_file`)."""
    extra: dict[str, Any] = {"table": table}
    if max_table_bytes is not None:
        extra["max_table_bytes"] = max_table_bytes
    study, data = study_from_file(loaded, allow=allow, **extra)
    return audit_study(study, data)
