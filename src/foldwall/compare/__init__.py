"""Statistical comparison of models evaluated on the same splits.

Pure functions on per-split score differences, p-values, counts and scores:
tests (corrected resampled t-test, 5x2cv t and F, sign-flip, DeLong), intervals,
multiple-comparison adjustment, and the plain sentence that reports a comparison.
"""

from __future__ import annotations

from foldwall.compare._degenerate import (
    classes_missing_from_test_parts,
    degenerate_folds_note,
    prediction_flag,
)
from foldwall.compare._power import (
    DifferenceAssessment,
    EquivalenceResult,
    assess_differences,
    detectable_difference,
    equivalence_test,
    no_spread_reason,
)
from foldwall.compare._single_part import (
    FixedModelPermutation,
    PartInterval,
    accuracy_interval,
    auc_interval,
    fixed_model_permutation_test,
    row_bootstrap_interval,
)
from foldwall.compare._statements import comparison_statement
from foldwall.compare._stats import (
    TestResult,
    adjust_pvalues,
    bootstrap_interval,
    calibrated_df,
    corrected_t_interval,
    corrected_ttest,
    delong_aucs,
    delong_test,
    five_by_two_f,
    five_by_two_t,
    paired_ttest,
    proportion_interval,
    sign_flip_test,
)

__all__ = [
    # result type
    "TestResult",
    # tests on per-split differences
    "corrected_ttest",
    "calibrated_df",
    "paired_ttest",
    "five_by_two_t",
    "five_by_two_f",
    "sign_flip_test",
    # tests on pooled predictions
    "delong_test",
    "delong_aucs",
    # intervals
    "corrected_t_interval",
    "bootstrap_interval",
    "proportion_interval",
    # multiple comparisons
    "adjust_pvalues",
    # reporting
    "comparison_statement",
    # power, equivalence and degenerate cases
    "DifferenceAssessment",
    "EquivalenceResult",
    "assess_differences",
    "detectable_difference",
    "equivalence_test",
    "no_spread_reason",
    # degenerate folds and chosen models
    "degenerate_folds_note",
    "classes_missing_from_test_parts",
    "prediction_flag",
]
# one scored test part (hold-out opening, issue 14)
__all__ += [
    "FixedModelPermutation",
    "PartInterval",
    "accuracy_interval",
    "auc_interval",
    "fixed_model_permutation_test",
    "row_bootstrap_interval",
]
