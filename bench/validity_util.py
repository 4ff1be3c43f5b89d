"""Shared helpers of the validity benchmarks (bench/bench_*_null.py, power, interval).

Rates come with Wilson 95% intervals and a one-sided binomial check against the
nominal level; raw outputs go to bench/out/ (git-ignored) as JSON.
"""

from __future__ import annotations

import json
import os
import platform
import sys
import time
from collections.abc import Callable, Iterable
from pathlib import Path
from typing import Any

os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("MKL_NUM_THREADS", "1")

from scipy.stats import binom, binomtest  # noqa: E402

# BENCH_OUT lets a run from a snapshot of the tree write into the working tree's bench/out
OUT = Path(os.environ.get("BENCH_OUT", Path(__file__).resolve().parent / "out"))


def wilson(hits: int, n: int) -> list[float]:
    """Wilson score 95% interval for a binomial proportion."""
    ci = binomtest(hits, n).proportion_ci(confidence_level=0.95, method="wilson")
    return [float(ci.low), float(ci.high)]


def rate(hits: int, n: int, *, nominal: float | None = None) -> dict[str, Any]:
    """Rate with Wilson interval; with ``nominal``, whether it stays within level.

    ``within_level`` uses the rule of the issue: the rate may exceed ``nominal`` by
    at most the one-sided 95% binomial bound, i.e. the count must not be above the
    95% quantile of Binomial(n, nominal).
    """
    out: dict[str, Any] = {
        "hits": hits,
        "n": n,
        "rate": hits / n if n else None,
        "wilson_95": wilson(hits, n) if n else None,
    }
    if nominal is not None and n:
        limit = int(binom.ppf(0.95, n, nominal))
        out["nominal"] = nominal
        out["max_hits_at_level"] = limit
        out["within_level"] = hits <= limit
        out["p_above_level"] = float(
            binomtest(hits, n, nominal, alternative="greater").pvalue
        )
    return out


def fmt_rate(r: dict[str, Any]) -> str:
    lo, hi = r["wilson_95"]
    return f"{r['hits']}/{r['n']} = {r['rate']:.3f} ({lo:.3f} to {hi:.3f})"


def parallel_map(
    fn: Callable[[Any], Any], items: Iterable[Any], jobs: int
) -> list[Any]:
    """Map over a process pool (one task per data set); keeps the input order."""
    items = list(items)
    if jobs <= 1:
        return [fn(i) for i in items]
    from joblib import Parallel, delayed

    return list(
        Parallel(n_jobs=jobs, batch_size=1, verbose=5)(delayed(fn)(i) for i in items)
    )


def environment() -> dict[str, Any]:
    import numpy
    import scipy
    import sklearn

    import foldwall

    return {
        "python": sys.version.split()[0],
        "platform": platform.platform(),
        "numpy": numpy.__version__,
        "scipy": scipy.__version__,
        "scikit-learn": sklearn.__version__,
        "foldwall": getattr(foldwall, "__version__", "?"),
        "cpus": os.cpu_count(),
        "date": time.strftime("%Y-%m-%d %H:%M"),
    }


def save(name: str, payload: dict[str, Any]) -> Path:
    OUT.mkdir(parents=True, exist_ok=True)
    path = OUT / f"{name}.json"
    payload = {**payload, "environment": environment()}
    path.write_text(json.dumps(payload, indent=1, default=float))
    return path


def table(headers: list[str], rows: list[list[str]]) -> str:
    """A markdown table (pasted into docs/validity.md)."""
    lines = ["| " + " | ".join(headers) + " |", "|" + "---|" * len(headers)]
    lines += ["| " + " | ".join(r) + " |" for r in rows]
    return "\n".join(lines)
