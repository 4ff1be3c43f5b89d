"""Coverage and width of the headline interval, beside nested-CV intervals.

Known data-generating process: 20 standard normal features, three informative,
P(y = 1) = 1 / (1 + exp(-(1.0 x0 + 0.8 x1 + 0.6 x2))). The procedure is
StandardScaler -> LogisticRegression with C in {0.01, 0.1, 1}, chosen by ROC AUC in
an inner 3-fold search. For every data set (n = 40, 100, 300):

- foldwall runs the procedure with 5 outer x 3 inner folds through
  ``foldwall.wrap(...).run(X, y)`` and reports its headline interval (the corrected
  resampled t interval over outer folds, Nadeau & Bengio 2003) for ROC AUC and for
  accuracy (a second metric on the same folds and chosen models);
- the truth is Err_XY: the same procedure refitted on all n rows and scored on
  20,000 fresh rows from the same process; coverage of Err (the mean of Err_XY over
  the data sets of that size) is reported too;
- nested cross-validation of Bates, Hastie & Tibshirani (2024), written here from the
  paper's procedure and the authors' reference code (K = 5 folds, R repetitions):
  for every pair of folds the procedure is fitted without both and scored on each;
  the spread of "inner CV error minus held-out error" over folds estimates how much
  wider than the naive interval the interval must be (an inflation factor clipped to
  [1, K]), and the point estimate is bias-corrected towards training on all rows. It
  needs a loss that is a mean over rows, so it is computed for the error rate
  (reported as accuracy = 1 - error);
- the naive CV interval on the same loss: mean +/- z sd / sqrt(n) of the pointwise
  out-of-fold errors of one 5-fold CV;
- for ROC AUC, a per-fold DeLong interval: the mean of the fold AUCs +/- z times
  sqrt(sum of the folds' DeLong variances) / K, i.e. treating the folds as
  independent and ignoring the variability of the training sets (the idea of
  LeDell, Petersen & van der Laan 2015, from memory).

    nice -n 10 python bench/bench_interval.py [--datasets 200] [--sizes 40,100,300] [--reps 10] [--jobs 2] [--quick]
"""

from __future__ import annotations

import argparse
import math
import warnings

import numpy as np
from validity_util import fmt_rate, parallel_map, rate, save, table

BETA = np.array([1.0, 0.8, 0.6])
N_FEATURES = 20
N_FRESH = 20_000
K = 5
Z = 1.959963984540054


def draw(rng: np.random.Generator, n: int) -> tuple[np.ndarray, np.ndarray]:
    X = rng.normal(size=(n, N_FEATURES))
    p = 1.0 / (1.0 + np.exp(-(X[:, :3] @ BETA)))
    return X, (rng.random(n) < p).astype(int)


def procedure(seed: int):
    from sklearn.linear_model import LogisticRegression
    from sklearn.model_selection import GridSearchCV, StratifiedKFold
    from sklearn.pipeline import make_pipeline
    from sklearn.preprocessing import StandardScaler

    return GridSearchCV(
        make_pipeline(StandardScaler(), LogisticRegression()),
        {"logisticregression__C": [0.01, 0.1, 1.0]},
        cv=StratifiedKFold(3, shuffle=True, random_state=seed),
        scoring="roc_auc",
    )


def delong_variance(y: np.ndarray, s: np.ndarray) -> tuple[float, float]:
    """AUC and its DeLong variance (midranks via pairwise comparison; small folds only)."""
    pos, neg = s[y == 1], s[y == 0]
    psi = (pos[:, None] > neg[None, :]) + 0.5 * (pos[:, None] == neg[None, :])
    auc = float(psi.mean())
    v10, v01 = psi.mean(axis=1), psi.mean(axis=0)
    var = (np.var(v10, ddof=1) / pos.size if pos.size > 1 else 0.0) + (
        np.var(v01, ddof=1) / neg.size if neg.size > 1 else 0.0
    )
    return auc, float(var)


def nested_cv(
    X: np.ndarray, y: np.ndarray, reps: int, rng: np.random.Generator, seed: int
) -> dict:
    """Nested CV interval for the error rate (Bates, Hastie & Tibshirani 2024)."""
    n = y.size
    pivots: list[float] = []
    ho_all: list[np.ndarray] = []
    for _ in range(reps):
        fold = rng.permutation(np.arange(n) % K)
        # err[i][j]: 0/1 errors on fold i of the procedure fitted without folds i and j
        err: dict[tuple[int, int], np.ndarray] = {}
        for i in range(K):
            for j in range(i + 1, K):
                train = (fold != i) & (fold != j)
                model = procedure(seed).fit(X[train], y[train])
                for a in (i, j):
                    rows = fold == a
                    err[(a, j if a == i else i)] = (
                        model.predict(X[rows]) != y[rows]
                    ).astype(float)
        for i in range(K):
            inner = np.concatenate([err[(j, i)] for j in range(K) if j != i])
            other = [j for j in range(K) if j != i][int(rng.integers(K - 1))]
            pivots.append(float(inner.mean() - err[(i, other)].mean()))
        ho_all.extend(err.values())
    ho = np.concatenate(ho_all)
    infl = (np.var(pivots, ddof=1) / np.var(ho, ddof=1) * n / K - 1.0) * (K - 1)
    infl = float(min(max(infl, 1.0), K))
    # plain K-fold CV runs for the bias correction (ceil(R / 10) of them); the first
    # also gives the naive interval and the per-fold DeLong interval for ROC AUC
    cv_means, naive, auc_fold = [], None, None
    for b in range(math.ceil(reps / 10)):
        fold = rng.permutation(np.arange(n) % K)
        errors = np.empty(n)
        aucs, variances = [], []
        for i in range(K):
            rows = fold == i
            model = procedure(seed).fit(X[~rows], y[~rows])
            errors[rows] = model.predict(X[rows]) != y[rows]
            if b == 0 and 0 < y[rows].sum() < rows.sum():
                a, v = delong_variance(y[rows], model.decision_function(X[rows]))
                aucs.append(a)
                variances.append(v)
        cv_means.append(float(errors.mean()))
        if b == 0:
            half = Z * errors.std(ddof=1) / math.sqrt(n)
            naive = (1 - errors.mean() - half, 1 - errors.mean() + half)
            if len(aucs) == K:
                m, se = float(np.mean(aucs)), math.sqrt(float(np.sum(variances))) / K
                auc_fold = (m - Z * se, m + Z * se)
    bias = (ho.mean() - np.mean(cv_means)) * (1 + ((K - 2) / (K - 1)) ** 1.5)
    est = float(ho.mean() - bias)
    se = float(ho.std(ddof=1) / math.sqrt(n) * math.sqrt(infl))
    return {
        "ncv_accuracy": (1 - est - Z * se, 1 - est + Z * se),
        "ncv_inflation": infl,
        "naive_accuracy": naive,
        "delong_folds_auc": auc_fold,
    }


def one(task: tuple[int, int, int]) -> dict:
    seed, n, reps = task
    from sklearn.metrics import accuracy_score, roc_auc_score

    import foldwall

    rng = np.random.default_rng([n, seed])
    X, y = draw(rng, n)
    Xf, yf = draw(np.random.default_rng([n, seed, 1]), N_FRESH)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        model = procedure(seed).fit(X, y)
        truth_auc = float(roc_auc_score(yf, model.decision_function(Xf)))
        truth_acc = float(accuracy_score(yf, model.predict(Xf)))
        from sklearn.linear_model import LogisticRegression
        from sklearn.pipeline import make_pipeline
        from sklearn.preprocessing import StandardScaler

        res = foldwall.wrap(
            make_pipeline(StandardScaler(), LogisticRegression()),
            {"logisticregression__C": [0.01, 0.1, 1.0]},
            metric=["roc_auc", "accuracy"],
            outer=5,
            inner=3,
            random_state=seed,
            n_jobs=1,
        ).run(X, y)
        d = res.to_dict()
        out = {
            "seed": seed,
            "n": n,
            "truth_auc": truth_auc,
            "truth_accuracy": truth_acc,
            "foldwall_auc": d["score"]["mean"],
            "foldwall_accuracy": d["other_metrics"]["accuracy"]["mean"],
            "corrected_t_auc": d["score"].get("ci"),
            "corrected_t_accuracy": d["other_metrics"]["accuracy"].get("ci"),
        }
        if reps > 0:
            out.update(nested_cv(X, y, reps, np.random.default_rng([n, seed, 2]), seed))
    return out


INTERVALS = [
    ("corrected_t_auc", "auc", "corrected t (foldwall headline), ROC AUC"),
    ("delong_folds_auc", "auc", "per-fold DeLong, folds as independent, ROC AUC"),
    ("corrected_t_accuracy", "accuracy", "corrected t (foldwall), accuracy"),
    ("ncv_accuracy", "accuracy", "nested CV (Bates et al. 2024), accuracy"),
    ("naive_accuracy", "accuracy", "naive CV (pointwise errors), accuracy"),
]


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--datasets", type=int, default=200)
    ap.add_argument("--sizes", default="40,100,300")
    ap.add_argument(
        "--reps", type=int, default=10, help="repetitions of nested CV (0: skip it)"
    )
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument(
        "--quick",
        action="store_true",
        help="smoke run: 3 data sets per size, 2 repetitions",
    )
    args = ap.parse_args()
    n_sets = 3 if args.quick else args.datasets
    reps = 2 if args.quick else args.reps
    sizes = [int(s) for s in args.sizes.split(",")]
    raw: list = []
    summary, rows = {}, []
    tag = "_quick" if args.quick else f"_R{reps}"
    for n in sizes:  # one size at a time, saved as soon as it is done
        sub = parallel_map(one, [(k, n, reps) for k in range(n_sets)], args.jobs)
        raw += sub
        save(f"interval{tag}_n{n}", {"datasets": n_sets, "reps": reps, "raw": sub})
        err = {
            m: float(np.mean([r[f"truth_{m}"] for r in sub]))
            for m in ("auc", "accuracy")
        }
        for key, m, label in INTERVALS:
            have = [r for r in sub if r.get(key) is not None]
            if not have:
                continue
            cov_xy = sum(r[key][0] <= r[f"truth_{m}"] <= r[key][1] for r in have)
            cov_err = sum(r[key][0] <= err[m] <= r[key][1] for r in have)
            width = float(np.mean([r[key][1] - r[key][0] for r in have]))
            s = {
                "coverage_err_xy": rate(int(cov_xy), len(have)),
                "coverage_err": rate(int(cov_err), len(have)),
                "mean_width": width,
            }
            summary[f"{key}/n={n}"] = s
            rows.append(
                [
                    str(n),
                    label,
                    fmt_rate(s["coverage_err_xy"]),
                    f"{s['coverage_err']['rate']:.3f}",
                    f"{width:.3f}",
                ]
            )
        if reps > 0:
            summary[f"ncv_inflation/n={n}"] = float(
                np.mean([r["ncv_inflation"] for r in sub])
            )
        summary[f"sd_estimate_auc/n={n}"] = float(
            np.std([r["foldwall_auc"] for r in sub], ddof=1)
        )
        summary[f"sd_truth_auc/n={n}"] = float(
            np.std([r["truth_auc"] for r in sub], ddof=1)
        )
    text = table(
        [
            "n",
            "interval (nominal 95%)",
            "covers Err_XY (Wilson 95%)",
            "covers Err",
            "mean width",
        ],
        rows,
    )
    print(
        f"Coverage, {n_sets} data sets per size, nested CV with R = {reps}, truth on {N_FRESH} fresh rows"
    )
    print(text)
    path = save(
        f"interval{tag}",
        {
            "datasets": n_sets,
            "reps": reps,
            "summary": summary,
            "raw": raw,
            "table": text,
        },
    )
    print(f"raw output: {path}")


if __name__ == "__main__":
    main()
