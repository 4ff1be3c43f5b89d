"""Results of a run and their files."""

from ._result import CAUTIONS, RESULTS_SCHEMA_VERSION, Result

__all__ = ["Result", "RESULTS_SCHEMA_VERSION", "CAUTIONS"]
