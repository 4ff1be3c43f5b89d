"""The random-label (permutation) control.

Pure building blocks: permuting labels within the allowed cells, and turning the
scores of the permuted runs into a p-value and a summary.
"""

from __future__ import annotations

from foldwall.controls._counts import (
    check_permutations_possible,
    control_budget_messages,
    count_permutations,
    permutations_needed,
)
from foldwall.controls._permute import permute_labels
from foldwall.controls._pvalue import (
    SequentialStop,
    null_summary,
    permutation_pvalue,
)
from foldwall.controls._schemes import (
    GROUP_SCHEMES,
    PERMUTATION_SCHEMES,
    permute_by_scheme,
    permute_whole_groups,
    permute_within_groups,
    unit_scheme,
)

__all__ = [
    "GROUP_SCHEMES",
    "PERMUTATION_SCHEMES",
    "SequentialStop",
    "check_permutations_possible",
    "control_budget_messages",
    "count_permutations",
    "null_summary",
    "permutation_pvalue",
    "permutations_needed",
    "permute_by_scheme",
    "permute_labels",
    "permute_whole_groups",
    "permute_within_groups",
    "unit_scheme",
]
