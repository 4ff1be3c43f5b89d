"""Settings of a study whose labels come from several raters (the ``raters`` section).

The study file's ``raters:`` section and ``wrap(raters=dict(...))`` are the same
model, so both are checked by the same rules before any fit.
"""

from __future__ import annotations

from typing import Literal

from pydantic import Field, model_validator

from ._models import Strict

__all__ = ["RaterSettings", "RATER_SCALES"]

RATER_SCALES = ("nominal", "ordinal", "interval")

# consensus rule -> scales it fits (the same table as foldwall.labels.CONSENSUS_RULES)
_RULE_FITS = {
    "majority": ("nominal", "ordinal"),
    "median": ("ordinal", "interval"),
    "mean": ("interval",),
}
# human-reference metric -> scales it fits (as foldwall.labels.REFERENCE_METRICS)
_METRIC_FITS = {
    "accuracy": ("nominal", "ordinal"),
    "cohen_kappa": ("nominal", "ordinal"),
    "cohen_kappa_linear": ("ordinal",),
    "cohen_kappa_quadratic": ("ordinal",),
    "mean_absolute_error": ("ordinal", "interval"),
}


class RaterSettings(Strict):
    """Labels from several raters: which columns, what kind of rating, which consensus."""

    columns: list[str] | None = Field(
        default=None,
        min_length=2,
        description="One column per rater (missing ratings allowed); never features. Needed in a study file; wrap() takes them from run(ratings=...).",
    )
    scale: Literal["nominal", "ordinal", "interval"] = Field(
        default="nominal",
        description="nominal: unordered labels; ordinal: ordered grades; interval: numbers with equal steps (a regression target).",
    )
    classes: list[str | int | bool] | None = Field(
        default=None,
        min_length=2,
        description="The possible labels (in order, lowest first, for ordinal ratings); a rating outside them is an error. Default: the labels found.",
    )
    consensus: Literal["majority", "median", "mean"] | None = Field(
        default=None,
        description="Rule that turns a case's ratings into its training label: majority (ties go to the class listed first), median (lower middle on a split), mean. Default: majority, median, mean for nominal, ordinal, interval.",
    )
    clear_share: float = Field(
        default=0.75,
        gt=0,
        le=1,
        description="A case is clear when at least this share of its ratings equals its consensus label; otherwise ambiguous (nominal, ordinal).",
    )
    clear_spread: float | None = Field(
        default=None,
        ge=0,
        description="Interval ratings: a case is clear when the standard deviation of its ratings is at most this.",
    )
    reference_metric: (
        Literal[
            "accuracy",
            "cohen_kappa",
            "cohen_kappa_linear",
            "cohen_kappa_quadratic",
            "mean_absolute_error",
        ]
        | None
    ) = Field(
        default=None,
        description="Score of the human reference (each rater and the model against the other raters' consensus). Default: accuracy (nominal), mean_absolute_error (ordinal, interval).",
    )
    smallest_difference: float | None = Field(
        default=None,
        gt=0,
        description="Smallest difference from a typical rater that matters, in units of reference_metric; needed before the summary may say the model agrees as well as a rater.",
    )
    warn_below: float = Field(
        default=0.41,
        ge=-1,
        le=1,
        description="Warn when Krippendorff's alpha is below this (0.41: below 'moderate' in the Landis & Koch 1977 bands, a convention).",
    )

    @model_validator(mode="after")
    def _fits_scale(self) -> RaterSettings:
        if self.consensus is not None and self.scale not in _RULE_FITS[self.consensus]:
            fits = [r for r, s in _RULE_FITS.items() if self.scale in s]
            raise ValueError(
                f"consensus '{self.consensus}' does not fit {self.scale} ratings; "
                f"use {' or '.join(fits)}"
            )
        if (
            self.reference_metric is not None
            and self.scale not in _METRIC_FITS[self.reference_metric]
        ):
            fits = [m for m, s in _METRIC_FITS.items() if self.scale in s]
            raise ValueError(
                f"reference_metric '{self.reference_metric}' does not fit "
                f"{self.scale} ratings; use {' or '.join(fits)}"
            )
        if self.scale == "interval" and self.clear_spread is None:
            raise ValueError(
                "clear_spread is needed for interval ratings: the largest standard "
                "deviation of a case's ratings that still counts as clear"
            )
        if self.scale != "interval" and self.clear_spread is not None:
            raise ValueError(
                f"clear_spread is for interval ratings; {self.scale} ratings use "
                f"clear_share"
            )
        return self
