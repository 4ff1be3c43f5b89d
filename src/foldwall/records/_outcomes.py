"""Outcomes of a run, as the runners hand them to the result builder."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from ..audit import AuditCheck
from ._units import UnitRecord

__all__ = [
    "AuditOutcome",
    "AuditCounts",
    "ControlOutcome",
    "ComparisonRow",
    "Timing",
    "RunOutcome",
    "StudySource",
]

JSONDict = dict[str, Any]


@dataclass(frozen=True)
class AuditCounts:
    """Row-audit totals over a set of units."""

    fits: int = 0
    units: int = 0
    test_rows_seen: int = 0
    holdout_rows_seen: int = 0

    def add(self, rec: UnitRecord) -> AuditCounts:
        return AuditCounts(
            fits=self.fits + rec.audit.fits,
            units=self.units + 1,
            test_rows_seen=self.test_rows_seen + rec.audit.test_rows_seen,
            holdout_rows_seen=self.holdout_rows_seen
            + (rec.audit.holdout_rows_seen or 0),
        )


@dataclass(frozen=True)
class ControlOutcome:
    """The random-label control: the observed score against its permutation null."""

    metric: str
    observed: float
    p_value: float
    permutations: int
    permutations_asked: int
    exceedances: int
    p_floor: float
    null_scores: tuple[float, ...]
    null_mean: float | None
    null_sd: float | None
    null_quantiles: Mapping[str, Any] | None
    observed_rank_fraction: float | None
    chance_level: float | None
    scheme: str
    exchangeable_units: str
    blocks: str | None
    stopped_early: bool
    reason: str
    rule: Mapping[str, Any]
    alpha: float
    statement: str
    what_was_repeated: str
    notes: tuple[str, ...] = ()
    audit: AuditCounts = field(default_factory=AuditCounts)

    def to_json(self) -> JSONDict:
        """The ``control`` section of results.json (notes and audit go elsewhere)."""
        return {
            "metric": self.metric,
            "observed": self.observed,
            "p_value": self.p_value,
            "permutations": self.permutations,
            "permutations_asked": self.permutations_asked,
            "exceedances": self.exceedances,
            "p_floor": self.p_floor,
            "null_scores": list(self.null_scores),
            "null_mean": self.null_mean,
            "null_sd": self.null_sd,
            "null_quantiles": self.null_quantiles,
            "observed_rank_fraction": self.observed_rank_fraction,
            "chance_level": self.chance_level,
            "scheme": self.scheme,
            "exchangeable_units": self.exchangeable_units,
            "blocks": self.blocks,
            "stopped_early": self.stopped_early,
            "reason": self.reason,
            "rule": dict(self.rule),
            "alpha": self.alpha,
            "statement": self.statement,
            "what_was_repeated": self.what_was_repeated,
        }


@dataclass(frozen=True)
class Timing:
    """Workers, threads and timings of a run (they never change a result)."""

    threads_per_worker: int
    math_library_threads_outside_runs: Sequence[Any]
    wall_seconds: float
    busy_seconds: float
    fit_seconds: float
    n_jobs: int

    @property
    def cpu_efficiency(self) -> float | None:
        if self.wall_seconds <= 0:
            return None
        return self.busy_seconds / (self.n_jobs * self.wall_seconds)

    def to_json(self) -> JSONDict:
        return {
            "threads_per_worker": self.threads_per_worker,
            "math_library_threads_outside_runs": list(
                self.math_library_threads_outside_runs
            ),
            "wall_seconds": self.wall_seconds,
            "busy_seconds": self.busy_seconds,
            "fit_seconds": self.fit_seconds,
            "n_jobs": self.n_jobs,
            "cpu_efficiency": self.cpu_efficiency,
        }


@dataclass(frozen=True)
class AuditOutcome:
    """The table audits and confound checks of a run (results.json's ``audits``).

    ``checks`` are every audit's findings, in order; ``confounds`` the numbers
    behind the confound checks; ``leave_one_out`` the estimate with each level
    of an acquisition column held out in turn.
    """

    checks: tuple[AuditCheck, ...] = ()
    confounds: Mapping[str, Any] | None = None
    leave_one_out: Mapping[str, Any] | None = None
    splits: str = "study"

    def to_json(self) -> JSONDict:
        return {
            "checks": [c.to_json() for c in self.checks],
            "leave_one_out": None
            if self.leave_one_out is None
            else dict(self.leave_one_out),
            "confounds": None if self.confounds is None else dict(self.confounds),
            "splits": self.splits,
        }


@dataclass(frozen=True)
class RunOutcome:
    """Everything the runners produced: unit records of the real labels, the control, timing."""

    records: tuple[UnitRecord, ...]
    control: ControlOutcome | None
    timing: Timing | None
    audits: AuditOutcome | None = None


@dataclass(frozen=True)
class StudySource:
    """Where a study came from: its name, file, hash and text, and its table's path."""

    name: str | None = None
    file: str | None = None
    sha256: str | None = None
    text: str | None = None
    table: str | None = None


CONDITIONAL_NOTE = (
    "conditional on this data set; not a test of the learning procedures: these tests "
    "treat the overlapping splits (or the pooled predictions) of this one data set as "
    "if they were independent samples, and under a population null they reject far "
    "more often than their level (docs/validity.md); they never enter the adjusted "
    "family or the statement"
)


@dataclass(frozen=True)
class ComparisonRow:
    """One paired comparison of two models on the same outer splits.

    ``test`` is the one decision test (it alone enters the family of adjusted
    p-values and the sentence). ``reason`` says why there is none (every split
    shows the same difference). ``conditional_checks`` holds further tests of the
    same data, each a JSON block under its own name: they are conditional on this
    one data set and are not tests of the learning procedures.
    """

    a: str
    b: str
    metric: str
    n_splits: int
    per_split_differences: tuple[float, ...]
    mean_difference: float
    test: str | None = None
    statistic: float | None = None
    df: float | tuple[float, float] | None = None
    p_value: float | None = None
    ci: tuple[float, float] | None = None
    ci_method: str | None = None
    ci_bootstrap: tuple[float, float] | None = None
    conditional_checks: Mapping[str, JSONDict] = field(default_factory=dict)
    p_adjusted: float | None = None
    correction: str | None = None
    family_size: int | None = None
    statement: str | None = None
    reason: str | None = None
    detectable_difference: float | None = None
    power: float | None = None
    power_alpha: float | None = None
    equivalence: JSONDict | None = None

    def to_json(self) -> JSONDict:
        d: JSONDict = {
            "a": self.a,
            "b": self.b,
            "metric": self.metric,
            "n_splits": self.n_splits,
            "per_split_differences": list(self.per_split_differences),
            "mean_difference": self.mean_difference,
        }
        if self.test is None:
            d.update({"test": None, "p_value": None, "ci": None})
            if self.reason is not None:
                d["reason"] = self.reason
            if self.statement is not None:
                d["statement"] = self.statement
            return d
        d.update(
            {
                "test": self.test,
                "statistic": self.statistic,
                "df": self.df,
                "p_value": self.p_value,
                "ci": None if self.ci is None else list(self.ci),
                "ci_method": self.ci_method,
                "ci_bootstrap": None
                if self.ci_bootstrap is None
                else list(self.ci_bootstrap),
            }
        )
        if self.p_adjusted is not None:
            d.update(
                {
                    "p_adjusted": self.p_adjusted,
                    "correction": self.correction,
                    "family_size": self.family_size,
                    "statement": self.statement,
                }
            )
        if self.detectable_difference is not None:
            d.update(
                {
                    "detectable_difference": self.detectable_difference,
                    "power": self.power,
                    "power_alpha": self.power_alpha,
                }
            )
        if self.equivalence is not None:
            d["equivalence"] = dict(self.equivalence)
        if self.conditional_checks:
            d["conditional_checks"] = {
                "note": CONDITIONAL_NOTE,
                **{k: dict(v) for k, v in self.conditional_checks.items()},
            }
        return d
