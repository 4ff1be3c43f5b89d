"""Random-label control: foldwall against hand-written scikit-learn, side by side.

Part 1 (speed, issue 3): the standard workload (bench_nested.py) with m permutations.
Hand-written: ``permutation_test_score(GridSearchCV(pipe, grid, cv=inner), X, y,
cv=outer, n_permutations=m, n_jobs=J)``, which re-runs the whole nested search for
every permutation. foldwall: ``wrap(..., n_permutations=m, n_jobs=J)``. Both re-run
selection and tuning per permutation; the ratio of wall times is printed.

Part 2 (early stopping): on null data, the number of fits with the sequential rule
(Besag & Clifford 1991, h = 10) against a fixed m, and whether the decision at
alpha = 0.05 is the same.

    python bench/bench_control.py [--permutations 100] [--jobs 2] [--skip-hand]
"""

from __future__ import annotations

import argparse
import json
import os
import time

import numpy as np
from bench_nested import workload
from sklearn.linear_model import LogisticRegression
from sklearn.model_selection import GridSearchCV, permutation_test_score
from sklearn.pipeline import Pipeline
from sklearn.preprocessing import StandardScaler

import foldwall


def part1(m: int, jobs: int, skip_hand: bool) -> dict:
    X, y, pipe, grid, outer, inner = workload()
    t0 = time.perf_counter()
    res = foldwall.wrap(
        pipe,
        space=grid,
        metric="roc_auc",
        outer=outer,
        inner=inner,
        n_jobs=jobs,
        n_permutations=m,
    ).run(X, y)
    t_fw = time.perf_counter() - t0
    out = {
        "permutations": m,
        "jobs": jobs,
        "foldwall_seconds": t_fw,
        "foldwall_p": res.control["p_value"],
        "foldwall_null_mean": res.control["null_mean"],
        "foldwall_cpu_efficiency": res.timing["busy_seconds"]
        / (jobs * res.timing["wall_seconds"]),
    }
    if not skip_hand:
        t0 = time.perf_counter()
        score, perm_scores, p = permutation_test_score(
            GridSearchCV(pipe, grid, cv=inner, scoring="roc_auc"),
            X,
            y,
            cv=outer,
            scoring="roc_auc",
            n_permutations=m,
            n_jobs=jobs,
            random_state=0,
        )
        t_hand = time.perf_counter() - t0
        out.update(
            {
                "hand_seconds": t_hand,
                "hand_p": float(p),
                "hand_null_mean": float(np.mean(perm_scores)),
                "ratio_foldwall_to_hand": t_fw / t_hand,
            }
        )
    return out


def part2(jobs: int, m: int = 200, datasets: int = 5) -> dict:
    rows = []
    for k in range(datasets):
        rng = np.random.default_rng(100 + k)
        X = rng.normal(size=(80, 30))
        y = rng.permutation(np.repeat([0, 1], 40))
        pipe = Pipeline([("scale", StandardScaler()), ("model", LogisticRegression())])
        kw = dict(
            space={"model__C": [0.01, 0.1, 1.0]},
            metric="roc_auc",
            outer=5,
            inner=3,
            n_jobs=jobs,
            random_state=k,
            n_permutations=m,
        )
        full = foldwall.wrap(pipe, **kw).run(X, y)
        early = foldwall.wrap(pipe, stop_early=True, **kw).run(X, y)
        rows.append(
            {
                "dataset": k,
                "fixed_fits": full.audit["fits"],
                "early_fits": early.audit["fits"],
                "fixed_p": full.control["p_value"],
                "early_p": early.control["p_value"],
                "early_permutations": early.control["permutations"],
                "same_decision": (full.control["p_value"] <= 0.05)
                == (early.control["p_value"] <= 0.05),
            }
        )
    ratio = float(
        np.sum([r["fixed_fits"] for r in rows])
        / np.sum([r["early_fits"] for r in rows])
    )
    return {
        "null_datasets": rows,
        "fits_ratio_fixed_to_early": ratio,
        "all_same_decision": all(r["same_decision"] for r in rows),
        "fixed_permutations": m,
    }


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--permutations", type=int, default=100)
    ap.add_argument("--jobs", type=int, default=os.cpu_count() or 1)
    ap.add_argument("--skip-hand", action="store_true")
    args = ap.parse_args()
    print(
        json.dumps(
            {
                "speed": part1(args.permutations, args.jobs, args.skip_hand),
                "early_stopping": part2(args.jobs),
            },
            indent=2,
        )
    )


if __name__ == "__main__":
    main()
