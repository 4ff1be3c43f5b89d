"""Build the report of a run and write ``report.html``, ``report.md`` and ``report_files/``.

The report is a function of results.json, plan.json and predictions.csv alone:
nothing is fitted, nothing is timed, nothing depends on the clock, so a report
rebuilt from a run folder is byte-identical to the one the run wrote.
"""

from __future__ import annotations

import json
import os
import shutil
import tempfile
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pandas as pd

from .._version import __version__
from ..exceptions import SpecError
from ._document import Document, render_html, render_markdown
from ._figures import metric_label
from ._predictions import read_predictions
from ._sections import ReportInput, build_sections, fmt

__all__ = [
    "REPORT_FILES_DIR",
    "ReportFiles",
    "build_report",
    "rebuild_report",
    "write_report",
]

REPORT_FILES_DIR = "report_files"


@dataclass(frozen=True)
class ReportFiles:
    """Paths of the files a report was written to."""

    html: Path
    markdown: Path
    figures: tuple[Path, ...]


def build_report(
    results: Mapping[str, Any],
    plan: Mapping[str, Any],
    predictions: pd.DataFrame | None = None,
    *,
    command: str | None = None,
    run_dir: str | None = None,
    clinical: bool | None = None,
) -> Document:
    """The report of a run as a :class:`Document` (render it with ``render_html``/``render_markdown``).

    Parameters
    ----------
    results : mapping
        The content of results.json.
    plan : mapping
        The content of plan.json.
    predictions : pandas.DataFrame, default=None
        The predictions table (content of predictions.csv); without it the
        curves from out-of-fold predictions and the per-fold class counts are left out.
    command : str, default=None
        The command that reproduces the run.
    run_dir : str, default=None
        The run folder as the user named it, for the rebuild command.
    clinical : bool, default=None
        Whether the study is marked clinical (adds TRIPOD+AI to the checklist);
        None reads it from results.json.
    """
    inp = ReportInput(
        results=results,
        plan=plan,
        predictions=predictions,
        command=command,
        run_dir=run_dir,
        clinical=clinical,
    )
    sections = tuple(build_sections(inp))
    st = results.get("study") or {}
    d = results.get("data") or {}
    sc = results["score"]
    name = st.get("name") or "study"
    ci = sc.get("ci")
    ci_text = f" (95% interval {fmt(ci[0])} to {fmt(ci[1])})" if ci else ""
    subtitle = (
        f"{metric_label(sc['metric'])} {fmt(sc['mean'])}{ci_text} on outer test rows; {d.get('n_samples')} "
        f"rows, {d.get('task')}; nested cross-validation over {sc.get('n_folds')} outer folds"
    )
    footer = (
        f"Written by foldwall {__version__} from results.json, plan.json and predictions.csv of the run, "
        f"without fitting anything. Internal validation only: see Cautions."
    )
    return Document(
        title=f"{name}: evaluation report",
        subtitle=subtitle,
        sections=sections,
        footer=footer,
    )


def _write_text(path: Path, text: str) -> None:
    path.write_text(text, encoding="utf-8", newline="\n")


def write_report(
    out_dir: str | os.PathLike[str],
    results: Mapping[str, Any],
    plan: Mapping[str, Any],
    predictions: pd.DataFrame | None = None,
    *,
    command: str | None = None,
    run_dir: str | None = None,
    clinical: bool | None = None,
) -> ReportFiles:
    """Write ``report.html``, ``report.md`` and the plots in ``report_files/`` into ``out_dir``.

    Everything is written to a temporary folder first and moved into place, so an
    interrupted write never leaves a half-written report beside old plots.
    Parameters are those of :func:`build_report`.
    """
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    doc = build_report(
        results, plan, predictions, command=command, run_dir=run_dir, clinical=clinical
    )
    html = render_html(doc)
    md, files = render_markdown(doc, REPORT_FILES_DIR)
    tmp = Path(tempfile.mkdtemp(prefix=".report.partial-", dir=out))
    try:
        figdir = tmp / REPORT_FILES_DIR
        figdir.mkdir()
        for name, svg in sorted(files.items()):
            _write_text(figdir / name, svg)
        _write_text(tmp / "report.md", md)
        _write_text(tmp / "report.html", html)
        old = out / REPORT_FILES_DIR
        if old.exists():
            shutil.rmtree(old)
        os.replace(figdir, old)
        os.replace(tmp / "report.md", out / "report.md")
        os.replace(tmp / "report.html", out / "report.html")
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    return ReportFiles(
        html=out / "report.html",
        markdown=out / "report.md",
        figures=tuple(out / REPORT_FILES_DIR / n for n in sorted(files)),
    )


def read_run(
    run_dir: str | os.PathLike[str],
) -> tuple[dict[str, Any], dict[str, Any], pd.DataFrame | None]:
    """results.json, plan.json and predictions.csv (None when absent) of a run folder.

    Raises
    ------
    SpecError
        When the folder holds no results.json or plan.json.
    """
    path = Path(run_dir)
    res_path, plan_path = path / "results.json", path / "plan.json"
    for p in (res_path, plan_path):
        if not p.is_file():
            raise SpecError(
                f"'{run_dir}' holds no {p.name}; give the folder of a finished run"
            )
    results = json.loads(res_path.read_text(encoding="utf-8"))
    plan = json.loads(plan_path.read_text(encoding="utf-8"))
    pred_path = path / "predictions.csv"
    task = str((results.get("data") or {}).get("task") or "classification")
    predictions = (
        read_predictions(pred_path, task=task) if pred_path.is_file() else None
    )
    return results, plan, predictions


def rebuild_report(
    run_dir: str | os.PathLike[str], *, command: str | None = None
) -> ReportFiles:
    """Rebuild the report of a finished run from its files, without fitting anything."""
    results, plan, predictions = read_run(run_dir)
    return write_report(run_dir, results, plan, predictions, command=command)
