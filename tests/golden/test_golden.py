"""results.json of every recipe and wrap() case is byte-identical to the recorded golden output.

The golden files were written by ``python -m tests.golden.cases --write`` before the
groundwork refactor (issue 8); a refactor must not change one number. Intended
changes regenerate them and say why in CHANGELOG.md.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from .cases import CASES, GOLDEN, produce


@pytest.mark.filterwarnings(
    "ignore::foldwall.exceptions.ControlWarning"
)  # small m, for speed
@pytest.mark.parametrize("case", CASES)
def test_results_json_matches_golden(case: str, tmp_path: Path) -> None:
    expected = (GOLDEN / f"{case}.json").read_text(encoding="utf-8")
    got = produce(case, tmp_path)
    if got != expected:
        import difflib

        diff = "".join(
            list(
                difflib.unified_diff(
                    expected.splitlines(True), got.splitlines(True), "golden", "now"
                )
            )[:60]
        )
        pytest.fail(f"results.json of {case} differs from the golden file:\n{diff}")
