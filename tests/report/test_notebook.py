"""A result in a Python session: a short repr and the notebook summary."""

from __future__ import annotations

from foldwall.report._notebook import short_repr, summary_html


def test_short_repr_is_one_line_with_the_headline(classification_run):
    r = classification_run.results
    text = short_repr(r)
    assert "\n" not in text and len(text) < 200
    assert f"roc_auc {r['score']['mean']:.3f}" in text
    assert (
        f"p = {r['control']['p_value']:.4f} from m = {r['control']['permutations']}"
        in text
    )


def test_summary_html_has_every_fold_and_no_script(classification_run):
    r = classification_run.results
    html = summary_html(r)
    assert "<script" not in html and "http" not in html
    assert html.count("<tr>") == len(r["folds"]) + 1
    assert r["comparisons"][0]["statement"].split(":")[0] in html
