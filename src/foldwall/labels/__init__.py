"""Labels from several raters: agreement, consensus, ambiguity and a human reference.

Pure functions on a table of ratings (one row per case, one column per rater,
missing ratings allowed); results are frozen dataclasses. Nothing here knows about
studies, plans or stores.

- :func:`rating_table` checks the ratings once (labels outside the classes, a case
  with no rating, a single rater) and stores them.
- Agreement: :func:`cohen_kappa`, :func:`pairwise_kappa`, :func:`fleiss_kappa`,
  :func:`krippendorff_alpha`, all with a seeded bootstrap interval over cases, and
  :func:`agreement` for all of them with each rater's agreement with the others;
  :func:`landis_koch_band` and :func:`warn_low_agreement` (conventional bands).
- Per case: :func:`label_distribution` (label shares, entropy, consensus with a
  stated rule) and :func:`ambiguity_strata` (clear versus ambiguous cases).
- Human reference: :func:`leave_one_rater_out`, :func:`rater_reference` and
  :func:`model_vs_raters`, with :func:`human_reference_statement` for the claim
  "the model agrees with the consensus as well as a typical rater does".
"""

from __future__ import annotations

from foldwall.labels._agreement import (
    LANDIS_KOCH_BANDS,
    LANDIS_KOCH_SOURCE,
    LowAgreementWarning,
    agreement,
    landis_koch_band,
    low_agreement_message,
    warn_low_agreement,
)
from foldwall.labels._alpha import krippendorff_alpha
from foldwall.labels._consensus import (
    CONSENSUS_RULES,
    LabelDistribution,
    Strata,
    ambiguity_strata,
    label_distribution,
)
from foldwall.labels._kappa import cohen_kappa, fleiss_kappa, pairwise_kappa
from foldwall.labels._loo import (
    REFERENCE_METRICS,
    HumanReference,
    LeaveOneOut,
    RaterScore,
    leave_one_rater_out,
    rater_reference,
)
from foldwall.labels._reference import (
    ModelVsRaters,
    RaterComparison,
    SplitComparison,
    model_vs_raters,
)
from foldwall.labels._results import (
    AgreementEstimate,
    AgreementReport,
    PairAgreement,
    RaterAgreement,
)
from foldwall.labels._statements import human_reference_statement
from foldwall.labels._table import SCALES, RatingTable, rating_table

__all__ = [
    "CONSENSUS_RULES",
    "LANDIS_KOCH_BANDS",
    "LANDIS_KOCH_SOURCE",
    "REFERENCE_METRICS",
    "SCALES",
    "AgreementEstimate",
    "AgreementReport",
    "HumanReference",
    "LabelDistribution",
    "LeaveOneOut",
    "LowAgreementWarning",
    "ModelVsRaters",
    "PairAgreement",
    "RaterAgreement",
    "RaterComparison",
    "RaterScore",
    "RatingTable",
    "SplitComparison",
    "Strata",
    "agreement",
    "ambiguity_strata",
    "cohen_kappa",
    "fleiss_kappa",
    "human_reference_statement",
    "krippendorff_alpha",
    "label_distribution",
    "landis_koch_band",
    "leave_one_rater_out",
    "low_agreement_message",
    "model_vs_raters",
    "pairwise_kappa",
    "rater_reference",
    "rating_table",
    "warn_low_agreement",
]
