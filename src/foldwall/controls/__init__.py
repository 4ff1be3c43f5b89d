"""The random-label (permutation) control.

Pure building blocks: permuting labels within the allowed cells, and turning the
scores of the permuted runs into a p-value and a summary.
"""

from __future__ import annotations

from foldwall.controls._permute import permute_labels
from foldwall.controls._pvalue import (
    SequentialStop,
    null_summary,
    permutation_pvalue,
)

__all__ = [
    # permuting labels
    "permute_labels",
    # p-values
    "permutation_pvalue",
    "SequentialStop",
    # describing the null distribution
    "null_summary",
]
