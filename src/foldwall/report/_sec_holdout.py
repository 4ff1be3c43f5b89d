"""Report section: the sealed hold-out and the table's ledger (issue 14).

Built from results.json's ``holdout``, ``audit`` and ``ledger`` sections; left out
when the study sealed no rows and keeps no ledger.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from ..table import sanitise
from ._document import Facts, Section, Subheading, Table, Text
from ._holdout_text import ledger_lines, member_name
from ._sections import ReportInput, fmt, register_section

__all__: list[str] = []


def _how(h: Mapping[str, Any]) -> str:
    if h.get("how") == "fraction":
        grouped = ", whole groups" if h.get("grouped") else ""
        return (
            f"a seeded share of {h['fraction']:g} (stratified by "
            f"{h['stratified_by']}{grouped}; seed {h['seed']})"
        )
    if h.get("how") == "column":
        return f"the rows marked by column '{sanitise(h['column'])}'"
    return f"the rows of the second table '{sanitise(h.get('table'))}'"


def _holdout_blocks(h: Mapping[str, Any], audit: Mapping[str, Any]) -> list[Any]:
    rows = h["rows"]
    pairs = [
        ("sealed", _how(h)),
        ("development rows", str(rows["development"])),
        ("hold-out rows", str(rows["holdout"])),
        (
            "sealed rows seen by any fit",
            f"{audit.get('holdout_rows_seen', '-')} (of "
            f"{audit.get('holdout_rows_checked', '-')} checked by the row audit)",
        ),
        ("key", str(h.get("key", ""))[:16]),
    ]
    if h.get("groups"):
        g = h["groups"]
        pairs.insert(
            3, ("groups", f"{g['development']} development, {g['holdout']} sealed")
        )
    blocks: list[Any] = [
        Subheading("Sealed hold-out"),
        Facts(tuple(pairs)),
        Text(
            "Every fit, search, control and comparison of this study used the "
            "development rows only. The hold-out's score is not part of this run: "
            "foldwall unseal fits the whole procedure on the development rows and "
            "scores it once on the sealed rows."
        ),
    ]
    if h.get("duplicates_across"):
        blocks.append(
            Text(
                f"{h['duplicates_across']} sealed row(s) have an identical twin among the "
                "development rows; a model fitted on the twin has in effect seen that row.",
                kind="note",
            )
        )
    return blocks


def _ledger_blocks(led: Mapping[str, Any]) -> list[Any]:
    blocks: list[Any] = [Subheading("Studies run on this table")]
    lines = ledger_lines(dict(led))
    if not led.get("written"):
        return [*blocks, Text(lines[0], kind="note")]
    blocks.append(Text(lines[0]))
    ctl = led.get("control")
    table = bool(ctl and led.get("studies_before"))
    if ctl and table:  # the family as a table instead of the sentence
        blocks.append(
            Table(
                ("study", "control p", "adjusted over all studies (Holm)"),
                tuple(
                    (
                        member_name(m, ctl["family"]),
                        fmt(m["p_value"], 4),
                        fmt(m["p_adjusted"], 4),
                    )
                    for m in ctl["family"]
                ),
                caption=f"the family of {ctl['family_size']} studies as it stood when this one ran",
                numeric=(False, True, True),
            )
        )
    blocks += [
        Text(line, kind="note")
        for line in lines[1:]
        if not (table and line.startswith("control p = "))
    ]
    return blocks


def _holdout_and_ledger(inp: ReportInput) -> Section | None:
    h = inp.results.get("holdout")
    led = inp.results.get("ledger")
    if not h and not led:
        return None
    blocks: list[Any] = []
    if h:
        blocks += _holdout_blocks(h, inp.results.get("audit") or {})
    if led:
        blocks += _ledger_blocks(led)
    return Section("holdout", "Hold-out and ledger", tuple(blocks))


register_section(
    "holdout",
    title="Hold-out and ledger",
    order=87,
    build=_holdout_and_ledger,
    replace=True,
)
