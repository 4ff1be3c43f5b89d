"""Typed records that cross stage boundaries: units, task results, outcomes.

Frozen dataclasses; those that are stored or written have ``to_json`` (and
``from_json`` where they are read back).
"""

from ._holdout import SealedRows
from ._outcomes import (
    AuditCounts,
    AuditOutcome,
    ComparisonRow,
    ControlOutcome,
    RunOutcome,
    StudySource,
    Timing,
)
from ._tasks import Refit, SearchTable, SplitScores, TaskResult
from ._units import (
    AuditStamp,
    TrialRow,
    UnitKey,
    UnitRecord,
    UnitSeeds,
    fold_winners,
    jsonable_settings,
    procedure_score,
)

__all__ = [
    # units
    "UnitKey",
    "UnitRecord",
    "UnitSeeds",
    "AuditStamp",
    "TrialRow",
    "fold_winners",
    "procedure_score",
    "jsonable_settings",
    # task results
    "SplitScores",
    "SearchTable",
    "Refit",
    "TaskResult",
    # outcomes
    "AuditCounts",
    "AuditOutcome",
    "ControlOutcome",
    "ComparisonRow",
    "RunOutcome",
    "Timing",
    "StudySource",
    # a study's sealed hold-out
    "SealedRows",
]
