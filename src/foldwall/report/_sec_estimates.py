"""Report sections: out-of-fold predictions and the outer folds."""

from __future__ import annotations

from typing import Any

import numpy as np

from ._document import Figure, Section, Table, Text
from ._figures import (
    FoldPoint,
    calibration_svg,
    fold_scores_svg,
    metric_label,
    precision_recall_svg,
    regression_svg,
    roc_svg,
)
from ._predictions import positive_scores
from ._sections import (
    ReportInput,
    chance_of,
    chosen_predictions,
    ci_text,
    fmt,
    folds_of,
    register_section,
    sentence,
)

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
    chosen = chosen_predictions(inp)
    pooled = r.get("pooled")
    if pooled:
        w, cp = pooled.get("wilson_95"), pooled.get("clopper_pearson_95")
        blocks.append(
            Text(
                f"Pooled out-of-fold accuracy: {pooled['correct']} of {pooled['n']} rows right ({fmt(pooled['accuracy'])}; "
                f"Wilson 95% {ci_text(w)}, Clopper-Pearson 95% {ci_text(cp)}); always predicting the majority class would "
                f"score {fmt(pooled.get('no_information_rate'))}. {sentence(pooled.get('note', ''))}"
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
    folds = folds_of(inp)
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
            chance=chance_of(inp),
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


def _register() -> None:
    for key, title, order, build in (
        ("predictions", "Out-of-fold predictions", 35, _predictions_section),
        ("folds", "Outer folds: scores and train-test gap", 40, _outer_folds),
    ):
        register_section(key, title=title, order=order, build=build, replace=True)


_register()
