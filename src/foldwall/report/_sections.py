"""The report's sections: a small registry and one builder per section.

A builder takes a :class:`ReportInput` (the content of results.json and plan.json,
and the predictions table) and returns a :class:`Section`, or None when it has
nothing to say for this run. Other parts of foldwall add their own section with
:func:`register_section` at an ``order`` between the built-in ones.

Orders of the built-in sections, and the room kept for sections to come::

    10 study and data          20 plan                     30 headline estimate
    35 out-of-fold predictions 40 outer folds              50 chosen settings
    60 feature selection       70 random-label control     80 comparisons
    85 data audits       (the table audits, ``_sec_audits.py``; results.json "audits")
    86 rater agreement   (kept for several raters, issue 12; results.json "raters")
    87 hold-out and ledger (kept for issue 14; results.json "holdout", "ledger")
    90 row audit          100 reproducibility          110 cautions
   120 reporting checklist

The built-in builders live in ``_sec_setup.py`` (10-30), ``_sec_estimates.py``
(35-40), ``_sec_settings.py`` (50-60), ``_sec_checks.py`` (70-110) and
``_checklist.py`` (120); each registers its own sections when imported.
"""

from __future__ import annotations

import json
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, replace
from typing import Any

import numpy as np
import pandas as pd

from ..exceptions import SpecError
from ._document import Section

__all__ = [
    "ReportInput",
    "SectionSpec",
    "build_sections",
    "chance_of",
    "chosen_predictions",
    "ci_text",
    "fmt",
    "folds_of",
    "loop_text",
    "register_section",
    "registered_sections",
    "rows_text",
    "section_title",
    "sentence",
    "settings_text",
    "space_text",
    "true_by_row",
]


@dataclass(frozen=True)
class ReportInput:
    """What a report is built from; nothing else is read, nothing is fitted.

    Attributes
    ----------
    results : mapping
        The content of results.json.
    plan : mapping
        The content of plan.json.
    predictions : pandas.DataFrame or None
        The predictions table (see ``PREDICTION_COLUMNS``), or None when missing.
    command : str or None
        The command that reproduces the run, when known.
    run_dir : str or None
        The run folder, as the user named it (for the rebuild command).
    clinical : bool or None
        Whether the study is marked clinical; None: read it from results.json.
    """

    results: Mapping[str, Any]
    plan: Mapping[str, Any]
    predictions: pd.DataFrame | None = None
    command: str | None = None
    run_dir: str | None = None
    clinical: bool | None = None

    @property
    def metric(self) -> str:
        return str(self.results["score"]["metric"])

    @property
    def is_clinical(self) -> bool:
        if self.clinical is not None:
            return self.clinical
        study = self.results.get("study") or {}
        if isinstance(study.get("clinical"), bool):
            return bool(study["clinical"])
        return any("regulation" in c for c in self.results.get("cautions") or [])


Builder = Callable[[ReportInput], Section | None]


@dataclass(frozen=True)
class SectionSpec:
    """A registered section: its anchor ``key``, heading, place and builder."""

    key: str
    title: str
    order: int
    build: Builder


_REGISTRY: dict[str, SectionSpec] = {}

# The modules whose import registers the built-in sections.
BUILTIN_MODULES = (
    "_sec_setup",
    "_sec_estimates",
    "_sec_settings",
    "_sec_checks",
    "_sec_raters",
    "_sec_audits",
    "_sec_holdout",
    "_checklist",
)


def register_section(
    key: str, *, title: str, order: int, build: Builder, replace: bool = False
) -> None:
    """Add a section to every report.

    Parameters
    ----------
    key : str
        Anchor of the section (lower case, letters, digits and hyphens).
    title : str
        Its heading.
    order : int
        Its place; see the module docstring for the built-in orders and the room
        kept between them.
    build : callable
        ``build(ReportInput) -> Section | None``; None leaves the section out.
        It must not fit anything or read files: the report is rebuilt from the
        stored results alone.
    replace : bool, default=False
        Allow a new builder for a key already registered.

    Raises
    ------
    SpecError
        On a malformed key, or a key already registered without ``replace``.
    """
    if (
        not key
        or not all(ch.isascii() and (ch.isalnum() or ch == "-") for ch in key)
        or key != key.lower()
    ):
        raise SpecError(
            f"register_section: key {key!r} must be lower case letters, digits and hyphens"
        )
    if key in _REGISTRY and not replace:
        raise SpecError(
            f"register_section: a section '{key}' is already registered; pass replace=True to swap it"
        )
    _REGISTRY[key] = SectionSpec(key=key, title=title, order=int(order), build=build)


def registered_sections() -> list[SectionSpec]:
    """The registered sections in report order."""
    # The built-in builders register themselves when their modules are imported.
    import importlib

    for name in BUILTIN_MODULES:
        importlib.import_module(f"{__package__}.{name}")
    return sorted(_REGISTRY.values(), key=lambda s: (s.order, s.key))


def build_sections(inp: ReportInput) -> list[Section]:
    """Every registered section that has something to say for this run, in order."""
    out = []
    for spec in registered_sections():
        sec = spec.build(inp)
        if sec is not None:
            out.append(replace(sec, key=spec.key, title=spec.title))
    return out


def section_title(key: str) -> str:
    """The heading of a registered section (the key itself when unknown)."""
    spec = _REGISTRY.get(key)
    return spec.title if spec else key


# ------------------------------------------------------------------ helpers


def fmt(v: Any, nd: int = 3) -> str:
    """A number as the report shows it; '-' for missing values."""
    if v is None:
        return "-"
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, (int, np.integer)):
        return str(int(v))
    if isinstance(v, (float, np.floating)):
        x = float(v)
        if not np.isfinite(x):
            return "-"
        if x != 0 and (abs(x) >= 10**6 or abs(x) < 10 ** (-nd)):
            return f"{x:.{nd}g}"
        return f"{x:.{nd}f}"
    return str(v)


def sentence(text: str) -> str:
    """Text as a sentence: capital first letter, full stop at the end."""
    t = text.strip()
    if not t:
        return ""
    return t[0].upper() + t[1:] + ("" if t.endswith(".") else ".")


def ci_text(ci: Sequence[float] | None, nd: int = 3) -> str:
    return "-" if not ci else f"{fmt(ci[0], nd)} to {fmt(ci[1], nd)}"


def settings_text(s: Mapping[str, Any] | None) -> str:
    if not s:
        return "(defaults)"
    return ", ".join(
        f"{k}={fmt(v, 4) if isinstance(v, float) else v}" for k, v in sorted(s.items())
    )


def space_text(dim: Any) -> str:
    if isinstance(dim, list):
        return "one of " + ", ".join(
            fmt(v, 4) if isinstance(v, float) else str(v) for v in dim
        )
    if isinstance(dim, Mapping) and "between" in dim:
        lo, hi = dim["between"]
        bits = [str(dim.get("scale", "linear")) + " scale"]
        if dim.get("integer"):
            bits.append("whole numbers")
        if dim.get("grid_points"):
            bits.append(f"{dim['grid_points']} grid points")
        return f"{fmt(lo, 4)} to {fmt(hi, 4)} ({', '.join(bits)})"
    return json.dumps(dim, sort_keys=True)


def loop_text(loop: Mapping[str, Any], *, outer: bool) -> str:
    bits = [str(loop.get("splitter", "?")), f"{loop.get('folds', '?')} folds"]
    if loop.get("shuffle"):
        bits.append("shuffled")
    if loop.get("stratified"):
        bits.append("stratified by class")
    if loop.get("grouped"):
        bits.append("grouped (a group never on both sides)")
    if outer:
        reps = int(loop.get("repeats", 1) or 1)
        bits.append(f"{reps} repeat{'s' if reps != 1 else ''}")
    return ", ".join(bits)


def folds_of(inp: ReportInput) -> list[Mapping[str, Any]]:
    return list(inp.results.get("folds") or [])


def chosen_predictions(inp: ReportInput) -> pd.DataFrame | None:
    p = inp.predictions
    if p is None or p.empty:
        return None
    return p[p["chosen"]]


def true_by_row(inp: ReportInput) -> dict[int, str] | None:
    p = inp.predictions
    if p is None or p.empty:
        return None
    first = p.drop_duplicates("row")
    return {int(r): str(t) for r, t in zip(first["row"], first["true"], strict=True)}


def rows_text(n_folds: int, repeats: int) -> str:
    if repeats > 1:
        return f"{n_folds} outer folds ({repeats} repeats of {n_folds // repeats})"
    return f"{n_folds} outer folds"


def chance_of(inp: ReportInput) -> float | None:
    ref = inp.results.get("reference")
    if ref and ref.get("score"):
        return float(ref["score"]["mean"])
    ctl = inp.results.get("control")
    if ctl and ctl.get("chance_level") is not None:
        return float(ctl["chance_level"])
    return None
