"""Null calibration of the random-label control on designs the suite did not cover.

For each design, N null data sets (the features carry no information about the
outcome beyond what the design's null hypothesis allows) and m = 19 permutations
per data set, so the control rejects (p <= 0.05) only when the observed score beats
all 19 permuted scores. A valid test rejects at most 5% of the time; the Wilson
interval of the rate should contain 0.05 (or lie below it: ties make a test
conservative).

Designs:

- ``within-groups``: grouped regression, 20 subjects with 2-6 visits, outcome per
  visit. The features carry a subject-level component and so does the outcome
  (between-subject signal), but within a subject the visit outcomes are independent
  of the features: the null hypothesis of the within-groups scheme. Labels are
  shuffled among the visits of each subject (Winkler et al. 2015, within-block).
- ``whole-groups``: grouped regression, 12 subjects with 3 visits and 12 with 4; the
  outcome has a subject level and a trend over visits, and one feature is the visit
  number, but the subject's outcome sequence is independent of the subject's
  features: the null hypothesis of the whole-groups scheme. Subjects of equal size
  swap their whole outcome sequence, within outer test folds (whole-block).
- ``regression``: Ridge regression, r2, n = 40, 5 noise features.
- ``rare-accuracy`` / ``rare-roc_auc``: 10% positives (10 of 100), logistic
  regression, accuracy or ROC AUC.
- ``wide-selection``: n = 30, 1,000 noise features, SelectKBest (k in 5, 20) fitted
  inside every fold, logistic regression, ROC AUC.

The last four use the control built into ``foldwall.wrap(..., n_permutations=19)``
(scheme within-outer). The two grouped designs run the whole procedure through the
public API once on the real outcome and once on each permuted outcome (same
group-aware outer and inner folds, which do not depend on the outcome), with the
permutations drawn by ``foldwall.controls.permute_within_groups`` /
``permute_whole_groups``, and the p-value by ``foldwall.controls.permutation_pvalue``.

    nice -n 10 python bench/bench_control_null.py [--datasets 200] [--jobs 2] [--quick] [--designs a,b]
"""

from __future__ import annotations

import argparse
import warnings

import numpy as np
from validity_util import fmt_rate, parallel_map, rate, save, table

M = 19
ALPHA = 0.05
DESIGNS = [
    "within-groups",
    "whole-groups",
    "regression",
    "rare-accuracy",
    "rare-roc_auc",
    "wide-selection",
]


def _grouped_within(
    rng: np.random.Generator,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    sizes = rng.integers(2, 7, size=20)
    groups = np.repeat(np.arange(20), sizes)
    u = rng.normal(size=20)
    w = rng.normal(size=5)
    X = u[groups, None] * w[None, :] + rng.normal(size=(groups.size, 5))
    y = 1.0 * u[groups] + rng.normal(size=groups.size)
    return X, y, groups


def _grouped_whole(
    rng: np.random.Generator,
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    sizes = np.array([3] * 12 + [4] * 12)
    rng.shuffle(sizes)
    groups = np.repeat(np.arange(24), sizes)
    visit = np.concatenate([np.arange(s) for s in sizes]).astype(float)
    z = rng.normal(size=(24, 4))
    X = np.column_stack([visit, z[groups] + rng.normal(size=(groups.size, 4))])
    v = rng.normal(size=24)
    y = v[groups] + 0.5 * visit + rng.normal(size=groups.size)
    return X, y, groups


def grouped_one(seed: int, design: str) -> dict:
    from sklearn.linear_model import Ridge
    from sklearn.model_selection import GroupKFold

    import foldwall
    from foldwall.controls import (
        count_permutations,
        permutation_pvalue,
        permute_whole_groups,
        permute_within_groups,
    )

    rng = np.random.default_rng(70_000 + seed)
    X, y, groups = (_grouped_within if design == "within-groups" else _grouped_whole)(
        rng
    )
    outer, inner = GroupKFold(3), GroupKFold(2)
    folds = [test for _, test in outer.split(X, y, groups)]
    permute = (
        permute_within_groups if design == "within-groups" else permute_whole_groups
    )

    def score(target: np.ndarray) -> float:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            res = foldwall.wrap(
                Ridge(),
                {"alpha": [1.0, 10.0]},
                metric="r2",
                outer=outer,
                inner=inner,
                random_state=seed,
                n_jobs=1,
            ).run(X, target, groups)
        return float(res.score)

    observed = score(y)
    perm_rng = np.random.default_rng(80_000 + seed)
    null = [
        score(permute(y, rng=perm_rng, groups=groups, folds=folds)) for _ in range(M)
    ]
    p = permutation_pvalue(observed, null)
    scheme = design
    possible = count_permutations(y, scheme=scheme, groups=groups, folds=folds)
    return {
        "seed": seed,
        "design": design,
        "observed": observed,
        "null_mean": float(np.mean(null)),
        "p_value": float(p),
        "log10_possible": float(np.log10(float(possible))),
    }


def builtin_one(seed: int, design: str) -> dict:
    from sklearn.feature_selection import SelectKBest
    from sklearn.linear_model import LogisticRegression, Ridge
    from sklearn.model_selection import KFold
    from sklearn.pipeline import make_pipeline

    import foldwall

    rng = np.random.default_rng(90_000 + seed)
    if design == "regression":
        X, y = rng.normal(size=(40, 5)), rng.normal(size=40)
        study = foldwall.wrap(
            Ridge(),
            {"alpha": [1.0, 10.0]},
            metric="r2",
            outer=KFold(3, shuffle=True, random_state=seed),
            inner=KFold(2, shuffle=True, random_state=seed + 1),
            n_permutations=M,
            random_state=seed,
            n_jobs=1,
        )
    elif design.startswith("rare"):
        X = rng.normal(size=(100, 5))
        y = rng.permutation(np.repeat([0, 1], [90, 10]))
        metric = design.split("-", 1)[1]
        study = foldwall.wrap(
            LogisticRegression(),
            {"C": [0.1, 1.0]},
            metric=metric,
            outer=3,
            inner=2,
            n_permutations=M,
            random_state=seed,
            n_jobs=1,
        )
    elif design == "wide-selection":
        X = rng.normal(size=(30, 1000))
        y = rng.permutation(np.repeat([0, 1], 15))
        pipe = make_pipeline(SelectKBest(k=5), LogisticRegression())
        study = foldwall.wrap(
            pipe,
            {"selectkbest__k": [5, 20]},
            metric="roc_auc",
            outer=3,
            inner=2,
            n_permutations=M,
            random_state=seed,
            n_jobs=1,
        )
    else:
        raise ValueError(design)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        res = study.run(X, y)
    c = res.control
    return {
        "seed": seed,
        "design": design,
        "observed": float(res.score),
        "null_mean": c["null_mean"],
        "p_value": float(c["p_value"]),
    }


def one(task: tuple[int, str]) -> dict:
    seed, design = task
    if design in ("within-groups", "whole-groups"):
        return grouped_one(seed, design)
    return builtin_one(seed, design)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--datasets", type=int, default=200)
    ap.add_argument("--jobs", type=int, default=2)
    ap.add_argument(
        "--quick", action="store_true", help="smoke run: 4 data sets per design"
    )
    ap.add_argument("--designs", default=",".join(DESIGNS))
    args = ap.parse_args()
    n = 4 if args.quick else args.datasets
    designs = [d for d in args.designs.split(",") if d]
    raw: list = []
    summary, rows = {}, []
    for d in designs:  # one design at a time, saved as soon as it is done
        part = parallel_map(one, [(k, d) for k in range(n)], args.jobs)
        raw += part
        ps = np.array([r["p_value"] for r in part])
        r = rate(int(np.sum(ps <= ALPHA)), ps.size, nominal=ALPHA)
        contains = r["wilson_95"][0] <= ALPHA <= r["wilson_95"][1]
        summary[d] = {
            **r,
            "wilson_contains_alpha": contains,
            "mean_observed": float(np.mean([x["observed"] for x in part])),
            "mean_null": float(np.mean([x["null_mean"] for x in part])),
        }
        rows.append(
            [
                d,
                fmt_rate(r),
                "yes" if contains else "no",
                f"{summary[d]['mean_observed']:.3f}",
                f"{summary[d]['mean_null']:.3f}",
            ]
        )
        save(
            f"control_null_{d}" + ("_quick" if args.quick else ""),
            {"datasets": n, "m": M, "summary": summary[d], "raw": part},
        )
        print(d, fmt_rate(r), flush=True)
    text = table(
        [
            "design",
            "rejections at 0.05, m = 19 (Wilson 95%)",
            "interval holds 0.05",
            "mean observed score",
            "mean of null means",
        ],
        rows,
    )
    print(f"Random-label control on null data, {n} data sets per design, m = {M}")
    print(text)
    path = save(
        "control_null" + ("_quick" if args.quick else ""),
        {"datasets": n, "m": M, "summary": summary, "raw": raw, "table": text},
    )
    print(f"raw output: {path}")


if __name__ == "__main__":
    main()
