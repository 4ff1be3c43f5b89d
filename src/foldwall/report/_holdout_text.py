"""Summary blocks for the sealed hold-out and the table's ledger (issue 14).

Both read results.json's ``holdout``, ``audit`` and ``ledger`` sections, so they also
work for a run loaded from disk.
"""

from __future__ import annotations

from typing import Any

from rich.console import Console
from rich.markup import escape

from ..table import sanitise

__all__ = [
    "block_holdout",
    "block_ledger",
    "ledger_lines",
    "member_name",
    "print_ledger",
    "print_opening",
]

JSONDict = dict[str, Any]


def _console() -> Console:
    c = Console()
    return c if c.is_terminal else Console(width=120)


def _s(text: object, limit: int = 80) -> str:
    """Names from study files, tables and ledgers: no terminal escapes, no rich markup."""
    return escape(sanitise(text, limit=limit))


def _p(v: Any) -> str:
    return "-" if v is None else f"{float(v):.4f}"


def _how(h: JSONDict) -> str:
    if h.get("how") == "fraction":
        grouped = ", whole groups" if h.get("grouped") else ""
        return (
            f"a share of {h['fraction']:g}, stratified by {h['stratified_by']}"
            f"{grouped}, seed {h['seed']}"
        )
    if h.get("how") == "column":
        return f"marked by column '{h['column']}'"
    if h.get("how") == "table":
        return f"the rows of '{h['table']}'"
    return str(h.get("how"))


def block_holdout(c: Console, d: JSONDict) -> None:
    """How many rows were sealed, and the audit's proof that no fit saw them."""
    h = d.get("holdout")
    if not h:
        return
    a = d.get("audit") or {}
    rows = h["rows"]
    seen = (
        f"Sealed rows seen by any fit: {a['holdout_rows_seen']} (of "
        f"{a['holdout_rows_checked']} checked). "
        if "holdout_rows_seen" in a
        else ""
    )
    c.print(
        f"[bold]hold-out[/bold]: {rows['holdout']} rows sealed ({_s(_how(h))}) before "
        f"anything else; the study uses the {rows['development']} development rows only. "
        f"{seen}Their score is not in this run: `foldwall unseal` scores them once."
    )
    if h.get("duplicates_across"):
        c.print(
            f"[yellow]note[/yellow]: {h['duplicates_across']} sealed row(s) have an "
            "identical twin among the development rows; a model fitted on the twin has "
            "in effect seen that row (remove the twins, or seal them together)"
        )


def member_name(m: JSONDict, family: list[JSONDict]) -> str:
    """A family member's name, with its hash's start when another member shares it."""
    same = sum(1 for o in family if o["study"] == m["study"])
    name = sanitise(m["study"])
    return name if same == 1 else f"{name} ({m['study_hash'][:8]})"


def ledger_lines(led: JSONDict) -> list[str]:
    """The ledger facts of one run, as plain sentences (also used by reports)."""
    if not led.get("written"):
        return [f"the table's ledger was not updated: {led.get('message')}"]
    lines: list[str] = []
    before = led.get("studies_before", 0)
    if before:
        names = ", ".join(f"'{sanitise(n)}'" for n in led["prior_studies"][:8])
        more = "" if before <= 8 else f" and {before - 8} more"
        lines.append(
            f"{before} other stud{'y was' if before == 1 else 'ies were'} run on this "
            f"table before this one ({names}{more}); ledger {led['file']}"
        )
    else:
        lines.append(
            f"no other study recorded for this table (a study run again counts once); "
            f"ledger {led['file']}"
        )
    ctl = led.get("control")
    if ctl and before:
        family = "; ".join(
            f"{member_name(m, ctl['family'])} {_p(m['p_value'])}"
            for m in ctl["family"][:12]
        )
        lines.append(
            f"control p = {_p(ctl['p_value'])} for this study alone; "
            f"{_p(ctl['p_adjusted'])} adjusted over all {ctl['family_size']} studies on "
            f"this table (Holm; family: {family})"
        )
        if ctl.get("without_control"):
            lines.append(
                f"{len(ctl['without_control'])} of them ran without a control and count "
                "with p = 1"
            )
        floor = ctl.get("smallest_possible_adjusted")
        if floor is not None and floor > 0.05:
            lines.append(
                f"with this many permutations no adjusted p-value can be below "
                f"{floor:.3f}; give the control more permutations (m + 1 >= studies / "
                "0.05), or let a sealed hold-out decide"
            )
    h = led.get("holdout")
    if h:
        if h.get("openings_before"):
            lines.append(
                f"the hold-out was opened {h['openings_before']} time(s) before, first "
                f"by study '{sanitise(h['first_opened_by'])}': {h['note']}"
            )
        if h.get("studies_without_this_holdout"):
            names = ", ".join(
                f"'{sanitise(n)}'" for n in h["studies_without_this_holdout"][:5]
            )
            lines.append(
                f"earlier studies on this table did not seal these rows ({names}): for "
                "them the hold-out rows were development rows"
            )
    return lines


def block_ledger(c: Console, d: JSONDict) -> None:
    """Studies run on this table before, and the control's p adjusted over all of them."""
    led = d.get("ledger")
    if not led:
        return
    for i, line in enumerate(ledger_lines(led)):
        label = "[bold]ledger[/bold]: " if i == 0 else "- "
        if not led.get("written"):
            label = "[yellow]ledger[/yellow]: "
        c.print(label + escape(line))


def print_opening(opening: JSONDict, *, console: Console | None = None) -> None:
    """The opening of a hold-out: score, interval, chance, permutation test, ledger."""
    c = console or _console()
    iv = opening["interval"]
    pt = opening["permutation_test"]
    ch = opening["chance_level"]
    h = opening["holdout"]
    c.print(
        f"[bold]hold-out opened[/bold] ({h['rows']['holdout']} rows, "
        f"{_s(_how(h))}): {_s(opening['chosen']['candidate'])} fitted on the "
        f"{h['rows']['development']} development rows, scored once"
    )
    c.print(
        f"{opening['metric']} on the hold-out: {opening['score']:.3f}; "
        f"{iv['confidence']:.0%} CI {iv['ci'][0]:.3f} to {iv['ci'][1]:.3f} "
        f"({escape(iv['source'])})"
    )
    if iv.get("note"):
        c.print(f"[yellow]note[/yellow]: {escape(iv['note'])}")
    if ch.get("value") is not None:
        c.print(f"chance level: {ch['value']:.3f} ({escape(ch['rule'])})")
    c.print(
        f"permutation test of the fixed model on the hold-out rows: p = "
        f"{pt['p_value']:.4f} ({pt['at_least_observed']} of {pt['permutations']} "
        f"permutations scored at least as well; null mean {pt['null_mean']:.3f})"
    )
    if pt.get("note"):
        c.print(f"[yellow]note[/yellow]: {escape(pt['note'])}")
    c.print(
        f"row audit: hold-out rows seen by any fit: {opening['audit']['holdout_rows_seen']}"
        f" ({opening['audit']['fits']} step fits)"
    )
    op = opening["opening"]
    style = "bold" if op["first"] else "bold yellow"
    c.print(f"[{style}]{escape(op['note'])}[/{style}]")
    led = opening.get("ledger")
    if led and led.get("written"):
        c.print(
            f"ledger: opening recorded in {_s(led['file'], 200)}; "
            f"{led.get('studies_before', '-')} other studies were run on this table "
            "before it"
        )
    elif led:
        c.print(f"[yellow]ledger[/yellow]: {_s(led.get('message'), 400)}")
        c.print("[yellow]the opening is not recorded in the ledger[/yellow]")
    for line in opening.get("cautions", []):
        c.print(f"[dim]caution: {escape(line)}[/dim]")


def print_ledger(listing: JSONDict, *, console: Console | None = None) -> None:
    """The entries of one table's ledger, with the control's Holm family as it stands."""
    import datetime

    from rich.table import Table

    c = console or _console()
    entries = listing["entries"]
    c.print(
        f"[bold]ledger[/bold] of {_s(listing['table'], 200)} (sha256 "
        f"{listing['table_sha256'][:12]}): {len(entries)} entries in "
        f"{_s(listing['ledger'], 200)}"
    )
    t = Table()
    for col in (
        "#",
        "time",
        "kind",
        "study",
        "metric",
        "score",
        "control p",
        "p adjusted now (Holm)",
        "hold-out",
    ):
        t.add_column(col)
    for e in entries:
        when = datetime.datetime.fromtimestamp(e["time"]).strftime("%Y-%m-%d %H:%M")
        sealed = (
            "opened" if e["holdout_opened"] else ("sealed" if e["holdout"] else "-")
        )
        t.add_row(
            str(e["entry_id"]),
            when,
            e["kind"],
            _s(e["study_name"]),
            e["metric"] or "-",
            "-" if e["score"] is None else f"{e['score']:.3f}",
            _p(e["control_p"]),
            _p(e["p_adjusted_now"]),
            sealed,
        )
    c.print(t)
    fam = listing["family"]
    if fam["size"]:
        c.print(
            f"{fam['size']} distinct studies in the family of control p-values "
            f"(Holm); a study run twice counts once"
            + (
                f"; {len(fam['without_control'])} ran without a control and count "
                "with p = 1"
                if fam["without_control"]
                else ""
            )
        )
    for o in listing["openings"]:
        c.print(
            f"hold-out {o['holdout'][:12]} opened {o['times']} time(s), first by "
            f"'{_s(o['first_by'])}'"
            + (
                "; only the first opening is an unbiased estimate"
                if o["times"] > 1
                else ""
            )
        )
    if listing["other_tables"]:
        c.print(
            f"{listing['other_tables']} other entries in this file belong to other "
            "tables or to earlier versions of this one (a changed file has a new hash)"
        )
