"""report.html and report.md: self-contained, the same content, every section, honest plots."""

from __future__ import annotations

import json
import re
from html.parser import HTMLParser
from pathlib import Path

import pytest

from foldwall.exceptions import SpecError
from foldwall.report._checklist import (
    FOR_AUTHORS,
    FROM_RUN,
    PARTLY,
    REFORMS_ITEMS,
    TRIPOD_AI_ITEMS,
    answer_items,
)
from foldwall.report._document import Section, Text
from foldwall.report._figures import OKABE_ITO
from foldwall.report._predictions import write_predictions
from foldwall.report._report import build_report, read_run, write_report
from foldwall.report._sections import (
    ReportInput,
    build_sections,
    register_section,
    registered_sections,
)

# The shared runs use a few permutations to stay fast (issue 10 warns below 19).
pytestmark = pytest.mark.filterwarnings("ignore::foldwall.exceptions.ControlWarning")


class _Collect(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.ids: list[str] = []
        self.tags: list[tuple[str, dict[str, str | None]]] = []
        self.h2: list[str] = []
        self._in_h2 = False

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append((tag, a))
        if a.get("id"):
            self.ids.append(a["id"])
        self._in_h2 = tag == "h2"

    def handle_endtag(self, tag):
        if tag == "h2":
            self._in_h2 = False

    def handle_data(self, data):
        if self._in_h2:
            self.h2.append(data)


def _write(run, out: Path, **kw):
    write_predictions(run.predictions, out.parent / f"{out.name}-predictions.csv")
    return write_report(
        out, run.results, run.plan, run.predictions, run_dir=str(out), **kw
    )


@pytest.fixture(scope="module")
def written(classification_run, tmp_path_factory):
    out = tmp_path_factory.mktemp("report") / "run"
    files = _write(classification_run, out)
    return out, files


def test_html_is_self_contained(written):
    _out, files = written
    html = files.html.read_text(encoding="utf-8")
    p = _Collect()
    p.feed(html)
    assert "Content-Security-Policy" in html and "default-src 'none'" in html
    for tag, attrs in p.tags:
        assert tag not in ("script", "link", "iframe", "object", "embed"), tag
        for key in ("src", "href", "xlink:href", "action", "srcset"):
            val = attrs.get(key)
            if val is not None:
                assert val.startswith(("#", "data:")), (tag, key, val)
    assert not re.search(r"url\((?!#)", html), (
        "a CSS url() that is not a local reference"
    )
    assert "@import" not in html


def test_html_element_ids_are_unique_across_inline_plots(written):
    _, files = written
    p = _Collect()
    p.feed(files.html.read_text(encoding="utf-8"))
    dup = {i for i in p.ids if p.ids.count(i) > 1}
    assert not dup, sorted(dup)[:5]
    # every local reference points at an element that exists
    refs = set(re.findall(r'href="#([^"]+)"', files.html.read_text(encoding="utf-8")))
    refs |= set(re.findall(r"url\(#([^)]+)\)", files.html.read_text(encoding="utf-8")))
    assert refs <= set(p.ids), sorted(refs - set(p.ids))[:5]


def test_every_registered_section_is_in_both_files(written):
    _, files = written
    html = files.html.read_text(encoding="utf-8")
    md = files.markdown.read_text(encoding="utf-8")
    p = _Collect()
    p.feed(html)
    titles = [
        s.title for s in registered_sections() if s.key not in ("raters", "holdout")
    ]
    assert p.h2 == titles  # every section but those for parts this study lacks
    md_h2 = [line[3:] for line in md.splitlines() if line.startswith("## ")]
    assert md_h2 == titles


def test_markdown_renders_and_every_image_it_links_exists(written):
    from markdown_it import MarkdownIt

    out, files = written
    md = files.markdown.read_text(encoding="utf-8")
    html = MarkdownIt("commonmark").enable("table").render(md)
    images = re.findall(r'<img src="([^"]+)"', html)
    assert len(images) == len(files.figures) >= 6
    for src in images:
        assert (out / src).is_file(), src
    assert "<table>" in html
    # the figures beside report.md are the plots inlined in report.html
    inline = files.html.read_text(encoding="utf-8").count("<svg")
    assert inline == len(files.figures)


def test_report_is_the_same_rebuilt_from_the_files(classification_run, tmp_path):
    out = tmp_path / "run"
    write_predictions(classification_run.predictions, tmp_path / "p.csv")
    (out).mkdir()
    (out / "results.json").write_text(
        json.dumps(classification_run.results), encoding="utf-8"
    )
    (out / "plan.json").write_text(
        json.dumps(classification_run.plan), encoding="utf-8"
    )
    write_predictions(classification_run.predictions, out / "predictions.csv")
    first = write_report(
        out,
        classification_run.results,
        classification_run.plan,
        classification_run.predictions,
        run_dir=str(out),
    )
    html1 = first.html.read_bytes()
    md1 = first.markdown.read_bytes()
    svgs1 = {f.name: f.read_bytes() for f in first.figures}
    results, plan, pred = read_run(out)
    again = write_report(out, results, plan, pred, run_dir=str(out))
    assert again.html.read_bytes() == html1
    assert again.markdown.read_bytes() == md1
    assert {f.name: f.read_bytes() for f in again.figures} == svgs1
    assert sorted(p.name for p in out.iterdir() if p.name.startswith(".")) == []


def test_headline_and_numbers_are_those_of_results(written, classification_run):
    _, files = written
    text = files.html.read_text(encoding="utf-8")
    sc = classification_run.results["score"]
    assert f"{sc['mean']:.3f}" in text
    assert f"{sc['ci'][0]:.3f} to {sc['ci'][1]:.3f}" in text
    assert (
        classification_run.results["audit"]["digest"] in text
    )  # the full digest, not a prefix
    assert f"p</dt><dd>{classification_run.results['control']['p_value']:.4f}" in text


def test_plots_use_the_palette_and_label_their_rows(written):
    _, files = written
    allowed = {c.lower() for c in OKABE_ITO} | {"#ffffff", "#999999", "#e3e3e3", "none"}
    for svg_path in files.figures:
        svg = svg_path.read_text(encoding="utf-8")
        colours = {
            c.lower()
            for c in re.findall(r"(?:stroke|fill|color):\s*(#[0-9a-fA-F]{6})", svg)
        }
        assert colours <= allowed, (svg_path.name, colours - allowed)
        labels = " ".join(re.findall(r"<text[^>]*>([^<]*)</text>", svg))
        assert "rows" in labels or svg_path.name == "settings.svg", (
            svg_path.name,
            labels[:200],
        )


def test_regression_report_has_a_scatter_and_no_roc(regression_run, tmp_path):
    files = _write(regression_run, tmp_path / "run")
    names = {f.name for f in files.figures}
    assert "predicted-vs-true.svg" in names and "roc.svg" not in names
    text = files.html.read_text(encoding="utf-8")
    assert "No random-label control was run" in text
    assert "This study compares nothing" in text


def test_report_without_predictions_says_what_is_missing(classification_run):
    doc = build_report(classification_run.results, classification_run.plan, None)
    sec = next(s for s in doc.sections if s.key == "predictions")
    assert any(
        "predictions.csv was not available" in getattr(b, "text", "")
        for b in sec.blocks
    )


def test_tripod_items_only_for_clinical_studies(classification_run):
    inp = ReportInput(
        classification_run.results,
        classification_run.plan,
        classification_run.predictions,
    )
    assert inp.is_clinical  # the fixture is marked clinical=True
    both = answer_items(inp)
    assert {it.guideline for it, _ in both} == {"REFORMS", "TRIPOD+AI"}
    plain = answer_items(
        ReportInput(classification_run.results, classification_run.plan, clinical=False)
    )
    assert {it.guideline for it, _ in plain} == {"REFORMS"}


def test_checklist_items_are_numbered_once_and_answered_or_left_to_authors(
    classification_run,
):
    for items in (REFORMS_ITEMS, TRIPOD_AI_ITEMS):
        numbers = [it.number for it in items]
        assert len(numbers) == len(set(numbers))
        assert all(len(it.topic) < 80 for it in items)  # short topics in our own words
    inp = ReportInput(
        classification_run.results,
        classification_run.plan,
        classification_run.predictions,
    )
    answers = answer_items(inp)
    assert {a.status for _, a in answers} <= {FROM_RUN, PARTLY, FOR_AUTHORS}
    keys = {s.key for s in registered_sections()}
    for it, a in answers:
        if a.status != FOR_AUTHORS:
            assert a.evidence and a.section in keys, it.number
    leak = {it.number: a for it, a in answers if it.guideline == "REFORMS"}["6a"]
    assert leak.status == FROM_RUN and "0 outer-test rows" in leak.evidence


def test_a_new_section_can_be_registered_between_built_in_ones(classification_run):
    def build(inp):
        extra = inp.results.get("extra_checks")
        return (
            None
            if extra is None
            else Section("x", "x", (Text(f"{len(extra)} checks"),))
        )

    register_section(
        "data-audits-test", title="Data audits (test)", order=84, build=build
    )
    try:
        keys = [s.key for s in registered_sections()]
        assert keys.index("data-audits-test") == keys.index("comparisons") + 1
        spec = next(s for s in registered_sections() if s.key == "data-audits-test")
        assert (
            spec.build(ReportInput(classification_run.results, classification_run.plan))
            is None
        )  # left out
        res = dict(classification_run.results, extra_checks=[{"check": "a"}])
        sec = build_sections(ReportInput(res, classification_run.plan, None))
        assert [s.title for s in sec if s.key == "data-audits-test"] == [
            "Data audits (test)"
        ]
        with pytest.raises(SpecError, match="already registered"):
            register_section("data-audits-test", title="again", order=1, build=build)
        with pytest.raises(SpecError, match="lower case"):
            register_section("Bad Key", title="x", order=1, build=build)
    finally:
        from foldwall.report import _sections

        _sections._REGISTRY.pop("data-audits-test", None)


def test_feature_selection_stability_is_shown_with_its_interval(
    written, classification_run
):
    from foldwall.compare._stability import selection_stability
    from foldwall.report._sec_settings import selection_matrix

    _, files = written
    r = classification_run.results
    z, _ = selection_matrix(r["folds"], r["data"]["n_features"])
    st = selection_stability(z)
    text = files.html.read_text(encoding="utf-8")
    assert f"{st.stability:.3f}" in text
    assert f"{st.ci[0]:.3f} to {st.ci[1]:.3f}" in text
