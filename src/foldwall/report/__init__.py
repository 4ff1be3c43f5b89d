"""Results of a run: the result builder, results.json and its files, the terminal summary."""

from ._build import build_result
from ._result import CAUTIONS, RESULTS_SCHEMA_VERSION, Result
from ._terminal import print_plan, print_summary

__all__ = [
    "Result",
    "build_result",
    "print_summary",
    "print_plan",
    "RESULTS_SCHEMA_VERSION",
    "CAUTIONS",
]
