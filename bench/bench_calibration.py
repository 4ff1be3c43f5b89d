"""Calibration on null data: larger runs of the two type I error checks of the test suite.

(a) Random-label control: over N null data sets (labels independent of the
features), the share with p <= 0.05 (m = 19 permutations, so only p = 1/20
rejects). It must sit within a binomial interval around 0.05 (or below: a valid
test may be conservative).

(b) Corrected resampled t-test (Nadeau & Bengio 2003; Bouckaert & Frank 2004)
against the plain paired t-test: two learners with the same true accuracy (0.5) on
N null data sets, 10 x 5-fold; the share of rejections at alpha = 0.05.

    python bench/bench_calibration.py [--datasets 200] [--jobs 2]
"""

from __future__ import annotations

import argparse
import json
import os

import numpy as np
from joblib import Parallel, delayed
from scipy.stats import binomtest
from sklearn.linear_model import LogisticRegression
from sklearn.neighbors import KNeighborsClassifier

import foldwall


def control_one(k: int) -> float:
    rng = np.random.default_rng(10_000 + k)
    X = rng.normal(size=(30, 4))
    y = rng.permutation(np.repeat([0, 1], 15))
    res = foldwall.wrap(
        LogisticRegression(),
        metric="accuracy",
        outer=3,
        inner=2,
        n_permutations=19,
        random_state=k,
    ).run(X, y)
    return res.control["p_value"]


def compare_one(k: int) -> tuple[float, float]:
    rng = np.random.default_rng(20_000 + k)
    X = rng.normal(size=(60, 5))
    y = rng.permutation(np.repeat([0, 1], 30))
    res = foldwall.wrap(
        LogisticRegression(),
        metric="accuracy",
        outer=5,
        repeats=10,
        inner=2,
        random_state=k,
        baselines={"knn": KNeighborsClassifier(5)},
    ).run(X, y)
    c = res.to_dict()["comparisons"][0]
    return c["p_value"], c["uncorrected_t"]["p_value"]


def rate(hits: int, n: int) -> dict:
    ci = binomtest(hits, n).proportion_ci(method="wilson")
    return {
        "rejections": hits,
        "n": n,
        "rate": hits / n,
        "wilson_95": [ci.low, ci.high],
    }


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--datasets", type=int, default=200)
    ap.add_argument("--jobs", type=int, default=os.cpu_count() or 1)
    args = ap.parse_args()
    n = args.datasets
    ps = Parallel(n_jobs=args.jobs)(delayed(control_one)(k) for k in range(n))
    pc = Parallel(n_jobs=args.jobs)(delayed(compare_one)(k) for k in range(n))
    out = {
        "control_m19_alpha05": rate(int(np.sum(np.array(ps) <= 0.05)), n),
        "corrected_t_alpha05": rate(int(np.sum([a < 0.05 for a, _ in pc])), n),
        "uncorrected_t_alpha05": rate(int(np.sum([b < 0.05 for _, b in pc])), n),
    }
    print(json.dumps(out, indent=2))


if __name__ == "__main__":
    main()
