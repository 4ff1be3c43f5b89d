"""The result of a run: numbers with their provenance, and the files of a run directory."""

from __future__ import annotations

import json
import os
import shutil
import tempfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from ..exceptions import SpecError
from ..plan import Plan
from ..records import UnitRecord
from ._predictions import read_predictions, write_predictions
from ._report import REPORT_FILES_DIR

__all__ = ["Result", "RESULTS_SCHEMA_VERSION", "CAUTIONS", "edge_notes"]

RESULTS_SCHEMA_VERSION = 2

CAUTIONS = [
    "This is internal validation (nested cross-validation on one data set). It is not external or "
    "prospective validation: performance on new sites, devices or periods may be lower.",
    "Clinical or other high-stakes use of a model is subject to local regulation and licensed practice; "
    "these numbers alone do not support such use.",
]


@dataclass(repr=False)
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
    records: list[UnitRecord] = field(repr=False)
    plan_dict: dict[str, Any] = field(repr=False)
    study_text: str | None = field(default=None, repr=False)
    timing: dict[str, Any] | None = field(default=None, repr=False)
    tables: dict[str, pd.DataFrame] | None = field(default=None, repr=False)
    predictions: pd.DataFrame | None = field(default=None, repr=False)
    """One row per outer test row, per repeat, per candidate (predictions.csv)."""

    @property
    def metric(self) -> str:
        return str(self.data["score"]["metric"])

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
        cols = [
            "a",
            "b",
            "metric",
            "mean_difference",
            "ci",
            "test",
            "statistic",
            "df",
            "p_value",
            "p_adjusted",
            "correction",
            "family_size",
            "statement",
        ]
        return pd.DataFrame(rows, columns=cols if not rows else None)

    @property
    def folds(self) -> pd.DataFrame:
        df = pd.DataFrame(self.data["folds"])
        for col in ("settings", "selected_features"):
            if col in df.columns:
                df[col] = [
                    json.dumps(v, sort_keys=True) if v is not None else None
                    for v in df[col]
                ]
        return df

    def to_dict(self) -> dict[str, Any]:
        return self.data

    def __repr__(self) -> str:
        from ._notebook import short_repr

        return short_repr(self.data)

    def summary(self) -> str:
        """The summary ``foldwall run`` prints, as plain text."""
        from ._terminal import summary_text

        return summary_text(self)

    def _repr_html_(self) -> str:
        from ._notebook import summary_html

        return summary_html(self.data)

    @classmethod
    def load(cls, run_dir: str | os.PathLike[str]) -> Result:
        """Read a run folder written by :meth:`save` or ``foldwall run``.

        Only the summary is restored (``score``, ``fold_scores``, ``audit``,
        ``control``, ``comparisons``, ``folds``); unit records stay in the store.
        """
        path = Path(run_dir) / "results.json"
        if not path.is_file():
            raise SpecError(
                f"'{run_dir}' holds no results.json; give the folder of a finished run"
            )
        data = json.loads(path.read_text(encoding="utf-8"))
        version = data.get("schema_version")
        if not isinstance(version, int) or version > RESULTS_SCHEMA_VERSION:
            raise SpecError(
                f"'{path}' has results schema version {version!r}; this foldwall reads up to "
                f"{RESULTS_SCHEMA_VERSION}: upgrade foldwall"
            )
        plan_path = Path(run_dir) / "plan.json"
        plan = (
            json.loads(plan_path.read_text(encoding="utf-8"))
            if plan_path.is_file()
            else {}
        )
        tables = {}
        for name in ("units", "trials"):
            csv = Path(run_dir) / f"{name}.csv"
            try:
                tables[name] = pd.read_csv(csv) if csv.is_file() else pd.DataFrame()
            except pd.errors.EmptyDataError:
                tables[name] = pd.DataFrame()
        study = Path(run_dir) / "study.yaml"
        text = study.read_text(encoding="utf-8") if study.is_file() else None
        pred_path = Path(run_dir) / "predictions.csv"
        task = str((data.get("data") or {}).get("task") or "classification")
        predictions = (
            read_predictions(pred_path, task=task) if pred_path.is_file() else None
        )
        return cls(
            data=data,
            records=[],
            plan_dict=plan,
            study_text=text,
            tables=tables,
            predictions=predictions,
        )

    def to_json(self) -> str:
        return json.dumps(self.data, indent=2, sort_keys=False, default=_json_default)

    def trials_frame(self) -> pd.DataFrame:
        """One row per setting of each inner search (the content of trials.csv)."""
        if not self.records and self.tables is not None:
            return self.tables["trials"].copy()
        rows = []
        for r in self.records:
            for t, tr in enumerate(r.trials or ()):
                row: dict[str, Any] = {
                    "repeat": r.repeat,
                    "fold": r.fold,
                    "candidate": r.candidate,
                    "trial": t,
                    "settings": json.dumps(tr.settings, sort_keys=True),
                    "inner_mean": tr.mean,
                    "inner_sd": tr.sd,
                }
                for j, v in enumerate(tr.splits):
                    row[f"inner_split_{j}"] = v
                rows.append(row)
        return pd.DataFrame(rows)

    def units_frame(self) -> pd.DataFrame:
        """One row per unit of the real run (the content of units.csv)."""
        if not self.records and self.tables is not None:
            return self.tables["units"].copy()
        rows = []
        metrics = self.data["plan"]["metrics"]
        for r in self.records:
            row: dict[str, Any] = {
                "repeat": r.repeat,
                "fold": r.fold,
                "candidate": r.candidate,
                "role": r.role,
                "n_train": r.n_train,
                "n_test": r.n_test,
                "inner_score": r.inner_score,
                "settings": json.dumps(r.settings, sort_keys=True),
            }
            for m in metrics:
                row[f"test_{m}"] = r.test[m]
            for m in metrics:
                row[f"train_{m}"] = r.train[m]
            rows.append(row)
        return pd.DataFrame(rows)

    def save(
        self,
        out_dir: str | os.PathLike[str],
        *,
        replace: bool = False,
        report: bool = True,
    ) -> Path:
        """Write the run files: results.json, folds.csv, units.csv, trials.csv,
        plan.json, predictions.csv, report.html, report.md with report_files/ (and
        study.yaml).

        Every file is first written to a temporary folder beside ``out_dir`` and
        then moved into place, ``results.json`` last, so an interrupted save never
        leaves a results.json that does not match its tables. Other files in
        ``out_dir`` (the results store) are left alone. The report is built from
        the files just written (predictions.csv read back), so ``foldwall report``
        rebuilds the same bytes; ``report=False`` leaves it out.
        """
        out = Path(out_dir)
        if (out / "results.json").exists() and not replace:
            raise SpecError(
                f"'{out}' already holds results; choose a new folder, or pass replace=True (--replace)"
            )
        out.mkdir(parents=True, exist_ok=True)
        tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.partial-", dir=out.parent))
        try:
            self.folds.to_csv(tmp / "folds.csv", index=False)
            self.units_frame().to_csv(tmp / "units.csv", index=False)
            self.trials_frame().to_csv(tmp / "trials.csv", index=False)
            (tmp / "plan.json").write_text(
                json.dumps(self.plan_dict, default=_json_default) + "\n",
                encoding="utf-8",
            )
            if self.study_text is not None:
                (tmp / "study.yaml").write_text(self.study_text, encoding="utf-8")
            if self.timing is not None:
                (tmp / "timing.json").write_text(
                    json.dumps(self.timing, indent=2) + "\n", encoding="utf-8"
                )
            if self.predictions is not None:
                write_predictions(self.predictions, tmp / "predictions.csv")
            if report:
                self._write_report(tmp)
            (tmp / "results.json").write_text(self.to_json() + "\n", encoding="utf-8")
            old_figures = out / REPORT_FILES_DIR
            if (tmp / REPORT_FILES_DIR).is_dir() and old_figures.is_dir():
                shutil.rmtree(old_figures)
            names = sorted(
                p.name for p in tmp.iterdir() if p.name != "results.json"
            ) + ["results.json"]
            for name in names:
                os.replace(tmp / name, out / name)
        finally:
            shutil.rmtree(tmp, ignore_errors=True)
        return out

    def _write_report(self, where: Path) -> None:
        from ._report import write_report

        pred_path = where / "predictions.csv"
        task = str(self.data["data"].get("task") or "classification")
        predictions = (
            read_predictions(pred_path, task=task) if pred_path.is_file() else None
        )
        # plan.json as it will be read back (the same bytes give the same report)
        plan = json.loads(json.dumps(self.plan_dict, default=_json_default))
        results = json.loads(self.to_json())
        write_report(where, results, plan, predictions)

    def write_report(self, out_dir: str | os.PathLike[str]) -> None:
        """Write report.html, report.md and report_files/ for this result into ``out_dir``."""
        from ._report import write_report

        plan = json.loads(json.dumps(self.plan_dict, default=_json_default))
        write_report(out_dir, json.loads(self.to_json()), plan, self.predictions)


def _json_default(o: Any) -> Any:
    if isinstance(o, np.integer):
        return int(o)
    if isinstance(o, np.floating):
        return float(o)
    if isinstance(o, np.ndarray):
        return o.tolist()
    return repr(o)


def edge_notes(plan: Plan, winners: list[UnitRecord]) -> list[str]:
    """Say when the chosen setting sits at an end of its range in most folds."""
    from ..search import Choice, Range

    notes = []
    n = len(winners)
    for c in plan.candidates:
        chosen = [w.settings for w in winners if w.candidate == c.name]
        if not chosen:
            continue
        for key, dim in c.space.items():
            if isinstance(dim, Choice) and all(
                isinstance(v, (int, float)) and not isinstance(v, bool)
                for v in dim.values
            ):
                lo, hi = min(dim.values), max(dim.values)
                if len(set(dim.values)) < 3:
                    continue
            elif isinstance(dim, Range):
                lo, hi = dim.low, dim.high
            else:
                continue
            vals = [
                float(v) for s in chosen if isinstance(v := s.get(key), (int, float))
            ]
            for end, label in ((lo, "low"), (hi, "high")):
                k = sum(
                    1
                    for v in vals
                    if np.isclose(
                        v, end, rtol=0.02 if isinstance(dim, Range) else 1e-12
                    )
                )
                if k and k * 2 >= n:
                    notes.append(
                        f"'{c.name}': {key} was at the {label} end of the range searched ({end:g}) in {k} of "
                        f"{n} outer folds; if that end can be widened, the best setting may lie beyond it"
                    )
    return notes
