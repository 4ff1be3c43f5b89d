"""The unit of work and its stored record.

A unit is one candidate's nested procedure on one outer fold of one repeat, for
the real labels (permutation 0) or one permutation. Its record is what the run
store keeps (``to_json``/``from_json``; the on-disk schema is in docs/store.md)
and what every result is derived from.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

__all__ = [
    "UnitKey",
    "AuditStamp",
    "TrialRow",
    "UnitSeeds",
    "UnitRecord",
    "fold_winners",
    "procedure_score",
    "jsonable_settings",
]

JSONDict = dict[str, Any]


@dataclass(frozen=True, order=True)
class UnitKey:
    """Identity of one unit: permutation (0 = real labels), repeat, fold, candidate index."""

    perm: int
    repeat: int
    fold: int
    cand: int

    @property
    def uid(self) -> str:
        return f"p{self.perm:05d}-r{self.repeat:02d}-f{self.fold:02d}-c{self.cand:02d}"


@dataclass(frozen=True)
class AuditStamp:
    """The row audit of one unit: fits made, forbidden rows seen (must be 0), digest."""

    fits: int
    test_rows_seen: int
    validation_rows_seen: int
    digest: str
    # sealed hold-out rows seen by any fit (must be 0); None when no rows are sealed
    holdout_rows_seen: int | None = None

    def to_json(self) -> JSONDict:
        out: JSONDict = {
            "digest": self.digest,
            "fits": self.fits,
            "test_rows_seen": self.test_rows_seen,
            "validation_rows_seen": self.validation_rows_seen,
        }
        if self.holdout_rows_seen is not None:
            out["holdout_rows_seen"] = self.holdout_rows_seen
        return out

    @classmethod
    def from_json(cls, d: Mapping[str, Any]) -> AuditStamp:
        sealed = d.get("holdout_rows_seen")
        return cls(
            fits=int(d["fits"]),
            test_rows_seen=int(d["test_rows_seen"]),
            validation_rows_seen=int(d["validation_rows_seen"]),
            digest=str(d["digest"]),
            holdout_rows_seen=None if sealed is None else int(sealed),
        )


@dataclass(frozen=True)
class TrialRow:
    """One setting of an inner search: its mean, sd and per-split scores (None: failed)."""

    settings: JSONDict
    mean: float | None
    sd: float | None
    splits: tuple[float | None, ...]

    def to_json(self) -> JSONDict:
        return {
            "mean": self.mean,
            "sd": self.sd,
            "settings": dict(self.settings),
            "splits": list(self.splits),
        }

    @classmethod
    def from_json(cls, d: Mapping[str, Any]) -> TrialRow:
        return cls(
            settings=dict(d["settings"]),
            mean=d["mean"],
            sd=d["sd"],
            splits=tuple(d["splits"]),
        )

    @classmethod
    def from_scores(cls, settings: JSONDict, row: Sequence[float]) -> TrialRow:
        import numpy as np

        finite = bool(np.all(np.isfinite(row)))
        return cls(
            settings=settings,
            mean=float(np.mean(row)) if finite else None,
            sd=float(np.std(row)) if finite else None,
            splits=tuple(float(v) if math.isfinite(v) else None for v in row),
        )


@dataclass(frozen=True)
class UnitSeeds:
    """The seeds a unit actually used.

    ``search`` seeds the optuna sampler of a sampled search (None for a grid);
    ``steps`` maps each step that was given a seed (its ``random_state`` was left
    unset) to that seed.
    """

    search: int | None = None
    steps: Mapping[str, int] = field(default_factory=dict)

    def to_json(self) -> JSONDict:
        return {"search": self.search, "steps": dict(sorted(self.steps.items()))}

    @classmethod
    def from_json(cls, d: Mapping[str, Any]) -> UnitSeeds:
        return cls(search=d.get("search"), steps=dict(d.get("steps") or {}))

    def stored_seed(self) -> int | None:
        """The store's ``seed`` column: the search seed, else the final step's seed."""
        if self.search is not None:
            return self.search
        if self.steps:
            return int(list(self.steps.values())[-1])
        return None


@dataclass(frozen=True)
class UnitRecord:
    """Everything a finished unit produced.

    ``trials``, ``test_rows``, ``predicted``, ``decision`` (the value for the second
    class in sorted order), ``decision_kind`` (``probability`` or
    ``decision_function``) and ``selected_features`` are kept for units of the real
    labels only (permutation units keep scores).
    """

    unit: str
    perm: int
    repeat: int
    fold: int
    candidate: str
    role: str
    settings: JSONDict
    inner_score: float | None
    inner_sd: float | None
    test: Mapping[str, float]
    train: Mapping[str, float]
    n_train: int
    n_test: int
    audit: AuditStamp
    fit_seconds: float
    task_seconds: float
    errors: tuple[str, ...] = ()
    seeds: UnitSeeds = field(default_factory=UnitSeeds)
    trials: tuple[TrialRow, ...] | None = None
    test_rows: tuple[int, ...] | None = None
    predicted: tuple[Any, ...] | None = None
    decision: tuple[float, ...] | None = None
    decision_kind: str | None = None
    selected_features: tuple[int, ...] | None = None

    @property
    def key(self) -> tuple[int, int, int]:
        return (self.perm, self.repeat, self.fold)

    def to_json(self) -> JSONDict:
        """The stored payload (plain JSON types; the store sorts the keys)."""
        d: JSONDict = {
            "audit": self.audit.to_json(),
            "candidate": self.candidate,
            "errors": list(self.errors),
            "fit_seconds": self.fit_seconds,
            "fold": self.fold,
            "inner_score": self.inner_score,
            "inner_sd": self.inner_sd,
            "n_test": self.n_test,
            "n_train": self.n_train,
            "perm": self.perm,
            "repeat": self.repeat,
            "role": self.role,
            "seeds": self.seeds.to_json(),
            "settings": dict(self.settings),
            "task_seconds": self.task_seconds,
            "test": dict(self.test),
            "train": dict(self.train),
            "unit": self.unit,
        }
        if self.trials is not None:
            d["trials"] = [t.to_json() for t in self.trials]
        if self.test_rows is not None:
            d["test_rows"] = list(self.test_rows)
            d["predicted"] = None if self.predicted is None else list(self.predicted)
            d["decision"] = None if self.decision is None else list(self.decision)
            if self.decision_kind is not None:
                d["decision_kind"] = self.decision_kind
        if self.selected_features is not None:
            d["selected_features"] = list(self.selected_features)
        return d

    @classmethod
    def from_json(cls, d: Mapping[str, Any]) -> UnitRecord:
        def opt(name: str) -> tuple[Any, ...] | None:
            v = d.get(name)
            return None if v is None else tuple(v)

        trials = d.get("trials")
        return cls(
            unit=str(d["unit"]),
            perm=int(d["perm"]),
            repeat=int(d["repeat"]),
            fold=int(d["fold"]),
            candidate=str(d["candidate"]),
            role=str(d["role"]),
            settings=dict(d["settings"]),
            inner_score=d["inner_score"],
            inner_sd=d["inner_sd"],
            test=dict(d["test"]),
            train=dict(d["train"]),
            n_train=int(d["n_train"]),
            n_test=int(d["n_test"]),
            audit=AuditStamp.from_json(d["audit"]),
            fit_seconds=float(d["fit_seconds"]),
            task_seconds=float(d["task_seconds"]),
            errors=tuple(d.get("errors") or ()),
            seeds=UnitSeeds.from_json(d.get("seeds") or {}),
            trials=None
            if trials is None
            else tuple(TrialRow.from_json(t) for t in trials),
            test_rows=opt("test_rows"),
            predicted=opt("predicted"),
            decision=opt("decision"),
            decision_kind=d.get("decision_kind"),
            selected_features=opt("selected_features"),
        )


def _inner_or_floor(r: UnitRecord) -> float:
    return r.inner_score if r.inner_score is not None else -math.inf


def fold_winners(
    records: Iterable[UnitRecord],
) -> dict[tuple[int, int, int], UnitRecord]:
    """Per (perm, repeat, fold): the candidate with the best inner score (first on ties)."""
    best: dict[tuple[int, int, int], UnitRecord] = {}
    for rec in sorted(records, key=lambda r: r.unit):
        if rec.role != "candidate":
            continue
        cur = best.get(rec.key)
        if cur is None or _inner_or_floor(rec) > _inner_or_floor(cur):
            best[rec.key] = rec
    return best


def procedure_score(records: Iterable[UnitRecord], metric: str) -> float:
    """The whole procedure's score: mean over outer folds of the winner's test score."""
    import numpy as np

    winners = fold_winners(records)
    return float(np.mean([w.test[metric] for w in winners.values()]))


def jsonable_settings(settings: Mapping[str, Any]) -> JSONDict:
    """Settings as JSON values (objects such as nested estimators by their repr)."""
    out: JSONDict = {}
    for k, v in settings.items():
        if isinstance(v, (type(None), bool, int, float, str)):
            out[k] = v
        elif hasattr(v, "item") and hasattr(v, "dtype") and v.dtype.kind in "iuf":
            out[k] = v.item()
        else:
            out[k] = repr(v)
    return out
