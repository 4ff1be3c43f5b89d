"""Intervals for the score, pooled out-of-fold figures, and paired comparisons with baselines.

Everything here is computed from unit records already in hand: the outer-test
score of every candidate on every outer split (the same splits for all), and the
pooled out-of-fold predictions of the real run.
"""

from __future__ import annotations

import warnings
from typing import Any

import numpy as np

from ..exceptions import BudgetWarning
from ..runners._execute import fold_winners

__all__ = ["add_uncertainty", "paired_comparisons"]

_GREATER_IS_BETTER = True  # scikit-learn scorers are all "greater is better" (losses are negated)


_UNIT_INTERVAL = ("accuracy", "balanced_accuracy", "roc_auc", "average_precision", "f1", "precision", "recall",
                  "jaccard", "top_k_accuracy", "matthews_corrcoef")


def metric_range(metric: str) -> tuple[float, float]:
    """The values a scorer can take (an interval is clipped to them, and says so)."""
    if metric.startswith(_UNIT_INTERVAL):
        return (-1.0, 1.0) if metric == "matthews_corrcoef" else (0.0, 1.0)
    if metric.startswith("neg_"):
        return (-np.inf, 0.0)
    if metric in ("r2", "explained_variance") or metric.startswith("d2_"):
        return (-np.inf, 1.0)
    return (-np.inf, np.inf)


def _clip(ci: tuple[float, float], lo: float, hi: float) -> tuple[list[float], bool]:
    a, b = max(ci[0], lo), min(ci[1], hi)
    return [float(a), float(b)], (a, b) != (ci[0], ci[1])


def _ratio(plan: Any) -> tuple[float, float]:
    n_train = float(np.mean([len(f.train) for f in plan.folds]))
    n_test = float(np.mean([len(f.test) for f in plan.folds]))
    return n_train, n_test


def _score_interval(values: list[float], plan: Any, seed: int, *, metric: str | None = None) -> dict[str, Any]:
    from ..compare import bootstrap_interval, corrected_t_interval

    n_train, n_test = _ratio(plan)
    out: dict[str, Any] = {}
    a = np.asarray(values, dtype=float)
    if a.size >= 2 and np.std(a) > 0:
        ci = corrected_t_interval(a, n_train=round(n_train), n_test=round(n_test))
        out["ci"], clipped = _clip(ci, *metric_range(metric or plan.metrics[0]))
        out["ci_method"] = ("95% corrected resampled t interval over outer folds (variance inflated by "
                            "1/J + n_test/n_train; Nadeau & Bengio 2003)"
                            + ("; clipped to the metric's range" if clipped else ""))
        blo, bhi = bootstrap_interval(a, random_state=seed)
        out["ci_bootstrap"] = [blo, bhi]
        out["ci_bootstrap_method"] = ("95% bootstrap over outer folds (scipy.stats.bootstrap); ignores the overlap "
                                      "of training sets, so it is narrower than it should be")
    else:
        out["ci"] = None
        out["ci_method"] = "not available (fewer than two folds or no spread)"
    return out


def _pooled(records: list[dict[str, Any]], data: Any, plan: Any) -> dict[str, Any] | None:
    """Pooled out-of-fold predictions of the chosen models, first repeat only (each row once)."""
    from ..compare import proportion_interval

    if data.task != "classification":
        return None
    winners = fold_winners(records)
    pred = {}
    for (perm, rep, _), w in winners.items():
        if perm != 0 or rep != 0 or w.get("predicted") is None:
            continue
        for i, p in zip(w["test_rows"], w["predicted"]):
            pred[i] = p
    if not pred:
        return None
    rows = np.array(sorted(pred))
    y = data.y[rows]
    yhat = np.array([pred[i] for i in rows], dtype=y.dtype)
    correct = int(np.sum(y == yhat))
    n = int(len(rows))
    lo, hi = proportion_interval(correct, n, method="wilson")
    clo, chi = proportion_interval(correct, n, method="clopper-pearson")
    _, counts = np.unique(y, return_counts=True)
    return {"rows": "pooled out-of-fold predictions of the chosen model in each outer fold (repeat 0, each row once)",
            "n": n, "correct": correct, "accuracy": correct / n,
            "no_information_rate": float(counts.max() / n),
            "wilson_95": [lo, hi], "clopper_pearson_95": [clo, chi],
            "note": "pooled over folds whose models differ; a summary of the procedure, not of one model"}


def _pooled_decisions(records: list[dict[str, Any]], name: str) -> dict[int, float] | None:
    out: dict[int, float] = {}
    for r in records:
        if r["candidate"] != name or r["perm"] != 0 or r["repeat"] != 0:
            continue
        if r.get("decision") is None:
            return None
        out.update(zip(r["test_rows"], r["decision"]))
    return out or None


def paired_comparisons(records: list[dict[str, Any]], plan: Any, data: Any, study: Any) -> list[dict[str, Any]]:
    from ..compare import (
        adjust_pvalues,
        bootstrap_interval,
        comparison_statement,
        corrected_t_interval,
        corrected_ttest,
        delong_aucs,
        five_by_two_f,
        five_by_two_t,
        paired_ttest,
        sign_flip_test,
    )

    metric = plan.metrics[0]
    cands = [c for c in plan.candidates if c.role == "candidate"]
    bases = [c for c in plan.candidates if c.role == "baseline"]
    pairs = [(a.name, b.name) for a in cands for b in bases]
    if study.compare.get("between_candidates"):
        pairs += [(cands[i].name, cands[j].name) for i in range(len(cands)) for j in range(i + 1, len(cands))]
    if not pairs:
        return []
    order = [(f.repeat, f.fold) for f in plan.folds]
    score = {(r["candidate"], r["repeat"], r["fold"]): r["test"][metric] for r in records if r["perm"] == 0}
    n_train, n_test = _ratio(plan)
    alpha = float(study.compare.get("alpha", 0.05))
    correction = study.compare.get("correction", "holm")
    rows = []
    for a, b in pairs:
        d = np.array([score[(a, r, f)] - score[(b, r, f)] for r, f in order])
        row: dict[str, Any] = {"a": a, "b": b, "metric": metric, "n_splits": int(d.size),
                               "per_split_differences": d.tolist(), "mean_difference": float(d.mean())}
        if d.size < 2:
            row.update({"test": None, "p_value": None, "ci": None})
            rows.append(row)
            continue
        main = corrected_ttest(d, n_train=round(n_train), n_test=round(n_test))
        row["test"] = main.test
        row["statistic"] = main.statistic
        row["df"] = main.df
        row["p_value"] = main.p_value
        lo, hi = metric_range(metric)
        width = hi - lo
        row["ci"], clipped = _clip(corrected_t_interval(d, n_train=round(n_train), n_test=round(n_test)), -width, width)
        row["ci_method"] = "95% corrected resampled t interval" + ("; clipped to the possible range" if clipped else "")
        row["ci_bootstrap"] = list(bootstrap_interval(d, random_state=plan.seed))
        naive = paired_ttest(d)
        row["uncorrected_t"] = {**naive.to_dict(), "label": "too optimistic: ignores overlapping training sets"}
        row["sign_flip"] = sign_flip_test(d, random_state=plan.seed).to_dict()
        if plan.repeats == 5 and len(plan.folds) == 10 and plan.outer.n_splits == 2:
            d52 = d.reshape(5, 2)
            row["five_by_two_t"] = five_by_two_t(d52).to_dict()
            row["five_by_two_f"] = five_by_two_f(d52).to_dict()
        if metric == "roc_auc" and data.classes is not None and len(data.classes) == 2:
            da, db = _pooled_decisions(records, a), _pooled_decisions(records, b)
            if da is not None and db is not None and set(da) == set(db):
                idx = np.array(sorted(da))
                yb = (data.y[idx] == data.classes[1]).astype(int)
                dl = delong_aucs(yb, np.array([da[i] for i in idx]), np.array([db[i] for i in idx]))
                row["delong_pooled"] = {**{k: float(v) for k, v in dl.items()},
                                        "rows": "pooled out-of-fold decision values, repeat 0"}
        rows.append(row)
    tested = [r for r in rows if r.get("p_value") is not None]
    if tested:
        adj = adjust_pvalues([r["p_value"] for r in tested], method=correction)
        for r, p in zip(tested, adj):
            r["p_adjusted"] = float(p)
            r["correction"] = correction
            r["family_size"] = len(tested)
            r["statement"] = comparison_statement(
                a=r["a"], b=r["b"], metric=metric, mean_difference=r["mean_difference"], ci=tuple(r["ci"]),
                p_adjusted=float(p), alpha=alpha, correction=correction, family_size=len(tested),
            )
    return rows


def _budget(plan: Any) -> dict[str, Any]:
    budgets = {c.name: plan.settings_count(i) for i, c in enumerate(plan.candidates) if c.role != "reference"}
    equal = len(set(budgets.values())) <= 1
    return {"settings_per_search": budgets, "equal": equal,
            "same_outer_splits": True, "same_inner_splits": True,
            "note": ("every candidate and baseline was searched on the same outer and inner splits"
                     + ("" if equal else "; the budgets differ, so the comparison favours the larger budget"))}


def add_uncertainty(out: dict[str, Any], study: Any, plan: Any, data: Any, records: list[dict[str, Any]]) -> None:
    out["score"].update(_score_interval(out["score"]["per_fold"], plan, plan.seed))
    for name, o in (out.get("other_metrics") or {}).items():
        o.update(_score_interval(o["per_fold"], plan, plan.seed, metric=name))
        o["rows"] = "the same outer test parts and chosen models as score"
    for c in out["candidates"]:
        c["score"].update(_score_interval(c["score"]["per_fold"], plan, plan.seed))
    if plan.repeats > 1:
        per_repeat = {}
        for r in range(plan.repeats):
            vals = [v for f, v in zip(plan.folds, out["score"]["per_fold"]) if f.repeat == r]
            per_repeat[str(r)] = {"mean": float(np.mean(vals)),
                                  "sd": float(np.std(vals, ddof=1)) if len(vals) > 1 else None}
        out["score"]["per_repeat"] = per_repeat
        out["score"]["repeat_seeds"] = sorted({f.split_seed for f in plan.folds if f.split_seed is not None})
    out["pooled"] = _pooled(records, data, plan)
    out["comparisons"] = paired_comparisons(records, plan, data, study)
    if any(c.role == "baseline" for c in plan.candidates):
        b = _budget(plan)
        out["budget"] = b
        if not b["equal"]:
            warnings.warn(f"candidates and baselines were not searched with the same budget: {b['settings_per_search']}",
                          BudgetWarning, stacklevel=3)
