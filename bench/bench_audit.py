"""Speed of the table audits on 2,000 rows x 500 features (issue 11).

Workload: an invented table of 2,000 rows x 500 numeric features (make_classification,
10 informative, class balance 50/50), with two exact and two near duplicates planted, an
acquisition column ``site`` (4 levels, shifting 20 features) and a time column. The whole
table audit runs: duplicates and near duplicates, id-like columns, tight clusters, the
four leaky-column audits (one-column in-fold scores over 5 outer folds), time drift, and
the confound statistics (site -> outcome, features -> site, 19 random-label shuffles
each). Math libraries run with one thread by default (``--threads``), as foldwall runs
its work (several threads per BLAS call thrash on a busy 2-core machine). Each repetition runs in a fresh process so imports and first-call costs count.

    python bench/bench_audit.py [--repeats 3] [--rows 2000] [--features 500] [--threads 1]

Part 2 times the command itself: the same table written to a CSV file with a study file
(``data.id``, ``data.acquisition: [site]``, ``data.time``), and ``foldwall audit STUDY``
run as a subprocess (start-up, imports, reading the table, compiling the plan and all
audits), 3 times.

Prints one JSON line per repetition (wall time of the whole call and of each part) and a
summary with the median. The target is under 10 s for ``foldwall audit`` on 2 cores.
"""

from __future__ import annotations

import argparse
import json
import resource
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

CHILD = r"""
import json, sys, time
t_start = time.perf_counter()
import numpy as np, pandas as pd
from threadpoolctl import threadpool_limits
from sklearn.datasets import make_classification
from foldwall.audit import audit_table
n, p, THREADS = int(sys.argv[1]), int(sys.argv[2]), int(sys.argv[3])
X, y = make_classification(n_samples=n, n_features=p, n_informative=10, random_state=0)
rng = np.random.default_rng(0)
X[n - 1] = X[0]
X[n - 2] = X[1]
X[n - 3] = X[2] + 0.001 * rng.normal(size=p)
X[n - 4] = X[3] + 0.001 * rng.normal(size=p)
site = rng.choice(["site_1", "site_2", "site_3", "site_4"], n)
X[:, :20] += pd.Series(site).map({"site_1": 0.5, "site_2": 0.0, "site_3": -0.5, "site_4": 1.0}).to_numpy()[:, None]
frame = pd.DataFrame(X, columns=[f"f{j}" for j in range(p)])
visit = rng.uniform(0, 1000, n)
t_ready = time.perf_counter()
with threadpool_limits(limits=THREADS):
    t0 = time.perf_counter()
    audit = audit_table(frame, y, acquisition=pd.DataFrame({"site": site}), time=visit,
                        time_name="visit", n_permutations=19, random_state=0)
    wall = time.perf_counter() - t0
sev = {}
for c in audit.checks:
    sev[c.check] = max(sev.get(c.check, "info"), c.severity, key=["info", "warning", "problem"].index)
import resource
ru = resource.getrusage(resource.RUSAGE_SELF)
print(json.dumps({"wall_audit": wall, "cpu_seconds_process": ru.ru_utime + ru.ru_stime,
                  "wall_with_imports_and_data": time.perf_counter() - t_start,
                  "setup": t_ready - t_start, "parts": audit.seconds, "severities": sev}))
"""


STUDY = """\
name: audit benchmark (invented data)
data:
  table: table.csv
  target: y
  id: case_id
  acquisition: [site]
  time: visit
candidates:
  - name: logit
    model: {name: model, use: sklearn.linear_model.LogisticRegression}
outer: {folds: 5}
inner: {folds: 3}
metrics: [roc_auc]
"""

WRITE = r"""
import sys
import numpy as np, pandas as pd
from sklearn.datasets import make_classification
n, p, out = int(sys.argv[1]), int(sys.argv[2]), sys.argv[3]
X, y = make_classification(n_samples=n, n_features=p, n_informative=10, random_state=0)
rng = np.random.default_rng(0)
frame = pd.DataFrame(X.round(6), columns=[f"f{j}" for j in range(p)])
frame.insert(0, "case_id", [f"case{i:05d}" for i in range(n)])
frame.insert(1, "site", rng.choice(["site_1", "site_2", "site_3", "site_4"], n))
frame.insert(2, "visit", rng.uniform(0, 1000, n).round(2))
frame["y"] = y
frame.to_csv(out, index=False)
"""


def cli_runs(rows: int, features: int, repeats: int) -> list[float]:
    foldwall = shutil.which("foldwall") or str(Path(sys.executable).parent / "foldwall")
    walls = []
    with tempfile.TemporaryDirectory() as d:
        subprocess.run(
            [sys.executable, "-c", WRITE, str(rows), str(features), f"{d}/table.csv"],
            check=True,
        )
        Path(d, "study.yaml").write_text(STUDY, encoding="utf-8")
        for _ in range(repeats):
            before = resource.getrusage(resource.RUSAGE_CHILDREN)
            t0 = time.perf_counter()
            subprocess.run(
                [foldwall, "audit", f"{d}/study.yaml", "--json"],
                check=True,
                capture_output=True,
            )
            walls.append(time.perf_counter() - t0)
            after = resource.getrusage(resource.RUSAGE_CHILDREN)
            cpu = (after.ru_utime - before.ru_utime) + (
                after.ru_stime - before.ru_stime
            )
            print(
                json.dumps({"wall_foldwall_audit": walls[-1], "cpu_seconds": cpu}),
                flush=True,
            )
    return walls


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--rows", type=int, default=2000)
    ap.add_argument("--features", type=int, default=500)
    ap.add_argument(
        "--threads",
        type=int,
        default=1,
        help="math-library threads (foldwall runs its work with 1 per worker)",
    )
    args = ap.parse_args()
    runs = []
    for _ in range(args.repeats):
        out = subprocess.run(
            [
                sys.executable,
                "-c",
                CHILD,
                str(args.rows),
                str(args.features),
                str(args.threads),
            ],
            capture_output=True,
            text=True,
            check=True,
        )
        r = json.loads(out.stdout.strip().splitlines()[-1])
        runs.append(r)
        print(json.dumps(r), flush=True)
    cli = sorted(cli_runs(args.rows, args.features, args.repeats))
    walls = sorted(r["wall_audit"] for r in runs)
    print(
        json.dumps(
            {
                "workload": f"{args.rows} x {args.features}, all table audits, 5 outer "
                "folds, 19 shuffles per confound statistic, "
                f"{args.threads} math-library thread(s)",
                "repeats": args.repeats,
                "median_wall_audit": walls[len(walls) // 2],
                "max_wall_audit": walls[-1],
                "median_wall_foldwall_audit_command": cli[len(cli) // 2],
                "max_wall_foldwall_audit_command": cli[-1],
                "target_seconds": 10,
            },
            indent=2,
        )
    )


if __name__ == "__main__":
    main()
