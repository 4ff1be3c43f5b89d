"""Several raters: interval coverage and the model-vs-typical-rater test's error rates.

(a) Coverage of the percentile bootstrap intervals over cases (foldwall.labels) for
Krippendorff's alpha (nominal, a quarter of ratings missing) and Fleiss' kappa
(complete ratings). Panel: each case has a true class (shares 0.5 / 0.3 / 0.2);
each of 4 raters gives it with probability 0.7, otherwise a uniformly random
class. The population value is taken from one table of 200,000 cases. Over N
tables of n cases, the share of 95% intervals that contain it.

(b) Type I error of ``model_vs_raters`` (corrected resampled t-test over outer
splits). The "model" is one more rater drawn from the same process (accuracy 0.7),
so it agrees with each leave-one-out consensus exactly as well as the rater left
out, in expectation: the null holds. Its labels are cut into r x k outer splits
as out-of-fold predictions would be. Share of rejections at alpha = 0.05.

(c) Power of the same test when the "model" is better than the raters
(accuracy 0.85 instead of 0.7).

    python bench/bench_raters.py [--tables 500] [--cases 60]
"""

from __future__ import annotations

import argparse
import json
import time

import numpy as np
from scipy.stats import binomtest

from foldwall.labels import (
    fleiss_kappa,
    krippendorff_alpha,
    model_vs_raters,
    rating_table,
)

K = 3
SHARES = np.array([0.5, 0.3, 0.2])


def panel(
    rng: np.random.Generator,
    n: int,
    n_raters: int,
    accuracy: float,
    missing: float = 0.0,
) -> tuple[np.ndarray, np.ndarray]:
    truth = rng.choice(K, size=n, p=SHARES)
    keep = rng.random((n, n_raters)) < accuracy
    noise = rng.integers(0, K, size=(n, n_raters))
    ratings = np.where(keep, truth[:, None], noise).astype(float)
    if missing:
        gone = rng.random(ratings.shape) < missing
        gone[np.arange(n), rng.integers(0, n_raters, size=n)] = False  # one stays
        ratings[gone] = np.nan
    return truth, ratings


def coverage(n_tables: int, n: int) -> dict[str, object]:
    rng = np.random.default_rng(2024)
    _, big = panel(rng, 200_000, 4, 0.7, missing=0.25)
    alpha_true = krippendorff_alpha(
        rating_table(big, categories=[0, 1, 2]), n_resamples=0
    ).value
    _, big_full = panel(rng, 200_000, 4, 0.7)
    fleiss_true = fleiss_kappa(
        rating_table(big_full, categories=[0, 1, 2]), n_resamples=0
    ).value
    hits_a = hits_f = 0
    for t in range(n_tables):
        r = np.random.default_rng(10_000 + t)
        _, ratings = panel(r, n, 4, 0.7, missing=0.25)
        est = krippendorff_alpha(
            rating_table(ratings, categories=[0, 1, 2]),
            random_state=t,
            n_resamples=1000,
        )
        hits_a += est.ci[0] <= alpha_true <= est.ci[1]
        _, full = panel(r, n, 4, 0.7)
        est_f = fleiss_kappa(
            rating_table(full, categories=[0, 1, 2]), random_state=t, n_resamples=1000
        )
        hits_f += est_f.ci[0] <= fleiss_true <= est_f.ci[1]

    def summary(hits: int) -> dict[str, object]:
        ci = binomtest(hits, n_tables).proportion_ci(0.95)
        return {
            "coverage": hits / n_tables,
            "ci95": [round(ci.low, 3), round(ci.high, 3)],
        }

    return {
        "alpha_population": round(alpha_true, 4),
        "fleiss_population": round(fleiss_true, 4),
        "alpha": summary(hits_a),
        "fleiss": summary(hits_f),
    }


def splits_for(
    rng: np.random.Generator, n: int, repeats: int, folds: int, predicted: np.ndarray
) -> list[tuple[np.ndarray, np.ndarray]]:
    out = []
    for _ in range(repeats):
        order = rng.permutation(n)
        for part in np.array_split(order, folds):
            out.append((np.sort(part), predicted[np.sort(part)]))
    return out


def rejections(
    n_tables: int, n: int, model_accuracy: float, repeats: int, folds: int
) -> dict[str, object]:
    hits = 0
    for t in range(n_tables):
        rng = np.random.default_rng(50_000 + t)
        truth = rng.choice(K, size=n, p=SHARES)
        raters = np.where(
            rng.random((n, 5)) < 0.7, truth[:, None], rng.integers(0, K, size=(n, 5))
        ).astype(float)
        model = np.where(
            rng.random(n) < model_accuracy, truth, rng.integers(0, K, size=n)
        )
        table = rating_table(raters, categories=[0, 1, 2])
        res = model_vs_raters(table, splits_for(rng, n, repeats, folds, model))
        hits += bool(res.test.p_value < 0.05)
    ci = binomtest(hits, n_tables).proportion_ci(0.95)
    return {"rate": hits / n_tables, "ci95": [round(ci.low, 3), round(ci.high, 3)]}


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--tables", type=int, default=500)
    parser.add_argument("--cases", type=int, default=60)
    args = parser.parse_args()
    start = time.perf_counter()
    out: dict[str, object] = {"tables": args.tables, "cases": args.cases}
    out["coverage"] = coverage(args.tables, args.cases)
    out["type_I_5x5"] = rejections(args.tables, args.cases, 0.7, 5, 5)
    out["type_I_1x10"] = rejections(args.tables, args.cases, 0.7, 1, 10)
    out["power_5x5_model_0.85"] = rejections(args.tables, args.cases, 0.85, 5, 5)
    out["seconds"] = round(time.perf_counter() - start, 1)
    print(json.dumps(out, indent=2))


if __name__ == "__main__":
    main()
