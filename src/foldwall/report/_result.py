"""The result of a run: numbers with their provenance, and the files of a run directory."""

from __future__ import annotations

import json
import os
import platform
import shutil
import tempfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from .. import __version__
from ..audit._rows import digest_lines
from ..exceptions import SpecError
from ..runners._execute import fold_winners

__all__ = ["Result", "build_result", "RESULTS_SCHEMA_VERSION", "CAUTIONS"]

RESULTS_SCHEMA_VERSION = 1

CAUTIONS = [
    "This is internal validation (nested cross-validation on one data set). It is not external or "
    "prospective validation: performance on new sites, devices or periods may be lower.",
    "Clinical or other high-stakes use of a model is subject to local regulation and licensed practice; "
    "these numbers alone do not support such use.",
]


def _environment(seed: int) -> dict[str, Any]:
    import joblib
    import optuna
    import scipy
    import sklearn
    from threadpoolctl import threadpool_info

    return {
        "foldwall": __version__,
        "python": platform.python_version(),
        "platform": platform.platform(),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "pandas": pd.__version__,
        "scikit-learn": sklearn.__version__,
        "joblib": joblib.__version__,
        "optuna": optuna.__version__,
        "seed": seed,
        "math_libraries": sorted({f"{d.get('internal_api')} {d.get('version')}" for d in threadpool_info()}),
        "note": "workers, threads and timings of this run are in timing.json (they never change a result)",
    }


def _summary(values: list[float]) -> dict[str, Any]:
    a = np.asarray(values, dtype=float)
    return {"mean": float(a.mean()), "sd": float(a.std(ddof=1)) if a.size > 1 else None,
            "min": float(a.min()), "max": float(a.max()), "n": int(a.size)}


@dataclass
class Result:
    """What a study run produced. ``to_dict`` is the content of ``results.json``.

    Attributes
    ----------
    score : float
        Mean outer-test score of the primary metric (the whole procedure: search
        and choice of candidate included), over outer folds and repeats.
    fold_scores : list of float
        One per outer fold (and repeat), in plan order.
    audit : dict
        Row audit: ``fits``, ``test_rows_seen`` (must be 0), ``digest``, ...
    control : dict or None
        The random-label control, when permutations were run.
    comparisons : pandas.DataFrame
        Paired comparisons with baselines (empty without baselines).
    """

    data: dict[str, Any]
    records: list[dict[str, Any]] = field(repr=False)
    plan_dict: dict[str, Any] = field(repr=False)
    study_text: str | None = field(default=None, repr=False)
    timing: dict[str, Any] | None = field(default=None, repr=False)
    tables: dict[str, pd.DataFrame] | None = field(default=None, repr=False)

    @property
    def metric(self) -> str:
        return self.data["score"]["metric"]

    @property
    def score(self) -> float:
        return float(self.data["score"]["mean"])

    @property
    def fold_scores(self) -> list[float]:
        return list(self.data["score"]["per_fold"])

    @property
    def audit(self) -> dict[str, Any]:
        return dict(self.data["audit"])

    @property
    def control(self) -> dict[str, Any] | None:
        return self.data.get("control")

    @property
    def comparisons(self) -> pd.DataFrame:
        rows = self.data.get("comparisons") or []
        cols = ["a", "b", "metric", "mean_difference", "ci", "test", "statistic", "df", "p_value", "p_adjusted",
                "correction", "family_size", "statement"]
        return pd.DataFrame(rows, columns=cols if not rows else None)

    @property
    def folds(self) -> pd.DataFrame:
        df = pd.DataFrame(self.data["folds"])
        for col in ("settings", "selected_features"):
            if col in df.columns:
                df[col] = [json.dumps(v, sort_keys=True) if v is not None else None for v in df[col]]
        return df

    def to_dict(self) -> dict[str, Any]:
        return self.data

    @classmethod
    def load(cls, run_dir: str | os.PathLike) -> Result:
        """Read a run folder written by :meth:`save` or ``foldwall run``.

        Only the summary is restored (``score``, ``fold_scores``, ``audit``,
        ``control``, ``comparisons``, ``folds``); unit records stay in the store.
        """
        path = Path(run_dir) / "results.json"
        if not path.is_file():
            raise SpecError(f"'{run_dir}' holds no results.json; give the folder of a finished run")
        data = json.loads(path.read_text(encoding="utf-8"))
        version = data.get("schema_version")
        if not isinstance(version, int) or version > RESULTS_SCHEMA_VERSION:
            raise SpecError(f"'{path}' has results schema version {version!r}; this foldwall reads up to "
                            f"{RESULTS_SCHEMA_VERSION}: upgrade foldwall")
        plan_path = Path(run_dir) / "plan.json"
        plan = json.loads(plan_path.read_text(encoding="utf-8")) if plan_path.is_file() else {}
        tables = {}
        for name in ("units", "trials"):
            csv = Path(run_dir) / f"{name}.csv"
            try:
                tables[name] = pd.read_csv(csv) if csv.is_file() else pd.DataFrame()
            except pd.errors.EmptyDataError:
                tables[name] = pd.DataFrame()
        study = Path(run_dir) / "study.yaml"
        text = study.read_text(encoding="utf-8") if study.is_file() else None
        return cls(data=data, records=[], plan_dict=plan, study_text=text, tables=tables)

    def to_json(self) -> str:
        return json.dumps(self.data, indent=2, sort_keys=False, default=_json_default)

    def trials_frame(self) -> pd.DataFrame:
        """One row per setting of each inner search (the content of trials.csv)."""
        if not self.records and self.tables is not None:
            return self.tables["trials"].copy()
        rows = []
        for r in self.records:
            for t, tr in enumerate(r.get("trials") or []):
                row = {"repeat": r["repeat"], "fold": r["fold"], "candidate": r["candidate"], "trial": t,
                       "settings": json.dumps(tr["settings"], sort_keys=True), "inner_mean": tr["mean"],
                       "inner_sd": tr["sd"]}
                for j, v in enumerate(tr["splits"]):
                    row[f"inner_split_{j}"] = v
                rows.append(row)
        return pd.DataFrame(rows)

    def units_frame(self) -> pd.DataFrame:
        """One row per unit of the real run (the content of units.csv)."""
        if not self.records and self.tables is not None:
            return self.tables["units"].copy()
        rows = []
        for r in self.records:
            row = {"repeat": r["repeat"], "fold": r["fold"], "candidate": r["candidate"], "role": r["role"],
                   "n_train": r["n_train"], "n_test": r["n_test"], "inner_score": r["inner_score"],
                   "settings": json.dumps(r["settings"], sort_keys=True)}
            for m in self.data["plan"]["metrics"]:
                row[f"test_{m}"] = r["test"][m]
            for m in self.data["plan"]["metrics"]:
                row[f"train_{m}"] = r["train"][m]
            rows.append(row)
        return pd.DataFrame(rows)

    def save(self, out_dir: str | os.PathLike, *, replace: bool = False) -> Path:
        """Write the run files: results.json, folds.csv, units.csv, trials.csv, plan.json (and study.yaml).

        Every file is first written to a temporary folder beside ``out_dir`` and
        then moved into place, ``results.json`` last, so an interrupted save never
        leaves a results.json that does not match its tables. Other files in
        ``out_dir`` (the results store) are left alone.
        """
        out = Path(out_dir)
        if (out / "results.json").exists() and not replace:
            raise SpecError(f"'{out}' already holds results; choose a new folder, or pass replace=True (--replace)")
        out.mkdir(parents=True, exist_ok=True)
        tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.partial-", dir=out.parent))
        try:
            self.folds.to_csv(tmp / "folds.csv", index=False)
            self.units_frame().to_csv(tmp / "units.csv", index=False)
            self.trials_frame().to_csv(tmp / "trials.csv", index=False)
            (tmp / "plan.json").write_text(json.dumps(self.plan_dict, default=_json_default) + "\n", encoding="utf-8")
            if self.study_text is not None:
                (tmp / "study.yaml").write_text(self.study_text, encoding="utf-8")
            if self.timing is not None:
                (tmp / "timing.json").write_text(json.dumps(self.timing, indent=2) + "\n", encoding="utf-8")
            (tmp / "results.json").write_text(self.to_json() + "\n", encoding="utf-8")
            names = sorted(p.name for p in tmp.iterdir() if p.name != "results.json") + ["results.json"]
            for name in names:
                os.replace(tmp / name, out / name)
        finally:
            shutil.rmtree(tmp, ignore_errors=True)
        return out


def _json_default(o: Any) -> Any:
    if isinstance(o, np.integer):
        return int(o)
    if isinstance(o, np.floating):
        return float(o)
    if isinstance(o, np.ndarray):
        return o.tolist()
    return repr(o)


def build_result(study: Any, plan: Any, data: Any, records: list[dict[str, Any]], *, control: dict[str, Any] | None,
                 timing: dict[str, Any]) -> Result:
    metric = plan.metrics[0]
    plan_dict = plan.to_dict()
    winners = fold_winners(records)
    order = [(0, f.repeat, f.fold) for f in plan.folds]
    win = [winners[k] for k in order]
    per_fold = [w["test"][metric] for w in win]
    train_fold = [w["train"][metric] for w in win]
    folds = []
    selection_counts: dict[str, int] = {}
    for w in win:
        row = {
            "repeat": w["repeat"], "fold": w["fold"], "n_train": w["n_train"], "n_test": w["n_test"],
            "chosen": w["candidate"], "settings": w["settings"], "inner_score": w["inner_score"],
            **{f"test_{m}": w["test"][m] for m in plan.metrics}, **{f"train_{m}": w["train"][m] for m in plan.metrics},
        }
        if w.get("selected_features") is not None:
            names = [data.feature_names[j] for j in w["selected_features"]]
            row["selected_features"] = names
            for n in names:
                selection_counts[n] = selection_counts.get(n, 0) + 1
        folds.append(row)
    cands = []
    for ci, c in enumerate(plan.candidates):
        recs = [r for r in records if r["candidate"] == c.name]
        scores = [r["test"][metric] for r in recs]
        cands.append({"name": c.name, "role": c.role, "settings_per_search": plan.settings_count(ci),
                      "score": {"metric": metric, **_summary(scores), "per_fold": scores},
                      "chosen_in_folds": sum(1 for w in win if w["candidate"] == c.name)})
    other = {}
    for m in plan.metrics[1:]:
        vals = [w["test"][m] for w in win]
        other[m] = {**_summary(vals), "per_fold": vals}
    audit = {
        "fits": int(sum(r["audit"]["fits"] for r in records) + (control or {}).get("audit_fits", 0)),
        "units": len(records) + (control or {}).get("audit_units", 0),
        "test_rows_seen": int(sum(r["audit"]["test_rows_seen"] for r in records)),
        "validation_rows_seen": int(sum(r["audit"]["validation_rows_seen"] for r in records)),
        "duplicate_rows": int(_duplicates(data.fingerprints)),
        "digest": digest_lines(sorted(r["unit"] + " " + r["audit"]["digest"] for r in records)),
        "digest_rule": ("covers the units of the real labels: sha256 over the sorted lines 'UNIT DIGEST', where each "
                        "unit's DIGEST is sha256 over its sorted lines 'UNIT ROLE STEP N_ROWS XOR SUM' (fingerprint XOR "
                        "and sum of the rows each step was fitted on); permutation units are checked the same way"),
        "fits_counted": "step fits actually made (equal steps shared between settings count once), permutations included",
        "fingerprint": "SplitMix64 row hash of the float64 feature values (foldwall.audit.row_fingerprints)",
        "already_fitted_input": [c.name for c in plan.candidates if c.was_fitted],
    }
    control_notes = list((control or {}).get("notes", []))
    if control is not None:
        control = dict(control)
        audit["test_rows_seen"] += control.pop("audit_test_rows_seen", 0)
        control.pop("audit_fits", None)
        control.pop("audit_units", None)
        control.pop("notes", None)
    ref = next((c for c in cands if c["role"] == "reference"), None)
    classes = None
    if data.task == "classification":
        u, n = np.unique(data.y, return_counts=True)
        classes = {str(k): int(v) for k, v in zip(u, n)}
    sd = _summary(per_fold)
    out: dict[str, Any] = {
        "schema_version": RESULTS_SCHEMA_VERSION,
        "study": {"name": study.source.get("name"), "file": study.source.get("file"),
                  "sha256": study.source.get("sha256")},
        "data": {"table": study.source.get("table"), "sha256": data.sha256,
                 "sha256_of": ("the table file" if data.sha256_of == "table file" else
                               "the arrays passed in: X as float64 bytes in C order (or pandas row hashes), then y as text lines"), "n_samples": data.n_samples,
                 "n_features": len(data.feature_names), "target": data.target_name, "groups": data.group_name,
                 "n_groups": None if data.groups is None else int(np.unique(data.groups).size),
                 "task": data.task, "classes": classes,
                 "positive_class": None if data.positive_class is None else str(data.positive_class)},
        "score": {"metric": metric, "mean": sd["mean"], "sd": sd["sd"], "min": sd["min"], "max": sd["max"],
                  "per_fold": per_fold, "n_folds": len(per_fold),
                  "rows": "each value is scored on one outer test part, by a model whose every step was fitted on "
                          "that fold's outer-training part only",
                  "procedure": "inner search and choice of candidate repeated inside every outer fold",
                  "final_model": ("this estimates the whole procedure; to ship a model, run the same procedure "
                                  "(inner search included) on all rows, rather than picking one fold's model")},
        "train_score": {"metric": metric, "mean": float(np.mean(train_fold)), "per_fold": train_fold,
                        "gap": float(np.mean(train_fold) - np.mean(per_fold))},
        "other_metrics": other,
        "reference": ref,
        "folds": folds,
        "feature_selection": None if not selection_counts else {
            "folds_with_selection": sum(1 for f in folds if "selected_features" in f), "n_folds": len(folds),
            "times_selected": dict(sorted(selection_counts.items(), key=lambda kv: (-kv[1], kv[0]))),
            "note": "how often each input column was kept by the chosen model's selection steps, over outer folds"},
        "candidates": cands,
        "audit": audit,
        "failed_trials": sorted(e for r in records for e in r.get("errors", [])),
        "control": control,
        "comparisons": [],
        "plan": {"metrics": list(plan.metrics), "outer": plan_dict["outer"], "inner": plan_dict["inner"],
                 "search": plan_dict["search"], "digest": plan_dict["digest"], "model_fits": plan_dict["model_fits"]},
        "environment": _environment(plan.seed),
        "cautions": CAUTIONS if study.clinical else CAUTIONS[:1],
    }
    from ._uncertainty import add_uncertainty

    add_uncertainty(out, study, plan, data, records)
    out["notes"] = _edge_notes(plan, win) + control_notes
    return Result(data=out, records=records, plan_dict=plan_dict, study_text=study.source.get("text"), timing=timing)


def _edge_notes(plan: Any, winners: list[dict[str, Any]]) -> list[str]:
    """Say when the chosen setting sits at an end of its range in most folds."""
    from ..search._space import Choice, Range

    notes = []
    n = len(winners)
    for c in plan.candidates:
        chosen = [w["settings"] for w in winners if w["candidate"] == c.name]
        if not chosen:
            continue
        for key, dim in c.space.items():
            if isinstance(dim, Choice) and all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in dim.values):
                lo, hi = min(dim.values), max(dim.values)
                if len(set(dim.values)) < 3:
                    continue
            elif isinstance(dim, Range):
                lo, hi = dim.low, dim.high
            else:
                continue
            vals = [s.get(key) for s in chosen if isinstance(s.get(key), (int, float))]
            for end, label in ((lo, "low"), (hi, "high")):
                k = sum(1 for v in vals if np.isclose(v, end, rtol=0.02 if isinstance(dim, Range) else 1e-12))
                if k and k * 2 >= n:
                    notes.append(f"'{c.name}': {key} was at the {label} end of the range searched ({end:g}) in {k} of "
                                 f"{n} outer folds; if that end can be widened, the best setting may lie beyond it")
    return notes


def _duplicates(fps: np.ndarray) -> int:
    _, counts = np.unique(fps, return_counts=True)
    return int(counts[counts > 1].sum())
