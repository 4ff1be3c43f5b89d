"""Typed settings of a study, shared by the study file and ``foldwall.wrap``.

Each section of the study file (``search``, ``outer``, ``inner``, ``control``,
``compare``) is one of these models, and ``wrap(...)`` builds the same models
from its arguments. Both are therefore validated by the same rules, before any
fit, and fail with the same one-line message (see :func:`settings_from_arguments`).
"""

from __future__ import annotations

from typing import Annotated, Any, Literal

from pydantic import BaseModel, BeforeValidator, ConfigDict, Field, model_validator

__all__ = [
    "Strict",
    "SearchSettings",
    "LoopSettings",
    "ControlSettings",
    "CompareSettings",
    "AuditSettings",
    "HoldoutSettings",
    "LedgerSetting",
    "SCHEMES",
    "CORRECTIONS",
    "MAX_FOLDS",
    "MAX_REPEATS",
    "MAX_TRIALS",
    "MAX_PERMUTATIONS",
]

# Upper bounds: a study file from someone else cannot ask for astronomical work.
# Each is far beyond what a small-data study needs (docs/security.md).
MAX_FOLDS = 10_000
MAX_REPEATS = 1_000
MAX_TRIALS = 100_000
MAX_PERMUTATIONS = 100_000

SCHEMES = ("within-outer", "global", "within-groups", "whole-groups")
CORRECTIONS = ("holm", "bonferroni", "bh")


class Strict(BaseModel):
    """Unknown keys are errors; values never change after validation."""

    model_config = ConfigDict(extra="forbid", frozen=True, strict=True)


class SearchSettings(Strict):
    """How each inner search spends its budget."""

    method: Literal["grid", "tpe", "random"] = Field(
        default="grid",
        description="grid: every combination; tpe: optuna's tree-structured Parzen estimator; random: optuna's random sampler.",
    )
    trials: int | None = Field(
        default=None,
        ge=1,
        le=MAX_TRIALS,
        description="Budget of settings tried per candidate (tpe/random).",
    )
    allow_failed_trials: bool = Field(
        default=False,
        description="Score a failing trial as failed instead of stopping the run.",
    )

    @model_validator(mode="after")
    def _budget(self) -> SearchSettings:
        # The one place that knows when a search needs a budget.
        if self.method == "grid" and self.trials is not None:
            raise ValueError(
                "search.trials is a budget for tpe or random; a grid tries every combination "
                "(remove search.trials, or set search.method: tpe)"
            )
        if self.method != "grid" and self.trials is None:
            raise ValueError(
                f"search.method is {self.method}, which needs a budget: add search.trials (e.g. 30)"
            )
        return self


class LoopSettings(Strict):
    """One loop of the nested cross-validation."""

    folds: int = Field(default=5, ge=2, le=MAX_FOLDS, description="Number of folds.")
    repeats: int = Field(
        default=1,
        ge=1,
        le=MAX_REPEATS,
        description="Repetitions with new shuffles (outer loop only).",
    )
    shuffle: bool = Field(default=True, description="Shuffle rows before splitting.")
    stratify: bool | None = Field(
        default=None,
        description="Keep class proportions in every fold (default: yes for classification).",
    )
    forward: bool = Field(
        default=False,
        description="Split forward in time: every training row strictly earlier than every test row (needs data.time; shuffle and stratify do not apply).",
    )

    @model_validator(mode="after")
    def _forward(self) -> LoopSettings:
        if self.forward and self.repeats != 1:
            raise ValueError(
                "forward splits are fixed by time, so repeats would only copy them; "
                "remove repeats or set forward: false"
            )
        return self


class ControlSettings(Strict):
    """The random-label control."""

    permutations: int = Field(
        default=0,
        ge=0,
        le=MAX_PERMUTATIONS,
        description="Number of label permutations (0 turns the control off).",
    )
    scheme: Literal["within-outer", "global", "within-groups", "whole-groups"] = Field(
        default="within-outer",
        description=(
            "within-outer: labels (or whole groups with one label each) move only within "
            "each outer test fold; global: permute all rows and re-split; for groups whose "
            "outcome varies within the group: within-groups (labels shuffled among the rows "
            "of each group) or whole-groups (groups of equal size swap their whole label "
            "sequence, within outer test folds)."
        ),
    )
    blocks: str | None = Field(
        default=None,
        description="Column whose levels labels never cross (e.g. a site).",
    )
    stop_early: bool = Field(
        default=False,
        description="Stop once the answer is clear (Besag & Clifford 1991).",
    )
    stop_after_exceedances: int = Field(
        default=10, ge=1, description="h of the sequential rule."
    )
    alpha: float = Field(
        default=0.05, gt=0, lt=1, description="Level the decision is stated at."
    )


class CompareSettings(Strict):
    """Comparisons against baselines."""

    correction: Literal["holm", "bonferroni", "bh"] = Field(default="holm")
    alpha: float = Field(default=0.05, gt=0, lt=1)
    between_candidates: bool = Field(
        default=False, description="Also compare candidates with each other."
    )
    smallest_difference: float | None = Field(
        default=None,
        gt=0,
        description=(
            "Smallest difference in the primary metric that would matter (e.g. 0.02 "
            "ROC AUC): adds an equivalence test (two one-sided tests) and says whether "
            "a difference is smaller than this size."
        ),
    )


class AuditSettings(Strict):
    """The table audits and the confound checks run with a study."""

    leave_one_out: str | None = Field(
        default=None,
        description="An acquisition column (e.g. site): also run the study with each of its levels held out in turn, reported beside the main estimate.",
    )
    merge_duplicates: bool = Field(
        default=False,
        description="Join exact and near duplicate rows into groups (with data.groups, if any) so that copies never straddle a split.",
    )
    permutations: int = Field(
        default=19,
        ge=0,
        description="Random-label shuffles of each confound statistic's own control.",
    )


class HoldoutSettings(Strict):
    """Rows sealed before anything else looks at the table; exactly one way."""

    fraction: float | None = Field(
        default=None,
        gt=0,
        lt=1,
        description="Seal this share of the rows: stratified by class (by target quintiles for a regression), whole groups only, seeded from seed.",
    )
    column: str | None = Field(
        default=None,
        description="Seal the rows this true/false column marks (the column is never a feature).",
    )
    table: str | None = Field(
        default=None,
        description="Seal the rows of this second table (same columns), relative to the study file.",
    )

    @model_validator(mode="after")
    def _one_way(self) -> HoldoutSettings:
        given = [
            k for k in ("fraction", "column", "table") if getattr(self, k) is not None
        ]
        if len(given) != 1:
            raise ValueError(
                "give exactly one of holdout.fraction, holdout.column or holdout.table"
                + (f" (got {' and '.join(given)})" if given else "")
            )
        return self


def _ledger_value(value: Any) -> Any:
    if isinstance(value, bool) or (isinstance(value, str) and value.strip()):
        return value
    raise ValueError(
        "give true (the ledger beside the table), false (no ledger) or a file path"
    )


LedgerSetting = Annotated[str | bool, BeforeValidator(_ledger_value)]
"""Where the table's ledger is: ``True`` beside the table, ``False`` none, or a path."""
