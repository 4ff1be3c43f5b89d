"""The report's sections: a small registry and one builder per section.

A builder takes a :class:`ReportInput` (the content of results.json and plan.json,
and the predictions table) and returns a :class:`Section`, or None when it has
nothing to say for this run. Other parts of foldwall add their own section with
:func:`register_section` at an ``order`` between the built-in ones.

Orders of the built-in sections, and the room kept for sections to come::

    10 study and data          20 plan                     30 headline estimate
    35 out-of-fold predictions 40 outer folds              50 chosen settings
    60 feature selection       70 random-label control     80 comparisons
    85 data audits       (kept for the table audits, issue 11; results.json "audits")
    86 rater agreement   (kept for several raters, issue 12; results.json "raters")
    87 hold-out and ledger (kept for issue 14; results.json "holdout", "ledger")
    90 row audit          100 reproducibility          110 cautions
   120 reporting checklist
"""

from __future__ import annotations

import json
from collections import Counter
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
import pandas as pd

from ..exceptions import SpecError
from ._document import Bullets, Code, Facts, Figure, Section, Subheading, Table, Text
from ._figures import (
    FoldPoint,
    SettingTrack,
    calibration_svg,
    differences_svg,
    fold_scores_svg,
    metric_label,
    null_distribution_svg,
    precision_recall_svg,
    regression_svg,
    roc_svg,
    settings_svg,
)
from ._predictions import fold_labels, positive_scores

__all__ = [
    "ReportInput",
    "SectionSpec",
    "build_sections",
    "fmt",
    "register_section",
    "registered_sections",
]


@dataclass(frozen=True)
class ReportInput:
    """What a report is built from; nothing else is read, nothing is fitted.

    Attributes
    ----------
    results : mapping
        The content of results.json.
    plan : mapping
        The content of plan.json.
    predictions : pandas.DataFrame or None
        The predictions table (see ``PREDICTION_COLUMNS``), or None when missing.
    command : str or None
        The command that reproduces the run, when known.
    run_dir : str or None
        The run folder, as the user named it (for the rebuild command).
    clinical : bool or None
        Whether the study is marked clinical; None: read it from results.json.
    """

    results: Mapping[str, Any]
    plan: Mapping[str, Any]
    predictions: pd.DataFrame | None = None
    command: str | None = None
    run_dir: str | None = None
    clinical: bool | None = None

    @property
    def metric(self) -> str:
        return str(self.results["score"]["metric"])

    @property
    def is_clinical(self) -> bool:
        if self.clinical is not None:
            return self.clinical
        study = self.results.get("study") or {}
        if isinstance(study.get("clinical"), bool):
            return bool(study["clinical"])
        return any("regulation" in c for c in self.results.get("cautions") or [])


Builder = Callable[[ReportInput], Section | None]


@dataclass(frozen=True)
class SectionSpec:
    """A registered section: its anchor ``key``, heading, place and builder."""

    key: str
    title: str
    order: int
    build: Builder


_REGISTRY: dict[str, SectionSpec] = {}


def register_section(
    key: str, *, title: str, order: int, build: Builder, replace: bool = False
) -> None:
    """Add a section to every report.

    Parameters
    ----------
    key : str
        Anchor of the section (lower case, letters, digits and hyphens).
    title : str
        Its heading.
    order : int
        Its place; see the module docstring for the built-in orders and the room
        kept between them.
    build : callable
        ``build(ReportInput) -> Section | None``; None leaves the section out.
        It must not fit anything or read files: the report is rebuilt from the
        stored results alone.
    replace : bool, default=False
        Allow a new builder for a key already registered.

    Raises
    ------
    SpecError
        On a malformed key, or a key already registered without ``replace``.
    """
    if (
        not key
        or not all(ch.isascii() and (ch.isalnum() or ch == "-") for ch in key)
        or key != key.lower()
    ):
        raise SpecError(
            f"register_section: key {key!r} must be lower case letters, digits and hyphens"
        )
    if key in _REGISTRY and not replace:
        raise SpecError(
            f"register_section: a section '{key}' is already registered; pass replace=True to swap it"
        )
    _REGISTRY[key] = SectionSpec(key=key, title=title, order=int(order), build=build)


def registered_sections() -> list[SectionSpec]:
    """The registered sections in report order."""
    return sorted(_REGISTRY.values(), key=lambda s: (s.order, s.key))


def build_sections(inp: ReportInput) -> list[Section]:
    """Every registered section that has something to say for this run, in order."""
    out = []
    for spec in registered_sections():
        sec = spec.build(inp)
        if sec is not None:
            out.append(replace(sec, key=spec.key, title=spec.title))
    return out


def section_title(key: str) -> str:
    """The heading of a registered section (the key itself when unknown)."""
    spec = _REGISTRY.get(key)
    return spec.title if spec else key


# ------------------------------------------------------------------ helpers


def fmt(v: Any, nd: int = 3) -> str:
    """A number as the report shows it; '-' for missing values."""
    if v is None:
        return "-"
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, (int, np.integer)):
        return str(int(v))
    if isinstance(v, (float, np.floating)):
        x = float(v)
        if not np.isfinite(x):
            return "-"
        if x != 0 and (abs(x) >= 10**6 or abs(x) < 10 ** (-nd)):
            return f"{x:.{nd}g}"
        return f"{x:.{nd}f}"
    return str(v)


def _sentence(text: str) -> str:
    """Text as a sentence: capital first letter, full stop at the end."""
    t = text.strip()
    if not t:
        return ""
    return t[0].upper() + t[1:] + ("" if t.endswith(".") else ".")


def _ci(ci: Sequence[float] | None, nd: int = 3) -> str:
    return "-" if not ci else f"{fmt(ci[0], nd)} to {fmt(ci[1], nd)}"


def _settings_text(s: Mapping[str, Any] | None) -> str:
    if not s:
        return "(defaults)"
    return ", ".join(
        f"{k}={fmt(v, 4) if isinstance(v, float) else v}" for k, v in sorted(s.items())
    )


def _space_text(dim: Any) -> str:
    if isinstance(dim, list):
        return "one of " + ", ".join(
            fmt(v, 4) if isinstance(v, float) else str(v) for v in dim
        )
    if isinstance(dim, Mapping) and "between" in dim:
        lo, hi = dim["between"]
        bits = [str(dim.get("scale", "linear")) + " scale"]
        if dim.get("integer"):
            bits.append("whole numbers")
        if dim.get("grid_points"):
            bits.append(f"{dim['grid_points']} grid points")
        return f"{fmt(lo, 4)} to {fmt(hi, 4)} ({', '.join(bits)})"
    return json.dumps(dim, sort_keys=True)


def _loop_text(loop: Mapping[str, Any], *, outer: bool) -> str:
    bits = [str(loop.get("splitter", "?")), f"{loop.get('folds', '?')} folds"]
    if loop.get("shuffle"):
        bits.append("shuffled")
    if loop.get("stratified"):
        bits.append("stratified by class")
    if loop.get("grouped"):
        bits.append("grouped (a group never on both sides)")
    if outer:
        reps = int(loop.get("repeats", 1) or 1)
        bits.append(f"{reps} repeat{'s' if reps != 1 else ''}")
    return ", ".join(bits)


def _folds(inp: ReportInput) -> list[Mapping[str, Any]]:
    return list(inp.results.get("folds") or [])


def _chosen_predictions(inp: ReportInput) -> pd.DataFrame | None:
    p = inp.predictions
    if p is None or p.empty:
        return None
    return p[p["chosen"]]


def _true_by_row(inp: ReportInput) -> dict[int, str] | None:
    p = inp.predictions
    if p is None or p.empty:
        return None
    first = p.drop_duplicates("row")
    return {int(r): str(t) for r, t in zip(first["row"], first["true"])}


def _rows_text(n_folds: int, repeats: int) -> str:
    if repeats > 1:
        return f"{n_folds} outer folds ({repeats} repeats of {n_folds // repeats})"
    return f"{n_folds} outer folds"


def _chance(inp: ReportInput) -> float | None:
    ref = inp.results.get("reference")
    if ref and ref.get("score"):
        return float(ref["score"]["mean"])
    ctl = inp.results.get("control")
    if ctl and ctl.get("chance_level") is not None:
        return float(ctl["chance_level"])
    return None


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
    id_col = d.get("id")
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


def _plan(inp: ReportInput) -> Section:
    r, p = inp.results, inp.plan
    rp = r.get("plan") or {}
    metrics = list(rp.get("metrics") or p.get("metrics") or [inp.metric])
    search = rp.get("search") or p.get("search") or {}
    s_text = str(search.get("method", "?"))
    if search.get("trials"):
        s_text += f", {search['trials']} settings tried per search"
    elif search.get("method") == "grid":
        s_text += " (every listed setting)"
    fits = rp.get("model_fits") or p.get("model_fits") or {}
    pairs = [
        ("outer loop", _loop_text(rp.get("outer") or p.get("outer") or {}, outer=True)),
        (
            "inner loop",
            _loop_text(rp.get("inner") or p.get("inner") or {}, outer=False),
        ),
        ("search", s_text),
        (
            "metrics",
            ", ".join(
                [f"{metrics[0]} (chooses settings and candidate; the headline)"]
                + metrics[1:]
            ),
        ),
        (
            "seed",
            fmt(
                p.get(
                    "seed",
                    (r.get("environment") or {}).get("seed")
                    if isinstance(r.get("environment"), dict)
                    else None,
                )
            ),
        ),
        ("plan digest", str(rp.get("digest") or p.get("digest") or "-")),
        (
            "pipeline fits",
            f"{fits.get('real', '-')} with the real labels, {fits.get('permutations', 0)} for permutations",
        ),
    ]
    blocks: list[Any] = [Facts(tuple(pairs))]
    truth = _true_by_row(inp)
    rows = []
    has_ids = any("test_ids" in f for f in p.get("folds") or [])
    for f in p.get("folds") or []:
        row = [
            str(f.get("repeat")),
            str(f.get("fold")),
            str(len(f.get("train", []))),
            str(len(f.get("test", []))),
        ]
        inner = f.get("inner") or []
        row.append(" ".join(str(len(s.get("test", []))) for s in inner) or "-")
        if truth is not None and r.get("data", {}).get("task") == "classification":
            te = Counter(truth[int(i)] for i in f.get("test", []) if int(i) in truth)
            tr = Counter(truth[int(i)] for i in f.get("train", []) if int(i) in truth)
            row.append(", ".join(f"{k}: {te[k]}" for k in sorted(te)))
            row.append(", ".join(f"{k}: {tr[k]}" for k in sorted(tr)))
        rows.append(tuple(row))
    if rows:
        cols = ["repeat", "fold", "n train", "n test", "inner test sizes"]
        if truth is not None and r.get("data", {}).get("task") == "classification":
            cols += ["test classes", "train classes"]
        blocks.append(Subheading("Outer folds"))
        blocks.append(
            Table(
                tuple(cols),
                tuple(rows),
                numeric=tuple(
                    c.startswith("n ") or c in ("repeat", "fold") for c in cols
                ),
            )
        )
        blocks.append(
            Text(
                "plan.json lists the row numbers of every outer and inner split"
                + (" with the ids beside them." if has_ids else ".")
            )
        )
    cand_rows = []
    for c in p.get("candidates") or []:
        steps = " -> ".join(f"{n}: {est}" for n, est in c.get("steps", []))
        space = (
            "; ".join(
                f"{k}: {_space_text(v)}" for k, v in (c.get("space") or {}).items()
            )
            or "(nothing searched)"
        )
        cand_rows.append(
            (
                c.get("name", ""),
                c.get("role", ""),
                steps,
                space,
                str(c.get("settings_per_search", "-")),
            )
        )
    if cand_rows:
        blocks.append(Subheading("Candidates, baselines and the chance reference"))
        blocks.append(
            Table(
                (
                    "name",
                    "role",
                    "steps (each fitted inside the training part only)",
                    "search space",
                    "settings per search",
                ),
                tuple(cand_rows),
                numeric=(False, False, False, False, True),
            )
        )
    budget = r.get("budget")
    if budget:
        blocks.append(Text(f"Search budget: {budget.get('note', '')}."))
    return Section("plan", "Plan", tuple(blocks))


# ------------------------------------------------------------- headline


def _headline(inp: ReportInput) -> Section:
    r = inp.results
    sc = r["score"]
    m = sc["metric"]
    reps = int((r.get("plan") or {}).get("outer", {}).get("repeats", 1) or 1)
    chance = _chance(inp)
    lines = [
        (
            f"{metric_label(m)} of the whole procedure on outer test rows: {fmt(sc['mean'])}, the mean over "
            f"{_rows_text(int(sc['n_folds']), reps)}; 95% interval {_ci(sc.get('ci'))} "
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
                f"For comparison, a bootstrap over folds gives {_ci(sc['ci_bootstrap'])}; "
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
            _ci(sc.get("ci")),
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
                _ci(o.get("ci")),
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


# ------------------------------------------------------- out-of-fold predictions


def _quantile_bins(
    p: np.ndarray, y: np.ndarray, k: int
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    order = np.argsort(p, kind="stable")
    parts = [c for c in np.array_split(order, k) if c.size]
    mp = np.array([p[c].mean() for c in parts])
    ob = np.array([y[c].mean() for c in parts])
    n = np.array([c.size for c in parts])
    return mp, ob, n


def _predictions_section(inp: ReportInput) -> Section:
    from sklearn.metrics import (
        average_precision_score,
        precision_recall_curve,
        roc_auc_score,
        roc_curve,
    )

    r = inp.results
    d = r.get("data") or {}
    blocks: list[Any] = []
    chosen = _chosen_predictions(inp)
    pooled = r.get("pooled")
    if pooled:
        w, cp = pooled.get("wilson_95"), pooled.get("clopper_pearson_95")
        blocks.append(
            Text(
                f"Pooled out-of-fold accuracy: {pooled['correct']} of {pooled['n']} rows right ({fmt(pooled['accuracy'])}; "
                f"Wilson 95% {_ci(w)}, Clopper-Pearson 95% {_ci(cp)}); always predicting the majority class would "
                f"score {fmt(pooled.get('no_information_rate'))}. {_sentence(pooled.get('note', ''))}"
            )
        )
    if chosen is None:
        blocks.append(
            Text(
                "predictions.csv was not available, so the curves from out-of-fold predictions are not "
                "drawn."
            )
        )
        return Section("predictions", "Out-of-fold predictions", tuple(blocks))
    rows_label = "pooled outer test rows of repeat 0, each row once"
    if d.get("task") == "regression":
        c0 = chosen[chosen["repeat"] == 0]
        svg = regression_svg(
            c0["true"].to_numpy(float),
            c0["predicted"].to_numpy(float),
            rows_label=rows_label,
        )
        blocks.append(
            Figure(
                "predicted-vs-true",
                svg,
                "Predicted against true values: each row once, predicted by "
                "the model chosen in the outer fold where it was a test row.",
                "Scatter plot of predicted against true values with the identity line.",
            )
        )
        return Section("predictions", "Out-of-fold predictions", tuple(blocks))
    classes = list((d.get("classes") or {}).keys())
    if len(classes) != 2:
        blocks.append(
            Text(
                "Curves are drawn for two-class targets only; this target has "
                f"{len(classes)} classes. predictions.csv holds every prediction."
            )
        )
        return Section("predictions", "Out-of-fold predictions", tuple(blocks))
    pos = str(
        d.get("positive_class") if d.get("positive_class") is not None else classes[1]
    )
    s_all = positive_scores(chosen, pos)
    if s_all is None:
        blocks.append(
            Text(
                "The chosen models gave no decision values (neither predict_proba nor "
                "decision_function), so no ROC, precision-recall or calibration curve can be drawn."
            )
        )
        return Section("predictions", "Out-of-fold predictions", tuple(blocks))
    y_all = (chosen["true"].astype(str).to_numpy() == pos).astype(int)
    per_roc, per_pr, skipped = [], [], []
    groups: dict[Any, Any] = chosen.groupby(["repeat", "fold"], sort=True).indices
    for key, idx in groups.items():
        yy, ss = y_all[idx], s_all[idx]
        if yy.min() == yy.max():
            skipped.append(f"r{key[0]} f{key[1]}")
            continue
        fpr, tpr, _ = roc_curve(yy, ss)
        per_roc.append((fpr, tpr))
        prec, rec, _ = precision_recall_curve(yy, ss)
        per_pr.append((rec, prec))
    rep0 = chosen["repeat"].to_numpy() == 0
    y0, s0 = y_all[rep0], s_all[rep0]
    if y0.min() == y0.max():
        blocks.append(
            Text("The outer test rows hold one class only; no curve can be drawn.")
        )
        return Section("predictions", "Out-of-fold predictions", tuple(blocks))
    fpr, tpr, _ = roc_curve(y0, s0)
    auc = float(roc_auc_score(y0, s0))
    pooled_label = "pooled over the outer folds of repeat 0"
    blocks.append(
        Figure(
            "roc",
            roc_svg(per_roc, (fpr, tpr, auc), positive=pos, pooled_label=pooled_label),
            f"ROC curves from out-of-fold decision values of the chosen model in each outer fold (thin), and of the "
            f"values pooled over folds (thick; labelled pooled: its area, {fmt(auc)}, pools models that differ by fold "
            f"and is not the headline estimate).",
            "ROC curves per outer fold and pooled, with the chance diagonal.",
        )
    )
    prec, rec, _ = precision_recall_curve(y0, s0)
    ap = float(average_precision_score(y0, s0))
    blocks.append(
        Figure(
            "precision-recall",
            precision_recall_svg(
                per_pr,
                (rec, prec, ap),
                positive=pos,
                prevalence=float(y0.mean()),
                pooled_label=pooled_label,
            ),
            "Precision-recall curves of the same out-of-fold values, per outer fold and pooled (labelled pooled).",
            "Precision-recall curves per outer fold and pooled, with the prevalence line.",
        )
    )
    kinds = set(chosen["decision_kind"].astype(str))
    if kinds == {"probability"}:
        k = int(max(2, min(10, y0.size // 15)))
        mp, ob, n = _quantile_bins(s0, y0, k)
        blocks.append(
            Figure(
                "calibration",
                calibration_svg(mp, ob, n, positive=pos, rows_label=rows_label),
                f"Calibration of the pooled out-of-fold probabilities in {len(n)} bins of equal size: points on the "
                f"diagonal mean the predicted probability matches the observed share.",
                "Calibration curve: mean predicted probability against observed share per bin.",
            )
        )
    else:
        blocks.append(
            Text(
                "No calibration curve: the decision values of the chosen models are not all "
                "probabilities (predict_proba)."
            )
        )
    if skipped:
        blocks.append(
            Text(
                f"Folds whose test rows hold one class only have no curve of their own: "
                f"{', '.join(skipped)}.",
                kind="note",
            )
        )
    return Section("predictions", "Out-of-fold predictions", tuple(blocks))


# ------------------------------------------------------------ outer folds


def _outer_folds(inp: ReportInput) -> Section:
    r = inp.results
    m = inp.metric
    folds = _folds(inp)
    others = list((r.get("other_metrics") or {}).keys())
    cols = [
        "repeat",
        "fold",
        "n train",
        "n test",
        "chosen",
        "inner score",
        f"test {m}",
        f"train {m}",
        "gap (train - test)",
    ] + [f"test {o}" for o in others]
    rows = []
    for f in folds:
        te, tr = f.get(f"test_{m}"), f.get(f"train_{m}")
        gap = None if te is None or tr is None else tr - te
        rows.append(
            tuple(
                [
                    str(f["repeat"]),
                    str(f["fold"]),
                    str(f["n_train"]),
                    str(f["n_test"]),
                    f["chosen"],
                    fmt(f.get("inner_score")),
                    fmt(te),
                    fmt(tr),
                    fmt(gap),
                ]
                + [fmt(f.get(f"test_{o}")) for o in others]
            )
        )
    num = tuple(c not in ("chosen",) for c in cols)
    ts = r.get("train_score") or {}
    blocks: list[Any] = [
        Text(
            f"Each outer fold's model was chosen by the inner search on that fold's training part and scored once on "
            f"its test part. Training scores of the chosen models: mean {fmt(ts.get('mean'))}; mean train - test gap "
            f"{fmt(ts.get('gap'))} (a large gap shows over-fitting)."
        ),
        Table(tuple(cols), tuple(rows), numeric=num),
    ]
    points = [
        FoldPoint(
            f"r{f['repeat']} f{f['fold']}",
            float(f[f"test_{m}"]),
            None if f.get(f"train_{m}") is None else float(f[f"train_{m}"]),
        )
        for f in folds
    ]
    if points:
        sc = r["score"]
        svg = fold_scores_svg(
            points,
            metric=m,
            mean=float(sc["mean"]),
            ci=tuple(sc["ci"]) if sc.get("ci") else None,
            chance=_chance(inp),
        )
        blocks.append(
            Figure(
                "fold-scores",
                svg,
                f"{metric_label(m)} per outer fold: filled, on the fold's outer test rows; hollow, on its "
                f"training rows (the vertical line is the gap). The band is the 95% interval of the mean.",
                "Per-fold test and training scores with the mean, its interval and the chance level.",
            )
        )
    return Section("folds", "Outer folds: scores and train-test gap", tuple(blocks))


# --------------------------------------------------------------- settings


def _dims(plan: Mapping[str, Any]) -> dict[str, dict[str, Any]]:
    return {c["name"]: dict(c.get("space") or {}) for c in plan.get("candidates") or []}


def _settings(inp: ReportInput) -> Section:
    r = inp.results
    folds = _folds(inp)
    n = len(folds)
    blocks: list[Any] = []
    rows = tuple(
        (
            str(f["repeat"]),
            str(f["fold"]),
            f["chosen"],
            _settings_text(f.get("settings")),
        )
        for f in folds
    )
    blocks.append(
        Table(
            ("repeat", "fold", "chosen candidate", "chosen settings"),
            rows,
            numeric=(True, True, False, False),
        )
    )
    cands = [c for c in r.get("candidates") or [] if c.get("role") == "candidate"]
    if len(cands) > 1:
        blocks.append(
            Text(
                "How often each candidate was chosen: "
                + "; ".join(
                    f"'{c['name']}' in {c.get('chosen_in_folds', 0)} of {n} outer folds"
                    for c in cands
                )
                + "."
            )
        )
    dims = _dims(inp.plan)
    stab_rows = []
    tracks: list[SettingTrack] = []
    for c in cands:
        name = c["name"]
        won = [f for f in folds if f["chosen"] == name]
        for key, dim in dims.get(name, {}).items():
            vals = [f.get("settings", {}).get(key) for f in won]
            if not vals:
                continue
            counts = Counter(json.dumps(v) for v in vals)
            top, k = counts.most_common(1)[0]
            nums = [
                v
                for v in vals
                if isinstance(v, (int, float)) and not isinstance(v, bool)
            ]
            spread = (
                f"{fmt(min(nums), 4)} to {fmt(max(nums), 4)}"
                if len(nums) == len(vals)
                else "-"
            )
            stab_rows.append(
                (
                    name,
                    key,
                    str(len(counts)),
                    f"{fmt(json.loads(top), 4)} ({k} of {len(vals)})",
                    spread,
                    _space_text(dim),
                )
            )
            low = high = None
            choices: tuple[Any, ...] = ()
            log = False
            if isinstance(dim, Mapping) and "between" in dim:
                low, high = float(dim["between"][0]), float(dim["between"][1])
                log = dim.get("scale") == "log"
            elif isinstance(dim, list):
                choices = tuple(dim)
            tracks.append(
                SettingTrack(
                    name,
                    key,
                    tuple(
                        f.get("settings", {}).get(key) if f["chosen"] == name else None
                        for f in folds
                    ),
                    low,
                    high,
                    choices,
                    log,
                )
            )
    if stab_rows:
        blocks.append(Subheading("How stable the chosen settings were"))
        blocks.append(
            Table(
                (
                    "candidate",
                    "setting",
                    "distinct values chosen",
                    "most frequent (folds)",
                    "values chosen",
                    "range searched",
                ),
                tuple(stab_rows),
                numeric=(False, False, True, False, False, False),
            )
        )
    edge = [x for x in r.get("notes") or [] if "end of the range" in x]
    if edge:
        blocks.append(Bullets(tuple(edge), kind="note"))
    elif stab_rows:
        blocks.append(
            Text(
                "No chosen setting sat at an end of its searched range in half or more of the outer folds."
            )
        )
    if tracks:
        shown = tracks[:8]
        blocks.append(
            Figure(
                "settings",
                settings_svg(shown, fold_labels(folds)),
                "The value each searched setting took in each outer fold, with the ends of the range "
                "searched (dotted); a setting pressed against an end in most folds suggests the range was "
                "too narrow."
                + (f" Showing 8 of {len(tracks)} settings." if len(tracks) > 8 else ""),
                "Chosen setting values per outer fold with the searched range.",
            )
        )
    return Section("settings", "Chosen settings and their stability", tuple(blocks))


# ------------------------------------------------------- feature selection


def selection_matrix(
    folds: Sequence[Mapping[str, Any]], n_features: int
) -> tuple[np.ndarray, list[str]]:
    """Binary matrix (outer folds with a selection x features) and the kept column names.

    Columns beyond the names kept in some fold are all zero; only their number matters.
    """
    runs = [
        f["selected_features"] for f in folds if f.get("selected_features") is not None
    ]
    names = sorted({n for run in runs for n in run})
    if n_features < len(names):
        raise SpecError(
            f"feature selection: {len(names)} distinct kept columns but only {n_features} features"
        )
    z = np.zeros((len(runs), n_features), dtype=int)
    pos = {n: j for j, n in enumerate(names)}
    for i, run in enumerate(runs):
        for n in run:
            z[i, pos[n]] = 1
    return z, names


def _feature_selection(inp: ReportInput) -> Section:
    from ..compare._stability import selection_stability

    r = inp.results
    fs = r.get("feature_selection")
    title = "Feature-selection stability"
    if not fs:
        return Section(
            "feature-selection",
            title,
            (
                Text(
                    "None of the chosen pipelines has a step that reports which input columns it kept (scikit-learn's "
                    "get_support), so there are no selections to compare."
                ),
            ),
        )
    folds = _folds(inp)
    d = int((r.get("data") or {}).get("n_features") or 0)
    z, _ = selection_matrix(folds, d)
    blocks: list[Any] = []
    try:
        st = selection_stability(z)
    except SpecError as exc:
        blocks.append(
            Text(f"Stability cannot be computed here: {str(exc).split(': ', 1)[-1]}")
        )
    else:
        blocks.append(
            Facts(
                (
                    ("stability (Nogueira et al. 2018)", fmt(st.stability)),
                    (
                        "95% interval",
                        (
                            f"{_ci(st.ci)} (the paper's normal approximation: too "
                            "narrow with few folds; it covered the true value in about "
                            "7 of 10 simulated cases at 5 folds, 85 of 100 at 10)"
                        ),
                    ),
                    ("selections compared", f"{st.n_runs} outer folds"),
                    (
                        "features",
                        f"{st.n_features}, of which {fmt(st.mean_size, 1)} kept on average",
                    ),
                )
            )
        )
        blocks.append(
            Text(
                "1 means every fold kept the same columns; about 0 means the kept columns agree no more "
                "than columns drawn at random would (the estimate is corrected for chance and can be "
                "negative). Nogueira, Sechidis & Brown (2018), JMLR 18(174)."
            )
        )
    n_f = int(fs.get("n_folds") or len(folds))
    if int(fs.get("folds_with_selection") or 0) < n_f:
        blocks.append(
            Text(
                f"Only {fs.get('folds_with_selection')} of {n_f} outer folds chose a pipeline that "
                f"reports its kept columns; the others are left out.",
                kind="note",
            )
        )
    times = fs.get("times_selected") or {}
    m = int(fs.get("folds_with_selection") or n_f) or 1
    top = list(times.items())[:30]
    blocks.append(
        Table(
            ("input column", "kept in folds", "share"),
            tuple((k, str(v), f"{int(v) / m:.0%}") for k, v in top),
            caption="How often each input column was kept"
            + (f" (the 30 most frequent of {len(times)})" if len(times) > 30 else ""),
            numeric=(False, True, True),
        )
    )
    return Section("feature-selection", title, tuple(blocks))


# ------------------------------------------------------------------ control


def _control(inp: ReportInput) -> Section:
    ctl = inp.results.get("control")
    title = "Random-label control"
    if not ctl:
        return Section(
            "control",
            title,
            (
                Text(
                    "No random-label control was run (no permutations), so nothing here shows that the procedure cannot "
                    "score this well on labels that carry no signal."
                ),
            ),
        )
    rule = ctl.get("rule") or {}
    pairs = [
        ("p", f"{fmt(ctl.get('p_value'), 4)} ({rule.get('formula', '')})"),
        (
            "permutations",
            (
                f"{ctl.get('permutations')} run of {ctl.get('permutations_asked')} asked; "
                f"{ctl.get('exceedances')} scored at least the observed value"
            ),
        ),
        ("smallest possible p", fmt(ctl.get("p_floor"), 4)),
        ("observed (real labels)", fmt(ctl.get("observed"))),
        ("null mean and sd", f"{fmt(ctl.get('null_mean'))}, {fmt(ctl.get('null_sd'))}"),
        (
            "scheme",
            f"{ctl.get('scheme')} (labels exchanged between {ctl.get('exchangeable_units')}"
            + (f", within blocks of '{ctl['blocks']}'" if ctl.get("blocks") else "")
            + ")",
        ),
        ("what was repeated", str(ctl.get("what_was_repeated", ""))),
        ("stopping", f"{rule.get('rule', '')}; {ctl.get('reason', '')}"),
    ]
    q = ctl.get("null_quantiles") or {}
    if q:
        pairs.append(
            ("null quantiles", ", ".join(f"{k}: {fmt(v)}" for k, v in q.items()))
        )
    blocks: list[Any] = [Facts(tuple(pairs))]
    if ctl.get("statement"):
        blocks.append(Text(str(ctl["statement"])))
    null = ctl.get("null_scores") or []
    if null:
        blocks.append(
            Figure(
                "null-distribution",
                null_distribution_svg(
                    null,
                    metric=str(ctl.get("metric") or inp.metric),
                    observed=float(ctl["observed"]),
                    chance=None
                    if ctl.get("chance_level") is None
                    else float(ctl["chance_level"]),
                ),
                f"The whole procedure re-run on {len(null)} permutations of the labels (scheme {ctl.get('scheme')}): "
                f"the histogram of their scores and the score with the real labels.",
                "Histogram of permuted-label scores with the observed score marked.",
            )
        )
    return Section("control", title, tuple(blocks))


# -------------------------------------------------------------- comparisons


def _comparisons(inp: ReportInput) -> Section:
    comps = list(inp.results.get("comparisons") or [])
    title = "Comparisons"
    if not comps:
        return Section(
            "comparisons",
            title,
            (
                Text(
                    "This study compares nothing: it has no baseline, and candidates were not compared with each other."
                ),
            ),
        )
    m = str(comps[0].get("metric") or inp.metric)
    rows = []
    for c in comps:
        rows.append(
            (
                f"{c['a']} - {c['b']}",
                fmt(c.get("mean_difference")),
                _ci(c.get("ci")),
                fmt(c.get("statistic")),
                fmt(c.get("p_value"), 4),
                (
                    f"{fmt(c.get('p_adjusted'), 4)} ({c.get('correction', '-')}, "
                    f"{c.get('family_size', '-')} tests)"
                ),
                fmt((c.get("uncorrected_t") or {}).get("p_value"), 4),
                fmt((c.get("sign_flip") or {}).get("p_value"), 4),
            )
        )
    blocks: list[Any] = [
        Text(
            f"Paired differences in {metric_label(m)} over the same outer folds. The decision test is the corrected "
            f"resampled t-test (Nadeau & Bengio 2003); its p-values are adjusted for the number of comparisons. The "
            f"uncorrected paired t-test is shown only to show how much too optimistic it is."
        ),
        Table(
            (
                "a - b",
                "mean difference",
                "95% interval",
                "t (corrected)",
                "p (corrected t)",
                "p adjusted",
                "p uncorrected t (too optimistic)",
                "p sign-flip",
            ),
            tuple(rows),
            numeric=(False, True, False, True, True, False, True, True),
        ),
    ]
    statements = [str(c["statement"]) for c in comps if c.get("statement")]
    if statements:
        blocks.append(Bullets(tuple(statements)))
    dl = [(c, c["delong_pooled"]) for c in comps if c.get("delong_pooled")]
    if dl:
        blocks.append(Subheading("DeLong test on pooled out-of-fold decision values"))
        blocks.append(
            Table(
                ("a - b", "AUC a", "AUC b", "difference", "z", "p"),
                tuple(
                    (
                        f"{c['a']} - {c['b']}",
                        fmt(x.get("auc_a")),
                        fmt(x.get("auc_b")),
                        fmt(x.get("difference")),
                        fmt(x.get("z")),
                        fmt(x.get("p_value"), 4),
                    )
                    for c, x in dl
                ),
                caption=f"Rows: {dl[0][1].get('rows', '')}; pooling treats models that differ by fold as one, so this is "
                f"a check beside the decision test, not the decision",
                numeric=(False, True, True, True, True, True),
            )
        )
    with_ci = [c for c in comps if c.get("mean_difference") is not None]
    if with_ci:
        blocks.append(
            Figure(
                "differences",
                differences_svg(with_ci, metric=m),
                "Mean paired difference over outer folds (diamond) with its 95% corrected t interval "
                "(bar); the dashed line is no difference.",
                "Forest plot of paired differences with intervals.",
            )
        )
    return Section("comparisons", title, tuple(blocks))


# ------------------------------------------------------------------ audit


def _row_audit(inp: ReportInput) -> Section:
    a = inp.results.get("audit") or {}
    pairs = [
        (
            "step fits audited",
            f"{a.get('fits')} over {a.get('units')} units (permutations included)",
        ),
        ("outer-test rows seen by any fit", str(a.get("test_rows_seen"))),
        ("inner-validation rows seen by any fit", str(a.get("validation_rows_seen"))),
        ("rows with an identical twin", str(a.get("duplicate_rows", "-"))),
        ("row fingerprint", str(a.get("fingerprint", "-"))),
        ("fits counted", str(a.get("fits_counted", "-"))),
    ]
    if a.get("already_fitted_input"):
        pairs.append(
            (
                "came in already fitted",
                ", ".join(a["already_fitted_input"]) + " (state discarded; cloned)",
            )
        )
    blocks: list[Any] = [
        Text(
            "Every fit of every step was recorded with the rows it saw, and checked against the fold it belonged "
            "to: a test row reaching any fit stops the run with nothing written."
        ),
        Facts(tuple(pairs)),
        Text("Digest of the real-label units (full, 64 hexadecimal characters):"),
        Code(str(a.get("digest", "-"))),
        Text(str(a.get("digest_rule", ""))),
    ]
    return Section("row-audit", "Row audit", tuple(blocks))


# ----------------------------------------------------------- reproducibility


def _reproducibility(inp: ReportInput) -> Section:
    r = inp.results
    st = r.get("study") or {}
    d = r.get("data") or {}
    env = r.get("environment") if isinstance(r.get("environment"), Mapping) else {}
    assert isinstance(env, Mapping)
    run_dir = inp.run_dir or "RUN_DIR"
    command = inp.command or (
        f"foldwall run {st['file']} --out NEW_DIR" if st.get("file") else None
    )
    blocks: list[Any] = []
    if command:
        blocks.append(Text("The command that reproduces this run (into a new folder):"))
        blocks.append(Code(command))
    else:
        blocks.append(
            Text(
                "This run was started from Python; the same study, data and seed reproduce it."
            )
        )
    blocks.append(
        Text("Rebuild this report from the stored results, without fitting anything:")
    )
    blocks.append(Code(f"foldwall report {run_dir}"))
    pairs = [
        ("study file sha256", str(st.get("sha256") or "-")),
        ("data sha256", f"{d.get('sha256') or '-'} ({d.get('sha256_of') or '-'})"),
        (
            "plan digest",
            str((r.get("plan") or {}).get("digest") or inp.plan.get("digest") or "-"),
        ),
        ("seed", fmt(env.get("seed", inp.plan.get("seed")))),
    ]
    blocks.append(Facts(tuple(pairs)))
    vers = [
        (k, str(v))
        for k, v in env.items()
        if k not in ("note", "seed", "math_libraries")
    ]
    if env.get("math_libraries"):
        vers.append(("math libraries", ", ".join(map(str, env["math_libraries"]))))
    if vers:
        blocks.append(
            Table(
                ("software", "version"),
                tuple(vers),
                caption="Versions that ran this study",
            )
        )
    blocks.append(
        Text(
            "results.json is the same byte for byte whatever the number of workers or the backend, and "
            "after a resume; workers, threads and timings are in timing.json. Files of the run: "
            "results.json, plan.json, predictions.csv, folds.csv, units.csv, trials.csv, store.sqlite, "
            "report.html, report.md."
        )
    )
    return Section("reproducibility", "Reproducibility", tuple(blocks))


# ------------------------------------------------------------------ cautions


def _cautions(inp: ReportInput) -> Section:
    r = inp.results
    blocks: list[Any] = [Bullets(tuple(r.get("cautions") or []), kind="caution")]
    notes = [x for x in r.get("notes") or [] if "end of the range" not in x]
    if notes:
        blocks.append(Subheading("Notes from this run"))
        blocks.append(Bullets(tuple(notes), kind="note"))
    failed = r.get("failed_trials") or []
    if failed:
        blocks.append(
            Text(
                f"{len(failed)} settings failed inside inner searches and were scored as missing; they "
                f"are listed in results.json (failed_trials).",
                kind="note",
            )
        )
    return Section("cautions", "Cautions", tuple(blocks))


# ---------------------------------------------------------------- register


def _register_builtin() -> None:
    for key, title, order, build in (
        ("study-and-data", "Study and data", 10, _study_and_data),
        ("plan", "Plan", 20, _plan),
        ("headline", "Headline estimate", 30, _headline),
        ("predictions", "Out-of-fold predictions", 35, _predictions_section),
        ("folds", "Outer folds: scores and train-test gap", 40, _outer_folds),
        ("settings", "Chosen settings and their stability", 50, _settings),
        ("feature-selection", "Feature-selection stability", 60, _feature_selection),
        ("control", "Random-label control", 70, _control),
        ("comparisons", "Comparisons", 80, _comparisons),
        # 85-87 are kept for the data audits (issue 11), rater agreement (issue 12)
        # and the hold-out and ledger (issue 14): those parts register here.
        ("row-audit", "Row audit", 90, _row_audit),
        ("reproducibility", "Reproducibility", 100, _reproducibility),
        ("cautions", "Cautions", 110, _cautions),
        # 120: the reporting checklist (registered by _checklist.py)
    ):
        register_section(key, title=title, order=order, build=build, replace=True)


_register_builtin()
