"""Nested study: foldwall against hand-written scikit-learn, side by side in one run.

Workload (issue 2): 200 samples x 500 features (make_classification, 10 informative),
StandardScaler -> SelectKBest(k in 10, 50, 100) -> LogisticRegression(C in 5 values
on a log grid), 5 x 5 nested cross-validation, ROC AUC.

The hand-written version is ``cross_val_score(GridSearchCV(pipe, grid, cv=inner), X, y,
cv=outer)``; it is given its best n_jobs placement (outer or inner), measured here.
Both use the same splitter objects, and the script checks that the fold scores agree.

    python bench/bench_nested.py [--repeats 3] [--jobs 2]
"""

from __future__ import annotations

import argparse
import json
import os
import time

import numpy as np
from sklearn.datasets import make_classification
from sklearn.feature_selection import SelectKBest
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import GridSearchCV, StratifiedKFold, cross_val_score
from sklearn.pipeline import Pipeline
from sklearn.preprocessing import StandardScaler

import foldwall


def workload():
    X, y = make_classification(
        n_samples=200, n_features=500, n_informative=10, random_state=0
    )
    pipe = Pipeline(
        [
            ("scale", StandardScaler()),
            ("select", SelectKBest()),
            ("model", LogisticRegression(max_iter=1000)),
        ]
    )
    grid = {"select__k": [10, 50, 100], "model__C": list(np.logspace(-2, 2, 5))}
    outer = StratifiedKFold(5, shuffle=True, random_state=1)
    inner = StratifiedKFold(5, shuffle=True, random_state=2)
    return X, y, pipe, grid, outer, inner


def hand_written(outer_jobs, inner_jobs):
    X, y, pipe, grid, outer, inner = workload()
    t0 = time.perf_counter()
    scores = cross_val_score(
        GridSearchCV(pipe, grid, cv=inner, scoring="roc_auc", n_jobs=inner_jobs),
        X,
        y,
        cv=outer,
        scoring="roc_auc",
        n_jobs=outer_jobs,
    )
    return time.perf_counter() - t0, scores


def with_foldwall(jobs, share=True):
    X, y, pipe, grid, outer, inner = workload()
    t0 = time.perf_counter()
    res = foldwall.wrap(
        pipe,
        space=grid,
        metric="roc_auc",
        outer=outer,
        inner=inner,
        n_jobs=jobs,
        share_fits=share,
    ).run(X, y)
    return time.perf_counter() - t0, np.array(res.fold_scores), res


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--jobs", type=int, default=os.cpu_count() or 1)
    args = ap.parse_args()
    J = args.jobs
    # Warm up the process pools and imports once, outside the timings.
    with_foldwall(J)
    hand_written(J, None)
    rows = {
        "hand: outer n_jobs": [],
        "hand: inner n_jobs": [],
        "foldwall": [],
        "foldwall (no sharing)": [],
    }
    eff, eff_fit = [], []
    for _ in range(args.repeats):
        t, s_out = hand_written(J, None)
        rows["hand: outer n_jobs"].append(t)
        t, s_in = hand_written(None, J)
        rows["hand: inner n_jobs"].append(t)
        t, s_fw, res = with_foldwall(J)
        rows["foldwall"].append(t)
        eff.append(res.timing["busy_seconds"] / (J * res.timing["wall_seconds"]))
        eff_fit.append(res.timing["fit_seconds"] / (J * res.timing["wall_seconds"]))
        t, _, _ = with_foldwall(J, share=False)
        rows["foldwall (no sharing)"].append(t)
        assert np.allclose(s_fw, s_out, atol=1e-12) and np.allclose(
            s_fw, s_in, atol=1e-12
        ), "scores differ"
    med = {k: float(np.median(v)) for k, v in rows.items()}
    best_hand = min(med["hand: outer n_jobs"], med["hand: inner n_jobs"])
    out = {
        "workload": "200x500, scaler -> SelectKBest(k: 10/50/100) -> LogisticRegression(C: 5 log values), 5x5 nested, roc_auc",
        "jobs": J,
        "repeats": args.repeats,
        "median_seconds": med,
        "ratio_foldwall_to_best_hand": med["foldwall"] / best_hand,
        "ratio_foldwall_no_sharing_to_best_hand": med["foldwall (no sharing)"]
        / best_hand,
        "foldwall_cpu_efficiency_tasks": float(np.median(eff)),
        "foldwall_cpu_efficiency_fits_only": float(np.median(eff_fit)),
        "fold_scores_equal": True,
    }
    print(json.dumps(out, indent=2))


if __name__ == "__main__":
    main()
