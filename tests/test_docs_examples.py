"""Examples in the docs agree with what runs (issue 13: the study-file page once showed
another grid and another number of permutations than the recipe it names)."""

from __future__ import annotations

import re
from pathlib import Path

import yaml

from foldwall.settings import CompareSettings

ROOT = Path(__file__).resolve().parents[1]


def test_study_file_example_is_the_breath_pilot_recipe():
    page = (ROOT / "docs" / "study-file.md").read_text(encoding="utf-8")
    block = re.search(r"## A complete example.*?```yaml\n(.*?)```", page, re.S)
    assert block is not None
    example = yaml.safe_load(block.group(1))
    recipe = yaml.safe_load(
        (ROOT / "recipes" / "breath_pilot" / "study.yaml").read_text(encoding="utf-8")
    )
    compare = example.pop("compare")
    assert example == recipe
    defaults = CompareSettings()
    assert compare == {"correction": defaults.correction, "alpha": defaults.alpha}
