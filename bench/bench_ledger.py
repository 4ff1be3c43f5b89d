"""Many studies on one table: the best unadjusted control p against the ledger's Holm p.

A researcher tries K variants of a study on the same table (model families x feature
subsets), each with its own random-label control, and keeps the best. On pure-noise
tables every control p-value is valid alone, but the smallest of K is not: the rate at
which min(p) <= 0.05 is far above 0.05. The ledger records every study, and the
best study's p-value adjusted over the whole family (Holm 1979) should reject at most
5% of the tables.

Workload per table: 40 rows, 10 standard-normal features, labels 20/20 drawn
independently of X; each variant is a ``foldwall.wrap`` study with outer=3, inner=2,
metric roc_auc, a grid of at most two settings, ``n_permutations=m`` (default 19),
``n_jobs=1``. Every study is appended to the table's ledger
(``bench/out/ledger/table_NNN.ledger.sqlite``); the figures come from
``foldwall.store.control_family`` on those files. Tables run in a process pool.

Note the floor: with m permutations a control p-value is at least 1/(m + 1), and Holm
multiplies the smallest of K by K, so no adjusted p-value can be below K/(m + 1). With
K = 20 and m = 19 that is 1: the adjusted rate is 0 by construction. Run a second
configuration with K/(m + 1) <= 0.05 (e.g. ``--variants 5 --permutations 99``) to
see the adjusted rate when rejections are possible. ``--fixed`` makes that affordable:
every variant keeps its family's default settings (no grid, so no inner search), and
only the outer folds and the control remain; the ledgers go to ``k5_m99_fixed``.

Resuming: only the variants a table's ledger does not hold yet (same study names and
hashes) are run and appended; a ledger holding anything else is started afresh. Every
study is deterministic (seeded by the table's number), so the summary - always rebuilt
from all the tables' ledgers - is the same as after one uninterrupted run. Seconds per
study are those of the studies the invocation ran.

    python bench/bench_ledger.py [--tables 100] [--variants 20] [--permutations 19]
                                 [--jobs 2] [--fixed] [--quick] [--out bench/out]
"""

from __future__ import annotations

import argparse
import hashlib
import json
import os
import sys
import time
import warnings
from concurrent.futures import ProcessPoolExecutor, as_completed
from pathlib import Path
from typing import Any

import numpy as np
from scipy import stats

N_ROWS = 40
N_FEATURES = 10
ALPHA = 0.05
# p-values are compared with alpha plus a hair, so that K * (1 / (m + 1)) = alpha counts
# as a rejection whatever the last bit of the floating-point product.
AT_MOST_ALPHA = ALPHA * (1 + 1e-9)


def _families() -> dict[str, tuple[Any, dict[str, list[Any]] | None]]:
    from sklearn.linear_model import LogisticRegression
    from sklearn.naive_bayes import GaussianNB
    from sklearn.neighbors import KNeighborsClassifier
    from sklearn.pipeline import make_pipeline
    from sklearn.preprocessing import StandardScaler
    from sklearn.tree import DecisionTreeClassifier

    return {
        "logistic": (
            make_pipeline(StandardScaler(), LogisticRegression()),
            {"logisticregression__C": [0.1, 1.0]},
        ),
        "knn": (
            make_pipeline(StandardScaler(), KNeighborsClassifier()),
            {"kneighborsclassifier__n_neighbors": [3, 7]},
        ),
        "tree": (
            DecisionTreeClassifier(random_state=0),
            {"max_depth": [1, 2]},
        ),
        "naive_bayes": (GaussianNB(), None),
    }


SUBSETS: dict[str, list[int]] = {
    "all": list(range(N_FEATURES)),
    "first_half": list(range(N_FEATURES // 2)),
    "second_half": list(range(N_FEATURES // 2, N_FEATURES)),
    "even": list(range(0, N_FEATURES, 2)),
    "odd": list(range(1, N_FEATURES, 2)),
}
FAMILY_ORDER = ("logistic", "knn", "tree", "naive_bayes")


def variants(k: int) -> list[tuple[str, str]]:
    """The first k of the 20 distinct (family, subset) pairs; any prefix mixes both.

    Variant i is family i mod 4 with subset i mod 5: as 4 and 5 have no common
    factor, the 20 pairs are all different (Chinese remainder theorem).
    """
    subsets = list(SUBSETS)
    n = len(FAMILY_ORDER) * len(subsets)
    pairs = [
        (FAMILY_ORDER[i % len(FAMILY_ORDER)], subsets[i % len(subsets)])
        for i in range(n)
    ]
    assert len(set(pairs)) == n
    if k > n:
        raise SystemExit(f"--variants must be at most {n}")
    return pairs[:k]


def noise_table(index: int) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng([20140, index])
    X = rng.normal(size=(N_ROWS, N_FEATURES))
    y = rng.permutation(np.repeat([0, 1], N_ROWS // 2))
    return X, y


def table_hash(X: np.ndarray, y: np.ndarray) -> str:
    h = hashlib.sha256()
    h.update(np.ascontiguousarray(X, dtype=np.float64).tobytes())
    h.update(np.ascontiguousarray(y, dtype=np.int64).tobytes())
    return h.hexdigest()


def ledger_of(ledger_dir: str | Path, index: int) -> Path:
    return Path(ledger_dir) / f"table_{index:03d}.ledger.sqlite"


def study_hash(name: str, m: int, index: int, fixed: bool = False) -> str:
    text = f"{name}|{m}|{index}" + ("|fixed" if fixed else "")
    return hashlib.sha256(text.encode()).hexdigest()


def table_row(index: int, n_variants: int, m: int, ledger_dir: str) -> dict[str, Any]:
    """The figures of one table, read from its ledger (which must be complete)."""
    from foldwall.store import control_family, read_entries

    X, y = noise_table(index)
    entries = read_entries(ledger_of(ledger_dir, index), table_hash(X, y))
    family_ = control_family(entries)
    if family_.size != n_variants:
        raise SystemExit(
            f"table {index}: the ledger's family has {family_.size} studies, "
            f"expected {n_variants}"
        )
    best = int(np.argmin(family_.p_values))
    return {
        "table": index,
        "p_values": list(family_.p_values),
        "adjusted": list(family_.adjusted),
        "best_study": family_.study_names[best],
        "best_p": float(min(family_.p_values)),
        "best_adjusted": float(min(family_.adjusted)),
        "first_p": float(family_.p_values[0]),
    }


def missing_variants(
    index: int, n_variants: int, m: int, ledger_dir: str, fixed: bool = False
) -> list[tuple[str, str]] | None:
    """The variants the table's ledger does not hold yet.

    ``None`` when the ledger holds anything else (another configuration, a study
    without a control, an unreadable file): the table is then run afresh.
    """
    from foldwall.exceptions import RunError
    from foldwall.store import read_entries

    todo = variants(n_variants)
    ledger = ledger_of(ledger_dir, index)
    if not ledger.is_file():
        return todo
    X, y = noise_table(index)
    try:
        entries = read_entries(ledger, table_hash(X, y))
    except RunError:
        return None
    wanted = {
        (f"{f}/{s}", study_hash(f"{f}/{s}", m, index, fixed)): (f, s) for f, s in todo
    }
    held = {(e.study_name, e.study_hash) for e in entries}
    if not held <= set(wanted) or any(e.control_p is None for e in entries):
        return None
    return [v for k, v in wanted.items() if k not in held]


def run_table(
    index: int, n_variants: int, m: int, ledger_dir: str, fixed: bool = False
) -> dict[str, Any]:
    """Run the variants the table's ledger lacks, append each to the ledger."""
    import foldwall
    from foldwall.exceptions import FoldwallWarning
    from foldwall.store import LedgerEntry, append_entry

    warnings.simplefilter("ignore", FoldwallWarning)  # small folds are the point here
    X, y = noise_table(index)
    key = table_hash(X, y)
    ledger = ledger_of(ledger_dir, index)
    todo = missing_variants(index, n_variants, m, ledger_dir, fixed)
    if todo is None:
        for suffix in ("", "-wal", "-shm"):
            Path(str(ledger) + suffix).unlink(missing_ok=True)
        todo = variants(n_variants)
    families = _families()
    seconds: list[float] = []
    for family, subset in todo:
        t0 = time.perf_counter()
        estimator, space = families[family]
        if fixed:
            space = None
        study = foldwall.wrap(
            estimator,
            space,
            metric="roc_auc",
            outer=3,
            inner=2,
            n_permutations=m,
            n_jobs=1,
            random_state=index,
        )
        result = study.run(X[:, SUBSETS[subset]], y)
        name = f"{family}/{subset}"
        append_entry(
            ledger,
            LedgerEntry(
                table_hash=key,
                kind="run",
                study_name=name,
                study_hash=study_hash(name, m, index, fixed),
                metric="roc_auc",
                score=float(result.score),
                control_p=float(result.control["p_value"]),
                foldwall_version=foldwall.__version__,
            ),
        )
        seconds.append(time.perf_counter() - t0)
    row = table_row(index, n_variants, m, ledger_dir)
    row["study_seconds"] = seconds
    return row


def rate(hits: int, n: int) -> dict[str, Any]:
    """A rate with two-sided 95% Wilson and Clopper-Pearson intervals.

    Also the one-sided 95% Clopper-Pearson upper bound (for "at most alpha").
    """
    test = stats.binomtest(hits, n)
    wilson = test.proportion_ci(confidence_level=0.95, method="wilson")
    ci = test.proportion_ci(confidence_level=0.95, method="exact")
    upper = stats.binomtest(hits, n, alternative="less").proportion_ci(
        confidence_level=0.95, method="exact"
    )
    return {
        "hits": hits,
        "n": n,
        "rate": hits / n,
        "wilson95": [float(wilson.low), float(wilson.high)],
        "ci95": [float(ci.low), float(ci.high)],
        "upper95_one_sided": float(upper.high),
    }


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--tables", type=int, default=100)
    ap.add_argument("--variants", type=int, default=20)
    ap.add_argument("--permutations", type=int, default=19)
    ap.add_argument("--jobs", type=int, default=min(2, os.cpu_count() or 1))
    ap.add_argument("--out", default="bench/out")
    ap.add_argument(
        "--fixed",
        action="store_true",
        help="every variant without a grid (no inner search): cheaper studies",
    )
    ap.add_argument(
        "--quick",
        action="store_true",
        help="4 tables x 4 variants x 9 permutations: checks the script, no figures",
    )
    args = ap.parse_args()
    if args.quick:
        args.tables, args.variants, args.permutations = 4, 4, 9
    out = Path(args.out)
    config_name = f"k{args.variants}_m{args.permutations}"
    if args.fixed:
        config_name += "_fixed"
    ledger_dir = out / "ledger" / config_name
    ledger_dir.mkdir(parents=True, exist_ok=True)
    started = time.time()
    t0 = time.perf_counter()
    config = (args.variants, args.permutations, str(ledger_dir))
    todo = [
        i for i in range(args.tables) if missing_variants(i, *config, args.fixed) != []
    ]
    print(
        f"{args.tables - len(todo)} of {args.tables} tables already complete in "
        f"{ledger_dir}; running {len(todo)}",
        file=sys.stderr,
        flush=True,
    )
    study_seconds: list[float] = []
    with ProcessPoolExecutor(max_workers=args.jobs) as pool:
        futures = [pool.submit(run_table, i, *config, args.fixed) for i in todo]
        for done, future in enumerate(as_completed(futures), 1):
            finished = future.result()
            study_seconds += finished["study_seconds"]
            elapsed = time.perf_counter() - t0
            print(
                f"[{done}/{len(todo)}] table {finished['table']}: "
                f"{elapsed:.0f} s elapsed, "
                f"~{elapsed / done * (len(todo) - done):.0f} s left",
                file=sys.stderr,
                flush=True,
            )
    # The figures always come from every table's ledger, resumed or not.
    rows = [table_row(i, *config) for i in range(args.tables)]
    n = len(rows)
    floor = min(1.0, args.variants / (args.permutations + 1))
    summary = {
        "workload": {
            "tables": n,
            "variants_per_table": args.variants,
            "variants": [f"{f}/{s}" for f, s in variants(args.variants)],
            "rows": N_ROWS,
            "features": N_FEATURES,
            "labels": "20/20, independent of X",
            "outer": 3,
            "inner": "none (fixed settings)" if args.fixed else 2,
            "metric": "roc_auc",
            "permutations": args.permutations,
            "jobs": args.jobs,
        },
        "alpha": ALPHA,
        "smallest_attainable_adjusted_p": floor,
        "first_study_p_le_alpha": rate(
            sum(r["first_p"] <= AT_MOST_ALPHA for r in rows), n
        ),
        "best_unadjusted_p_le_alpha": rate(
            sum(r["best_p"] <= AT_MOST_ALPHA for r in rows), n
        ),
        "best_ledger_adjusted_p_le_alpha": rate(
            sum(r["best_adjusted"] <= AT_MOST_ALPHA for r in rows), n
        ),
        "mean_control_p": float(np.mean([p for r in rows for p in r["p_values"]])),
        "share_of_control_p_le_alpha": float(
            np.mean([p <= AT_MOST_ALPHA for r in rows for p in r["p_values"]])
        ),
        "tables_run_by_this_invocation": len(todo),
        "wall_seconds_this_invocation": time.perf_counter() - t0,
        "studies_run_by_this_invocation": len(study_seconds),
        "seconds_per_study_this_invocation": {
            "median": float(np.median(study_seconds)) if study_seconds else None,
            "mean": float(np.mean(study_seconds)) if study_seconds else None,
        },
        "started": time.strftime("%Y-%m-%d %H:%M:%S", time.localtime(started)),
        "machine": "shared 2-core machine, other jobs running (times are indicative)",
    }
    name = f"bench_ledger_{config_name}"
    if args.quick:
        name += "_quick"
    (out / f"{name}.json").write_text(
        json.dumps({"summary": summary, "tables": rows}, indent=1)
    )
    print(json.dumps(summary, indent=2))


if __name__ == "__main__":
    main()
