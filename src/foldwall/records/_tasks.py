"""What each kind of task returns from a worker.

Three kinds, all results of pure functions (``foldwall.runners``):

- :class:`SplitScores`: every grid setting of one candidate scored on one inner split;
- :class:`SearchTable`: an optuna search of one candidate over all inner splits;
- :class:`Refit`: the chosen setting refitted on the outer-training part and scored.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..audit import LedgerExport
from ._units import UnitKey

__all__ = ["SplitScores", "SearchTable", "Refit", "TaskResult"]


@dataclass(frozen=True)
class _Task:
    unit: UnitKey
    ledger: LedgerExport
    fit_seconds: float
    task_seconds: float


@dataclass(frozen=True)
class SplitScores(_Task):
    """Scores (primary metric, NaN for a failed setting) of every grid setting on inner split ``split``."""

    split: int = 0
    scores: np.ndarray = field(default_factory=lambda: np.empty(0))
    errors: tuple[str, ...] = ()


@dataclass(frozen=True)
class SearchTable(_Task):
    """The settings an optuna search drew, and their scores on every inner split (rows x splits)."""

    settings: tuple[dict[str, Any], ...] = ()
    table: np.ndarray = field(default_factory=lambda: np.empty((0, 0)))
    errors: tuple[str, ...] = ()


@dataclass(frozen=True)
class Refit(_Task):
    """The chosen setting refitted on outer-training rows, scored on test and training rows."""

    test_scores: dict[str, float] = field(default_factory=dict)
    train_scores: dict[str, float] = field(default_factory=dict)
    predicted: list[Any] | None = None
    decision: list[float] | None = None
    decision_kind: str | None = None
    selected_features: list[int] | None = None


TaskResult = SplitScores | SearchTable | Refit
