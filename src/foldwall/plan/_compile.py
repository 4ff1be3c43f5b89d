"""Study + rows -> an explicit, deterministic, JSON-serialisable plan.

The plan lists every outer fold's training and test rows, every inner split of
every outer fold, and every unit of work (candidate x outer fold x repeat, and
later x permutation). It is computed before anything is fitted; ``foldwall plan``
prints it, ``foldwall run`` executes it.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .._candidate import Candidate
from ..records import UnitKey
from ..search import describe_space, grid_settings
from ._folds import SplitRule, derive_seed

__all__ = ["OuterFold", "Plan", "make_folds", "compile_plan", "PLAN_VERSION"]

PLAN_VERSION = 1
# Outer test parts smaller than this get a SmallSampleWarning (common practice, not a published threshold).
SMALL_TEST_FOLD = 8


@dataclass(frozen=True)
class OuterFold:
    repeat: int
    fold: int
    train: np.ndarray
    test: np.ndarray
    inner: tuple[tuple[np.ndarray, np.ndarray], ...]
    split_seed: int | None = None


def make_folds(
    y: np.ndarray,
    groups: np.ndarray | None,
    outer: SplitRule,
    inner: SplitRule,
    *,
    seed: int,
    repeats: int,
    fixed: list[OuterFold] | None = None,
    check: bool = False,
    time: np.ndarray | None = None,
) -> list[OuterFold]:
    """Outer folds (and their inner splits) for these labels.

    ``fixed`` keeps the partition of the first repeat as it is (the permutation
    control holds the outer partition fixed); inner splits and later repeats are
    always derived from ``y`` by the same rule.
    """
    rows = np.arange(len(y))
    if check:
        outer.check(rows, y, groups, where="the table", time=time)
    out: list[OuterFold] = []
    for r in range(repeats):
        s_outer = derive_seed(seed, "outer", r)
        if fixed is not None and r == 0:
            parts = [(f.train, f.test) for f in fixed if f.repeat == 0]
        else:
            parts = outer.split(rows, y, groups, seed=s_outer, time=time)
        for f, (tr, te) in enumerate(parts):
            if check:
                inner.check(
                    tr,
                    y,
                    groups,
                    where=f"the training part of outer fold {f} (repeat {r})",
                    time=time,
                )
            ins = inner.split(
                tr, y, groups, seed=derive_seed(seed, "inner", r, f), time=time
            )
            out.append(
                OuterFold(
                    r,
                    f,
                    tr,
                    te,
                    tuple(ins),
                    s_outer if outer.splitter is None else None,
                )
            )
    return out


def _idx(a: np.ndarray) -> list[int]:
    return [int(i) for i in a]


@dataclass
class Plan:
    """The compiled study. ``to_dict`` is what ``plan.json`` holds."""

    n_samples: int
    task: str
    seed: int
    metrics: list[str]
    outer: SplitRule
    inner: SplitRule
    repeats: int
    folds: list[OuterFold]
    candidates: list[Candidate]
    search_method: str
    trials: int | None
    grids: dict[int, list[dict[str, Any]]] = field(default_factory=dict)
    permutations: int = 0
    scheme: str = "within-outer"
    time: np.ndarray | None = None
    # distinct label arrangements the control's scheme allows (set by the study)
    permutations_possible: int | None = None

    def permutation_cells(self, scheme: str) -> list[np.ndarray] | None:
        """The cells labels are shuffled within: None (all rows) for the global
        scheme, else the first repeat's outer test parts; forward splits never test
        the earliest rows, which then form a cell of their own."""
        if scheme == "global":
            return None
        cells = [f.test for f in self.folds if f.repeat == 0]
        untested = np.setdiff1d(np.arange(self.n_samples), np.concatenate(cells))
        return [*cells, untested] if untested.size else cells

    def method_of(self, ci: int) -> str:
        """The search a candidate gets: a model with nothing to tune has one setting."""
        if self.search_method == "grid" or not self.candidates[ci].space:
            return "grid"
        return self.search_method

    def settings_count(self, ci: int) -> int:
        c = self.candidates[ci]
        if c.role == "reference":
            return 1
        if self.method_of(ci) == "grid":
            return len(self.grids[ci])
        return int(self.trials or 1)

    def needs_search(self, ci: int) -> bool:
        c = self.candidates[ci]
        if c.role == "reference":
            return False
        if self.method_of(ci) != "grid":
            return True  # a sampled setting must be drawn by the search, even with a budget of one
        competing = sum(1 for x in self.candidates if x.role == "candidate")
        return self.settings_count(ci) > 1 or (c.role == "candidate" and competing > 1)

    def settings_of(self, ci: int) -> list[dict[str, Any]]:
        """The settings a grid unit evaluates (one empty setting when nothing is tuned)."""
        if self.candidates[ci].role == "reference":
            return [{}]
        return self.grids.get(ci) or [{}]

    @property
    def n_inner(self) -> int:
        return len(self.folds[0].inner) if self.folds else 0

    def tasks_of(self, ci: int) -> int:
        """Tasks of one unit: one per inner split of a grid search (or one sampled search), one refit."""
        if not self.needs_search(ci):
            return 1
        return (self.n_inner if self.method_of(ci) == "grid" else 1) + 1

    def n_tasks(self, units: list[UnitKey]) -> int:
        """Tasks of a set of units (what progress counts)."""
        return sum(self.tasks_of(u.cand) for u in units)

    def fits_of(self, ci: int) -> int:
        """Pipeline fits of one unit (before any sharing of equal steps)."""
        return (
            self.settings_count(ci) * self.n_inner if self.needs_search(ci) else 0
        ) + 1

    def model_fits(self, *, permutations: int | None = None) -> dict[str, int]:
        """Pipeline fits the run will make (before any sharing of equal steps)."""
        per_fold_real = 0
        per_fold_perm = 0
        for ci, c in enumerate(self.candidates):
            n = self.fits_of(ci)
            per_fold_real += n
            if c.role == "candidate":
                per_fold_perm += n
        m = self.permutations if permutations is None else permutations
        return {
            "real": per_fold_real * len(self.folds),
            "permutations": per_fold_perm * len(self.folds) * m,
        }

    def fold_table(
        self, y: np.ndarray, groups: np.ndarray | None
    ) -> list[dict[str, Any]]:
        rows = []
        classes = np.unique(y) if self.task == "classification" else None
        for f in self.folds:
            row: dict[str, Any] = {
                "repeat": f.repeat,
                "fold": f.fold,
                "n_train": len(f.train),
                "n_test": len(f.test),
                "inner_n_test": [len(te) for _, te in f.inner],
            }
            if classes is not None:
                row["test_classes"] = {
                    str(c): int(np.sum(y[f.test] == c)) for c in classes
                }
                row["train_classes"] = {
                    str(c): int(np.sum(y[f.train] == c)) for c in classes
                }
            if groups is not None:
                row["test_groups"] = int(np.unique(groups[f.test]).size)
                row["train_groups"] = int(np.unique(groups[f.train]).size)
            rows.append(row)
        return rows

    def digest(self) -> str:
        h = hashlib.sha256()
        for f in self.folds:
            h.update(f"{f.repeat}/{f.fold}".encode())
            h.update(np.asarray(f.test, dtype=np.int64).tobytes())
            for _, te in f.inner:
                h.update(np.asarray(te, dtype=np.int64).tobytes())
        return h.hexdigest()

    def to_dict(self) -> dict[str, Any]:
        return {
            "plan_version": PLAN_VERSION,
            "n_samples": self.n_samples,
            "task": self.task,
            "seed": self.seed,
            "metrics": self.metrics,
            "outer": {**self.outer.describe(), "repeats": self.repeats},
            "inner": self.inner.describe(),
            "search": {"method": self.search_method, "trials": self.trials},
            "candidates": [
                {
                    "name": c.name,
                    "role": c.role,
                    "steps": [[n, repr(e)] for n, e in c.steps],
                    "space": describe_space(c.space),
                    "settings_per_search": self.settings_count(i),
                    "searched": self.needs_search(i),
                }
                for i, c in enumerate(self.candidates)
            ],
            "model_fits": self.model_fits(),
            "permutations": {
                "count": self.permutations,
                "scheme": self.scheme,
                **_possible(self.permutations_possible),
                "note": "inner splits (and later repeats) are re-derived from each permutation's labels by the same rule",
            },
            "digest": self.digest(),
            "folds": [
                {
                    "repeat": f.repeat,
                    "fold": f.fold,
                    "split_seed": f.split_seed,
                    "train": _idx(f.train),
                    "test": _idx(f.test),
                    "inner": [
                        {"train": _idx(tr), "test": _idx(te)} for tr, te in f.inner
                    ],
                }
                for f in self.folds
            ],
        }


def _possible(n: int | None) -> dict[str, Any]:
    """How many label arrangements the scheme allows, as plain JSON numbers."""
    if n is None:
        return {}
    import math

    return {
        "possible": n if n <= 10**12 else None,
        "possible_log10": round(math.log10(n), 2),
    }


def compile_plan(
    *,
    y: np.ndarray,
    groups: np.ndarray | None,
    task: str,
    candidates: list[Candidate],
    outer: SplitRule,
    inner: SplitRule,
    repeats: int,
    seed: int,
    metrics: list[str],
    search_method: str,
    trials: int | None,
    permutations: int = 0,
    scheme: str = "within-outer",
    time: np.ndarray | None = None,
) -> Plan:
    """Check everything that can be checked without fitting, and list the work."""
    grids: dict[int, list[dict[str, Any]]] = {}
    for i, c in enumerate(candidates):
        grids[i] = (
            grid_settings(c.space, name=c.name)
            if search_method == "grid" or not c.space
            else []
        )
    folds = make_folds(
        y, groups, outer, inner, seed=seed, repeats=repeats, check=True, time=time
    )
    smallest = min(len(f.test) for f in folds)
    if smallest < SMALL_TEST_FOLD:
        import warnings

        from ..exceptions import SmallSampleWarning

        warnings.warn(
            f"the smallest outer test part has {smallest} rows: a score on so few rows moves in steps of "
            f"1/{smallest} or more and says little on its own; use fewer outer folds, or repeat the outer loop",
            SmallSampleWarning,
            stacklevel=4,
        )
    return Plan(
        n_samples=len(y),
        task=task,
        seed=seed,
        metrics=list(metrics),
        outer=outer,
        inner=inner,
        repeats=repeats,
        folds=folds,
        candidates=list(candidates),
        search_method=search_method,
        trials=trials,
        grids=grids,
        permutations=permutations,
        scheme=scheme,
        time=time,
    )
