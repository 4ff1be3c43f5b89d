"""The short summary printed at the end of a run."""

from __future__ import annotations

import json
from collections.abc import Callable
from typing import Any

from rich.console import Console
from rich.markup import escape
from rich.table import Table

from ..plan import Plan
from ..table import Dataset
from ._holdout_text import block_holdout, block_ledger
from ._raters import block_raters
from ._result import Result

__all__ = [
    "CONTROL_BLOCKS",
    "REAL_LABEL_BLOCKS",
    "SUMMARY_BLOCKS",
    "print_audits",
    "print_plan",
    "print_summary",
    "summary_text",
]


def _f(v: Any, nd: int = 3) -> str:
    if v is None:
        return "-"
    if isinstance(v, float):
        return f"{v:.{nd}f}"
    return str(v)


def _settings(s: dict[str, Any]) -> str:
    if not s:
        return "(defaults)"
    return ", ".join(
        f"{k}={_f(v, 4) if isinstance(v, float) else v}" for k, v in sorted(s.items())
    )


def _console() -> Console:
    c = Console()
    return c if c.is_terminal else Console(width=120)


JSONDict = dict[str, Any]
Block = Callable[[Console, JSONDict], None]


def _block_header(c: Console, d: JSONDict) -> None:
    data = d["data"]
    title = d["study"].get("name") or "study"
    cls = f", classes {json.dumps(data['classes'])}" if data.get("classes") else ""
    if data.get("positive_class") is not None:
        cls += f" (positive class '{data['positive_class']}')"
    grp = (
        f", groups '{data['groups']}' ({data['n_groups']})"
        if data.get("groups")
        else ""
    )
    c.print(
        f"[bold]{title}[/bold]: {data['n_samples']} rows, {data['n_features']} features, target "
        f"'{data['target']}'{cls}{grp}"
    )


def _block_score(c: Console, d: JSONDict) -> None:
    sc = d["score"]
    ci = sc.get("ci")
    ci_s = f"; 95% CI {_f(ci[0])} to {_f(ci[1])} (corrected t over folds)" if ci else ""
    c.print(
        f"[bold]{sc['metric']}[/bold] on outer test folds: mean {_f(sc['mean'])}, sd {_f(sc['sd'])} over "
        f"{sc['n_folds']} folds (min {_f(sc['min'])}, max {_f(sc['max'])}){ci_s}"
    )
    for name, o in (d.get("other_metrics") or {}).items():
        oci = o.get("ci")
        extra = f"; 95% CI {_f(oci[0])} to {_f(oci[1])}" if oci else ""
        c.print(
            f"{name} (same folds and models): mean {_f(o['mean'])}, sd {_f(o['sd'])}{extra}"
        )
    ts = d["train_score"]
    c.print(
        f"training score of the chosen models: mean {_f(ts['mean'])} (train - test gap {_f(ts['gap'])})"
    )
    pooled = d.get("pooled")
    if pooled:
        w = pooled["wilson_95"]
        c.print(
            f"pooled out-of-fold accuracy ({pooled['n']} rows, each once): {_f(pooled['accuracy'])} "
            f"(Wilson 95% {_f(w[0])} to {_f(w[1])}); no-information rate (always the majority class): "
            f"{_f(pooled['no_information_rate'])}"
        )


_RIGHT = ("repeat", "fold", "n train", "n test", "inner", "test", "train")


def _block_folds(c: Console, d: JSONDict) -> None:
    t = Table(
        title="outer folds (the model chosen by the inner search, scored on rows it never saw)"
    )
    for col in (
        "repeat",
        "fold",
        "n train",
        "n test",
        "chosen",
        "settings",
        "inner",
        "test",
        "train",
    ):
        t.add_column(col, justify="right" if col in _RIGHT else "left")
    m = d["score"]["metric"]
    for f in d["folds"]:
        t.add_row(
            str(f["repeat"]),
            str(f["fold"]),
            str(f["n_train"]),
            str(f["n_test"]),
            f["chosen"],
            _settings(f["settings"]),
            _f(f["inner_score"]),
            _f(f[f"test_{m}"]),
            _f(f[f"train_{m}"]),
        )
    c.print(t)
    ref = d.get("reference")
    if ref:
        c.print(
            f"chance level in this metric (trivial '{ref['name']}' model, same folds): "
            f"{_f(ref['score']['mean'])}"
        )


def _block_candidates(c: Console, d: JSONDict) -> None:
    cands = [x for x in d["candidates"] if x["role"] != "reference"]
    if len(cands) < 2:
        return
    t = Table(title="every candidate and baseline on the same outer folds")
    for col in (
        "name",
        "role",
        "settings tried per search",
        "mean",
        "sd",
        "chosen in folds",
    ):
        t.add_column(col)
    for x in cands:
        t.add_row(
            x["name"],
            x["role"],
            str(x["settings_per_search"]),
            _f(x["score"]["mean"]),
            _f(x["score"]["sd"]),
            str(x["chosen_in_folds"]) if x["role"] == "candidate" else "-",
        )
    c.print(t)


def _block_control(c: Console, d: JSONDict) -> None:
    ctl = d.get("control")
    if not ctl:
        return
    stop = f"; {ctl['reason']}" if ctl.get("stopped_early") else ""
    c.print(
        f"[bold]random-label control[/bold]: p = {_f(ctl['p_value'], 4)} from m = {ctl['permutations']} "
        f"permutations (null mean {_f(ctl['null_mean'])}, sd {_f(ctl['null_sd'])}; observed "
        f"{_f(ctl['observed'])}; smallest possible p {_f(ctl['p_floor'], 4)}){stop}"
    )
    if ctl.get("statement"):
        c.print(f"- {ctl['statement']}")


def _block_comparisons(c: Console, d: JSONDict) -> None:
    comps = d.get("comparisons") or []
    if not comps:
        return
    t = Table(
        title=f"paired comparisons on the same outer splits ({d['score']['metric']})"
    )
    for col in (
        "a - b",
        "mean diff",
        "95% CI",
        "p (corrected t)",
        "p adjusted",
        "detectable (80% power)",
    ):
        t.add_column(col)
    for r in comps:
        ci = r.get("ci")
        t.add_row(
            f"{r['a']} - {r['b']}",
            _f(r["mean_difference"]),
            f"{_f(ci[0])} to {_f(ci[1])}" if ci else "-",
            _f(r.get("p_value"), 4),
            f"{_f(r.get('p_adjusted'), 4)} ({r.get('correction', '-')})",
            _f(r.get("detectable_difference")),
        )
    c.print(t)
    for r in comps:
        if r.get("statement"):
            c.print(f"- {r['statement']}")


def _block_audit(c: Console, d: JSONDict) -> None:
    a = d["audit"]
    c.print(
        f"[bold]row audit[/bold]: {a['fits']} step fits audited over {a['units']} units"
        f"{' (permutations included)' if d.get('control') else ''}; "
        f"outer-test rows seen by any fit: {a['test_rows_seen']}; inner-validation rows seen: "
        f"{a['validation_rows_seen']}; digest of the real-label units {a['digest'][:16]}... "
        f"(first 16 of {len(a['digest'])} characters; in full in results.json and the report)"
    )


def _is_control_note(note: str) -> bool:
    return "random-label control" in note


def _block_control_notes(c: Console, d: JSONDict) -> None:
    for note in d.get("notes") or []:
        if _is_control_note(note):
            c.print(f"[yellow]note[/yellow]: {note}")


def _block_notes(c: Console, d: JSONDict) -> None:
    _block_real_notes(c, d)
    _block_control_notes(c, d)


def _block_real_notes(c: Console, d: JSONDict) -> None:
    a = d["audit"]
    for note in d.get("notes") or []:
        if not _is_control_note(note):
            c.print(f"[yellow]note[/yellow]: {note}")
    if a.get("already_fitted_input"):
        c.print(
            f"[yellow]note[/yellow]: {', '.join(a['already_fitted_input'])} came in already fitted; its fitted "
            f"state was discarded (it may have seen test rows) and it was cloned for every fit"
        )
    if a.get("duplicate_rows"):
        c.print(
            f"[yellow]note[/yellow]: {a['duplicate_rows']} rows have an identical twin in the table (the audit "
            f"checks them by count; identical rows on both sides of a split can inflate a score)"
        )


_SEVERITY_STYLE = {"problem": "bold red", "warning": "yellow"}


def _block_audits(c: Console, d: JSONDict) -> None:
    audits = d.get("audits")
    if not audits:
        return
    checks = audits.get("checks") or []
    counts = {s: sum(1 for x in checks if x["severity"] == s) for s in _SEVERITY_STYLE}
    c.print(
        f"[bold]table audits[/bold]: {len(checks)} checks; {counts['problem']} problem(s), "
        f"{counts['warning']} warning(s) (docs/audits.md)"
    )
    for x in checks:
        style = _SEVERITY_STYLE.get(x["severity"])
        if style:
            c.print(
                f"[{style}]{x['severity']}[/{style}] {x['check']}: {escape(x['title'])}"
            )
    loo = audits.get("leave_one_out")
    if loo:
        chance = (
            "" if loo.get("chance") is None else f"; trivial model {_f(loo['chance'])}"
        )
        c.print(
            f"[bold]leave one level of '{loo['column']}' out[/bold]: {loo['metric']} mean {_f(loo['mean'])} over "
            f"{len(loo['levels'])} held-out levels (main estimate {_f(loo['main_mean'])}{chance})"
        )


def print_audits(audits: JSONDict, *, console: Console | None = None) -> None:
    """Print every check of an ``audits`` section (``foldwall audit``)."""
    c = console or _console()
    checks = audits.get("checks") or []
    for x in checks:
        style = _SEVERITY_STYLE.get(x["severity"], "dim")
        c.print(
            f"[{style}]{x['severity']:>7}[/{style}] {x['check']}: {escape(x['title'])}"
        )
        if x.get("advice") and x["severity"] != "info":
            c.print(f"         what to do: {escape(x['advice'])}")
    counts = {s: sum(1 for x in checks if x["severity"] == s) for s in _SEVERITY_STYLE}
    c.print(
        f"{len(checks)} checks on {audits.get('splits')}: {counts['problem']} problem(s), "
        f"{counts['warning']} warning(s). Details: foldwall audit --json; docs/audits.md"
    )


def _block_cautions(c: Console, d: JSONDict) -> None:
    for line in d.get("cautions", []):
        c.print(f"[dim]caution: {line}[/dim]")


# The blocks of the summary, in order. A new section of results.json that people
# should see at the end of a run adds its block here.
SUMMARY_BLOCKS: list[Block] = [
    _block_header,
    _block_score,
    _block_folds,
    _block_candidates,
    _block_control,
    _block_comparisons,
    block_raters,
    _block_audit,
    _block_audits,
    block_holdout,
    block_ledger,
    _block_notes,
    _block_cautions,
]


# What is printed as soon as the real labels are done (before the permutations),
# and what follows when the control ends.
REAL_LABEL_BLOCKS: list[Block] = [
    _block_header,
    _block_score,
    _block_folds,
    _block_candidates,
    _block_comparisons,
    _block_audit,
    _block_real_notes,
    _block_cautions,
]
# Printed at the end of a run with a control: the control, then the sections that are
# complete only once the run is (raters, table audits, hold-out, ledger). Together with
# REAL_LABEL_BLOCKS they cover every block of SUMMARY_BLOCKS (a test checks it).
CONTROL_BLOCKS: list[Block] = [
    _block_control,
    block_raters,
    _block_audits,
    block_holdout,
    block_ledger,
    _block_control_notes,
]


def print_summary(
    result: Result,
    *,
    console: Console | None = None,
    out_dir: str | None = None,
    part: str = "all",
) -> None:
    """Print the summary of a run (``result`` is a Result, or anything with ``to_dict()``).

    ``part``: ``"all"``; ``"real"`` (everything the real labels give, printed before
    the permutations start); ``"control"`` (the random-label control's lines).
    """
    c = console or _console()
    d = result.to_dict()
    blocks = {"real": REAL_LABEL_BLOCKS, "control": CONTROL_BLOCKS}.get(
        part, SUMMARY_BLOCKS
    )
    for block in blocks:
        block(c, d)
    if out_dir:
        c.print(
            f"results: {out_dir}/results.json; report: {out_dir}/report.html (and report.md); "
            f"tables: predictions.csv, folds.csv, units.csv, trials.csv; plan: plan.json"
        )


def summary_text(result: Result, *, width: int = 100) -> str:
    """The terminal summary as plain text (what :meth:`Result.summary` returns)."""
    import io

    buf = io.StringIO()
    c = Console(file=buf, width=width, color_system=None, force_terminal=False)
    print_summary(result, console=c)
    return buf.getvalue()


def print_plan(
    plan: Plan,
    data: Dataset,
    *,
    estimate: dict[str, Any] | None,
    console: Console | None = None,
) -> None:
    c = console or _console()
    d = plan.to_dict()
    c.print(
        f"plan: {plan.n_samples} rows, task {plan.task}, seed {plan.seed}, metrics {', '.join(plan.metrics)}"
    )
    names = data.feature_names
    shown = ", ".join(names[:25]) + (
        f", ... ({len(names) - 25} more)" if len(names) > 25 else ""
    )
    c.print(f"features ({len(names)}): {shown}")
    if data.holdout is not None:
        block_holdout(c, {"holdout": data.holdout.to_json(), "audit": {}})
    if data.groups is not None:
        c.print(
            f"groups: '{data.group_name}' ({len(set(data.groups))} groups; never on both sides of any split)"
        )
    c.print(f"outer loop: {json.dumps(d['outer'])}")
    c.print(f"inner loop: {json.dumps(d['inner'])}")
    c.print(
        f"search: {plan.search_method}"
        + (f", {plan.trials} trials per search" if plan.trials else "")
    )
    t = Table(title="outer folds")
    cols = ["repeat", "fold", "n train", "n test", "inner test sizes"]
    if plan.task == "classification":
        cols += ["test classes", "train classes"]
    if data.groups is not None:
        cols += ["test groups", "train groups"]
    for col in cols:
        t.add_column(col)
    for row in plan.fold_table(data.y, data.groups):
        vals = [
            str(row["repeat"]),
            str(row["fold"]),
            str(row["n_train"]),
            str(row["n_test"]),
            " ".join(map(str, row["inner_n_test"])),
        ]
        if plan.task == "classification":
            vals += [json.dumps(row["test_classes"]), json.dumps(row["train_classes"])]
        if data.groups is not None:
            vals += [str(row["test_groups"]), str(row["train_groups"])]
        t.add_row(*vals)
    c.print(t)
    t = Table(title="candidates")
    for col in ("name", "role", "steps", "settings per search", "searched"):
        t.add_column(col)
    for cd in d["candidates"]:
        t.add_row(
            cd["name"],
            cd["role"],
            " -> ".join(n for n, _ in cd["steps"]),
            str(cd["settings_per_search"]),
            "yes" if cd["searched"] else "no",
        )
    c.print(t)
    fits = d["model_fits"]
    c.print(
        f"pipeline fits: {fits['real']} for the real labels"
        + (
            f" + {fits['permutations']} for {plan.permutations} permutations"
            if plan.permutations
            else ""
        )
    )
    perms = d["permutations"]
    if plan.permutations and "possible_log10" in perms:
        possible = (
            f"{perms['possible']:,}"
            if perms.get("possible") is not None
            else f"about 10^{perms['possible_log10']:.0f}"
        )
        c.print(
            f"random-label control: scheme {perms['scheme']}, {possible} distinct label "
            f"arrangements possible, {plan.permutations} drawn"
        )
    if estimate:
        c.print(
            f"estimated run time: about {estimate['seconds']:.0f} s "
            f"({estimate.get('low', estimate['seconds']):.0f} to {estimate.get('high', estimate['seconds']):.0f} s) "
            f"on {estimate['n_jobs']} worker(s) (each candidate fitted {estimate.get('timed', 1)} times after a "
            f"warm-up fit; median {estimate['fit_seconds'] * 1000:.1f} ms; equal steps shared across settings "
            f"usually make the run faster than this)"
        )
