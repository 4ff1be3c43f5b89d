"""Golden cases: the recipes (with the test suite's permutation counts) and wrap() studies.

``python -m tests.golden.cases --write`` (from the repository root) records the
``results.json`` of every case under ``tests/data/golden/``; ``test_golden.py``
re-runs them and requires the same bytes. Paths and the ``environment`` section
(machine and library versions) are normalised; every number must match exactly.
Regenerate only when a change of result is intended, and say why in CHANGELOG.md.
"""

from __future__ import annotations

import json
import sys
from pathlib import Path
from typing import Any

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
GOLDEN = ROOT / "tests" / "data" / "golden"
if str(ROOT / "tests") not in sys.path:  # run as `python -m tests.golden.cases`
    sys.path.insert(0, str(ROOT / "tests"))

from recipe_runs import prepare  # noqa: E402

# The recipes with golden files; each runs as in test_recipes.py (same copy, same
# generated data, same permutation counts: tests/recipe_runs.py). glaze_inspection is
# covered by the wrap_raters case.
GOLDEN_RECIPES = (
    "breath_pilot",
    "many_variants",
    "repeated_visits",
    "site_confound",
    "wide_panel",
)


def normalise(text: str) -> str:
    """results.json text with machine-dependent fields replaced (numbers untouched)."""
    data = json.loads(text)
    data["environment"] = "<environment>"
    if isinstance(data.get("study"), dict) and data["study"].get("file"):
        data["study"]["file"] = Path(data["study"]["file"]).name
    if isinstance(data.get("data"), dict) and data["data"].get("table"):
        data["data"]["table"] = Path(data["data"]["table"]).name
    if isinstance(data.get("ledger"), dict) and data["ledger"].get("file"):
        data["ledger"]["file"] = Path(data["ledger"]["file"]).name
    return json.dumps(data, indent=2) + "\n"


def run_recipe(name: str, where: Path) -> str:
    from foldwall.cli import main

    study = prepare(name, where)
    out = where / f"{name}-out"
    code = main(["run", str(study), "--out", str(out), "--quiet", "--jobs", "1"])
    if code != 0:
        raise RuntimeError(f"recipe {name} exited {code}")
    return (out / "results.json").read_text(encoding="utf-8")


def _wrap_classification() -> Any:
    """Breast cancer, a selection pipeline against a plain baseline, with the control."""
    from sklearn.datasets import load_breast_cancer
    from sklearn.feature_selection import SelectKBest
    from sklearn.linear_model import LogisticRegression
    from sklearn.pipeline import make_pipeline
    from sklearn.preprocessing import StandardScaler

    import foldwall

    X, y = load_breast_cancer(return_X_y=True)
    rows = np.random.default_rng(0).choice(len(y), 150, replace=False)
    pipe = make_pipeline(
        StandardScaler(), SelectKBest(), LogisticRegression(max_iter=500)
    )
    base = make_pipeline(StandardScaler(), LogisticRegression(max_iter=500))
    study = foldwall.wrap(
        pipe,
        space={"selectkbest__k": [3, 10], "logisticregression__C": [0.1, 1.0]},
        metric=["roc_auc", "accuracy"],
        outer=3,
        inner=3,
        random_state=1,
        n_jobs=1,
        n_permutations=3,
        baselines={"plain": (base, {"logisticregression__C": [0.01, 0.1, 1.0, 10.0]})},
    )
    return study.run(X[rows], y[rows])


def _wrap_regression() -> Any:
    """Diabetes, ridge with a sampled space (tpe), repeated outer loop."""
    from optuna.distributions import FloatDistribution
    from sklearn.datasets import load_diabetes
    from sklearn.linear_model import Ridge

    import foldwall

    X, y = load_diabetes(return_X_y=True)
    study = foldwall.wrap(
        Ridge(),
        space={"alpha": FloatDistribution(1e-3, 1e3, log=True)},
        trials=4,
        metric=["neg_mean_absolute_error", "r2"],
        outer=3,
        inner=3,
        repeats=2,
        random_state=2,
        n_jobs=1,
    )
    return study.run(X[:120], y[:120])


def _wrap_positive_class() -> Any:
    """Text labels with a named positive class and average precision (the chance-level case)."""
    from sklearn.datasets import make_classification
    from sklearn.linear_model import LogisticRegression

    import foldwall

    X, y01 = make_classification(
        n_samples=90, n_features=6, weights=[0.22], random_state=4
    )
    y = np.where(y01 == 1, "no", "yes")
    study = foldwall.wrap(
        LogisticRegression(),
        space={"C": [0.1, 1.0]},
        metric=["average_precision", "f1"],
        outer=3,
        inner=3,
        random_state=3,
        n_jobs=1,
        n_permutations=3,
        positive_class="no",
    )
    return study.run(X, y)


def _wrap_raters() -> Any:
    """Four raters of invented cases (issue 12): consensus target and the raters section."""
    import pandas as pd
    from sklearn.linear_model import LogisticRegression

    import foldwall

    rng = np.random.default_rng(12)
    X = rng.normal(size=(90, 4))
    truth = (X[:, 0] - X[:, 2] > 0).astype(int)
    ambiguous = rng.random(90) < 0.3
    ratings = np.empty((90, 4), dtype=object)
    for j, err in enumerate([0.03, 0.08, 0.05, 0.12]):
        label = np.where(rng.random(90) < err, 1 - truth, truth)
        label = np.where(ambiguous, rng.integers(0, 2, 90), label)
        ratings[:, j] = np.where(label == 1, "yes", "no")
    ratings[rng.random((90, 4)) < 0.05] = None
    study = foldwall.wrap(
        LogisticRegression(),
        space={"C": [0.1, 1.0]},
        metric=["accuracy", "roc_auc"],
        outer=3,
        inner=2,
        repeats=2,
        random_state=5,
        n_jobs=1,
        raters={"classes": ["no", "yes"], "smallest_difference": 0.1},
    )
    return study.run(X, ratings=pd.DataFrame(ratings, columns=["r1", "r2", "r3", "r4"]))


WRAP_CASES = {
    "wrap_classification": _wrap_classification,
    "wrap_regression": _wrap_regression,
    "wrap_positive_class": _wrap_positive_class,
    "wrap_raters": _wrap_raters,
}
CASES = [f"recipe_{n}" for n in GOLDEN_RECIPES] + sorted(WRAP_CASES)


def produce(case: str, where: Path) -> str:
    if case.startswith("recipe_"):
        return normalise(run_recipe(case.removeprefix("recipe_"), where))
    return normalise(WRAP_CASES[case]().to_json() + "\n")


if __name__ == "__main__":
    import tempfile

    if "--write" not in sys.argv:
        raise SystemExit("usage: python -m tests.golden.cases --write")
    GOLDEN.mkdir(parents=True, exist_ok=True)
    for case in CASES:
        with tempfile.TemporaryDirectory() as tmp:
            text = produce(case, Path(tmp))
        (GOLDEN / f"{case}.json").write_text(text, encoding="utf-8")
        print(f"wrote {case}")
