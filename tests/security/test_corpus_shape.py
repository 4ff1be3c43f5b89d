"""The hostile corpus is well formed, and what the YAML loader alone must refuse, it refuses."""

from __future__ import annotations

import pytest

from foldwall.exceptions import SpecError
from foldwall.spec._yaml import load_yaml

from .corpus.cases import TABLES, load_cases, wrap_forms

CASES = load_cases()


def test_corpus_has_at_least_forty_hostile_cases_each_saying_what_it_tries():
    hostile = [c for c in CASES if c.refused]
    assert len(hostile) >= 40
    for c in CASES:
        assert len(c.tries) > 15, c.name
        assert c.table in TABLES, c.name
        assert set(c.routes) <= {"plan", "run", "wrap"}, c.name


def test_every_case_with_a_python_route_has_a_python_form(tmp_path):
    forms = wrap_forms(tmp_path)
    assert {c.name for c in CASES if "wrap" in c.routes} == set(forms)


@pytest.mark.parametrize("case", CASES, ids=lambda c: c.name)
def test_loader_refusals_are_the_expected_one_line(case):
    try:
        load_yaml(case.text, where="study file")
    except SpecError as exc:
        msg = str(exc)
        assert case.refused and case.expect in msg, msg
        assert len(msg.splitlines()) == 1
