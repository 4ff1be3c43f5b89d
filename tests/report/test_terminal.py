"""The terminal summary: what it shows for the sections a result has."""

from __future__ import annotations

import json
from pathlib import Path

from rich.console import Console

from foldwall.report import print_summary

GOLDEN = Path(__file__).resolve().parents[1] / "data" / "golden"


class _R:
    def __init__(self, d):
        self.d = d

    def to_dict(self):
        return self.d


def _render(d) -> str:
    c = Console(record=True, width=240)
    print_summary(_R(d), console=c, out_dir="runs/x")
    return c.export_text()


def test_summary_shows_score_interval_control_comparisons_and_audit():
    d = json.loads((GOLDEN / "wrap_classification.json").read_text())
    text = _render(d)
    sc = d["score"]
    assert f"mean {sc['mean']:.3f}" in text
    assert f"95% CI {sc['ci'][0]:.3f} to {sc['ci'][1]:.3f}" in text
    assert (
        f"p = {d['control']['p_value']:.4f} from m = {d['control']['permutations']}"
        in text
    )
    assert "paired comparisons on the same outer splits" in text
    assert f"outer-test rows seen by any fit: {d['audit']['test_rows_seen']}" in text
    assert "results: runs/x/results.json" in text
    assert text.count("caution:") == len(d["cautions"])


def test_summary_without_control_or_comparisons_leaves_them_out():
    d = json.loads((GOLDEN / "wrap_regression.json").read_text())
    text = _render(d)
    assert "random-label control" not in text
    assert "paired comparisons" not in text
    assert "neg_mean_absolute_error" in text


def test_a_run_printed_in_two_parts_shows_every_section():
    # `foldwall run` with a control prints the real-label part before the
    # permutations and the rest at the end; no section may fall between the two.
    from foldwall.report._terminal import (
        CONTROL_BLOCKS,
        REAL_LABEL_BLOCKS,
        SUMMARY_BLOCKS,
        _block_notes,
    )

    parts = set(REAL_LABEL_BLOCKS) | set(CONTROL_BLOCKS)
    assert set(SUMMARY_BLOCKS) - {_block_notes} <= parts

    d = json.loads((GOLDEN / "recipe_many_variants.json").read_text())
    assert d["audits"] and d["holdout"] and d["ledger"]
    texts = []
    for part in ("real", "control"):
        c = Console(record=True, width=240)
        print_summary(_R(d), console=c, part=part)
        texts.append(c.export_text())
    whole = "".join(texts)
    assert "table audits:" in whole
    assert "ledger:" in whole
    assert "hold-out" in whole.lower()
