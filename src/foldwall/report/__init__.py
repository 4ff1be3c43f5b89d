"""Results of a run: the result builder, results.json and its files, the terminal summary."""

from ._build import build_result
from ._document import Section
from ._holdout_text import ledger_lines, print_ledger, print_opening
from ._predictions import PREDICTION_COLUMNS, read_predictions
from ._progress import ConsoleProgress, interactive_session
from ._report import build_report, rebuild_report, write_report
from ._result import CAUTIONS, RESULTS_SCHEMA_VERSION, Result
from ._sections import ReportInput, register_section, registered_sections
from ._terminal import print_audits, print_plan, print_summary, summary_text

__all__ = [
    "Result",
    "build_result",
    "print_summary",
    "print_plan",
    "summary_text",
    "ConsoleProgress",
    "interactive_session",
    "print_audits",
    "RESULTS_SCHEMA_VERSION",
    "CAUTIONS",
    # the report (report.html, report.md) and predictions.csv
    "build_report",
    "write_report",
    "rebuild_report",
    "read_predictions",
    "PREDICTION_COLUMNS",
    "register_section",
    "registered_sections",
    "ReportInput",
    "Section",
    # hold-out and ledger (issue 14)
    "print_opening",
    "print_ledger",
    "ledger_lines",
]
