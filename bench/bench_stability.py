"""Coverage of the feature-selection stability interval (Nogueira, Sechidis & Brown 2018).

The report shows the stability of the kept columns over the outer folds with the
paper's normal-approximation 95% interval. Folds are few (5 to 20), so this
measures how often that interval covers the population stability, for M runs:

(a) independent selection: feature f is kept with probability p_f in each run
    (subset sizes vary); the population stability is the limit of the estimate,
    1 - mean_f p_f (1 - p_f) / ((K/d)(1 - K/d)) with K = sum_f p_f.
(b) top-k selection: each run keeps the k features with the largest noisy score
    (a true effect plus Gaussian noise), so every subset has the same size; the
    population stability is estimated from 200,000 runs.

Runs are independent here; outer folds share training rows, which this does not
model (their selections are positively correlated, so real coverage may be lower).

    python bench/bench_stability.py [--reps 4000]
"""

from __future__ import annotations

import argparse
import json

import numpy as np

from foldwall.compare._stability import selection_stability


def truth_independent(p: np.ndarray) -> float:
    d, k = p.size, p.sum()
    return float(1 - np.mean(p * (1 - p)) / ((k / d) * (1 - k / d)))


def topk_runs(
    rng: np.random.Generator, effect: np.ndarray, k: int, m: int
) -> np.ndarray:
    scores = effect + rng.normal(size=(m, effect.size))
    z = np.zeros((m, effect.size), dtype=int)
    top = np.argsort(-scores, axis=1)[:, :k]
    np.put_along_axis(z, top, 1, axis=1)
    return z


def coverage(
    draw, truth: float, m: int, reps: int, rng: np.random.Generator
) -> dict[str, float]:
    hit = 0
    width = []
    for _ in range(reps):
        z = draw(rng, m)
        if z.sum(axis=0).sum() in (0, z.size) or np.all(z.sum(axis=1) == z.shape[1]):
            continue
        st = selection_stability(z)
        hit += st.ci[0] <= truth <= st.ci[1]
        width.append(st.ci[1] - st.ci[0])
    return {"coverage": hit / reps, "mean_width": float(np.mean(width))}


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--reps", type=int, default=4000)
    args = ap.parse_args()
    rng = np.random.default_rng(2018)
    d = 25
    p = np.r_[np.full(3, 0.9), np.full(4, 0.4), np.full(d - 7, 0.05)]
    effect = np.r_[np.full(3, 2.0), np.full(4, 0.8), np.zeros(d - 7)]
    k = 5
    big = topk_runs(np.random.default_rng(7), effect, k, 200_000)
    truth_b = float(selection_stability(big).stability)
    out = {
        "d": d,
        "reps": args.reps,
        "a_truth": truth_independent(p),
        "b_truth": truth_b,
        "a": {},
        "b": {},
    }
    for m in (5, 10, 20, 50):
        out["a"][m] = coverage(
            lambda g, mm: (g.random((mm, d)) < p).astype(int),
            out["a_truth"],
            m,
            args.reps,
            rng,
        )
        out["b"][m] = coverage(
            lambda g, mm: topk_runs(g, effect, k, mm), truth_b, m, args.reps, rng
        )
    print(json.dumps(out, indent=2))


if __name__ == "__main__":
    main()
