"""Report section: several raters (agreement, consensus, clear and ambiguous cases, human reference).

Built from results.json's ``raters`` section; left out when the study has one target column.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from ._document import Facts, Section, Subheading, Table, Text
from ._sections import ReportInput, ci_text, fmt, register_section


def _agreement(ag: Mapping[str, Any]) -> list[Any]:
    rows = []
    for key in ("krippendorff_alpha", "fleiss_kappa"):
        st = ag.get(key)
        if st:
            rows.append(
                (key.replace("_", " "), fmt(st.get("value")), ci_text(st.get("ci")))
            )
    blocks: list[Any] = [Subheading("Agreement between raters")]
    if rows:
        blocks.append(
            Table(("statistic", "value", "95% interval (cases resampled)"), tuple(rows))
        )
    per = ag.get("per_rater") or []
    if per:
        blocks.append(
            Table(
                ("rater", "mean pairwise agreement", "95% interval"),
                tuple(
                    (str(p["rater"]), fmt(p.get("value")), ci_text(p.get("ci")))
                    for p in per
                ),
            )
        )
    if ag.get("band"):
        blocks.append(Text(f"Band: {ag['band']} ({ag.get('bands', '')})."))
    if ag.get("warning"):
        blocks.append(Text(str(ag["warning"]), kind="caution"))
    return blocks


def _strata(st: Mapping[str, Any]) -> list[Any]:
    scores = st.get("scores") or {}
    rows = tuple(
        (
            name,
            str((st.get("counts") or {}).get(name, "-")),
            fmt(s.get("mean")),
            ci_text(s.get("ci")),
            fmt(s.get("chance_level")),
        )
        for name, s in scores.items()
    )
    blocks: list[Any] = [
        Subheading("Clear and ambiguous cases"),
        Text(str(st.get("rule", ""))),
    ]
    if rows:
        cols = (
            "cases",
            "n",
            f"{st.get('metric', 'score')} (same outer folds)",
            "95% interval",
            "chance",
        )
        blocks.append(Table(cols, rows, numeric=(False, True, True, False, True)))
    return blocks


def _human_reference(hr: Mapping[str, Any]) -> list[Any]:
    model = hr.get("model") or {}
    if not model:
        return []
    pairs = (
        ("metric", str(model.get("metric", "-"))),
        ("model", f"{fmt(model.get('model'))} ({ci_text(model.get('model_ci'))})"),
        (
            "typical rater",
            f"{fmt(model.get('typical_rater'))} ({ci_text(model.get('typical_rater_ci'))})",
        ),
        (
            "difference",
            f"{fmt(model.get('difference'))} ({ci_text(model.get('difference_ci'))})",
        ),
        (
            "p",
            f"{fmt((model.get('test') or {}).get('p_value'), 4)} ({(model.get('test') or {}).get('test', '')})",
        ),
    )
    blocks: list[Any] = [Subheading("The model against the raters"), Facts(pairs)]
    if model.get("statement"):
        blocks.append(Text(str(model["statement"])))
    return blocks


def _raters(inp: ReportInput) -> Section | None:
    ra = inp.results.get("raters")
    if not ra:
        return None
    cons = ra.get("consensus") or {}
    facts = Facts(
        (
            ("raters", ", ".join(map(str, ra.get("columns") or []))),
            ("scale", str(ra.get("scale", "-"))),
            ("cases", str(ra.get("n_cases", "-"))),
            (
                "training label",
                f"{cons.get('rule_text', cons.get('rule', '-'))}; {cons.get('n_tied', 0)} ties",
            ),
        )
    )
    blocks: list[Any] = [facts]
    blocks += _agreement(ra.get("agreement") or {})
    blocks += _strata(ra.get("strata") or {})
    blocks += _human_reference(ra.get("human_reference") or {})
    return Section("raters", "Rater agreement", tuple(blocks))


register_section(
    "raters", title="Rater agreement", order=86, build=_raters, replace=True
)
