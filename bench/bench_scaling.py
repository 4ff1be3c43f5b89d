"""Scaling and memory: wall time against samples, features and permutations; peak RSS.

Part 1 (memory, issue 5): peak resident memory of a run with 1000 permutations
against one with 10, each in a fresh process (--jobs 1, so the one process holds
everything), on a small workload. The ratio must stay near 1: unit results stream
to the store and are dropped; only the list of null scores grows.

Part 2 (scaling table): wall time of a reduced nested workload (scaler ->
SelectKBest(k=20) -> LogisticRegression(C in 0.1, 1), 3 x 3 nested, ROC AUC,
--jobs 2) while one of samples (100..2000), features (50..5000) or permutations
(10..1000) grows and the others stay at 200 samples, 500 features, 10 permutations.

    python bench/bench_scaling.py [--skip-memory] [--skip-scaling] [--quick]
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile

CHILD = r"""
import json, resource, sys, time
import numpy as np
from sklearn.linear_model import LogisticRegression
from sklearn.feature_selection import SelectKBest
from sklearn.pipeline import Pipeline
from sklearn.preprocessing import StandardScaler
from sklearn.datasets import make_classification
import foldwall
n, p, m, jobs, store_dir = int(sys.argv[1]), int(sys.argv[2]), int(sys.argv[3]), int(sys.argv[4]), sys.argv[5]
X, y = make_classification(n_samples=n, n_features=p, n_informative=min(10, p), random_state=0)
pipe = Pipeline([("scale", StandardScaler()), ("select", SelectKBest(k=min(20, p))),
                 ("model", LogisticRegression(max_iter=500))])
study = foldwall.wrap(pipe, space={"model__C": [0.1, 1.0]}, metric="roc_auc", outer=3, inner=3, n_jobs=jobs,
                      n_permutations=m)
store = None
if store_dir != "-":
    from foldwall.store import RunStore
    store = RunStore.create(store_dir + "/store.sqlite", meta={})
t0 = time.perf_counter()
res = study.run(X, y, store=store)
wall = time.perf_counter() - t0
print(json.dumps({"wall": wall, "maxrss_kib": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss,
                  "p": res.control["p_value"] if res.control else None}))
"""


def child(n: int, p: int, m: int, jobs: int, store: bool) -> dict:
    with tempfile.TemporaryDirectory() as d:
        out = subprocess.run(
            [
                sys.executable,
                "-c",
                CHILD,
                str(n),
                str(p),
                str(m),
                str(jobs),
                d if store else "-",
            ],
            capture_output=True,
            text=True,
            check=True,
        )
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--skip-memory", action="store_true")
    ap.add_argument("--skip-scaling", action="store_true")
    ap.add_argument(
        "--quick", action="store_true", help="fewer points (for a smoke run)"
    )
    args = ap.parse_args()
    out: dict = {}
    if not args.skip_memory:
        small = child(60, 20, 10, 1, True)
        big = child(60, 20, 10 if args.quick else 1000, 1, True)
        out["memory"] = {
            "workload": "60 x 20, 3x3 nested, 2 settings, --jobs 1, with the store",
            "maxrss_kib_10": small["maxrss_kib"],
            "maxrss_kib_1000": big["maxrss_kib"],
            "ratio": big["maxrss_kib"] / small["maxrss_kib"],
            "wall_10": small["wall"],
            "wall_1000": big["wall"],
        }
        print(json.dumps(out["memory"]), flush=True)
    if not args.skip_scaling:
        jobs = min(2, os.cpu_count() or 1)
        grid = {
            "samples": [
                (n, 500, 10)
                for n in ([100, 2000] if args.quick else [100, 250, 500, 1000, 2000])
            ],
            "features": [
                (200, p, 10)
                for p in ([50, 5000] if args.quick else [50, 500, 1000, 2000, 5000])
            ],
            "permutations": [
                (200, 500, m)
                for m in ([10, 100] if args.quick else [10, 100, 300, 1000])
            ],
        }
        table = {}
        for axis, points in grid.items():
            table[axis] = []
            for n, p, m in points:
                r = child(n, p, m, jobs, False)
                table[axis].append(
                    {
                        "samples": n,
                        "features": p,
                        "permutations": m,
                        "wall_seconds": r["wall"],
                    }
                )
                print(json.dumps({axis: table[axis][-1]}), flush=True)
        out["scaling"] = table
    print(json.dumps(out, indent=2))


if __name__ == "__main__":
    main()
