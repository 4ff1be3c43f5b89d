"""AuditCheck: the record every table audit returns, and its JSON form."""

from __future__ import annotations

import json

import numpy as np
import pytest

from foldwall.audit import (
    AuditCheck,
    checks_from_json,
    checks_to_json,
    worst_severity,
)
from foldwall.exceptions import DataError


def test_check_round_trips_through_json_text():
    c = AuditCheck(
        "exact_duplicates",
        "problem",
        "2 sets straddle a split.",
        {"ids": np.array([3, 7]), "score": np.float64(0.5), "n": np.int64(2)},
        "Merge them.",
    )
    text = json.dumps(checks_to_json([c]))
    back = checks_from_json(json.loads(text))
    assert back == [c]
    # numpy values are stored as plain Python values
    assert back[0].evidence == {"ids": [3, 7], "score": 0.5, "n": 2}


def test_nan_evidence_is_written_as_none():
    c = AuditCheck("x", "info", "t", {"p": float("nan")})
    assert c.evidence["p"] is None


def test_unknown_severity_is_refused_with_the_allowed_values():
    with pytest.raises(DataError, match="info, warning, problem"):
        AuditCheck("x", "fatal", "t")  # type: ignore[arg-type]


def test_from_json_names_missing_fields():
    with pytest.raises(DataError, match="lacks severity"):
        AuditCheck.from_json({"check": "x", "title": "t"})


def test_evidence_that_json_cannot_store_is_refused():
    with pytest.raises(DataError, match="evidence.obj"):
        AuditCheck("x", "info", "t", {"obj": object()})


def test_worst_severity_orders_info_warning_problem():
    def mk(s):
        return AuditCheck("x", s, "t")

    assert worst_severity([]) == "info"
    assert worst_severity([mk("info"), mk("warning")]) == "warning"
    assert worst_severity([mk("problem"), mk("warning"), mk("info")]) == "problem"
