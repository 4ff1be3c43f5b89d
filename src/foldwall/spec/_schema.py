"""The study file, as a pydantic model.

The study file is declarative YAML. This module only describes its shape; turning
names into objects (import paths, search spaces) happens in ``_resolve.py`` and
reading the file in ``_load.py``.
"""

from __future__ import annotations

from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, field_validator, model_validator

from ..settings import (
    AuditSettings,
    CompareSettings,
    ControlSettings,
    HoldoutSettings,
    LedgerSetting,
    LoopSettings,
    RaterSettings,
    SearchSettings,
)

__all__ = [
    "StudySpec",
    "DataSpec",
    "StepSpec",
    "CandidateSpec",
    "RangeSpec",
]


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


def _printable(v: object) -> object:
    """Names are printed on terminals: no control characters (terminal escapes) or invisible ones."""
    if isinstance(v, str) and not v.isprintable():
        raise ValueError(
            "must be plain printable text (it holds control or invisible characters, such as "
            "terminal escape sequences)"
        )
    return v


class DataSpec(_Strict):
    """Where the rows come from and which column is which."""

    table: str = Field(
        description="Path to a CSV or Parquet file, relative to the study file."
    )
    target: str | None = Field(
        default=None,
        description="Column holding the label (classification) or value (regression). Left out when a raters section makes the per-case consensus the target.",
    )
    groups: str | None = Field(
        default=None,
        description="Column of unit ids (subject, patient, animal): rows sharing an id are never split across a fold boundary.",
    )
    drop: list[str] = Field(
        default_factory=list,
        description="Columns that are not features (ids, dates, free text).",
    )
    features: list[str] | None = Field(
        default=None,
        description="Use only these feature columns (default: every column not named elsewhere).",
    )
    task: Literal["classification", "regression"] | None = Field(
        default=None,
        description="Kind of target; inferred from the model when left out.",
    )
    positive_class: str | int | bool | None = Field(
        default=None,
        description="Two classes: the one that f1, precision, recall, jaccard, average_precision and the Brier score count as positive (needed when labels are not 0/1).",
    )
    id: str | None = Field(
        default=None,
        description="Column with one id per row: never a feature; shown in the audits and reports.",
    )
    acquisition: list[str] = Field(
        default_factory=list,
        description="Columns that describe how rows were acquired (site, device, batch, operator, ...): never features unless acquisition_as_features; used by the confound checks.",
    )
    acquisition_as_features: bool = Field(
        default=False,
        description="Also give the acquisition columns to the models as features.",
    )
    time: str | None = Field(
        default=None,
        description="Column with the time of each row (numbers or dates): never a feature; needed by outer/inner forward splits and the drift audit.",
    )

    @field_validator("positive_class")
    @classmethod
    def _class_printable(cls, v: str | int | bool | None) -> str | int | bool | None:
        _printable(v)
        return v


class RangeSpec(_Strict):
    """A numeric range to search: ``{between: [0.001, 1000], scale: log}``."""

    between: tuple[float, float] = Field(
        description="Lowest and highest value, both included."
    )
    scale: Literal["linear", "log"] = Field(
        default="linear", description="Sample uniformly on this scale."
    )
    integer: bool = Field(default=False, description="Whole numbers only.")
    grid_points: int | None = Field(
        default=None,
        ge=2,
        le=1000,
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


SpaceValue = RangeSpec | list[Any]


class StepSpec(_Strict):
    """One step of the pipeline, named by import path."""

    name: str = Field(
        description="Short name; search-space keys use it as NAME__param."
    )
    use: str = Field(
        description="Import path of a scikit-learn estimator class, e.g. sklearn.preprocessing.StandardScaler."
    )
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

    @field_validator("name")
    @classmethod
    def _name_printable(cls, v: str) -> str:
        _printable(v)
        return v

    steps: list[StepSpec] = Field(
        default_factory=list,
        description="Extra steps for this candidate only, placed after the shared steps.",
    )
    model: StepSpec = Field(description="The final estimator.")
    space: dict[str, SpaceValue] = Field(
        default_factory=dict,
        description="Search space: STEP__param -> list of values (a choice) or a range.",
    )


class StudySpec(_Strict):
    """A whole study: data, pipeline, candidates, search, loops, metrics, seed."""

    name: str | None = Field(default=None, description="A title for the study.")

    @field_validator("name")
    @classmethod
    def _title_printable(cls, v: str | None) -> str | None:
        _printable(v)
        return v

    seed: int = Field(
        default=0,
        ge=0,
        description="Every split, search and permutation seed derives from this.",
    )
    data: DataSpec
    steps: list[StepSpec] = Field(
        default_factory=list, description="Steps shared by every candidate, in order."
    )
    candidates: list[CandidateSpec] = Field(
        min_length=1, description="Model families competing in the inner search."
    )
    baselines: list[CandidateSpec] = Field(
        default_factory=list,
        description="Reference models searched with the same budget, compared but never chosen.",
    )
    search: SearchSettings = Field(default_factory=SearchSettings)
    outer: LoopSettings = Field(default_factory=LoopSettings)
    inner: LoopSettings = Field(default_factory=LoopSettings)
    metrics: list[str] = Field(
        default_factory=lambda: ["accuracy"],
        min_length=1,
        description="scikit-learn scorer names; the first is the primary metric that picks the winner.",
    )
    control: ControlSettings = Field(default_factory=ControlSettings)
    compare: CompareSettings = Field(default_factory=CompareSettings)
    needs_modules: list[str] = Field(
        default_factory=list,
        description="Top-level packages besides scikit-learn that the study names. Declaring never allows: whoever runs the study must pass --allow for each (their code runs).",
    )
    audits: AuditSettings = Field(default_factory=AuditSettings)
    allow_modules: list[str] = Field(
        default_factory=list,
        description="Old name of needs_modules: declares the packages the study needs; it no longer allows them.",
    )
    clinical: bool = Field(
        default=False,
        description="Add the cautions that go with clinical or otherwise high-stakes models.",
    )
    raters: RaterSettings | None = Field(
        default=None,
        description="Labels from several raters: agreement, a per-case consensus as the target, clear and ambiguous cases, a human reference.",
    )
    holdout: HoldoutSettings | None = Field(
        default=None,
        description="Seal part of the table before anything else; the study uses the other rows only, and `foldwall unseal` scores the sealed rows once.",
    )
    ledger: LedgerSetting = Field(
        default=True,
        description="The table's ledger of every study run on it: true puts it beside the table (TABLE.ledger.sqlite), a path (relative to the study file) puts it there, false turns it off.",
    )

    @model_validator(mode="after")
    def _unique_names(self) -> StudySpec:
        names = [c.name for c in self.candidates] + [b.name for b in self.baselines]
        dup = sorted({n for n in names if names.count(n) > 1})
        if dup:
            raise ValueError(
                f"candidate and baseline names must be unique; repeated: {', '.join(dup)}"
            )
        if self.inner.repeats != 1:
            raise ValueError("inner.repeats must be 1 (repeat the outer loop instead)")
        if self.raters is None and self.data.target is None:
            raise ValueError(
                "missing required key 'data.target': name the label column, or add a "
                "raters section whose per-case consensus becomes the target"
            )
        if self.raters is not None:
            if self.data.target is not None:
                raise ValueError(
                    f"data.target '{self.data.target}' and a raters section both give the "
                    f"label; with raters the target is the per-case consensus, so remove "
                    f"data.target"
                )
            if self.raters.columns is None:
                raise ValueError(
                    "missing required key 'raters.columns': list the rater columns of the "
                    "table (one per rater)"
                )
        for loop in ("outer", "inner"):
            if getattr(self, loop).forward and self.data.time is None:
                raise ValueError(
                    f"{loop}.forward splits by time, but data.time is not set; name the "
                    "column that orders the rows (data.time), or remove forward"
                )
        lo = self.audits.leave_one_out
        if lo is not None and lo not in self.data.acquisition:
            raise ValueError(
                f"audits.leave_one_out is {lo!r}, which is not one of data.acquisition "
                f"({', '.join(self.data.acquisition) or 'none given'}); list it there"
            )
        return self
