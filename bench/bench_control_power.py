"""Power of the random-label control beside scikit-learn's permutation_test_score.

Weak-signal data: n = 60, ten standard normal features, P(y = 1) =
1 / (1 + exp(-0.7 * x0)) (one weakly informative feature). The procedure is
StandardScaler -> LogisticRegression with C in {0.1, 1}, tuned by an inner
stratified 3-fold search, scored by ROC AUC over a stratified 5-fold outer loop.
Both sides get the same splitter objects (same outer and inner folds on the real
labels) and m = 99 permutations:

- foldwall, ``wrap(..., n_permutations=99)`` with the default scheme
  (``within-outer``: labels move only inside outer test folds, the outer partition
  is kept), and with ``--with-global`` also ``permutation_scheme="global"`` (labels
  move across all rows and every split is re-derived, as scikit-learn does);
- hand-written ``permutation_test_score(GridSearchCV(pipe, grid, cv=inner), X, y,
  cv=outer, n_permutations=99)``, which repeats the inner search for every
  permutation.

The rejection rate at alpha = 0.05 over the data sets is the power; a McNemar-style
count of the data sets where the two decisions differ is printed beside it.

    nice -n 10 python bench/bench_control_power.py [--datasets 60] [--jobs 2] [--quick]
"""

from __future__ import annotations

import argparse
import warnings

import numpy as np
from validity_util import fmt_rate, parallel_map, rate, save, table

M = 99
ALPHA = 0.05
WEIGHT = 0.7


def one(task: tuple[int, tuple[str, ...]]) -> dict:
    seed, schemes = task
    from sklearn.linear_model import LogisticRegression
    from sklearn.model_selection import (
        GridSearchCV,
        StratifiedKFold,
        permutation_test_score,
    )
    from sklearn.pipeline import make_pipeline
    from sklearn.preprocessing import StandardScaler

    import foldwall

    rng = np.random.default_rng(30_000 + seed)
    X = rng.normal(size=(60, 10))
    y = (rng.random(60) < 1.0 / (1.0 + np.exp(-WEIGHT * X[:, 0]))).astype(int)
    pipe = make_pipeline(StandardScaler(), LogisticRegression())
    grid = {"logisticregression__C": [0.1, 1.0]}
    outer = StratifiedKFold(5, shuffle=True, random_state=seed)
    inner = StratifiedKFold(3, shuffle=True, random_state=seed + 1)
    out: dict = {"seed": seed}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for scheme in schemes:
            res = foldwall.wrap(
                pipe,
                grid,
                metric="roc_auc",
                outer=outer,
                inner=inner,
                n_permutations=M,
                permutation_scheme=scheme,
                random_state=seed,
                n_jobs=1,
            ).run(X, y)
            out[f"foldwall_{scheme}"] = {
                "p": float(res.control["p_value"]),
                "observed": float(res.score),
                "null_mean": float(res.control["null_mean"]),
            }
        score, perm, p = permutation_test_score(
            GridSearchCV(pipe, grid, cv=inner, scoring="roc_auc"),
            X,
            y,
            cv=outer,
            n_permutations=M,
            scoring="roc_auc",
            random_state=seed,
            n_jobs=1,
        )
    out["sklearn"] = {
        "p": float(p),
        "observed": float(score),
        "null_mean": float(np.mean(perm)),
    }
    return out


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--datasets", type=int, default=60)
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument("--quick", action="store_true", help="smoke run: 3 data sets")
    ap.add_argument(
        "--with-global", action="store_true", help="also run foldwall's global scheme"
    )
    args = ap.parse_args()
    schemes = ("within-outer", "global") if args.with_global else ("within-outer",)
    n = 3 if args.quick else args.datasets
    raw = parallel_map(one, [(k, schemes) for k in range(n)], args.jobs)
    keys = [
        ("foldwall_within-outer", "foldwall, within-outer (default)"),
        ("foldwall_global", "foldwall, global"),
        ("sklearn", "permutation_test_score(GridSearchCV(...))"),
    ]
    keys = [k for k in keys if k[0] in raw[0]]
    summary, rows = {}, []
    reject = {k: np.array([r[k]["p"] <= ALPHA for r in raw]) for k, _ in keys}
    for k, label in keys:
        r = rate(int(reject[k].sum()), n)
        obs = np.array([x[k]["observed"] for x in raw])
        summary[k] = {
            **r,
            "mean_observed": float(obs.mean()),
            "mean_null": float(np.mean([x[k]["null_mean"] for x in raw])),
        }
        disagree = int(np.sum(reject[k] != reject["sklearn"]))
        rows.append(
            [
                label,
                fmt_rate(r),
                f"{obs.mean():.3f}",
                f"{summary[k]['mean_null']:.3f}",
                "-" if k == "sklearn" else str(disagree),
            ]
        )
    same_obs = float(
        np.max(
            [
                abs(x["foldwall_within-outer"]["observed"] - x["sklearn"]["observed"])
                for x in raw
            ]
        )
    )
    summary["max_abs_observed_difference_vs_sklearn"] = same_obs
    text = table(
        [
            "control (m = 99)",
            "rejections at 0.05 (Wilson 95%)",
            "mean observed ROC AUC",
            "mean null mean",
            "decisions differing from scikit-learn",
        ],
        rows,
    )
    print(
        f"Power on weak-signal data, {n} data sets (n = 60, one feature with weight {WEIGHT})"
    )
    print(text)
    print(f"largest |observed score foldwall - scikit-learn|: {same_obs:.2e}")
    path = save(
        "control_power" + ("_quick" if args.quick else ""),
        {"datasets": n, "m": M, "summary": summary, "raw": raw, "table": text},
    )
    print(f"raw output: {path}")


if __name__ == "__main__":
    main()
