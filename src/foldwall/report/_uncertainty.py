"""Intervals for the score, pooled out-of-fold figures, and paired comparisons with baselines.

Everything here is computed from unit records already in hand: the outer-test
score of every candidate on every outer split (the same splits for all), and the
pooled out-of-fold predictions of the real run.
"""

from __future__ import annotations

import dataclasses
import warnings
from collections.abc import Sequence
from typing import Any

import numpy as np

from .._metrics import metric_info
from ..exceptions import BudgetWarning
from ..plan import Plan
from ..records import ComparisonRow, UnitRecord, fold_winners
from ..settings import CompareSettings
from ..table import Dataset

__all__ = ["add_uncertainty", "paired_comparisons", "metric_range"]

JSONDict = dict[str, Any]


def metric_range(metric: str) -> tuple[float, float]:
    """The values a scorer can take (an interval is clipped to them, and says so)."""
    info = metric_info(metric)
    return info.low, info.high


def _clip(ci: tuple[float, float], lo: float, hi: float) -> tuple[list[float], bool]:
    a, b = max(ci[0], lo), min(ci[1], hi)
    return [float(a), float(b)], (a, b) != (ci[0], ci[1])


def _ratio(plan: Plan) -> tuple[float, float]:
    n_train = float(np.mean([len(f.train) for f in plan.folds]))
    n_test = float(np.mean([len(f.test) for f in plan.folds]))
    return n_train, n_test


def _score_interval(
    values: list[float], plan: Plan, seed: int, *, metric: str | None = None
) -> JSONDict:
    from ..compare import bootstrap_interval, corrected_t_interval

    n_train, n_test = _ratio(plan)
    out: JSONDict = {}
    a = np.asarray(values, dtype=float)
    if a.size >= 2 and np.std(a) > 0:
        ci = corrected_t_interval(a, n_train=round(n_train), n_test=round(n_test))
        out["ci"], clipped = _clip(ci, *metric_range(metric or plan.metrics[0]))
        out["ci_method"] = (
            "95% corrected resampled t interval over outer folds (variance inflated by "
            "1/J + n_test/n_train; Nadeau & Bengio 2003)"
            + ("; clipped to the metric's range" if clipped else "")
        )
        blo, bhi = bootstrap_interval(a, random_state=seed)
        out["ci_bootstrap"] = [blo, bhi]
        out["ci_bootstrap_method"] = (
            "95% bootstrap over outer folds (scipy.stats.bootstrap); ignores the overlap "
            "of training sets, so it is narrower than it should be"
        )
    else:
        out["ci"] = None
        out["ci_method"] = "not available (fewer than two folds or no spread)"
    return out


def _pooled(records: Sequence[UnitRecord], data: Dataset) -> JSONDict | None:
    """Pooled out-of-fold predictions of the chosen models, first repeat only (each row once)."""
    from ..compare import proportion_interval

    if data.task != "classification":
        return None
    pred: dict[int, Any] = {}
    for (perm, rep, _), w in fold_winners(records).items():
        if perm != 0 or rep != 0 or w.predicted is None or w.test_rows is None:
            continue
        for i, p in zip(w.test_rows, w.predicted, strict=True):
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
    return {
        "rows": "pooled out-of-fold predictions of the chosen model in each outer fold (repeat 0, each row once)",
        "n": n,
        "correct": correct,
        "accuracy": correct / n,
        "no_information_rate": float(counts.max() / n),
        "wilson_95": [lo, hi],
        "clopper_pearson_95": [clo, chi],
        "note": "pooled over folds whose models differ; a summary of the procedure, not of one model",
    }


def _pooled_decisions(
    records: Sequence[UnitRecord], name: str
) -> dict[int, float] | None:
    out: dict[int, float] = {}
    for r in records:
        if r.candidate != name or r.perm != 0 or r.repeat != 0:
            continue
        if r.decision is None or r.test_rows is None:
            return None
        out.update(zip(r.test_rows, r.decision, strict=True))
    return out or None


def _pairs(plan: Plan, compare: CompareSettings) -> list[tuple[str, str]]:
    cands = [c for c in plan.candidates if c.role == "candidate"]
    bases = [c for c in plan.candidates if c.role == "baseline"]
    pairs = [(a.name, b.name) for a in cands for b in bases]
    if compare.between_candidates:
        pairs += [
            (cands[i].name, cands[j].name)
            for i in range(len(cands))
            for j in range(i + 1, len(cands))
        ]
    return pairs


def _checks(
    d: np.ndarray,
    a: str,
    b: str,
    records: Sequence[UnitRecord],
    plan: Plan,
    data: Dataset,
) -> dict[str, JSONDict]:
    """Tests conditional on this data set, kept apart from the decision (issue 10)."""
    from ..compare import (
        delong_aucs,
        five_by_two_f,
        five_by_two_t,
        paired_ttest,
        sign_flip_test,
    )

    out: dict[str, JSONDict] = {}
    if np.ptp(d) > 0:
        out["uncorrected_t"] = {
            **paired_ttest(d).to_dict(),
            "label": "treats overlapping splits as independent",
        }
        out["sign_flip"] = {
            **sign_flip_test(d, random_state=plan.seed).to_dict(),
            "label": "treats overlapping splits as independent",
        }
    if plan.repeats == 5 and len(plan.folds) == 10 and plan.outer.n_splits == 2:
        d52 = d.reshape(5, 2)
        out["five_by_two_t"] = five_by_two_t(d52).to_dict()
        out["five_by_two_f"] = five_by_two_f(d52).to_dict()
    classes = data.classes
    if plan.metrics[0] == "roc_auc" and classes is not None and len(classes) == 2:
        da, db = _pooled_decisions(records, a), _pooled_decisions(records, b)
        if da is not None and db is not None and set(da) == set(db):
            idx = np.array(sorted(da))
            yb = (data.y[idx] == classes[1]).astype(int)
            dl = delong_aucs(
                yb, np.array([da[i] for i in idx]), np.array([db[i] for i in idx])
            )
            out["delong_pooled"] = {
                **{k: float(v) for k, v in dl.items()},
                "rows": "pooled out-of-fold decision values, repeat 0",
            }
    return out


def _compare_pair(
    a: str,
    b: str,
    records: Sequence[UnitRecord],
    plan: Plan,
    data: Dataset,
    compare: CompareSettings,
    power_alpha: float,
) -> ComparisonRow:
    from ..compare import assess_differences, bootstrap_interval, calibrated_df

    metric = plan.metrics[0]
    score = {
        (r.candidate, r.repeat, r.fold): r.test[metric] for r in records if r.perm == 0
    }
    d = np.array(
        [
            score[(a, f.repeat, f.fold)] - score[(b, f.repeat, f.fold)]
            for f in plan.folds
        ]
    )
    row = ComparisonRow(
        a=a,
        b=b,
        metric=metric,
        n_splits=int(d.size),
        per_split_differences=tuple(d.tolist()),
        mean_difference=float(d.mean()),
    )
    if d.size < 2:
        return row
    n_train, n_test = (round(x) for x in _ratio(plan))
    res = assess_differences(
        d,
        n_train=n_train,
        n_test=n_test,
        alpha=compare.alpha,
        power_alpha=power_alpha,
        smallest_difference=compare.smallest_difference,
        df=calibrated_df(plan.repeats, len(plan.folds) // plan.repeats),
    )
    checks = _checks(d, a, b, records, plan, data)
    if res.test is None or res.ci is None:
        return dataclasses.replace(row, reason=res.reason, conditional_checks=checks)
    lo, hi = metric_range(metric)
    width = hi - lo
    ci, clipped = _clip(res.ci, -width, width)
    blo, bhi = bootstrap_interval(d, random_state=plan.seed)
    return dataclasses.replace(
        row,
        test=res.test.test,
        statistic=res.test.statistic,
        df=res.test.df,
        p_value=res.test.p_value,
        ci=(ci[0], ci[1]),
        ci_method="95% corrected resampled t interval, df = max(repeats, folds) - 1"
        + ("; clipped to the possible range" if clipped else ""),
        ci_bootstrap=(blo, bhi),
        conditional_checks=checks,
        detectable_difference=res.detectable_difference,
        power=res.power,
        power_alpha=res.power_alpha,
        equivalence=None if res.equivalence is None else res.equivalence.to_dict(),
    )


def _statement(
    r: ComparisonRow, compare: CompareSettings, family: int, eq_p: float | None
) -> str:
    from ..compare import comparison_statement

    info = metric_info(r.metric)
    words = (info.better(), info.worse())
    if r.reason is not None:
        return comparison_statement(
            a=r.a,
            b=r.b,
            metric=info.label,
            mean_difference=r.mean_difference,
            ci=(r.mean_difference, r.mean_difference),
            p_adjusted=float("nan"),
            alpha=compare.alpha,
            correction=compare.correction,
            family_size=max(family, 1),
            reason=r.reason,
            direction_words=words,
        )
    assert r.ci is not None and r.p_adjusted is not None
    return comparison_statement(
        a=r.a,
        b=r.b,
        metric=info.label,
        mean_difference=r.mean_difference,
        ci=r.ci,
        p_adjusted=r.p_adjusted,
        alpha=compare.alpha,
        correction=compare.correction,
        family_size=family,
        detectable_difference=r.detectable_difference,
        power=r.power or 0.8,
        smallest_difference=compare.smallest_difference,
        equivalence_p=eq_p,
        direction_words=words,
    )


def _with_adjusted(
    rows: list[ComparisonRow], tested: list[int], compare: CompareSettings
) -> None:
    """Adjust the family's p-values (and equivalence p-values) and write sentences."""
    from ..compare import adjust_pvalues

    family = len(tested)
    adj = adjust_pvalues(
        [float(rows[i].p_value or 0.0) for i in tested], method=compare.correction
    )
    eq = [rows[i].equivalence for i in tested]
    eq_adj = None
    if all(e is not None and e["p_value"] is not None for e in eq):
        eq_adj = adjust_pvalues(
            [float(e["p_value"]) for e in eq if e is not None],
            method=compare.correction,
        )
    for k, (i, p) in enumerate(zip(tested, adj, strict=True)):
        r = dataclasses.replace(
            rows[i],
            p_adjusted=float(p),
            correction=compare.correction,
            family_size=family,
        )
        eq_p = None if eq_adj is None else float(eq_adj[k])
        if eq_p is not None and r.equivalence is not None:
            r = dataclasses.replace(
                r,
                equivalence={
                    **r.equivalence,
                    "p_adjusted": eq_p,
                    "equivalent": eq_p < compare.alpha,
                },
            )
        rows[i] = dataclasses.replace(r, statement=_statement(r, compare, family, eq_p))


def paired_comparisons(
    records: Sequence[UnitRecord], plan: Plan, data: Dataset, compare: CompareSettings
) -> list[ComparisonRow]:
    """Every candidate against every baseline (and each other, if asked), Holm-adjusted.

    Only comparisons with a decision test form the family; one that cannot be
    assessed (no spread in its differences) gets a reason and no claim. The
    detectable difference is computed at the strictest level of the family,
    ``alpha / family size``; equivalence p-values are adjusted over the same family
    by the same method.
    """
    first = [
        _compare_pair(a, b, records, plan, data, compare, compare.alpha)
        for a, b in _pairs(plan, compare)
    ]
    tested = [i for i, r in enumerate(first) if r.p_value is not None]
    family = len(tested)
    # the power level depends on the family size, known only now
    rows = [
        _compare_pair(r.a, r.b, records, plan, data, compare, compare.alpha / family)
        if r.p_value is not None and family > 1
        else r
        for r in first
    ]
    if tested:
        _with_adjusted(rows, tested, compare)
    for i, r in enumerate(rows):
        if r.reason is not None:
            rows[i] = dataclasses.replace(
                r, statement=_statement(r, compare, family, None)
            )
    return rows


def _budget(plan: Plan) -> JSONDict:
    budgets = {
        c.name: plan.settings_count(i)
        for i, c in enumerate(plan.candidates)
        if c.role != "reference"
    }
    equal = len(set(budgets.values())) <= 1
    return {
        "settings_per_search": budgets,
        "equal": equal,
        "same_outer_splits": True,
        "same_inner_splits": True,
        "note": (
            "every candidate and baseline was searched on the same outer and inner splits"
            + (
                ""
                if equal
                else "; the budgets differ, so the comparison favours the larger budget"
            )
        ),
    }


def add_uncertainty(
    out: JSONDict,
    plan: Plan,
    data: Dataset,
    records: Sequence[UnitRecord],
    compare: CompareSettings,
) -> None:
    out["score"].update(_score_interval(out["score"]["per_fold"], plan, plan.seed))
    for name, o in (out.get("other_metrics") or {}).items():
        o.update(_score_interval(o["per_fold"], plan, plan.seed, metric=name))
        o["rows"] = "the same outer test parts and chosen models as score"
    for c in out["candidates"]:
        c["score"].update(_score_interval(c["score"]["per_fold"], plan, plan.seed))
    if plan.repeats > 1:
        per_repeat = {}
        for r in range(plan.repeats):
            vals = [
                v
                for f, v in zip(plan.folds, out["score"]["per_fold"], strict=True)
                if f.repeat == r
            ]
            per_repeat[str(r)] = {
                "mean": float(np.mean(vals)),
                "sd": float(np.std(vals, ddof=1)) if len(vals) > 1 else None,
            }
        out["score"]["per_repeat"] = per_repeat
        out["score"]["repeat_seeds"] = sorted(
            {f.split_seed for f in plan.folds if f.split_seed is not None}
        )
    out["pooled"] = _pooled(records, data)
    out["comparisons"] = [
        r.to_json() for r in paired_comparisons(records, plan, data, compare)
    ]
    if any(c.role == "baseline" for c in plan.candidates):
        b = _budget(plan)
        out["budget"] = b
        if not b["equal"]:
            warnings.warn(
                f"candidates and baselines were not searched with the same budget: {b['settings_per_search']}",
                BudgetWarning,
                stacklevel=3,
            )
