"""Report sections: the study and the data, the plan, the headline estimate."""

from __future__ import annotations

from collections import Counter
from collections.abc import Mapping, Sequence
from typing import Any

from ._document import Facts, Section, Subheading, Table, Text
from ._figures import (
    metric_label,
)
from ._sections import (
    ReportInput,
    chance_of,
    ci_text,
    fmt,
    loop_text,
    register_section,
    rows_text,
    space_text,
    true_by_row,
)

# ------------------------------------------------------------ study, data


def _study_and_data(inp: ReportInput) -> Section:
    r = inp.results
    st = r.get("study") or {}
    d = r.get("data") or {}
    pairs: list[tuple[str, str]] = [("study", st.get("name") or "(unnamed study)")]
    if st.get("file"):
        pairs.append(("study file", f"{st['file']} (sha256 {st.get('sha256') or '-'})"))
    table = d.get("table") or "arrays passed from Python"
    pairs.append(
        (
            "table",
            f"{table} (sha256 {d.get('sha256') or '-'} of {d.get('sha256_of') or 'the data'})",
        )
    )
    pairs.append(
        (
            "rows",
            f"{d.get('n_samples')} (numbered from 0 in the order of the table as read)",
        )
    )
    pairs.append(("features", f"{d.get('n_features')} input columns"))
    pairs.append(("target", f"'{d.get('target')}' ({d.get('task')})"))
    if d.get("classes"):
        n = sum(int(v) for v in d["classes"].values())
        counts = ", ".join(
            f"'{k}': {v} rows ({int(v) / n:.1%})" for k, v in d["classes"].items()
        )
        pairs.append(("classes", counts))
    if d.get("positive_class") is not None:
        pairs.append(
            (
                "positive class",
                f"'{d['positive_class']}' (for the metrics and curves that count one class)",
            )
        )
    if d.get("groups"):
        pairs.append(
            (
                "groups",
                f"'{d['groups']}': {d.get('n_groups')} groups; a group is never on both sides of a split",
            )
        )
    else:
        pairs.append(
            ("groups", "none: every row is treated as independent of every other")
        )
    id_col = d.get("id") or inp.plan.get("id_column")
    if id_col:
        pairs.append(
            (
                "ids",
                f"'{id_col}': shown beside the row numbers in plan.json and predictions.csv; never a feature",
            )
        )
    else:
        pairs.append(
            ("ids", "no id column: rows are identified by their position in the table")
        )
    blocks: list[Any] = [Facts(tuple(pairs))]
    return Section("study-and-data", "Study and data", tuple(blocks))


# ------------------------------------------------------------------ plan


def _search_text(search: Mapping[str, Any]) -> str:
    text = str(search.get("method", "?"))
    if search.get("trials"):
        return text + f", {search['trials']} settings tried per search"
    if search.get("method") == "grid":
        return text + " (every listed setting)"
    return text


def _plan_facts(inp: ReportInput) -> Facts:
    rp: Mapping[str, Any] = inp.results.get("plan") or {}
    p = inp.plan
    metrics = list(rp.get("metrics") or p.get("metrics") or [inp.metric])
    fits = rp.get("model_fits") or p.get("model_fits") or {}
    first = f"{metrics[0]} (chooses settings and candidate; the headline)"
    pairs = (
        ("outer loop", loop_text(rp.get("outer") or p.get("outer") or {}, outer=True)),
        ("inner loop", loop_text(rp.get("inner") or p.get("inner") or {}, outer=False)),
        ("search", _search_text(rp.get("search") or p.get("search") or {})),
        ("metrics", ", ".join([first, *metrics[1:]])),
        ("seed", fmt(p.get("seed"))),
        ("plan digest", str(rp.get("digest") or p.get("digest") or "-")),
        (
            "pipeline fits",
            (
                f"{fits.get('real', '-')} with the real labels, "
                f"{fits.get('permutations', 0)} for permutations"
            ),
        ),
    )
    return Facts(pairs)


def _class_counts(rows: Sequence[Any], truth: Mapping[int, str]) -> str:
    counts = Counter(truth[int(i)] for i in rows if int(i) in truth)
    return ", ".join(f"{k}: {counts[k]}" for k in sorted(counts))


def _fold_table(inp: ReportInput) -> list[Any]:
    folds = list(inp.plan.get("folds") or [])
    if not folds:
        return []
    truth = true_by_row(inp)
    if (inp.results.get("data") or {}).get("task") != "classification":
        truth = None
    cols = ["repeat", "fold", "n train", "n test", "inner test sizes"]
    if truth is not None:
        cols += ["test classes", "train classes"]
    rows = []
    for f in folds:
        inner = " ".join(str(len(s.get("test", []))) for s in f.get("inner") or [])
        row = [str(f.get("repeat")), str(f.get("fold")), str(len(f.get("train", [])))]
        row += [str(len(f.get("test", []))), inner or "-"]
        if truth is not None:
            row += [_class_counts(f.get("test", []), truth)]
            row += [_class_counts(f.get("train", []), truth)]
        rows.append(tuple(row))
    numeric = tuple(c.startswith("n ") or c in ("repeat", "fold") for c in cols)
    has_ids = any("test_ids" in f for f in folds)
    return [
        Subheading("Outer folds"),
        Table(tuple(cols), tuple(rows), numeric=numeric),
        Text(
            "plan.json lists the row numbers of every outer and inner split"
            + (" with the ids beside them." if has_ids else ".")
        ),
    ]


def _candidate_table(inp: ReportInput) -> list[Any]:
    rows = []
    for c in inp.plan.get("candidates") or []:
        steps = " -> ".join(f"{n}: {est}" for n, est in c.get("steps", []))
        dims = (c.get("space") or {}).items()
        space = "; ".join(f"{k}: {space_text(v)}" for k, v in dims)
        rows.append(
            (
                str(c.get("name", "")),
                str(c.get("role", "")),
                steps,
                space or "(nothing searched)",
                str(c.get("settings_per_search", "-")),
            )
        )
    if not rows:
        return []
    cols = (
        "name",
        "role",
        "steps (each fitted inside the training part only)",
        "search space",
        "settings per search",
    )
    return [
        Subheading("Candidates, baselines and the chance reference"),
        Table(cols, tuple(rows), numeric=(False, False, False, False, True)),
    ]


def _plan(inp: ReportInput) -> Section:
    blocks: list[Any] = [_plan_facts(inp), *_fold_table(inp), *_candidate_table(inp)]
    budget = inp.results.get("budget")
    if budget:
        blocks.append(Text(f"Search budget: {budget.get('note', '')}."))
    return Section("plan", "Plan", tuple(blocks))


# ------------------------------------------------------------- headline


def _headline(inp: ReportInput) -> Section:
    r = inp.results
    sc = r["score"]
    m = sc["metric"]
    reps = int((r.get("plan") or {}).get("outer", {}).get("repeats", 1) or 1)
    chance = chance_of(inp)
    lines = [
        (
            f"{metric_label(m)} of the whole procedure on outer test rows: {fmt(sc['mean'])}, the mean over "
            f"{rows_text(int(sc['n_folds']), reps)}; 95% interval {ci_text(sc.get('ci'))} "
            f"({sc.get('ci_method', 'no interval')})."
        )
    ]
    if chance is not None:
        ref = r.get("reference") or {}
        lines.append(
            f"Chance level in this metric: {fmt(chance)} (the trivial '{ref.get('name', 'chance')}' "
            f"model on the same folds); the estimate is {fmt(sc['mean'] - chance)} from it."
        )
    blocks: list[Any] = [Text(" ".join(lines))]
    blocks.append(
        Text(
            f"What was estimated: {sc.get('procedure', '')}; {sc.get('final_model', '')}.",
            kind="note",
        )
    )
    if sc.get("ci_bootstrap"):
        blocks.append(
            Text(
                f"For comparison, a bootstrap over folds gives {ci_text(sc['ci_bootstrap'])}; "
                f"{sc.get('ci_bootstrap_method', '')}."
            )
        )
    rows = [
        (
            metric_label(m) + " (primary)",
            fmt(sc["mean"]),
            fmt(sc.get("sd")),
            fmt(sc.get("min")),
            fmt(sc.get("max")),
            ci_text(sc.get("ci")),
        )
    ]
    for name, o in (r.get("other_metrics") or {}).items():
        rows.append(
            (
                metric_label(name),
                fmt(o.get("mean")),
                fmt(o.get("sd")),
                fmt(o.get("min")),
                fmt(o.get("max")),
                ci_text(o.get("ci")),
            )
        )
    blocks.append(
        Table(
            ("metric", "mean", "sd", "min", "max", "95% interval (corrected t)"),
            tuple(rows),
            caption="Every metric on the same outer test rows and chosen models",
            numeric=(False, True, True, True, True, False),
        )
    )
    if sc.get("per_repeat"):
        prow = tuple(
            (k, fmt(v.get("mean")), fmt(v.get("sd")))
            for k, v in sc["per_repeat"].items()
        )
        blocks.append(
            Table(
                ("repeat", "mean", "sd"),
                prow,
                caption="Each repeat of the outer loop alone",
                numeric=(True, True, True),
            )
        )
    return Section("headline", "Headline estimate", tuple(blocks))


def _register() -> None:
    for key, title, order, build in (
        ("study-and-data", "Study and data", 10, _study_and_data),
        ("plan", "Plan", 20, _plan),
        ("headline", "Headline estimate", 30, _headline),
    ):
        register_section(key, title=title, order=order, build=build, replace=True)


_register()
