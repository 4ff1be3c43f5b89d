"""The study file, as a pydantic model.

The study file is declarative YAML. This module only describes its shape; turning
names into objects (import paths, search spaces) happens in ``_resolve.py`` and
reading the file in ``_load.py``.
"""

from __future__ import annotations

from typing import Any, Literal, Union

from pydantic import BaseModel, ConfigDict, Field, field_validator, model_validator

__all__ = [
    "StudySpec",
    "DataSpec",
    "StepSpec",
    "CandidateSpec",
    "SearchSpec",
    "LoopSpec",
    "ControlSpec",
    "CompareSpec",
    "RangeSpec",
]


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


class DataSpec(_Strict):
    """Where the rows come from and which column is which."""

    table: str = Field(description="Path to a CSV or Parquet file, relative to the study file.")
    target: str = Field(description="Column holding the label (classification) or value (regression).")
    groups: str | None = Field(
        default=None,
        description="Column of unit ids (subject, patient, animal): rows sharing an id are never split across a fold boundary.",
    )
    drop: list[str] = Field(default_factory=list, description="Columns that are not features (ids, dates, free text).")
    features: list[str] | None = Field(
        default=None, description="Use only these feature columns (default: every column not named elsewhere)."
    )
    task: Literal["classification", "regression"] | None = Field(
        default=None, description="Kind of target; inferred from the model when left out."
    )
    positive_class: str | int | bool | None = Field(
        default=None,
        description="Two classes: the one that f1, precision, recall, jaccard, average_precision and the Brier score count as positive (needed when labels are not 0/1).",
    )


class RangeSpec(_Strict):
    """A numeric range to search: ``{between: [0.001, 1000], scale: log}``."""

    between: tuple[float, float] = Field(description="Lowest and highest value, both included.")
    scale: Literal["linear", "log"] = Field(default="linear", description="Sample uniformly on this scale.")
    integer: bool = Field(default=False, description="Whole numbers only.")
    grid_points: int | None = Field(
        default=None,
        ge=2,
        description="For an exhaustive grid: this many evenly spaced values on the scale (needed when search.method is grid).",
    )

    @model_validator(mode="after")
    def _check(self) -> RangeSpec:
        lo, hi = self.between
        if not lo < hi:
            raise ValueError(f"between needs low < high, got [{lo}, {hi}]")
        if self.scale == "log" and lo <= 0:
            raise ValueError(f"a log scale needs a positive low end, got {lo}")
        return self


SpaceValue = Union[RangeSpec, list[Any]]


class StepSpec(_Strict):
    """One step of the pipeline, named by import path."""

    name: str = Field(description="Short name; search-space keys use it as NAME__param.")
    use: str = Field(description="Import path of a scikit-learn estimator class, e.g. sklearn.preprocessing.StandardScaler.")
    with_: dict[str, Any] = Field(
        default_factory=dict, alias="with", description="Fixed constructor arguments."
    )
    label_free: bool | None = Field(
        default=None,
        description="Declare that this step never looks at the labels, so its fits may be shared across permutations (known scikit-learn unsupervised steps are recognised without it).",
    )

    model_config = ConfigDict(extra="forbid", frozen=True, populate_by_name=True)

    @field_validator("name")
    @classmethod
    def _name_ok(cls, v: str) -> str:
        if not v.isidentifier() or "__" in v:
            raise ValueError(f"step name {v!r} must be a plain identifier without '__'")
        return v


class CandidateSpec(_Strict):
    """A model family competing in the inner search."""

    name: str = Field(description="Name shown in the results.")
    steps: list[StepSpec] = Field(
        default_factory=list, description="Extra steps for this candidate only, placed after the shared steps."
    )
    model: StepSpec = Field(description="The final estimator.")
    space: dict[str, SpaceValue] = Field(
        default_factory=dict,
        description="Search space: STEP__param -> list of values (a choice) or a range.",
    )


class SearchSpec(_Strict):
    """How each inner search spends its budget."""

    method: Literal["grid", "tpe", "random"] = Field(
        default="grid",
        description="grid: every combination; tpe: optuna's tree-structured Parzen estimator; random: optuna's random sampler.",
    )
    trials: int | None = Field(default=None, ge=1, description="Budget of settings tried per candidate (tpe/random).")
    allow_failed_trials: bool = Field(
        default=False, description="Score a failing trial as failed instead of stopping the run."
    )


class LoopSpec(_Strict):
    """One loop of the nested cross-validation."""

    folds: int = Field(default=5, ge=2, description="Number of folds.")
    repeats: int = Field(default=1, ge=1, description="Repetitions with new shuffles (outer loop only).")
    shuffle: bool = Field(default=True, description="Shuffle rows before splitting.")
    stratify: bool | None = Field(
        default=None, description="Keep class proportions in every fold (default: yes for classification)."
    )


class ControlSpec(_Strict):
    """The random-label control."""

    permutations: int = Field(default=0, ge=0, description="Number of label permutations (0 turns the control off).")
    scheme: Literal["within-outer", "global"] = Field(
        default="within-outer",
        description="within-outer: labels move only within each outer test fold; global: permute all rows and re-split.",
    )
    blocks: str | None = Field(default=None, description="Column whose levels labels never cross (e.g. a site).")
    stop_early: bool = Field(default=False, description="Stop once the answer is clear (Besag & Clifford 1991).")
    stop_after_exceedances: int = Field(default=10, ge=1, description="h of the sequential rule.")
    alpha: float = Field(default=0.05, gt=0, lt=1, description="Level the decision is stated at.")


class CompareSpec(_Strict):
    """Comparisons against baselines."""

    correction: Literal["holm", "bonferroni", "bh"] = Field(default="holm")
    alpha: float = Field(default=0.05, gt=0, lt=1)
    between_candidates: bool = Field(default=False, description="Also compare candidates with each other.")


class StudySpec(_Strict):
    """A whole study: data, pipeline, candidates, search, loops, metrics, seed."""

    name: str | None = Field(default=None, description="A title for the study.")
    seed: int = Field(default=0, ge=0, description="Every split, search and permutation seed derives from this.")
    data: DataSpec
    steps: list[StepSpec] = Field(default_factory=list, description="Steps shared by every candidate, in order.")
    candidates: list[CandidateSpec] = Field(min_length=1, description="Model families competing in the inner search.")
    baselines: list[CandidateSpec] = Field(
        default_factory=list, description="Reference models searched with the same budget, compared but never chosen."
    )
    search: SearchSpec = Field(default_factory=SearchSpec)
    outer: LoopSpec = Field(default_factory=LoopSpec)
    inner: LoopSpec = Field(default_factory=LoopSpec)
    metrics: list[str] = Field(
        default_factory=lambda: ["accuracy"],
        min_length=1,
        description="scikit-learn scorer names; the first is the primary metric that picks the winner.",
    )
    control: ControlSpec = Field(default_factory=ControlSpec)
    compare: CompareSpec = Field(default_factory=CompareSpec)
    allow_modules: list[str] = Field(
        default_factory=list,
        description="Top-level modules besides sklearn whose estimators the study may name.",
    )
    clinical: bool = Field(
        default=False, description="Add the cautions that go with clinical or otherwise high-stakes models."
    )

    @model_validator(mode="after")
    def _unique_names(self) -> StudySpec:
        names = [c.name for c in self.candidates] + [b.name for b in self.baselines]
        dup = sorted({n for n in names if names.count(n) > 1})
        if dup:
            raise ValueError(f"candidate and baseline names must be unique; repeated: {', '.join(dup)}")
        if self.inner.repeats != 1:
            raise ValueError("inner.repeats must be 1 (repeat the outer loop instead)")
        return self
