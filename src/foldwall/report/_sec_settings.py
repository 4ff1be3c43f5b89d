"""Report sections: the chosen settings and the stability of feature selection."""

from __future__ import annotations

import json
from collections import Counter
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np

from ..exceptions import SpecError
from ._document import Bullets, Facts, Figure, Section, Subheading, Table, Text
from ._figures import (
    SettingTrack,
    settings_svg,
)
from ._predictions import fold_labels
from ._sections import (
    ReportInput,
    ci_text,
    fmt,
    folds_of,
    register_section,
    settings_text,
    space_text,
)

# --------------------------------------------------------------- settings


def _dims(plan: Mapping[str, Any]) -> dict[str, dict[str, Any]]:
    return {c["name"]: dict(c.get("space") or {}) for c in plan.get("candidates") or []}


def _is_number(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def _stability_row(name: str, key: str, dim: Any, vals: list[Any]) -> tuple[str, ...]:
    counts = Counter(json.dumps(v) for v in vals)
    top, k = counts.most_common(1)[0]
    nums = [v for v in vals if _is_number(v)]
    spread = "-"
    if len(nums) == len(vals):
        spread = f"{fmt(min(nums), 4)} to {fmt(max(nums), 4)}"
    most = f"{fmt(json.loads(top), 4)} ({k} of {len(vals)})"
    return (name, key, str(len(counts)), most, spread, space_text(dim))


def _track(
    name: str, key: str, dim: Any, folds: list[Mapping[str, Any]]
) -> SettingTrack:
    values = tuple(
        f.get("settings", {}).get(key) if f["chosen"] == name else None for f in folds
    )
    if isinstance(dim, Mapping) and "between" in dim:
        low, high = float(dim["between"][0]), float(dim["between"][1])
        return SettingTrack(name, key, values, low, high, (), dim.get("scale") == "log")
    choices = tuple(dim) if isinstance(dim, list) else ()
    return SettingTrack(name, key, values, choices=choices)


def _fold_settings_table(folds: list[Mapping[str, Any]]) -> Table:
    rows = tuple(
        (
            str(f["repeat"]),
            str(f["fold"]),
            str(f["chosen"]),
            settings_text(f.get("settings")),
        )
        for f in folds
    )
    cols = ("repeat", "fold", "chosen candidate", "chosen settings")
    return Table(cols, rows, numeric=(True, True, False, False))


def _stability_blocks(rows: list[tuple[str, ...]], notes: list[str]) -> list[Any]:
    blocks: list[Any] = []
    if rows:
        cols = (
            "candidate",
            "setting",
            "distinct values chosen",
            "most frequent (folds)",
            "values chosen",
            "range searched",
        )
        blocks.append(Subheading("How stable the chosen settings were"))
        numeric = (False, False, True, False, False, False)
        blocks.append(Table(cols, tuple(rows), numeric=numeric))
    if notes:
        blocks.append(Bullets(tuple(notes), kind="note"))
    elif rows:
        blocks.append(
            Text(
                "No chosen setting sat at an end of its searched range in half or "
                "more of the outer folds."
            )
        )
    return blocks


def _settings_figure(
    tracks: list[SettingTrack], folds: list[Mapping[str, Any]]
) -> Figure:
    more = f" Showing 8 of {len(tracks)} settings." if len(tracks) > 8 else ""
    return Figure(
        "settings",
        settings_svg(tracks[:8], fold_labels(folds)),
        "The value each searched setting took in each outer fold, with the ends of "
        "the range searched (dotted); a setting pressed against an end in most folds "
        "suggests the range was too narrow." + more,
        "Chosen setting values per outer fold with the searched range.",
    )


def _settings(inp: ReportInput) -> Section:
    r = inp.results
    folds = folds_of(inp)
    blocks: list[Any] = [_fold_settings_table(folds)]
    cands = [c for c in r.get("candidates") or [] if c.get("role") == "candidate"]
    if len(cands) > 1:
        won = "; ".join(
            f"'{c['name']}' in {c.get('chosen_in_folds', 0)} of {len(folds)} outer folds"
            for c in cands
        )
        blocks.append(Text(f"How often each candidate was chosen: {won}."))
    dims = _dims(inp.plan)
    rows: list[tuple[str, ...]] = []
    tracks: list[SettingTrack] = []
    for c in cands:
        name = c["name"]
        for key, dim in dims.get(name, {}).items():
            vals = [
                f.get("settings", {}).get(key) for f in folds if f["chosen"] == name
            ]
            if vals:
                rows.append(_stability_row(name, key, dim, vals))
                tracks.append(_track(name, key, dim, folds))
    notes = [x for x in r.get("notes") or [] if "end of the range" in x]
    blocks += _stability_blocks(rows, notes)
    if tracks:
        blocks.append(_settings_figure(tracks, folds))
    return Section("settings", "Chosen settings and their stability", tuple(blocks))


# ------------------------------------------------------- feature selection


def selection_matrix(
    folds: Sequence[Mapping[str, Any]], n_features: int
) -> tuple[np.ndarray, list[str]]:
    """Binary matrix (outer folds with a selection x features) and the kept column names.

    Columns beyond the names kept in some fold are all zero; only their number matters.
    """
    runs = [
        f["selected_features"] for f in folds if f.get("selected_features") is not None
    ]
    names = sorted({n for run in runs for n in run})
    if n_features < len(names):
        raise SpecError(
            f"feature selection: {len(names)} distinct kept columns but only {n_features} features"
        )
    z = np.zeros((len(runs), n_features), dtype=int)
    pos = {n: j for j, n in enumerate(names)}
    for i, run in enumerate(runs):
        for n in run:
            z[i, pos[n]] = 1
    return z, names


def _feature_selection(inp: ReportInput) -> Section:
    from ..compare._stability import selection_stability

    r = inp.results
    fs = r.get("feature_selection")
    title = "Feature-selection stability"
    if not fs:
        return Section(
            "feature-selection",
            title,
            (
                Text(
                    "None of the chosen pipelines has a step that reports which input columns it kept (scikit-learn's "
                    "get_support), so there are no selections to compare."
                ),
            ),
        )
    folds = folds_of(inp)
    d = int((r.get("data") or {}).get("n_features") or 0)
    z, _ = selection_matrix(folds, d)
    blocks: list[Any] = []
    try:
        st = selection_stability(z)
    except SpecError as exc:
        blocks.append(
            Text(f"Stability cannot be computed here: {str(exc).split(': ', 1)[-1]}")
        )
    else:
        blocks.append(
            Facts(
                (
                    ("stability (Nogueira et al. 2018)", fmt(st.stability)),
                    (
                        "95% interval",
                        (
                            f"{ci_text(st.ci)} (the paper's normal approximation: too "
                            "narrow with few folds; it covered the true value in about "
                            "7 of 10 simulated cases at 5 folds, 85 of 100 at 10)"
                        ),
                    ),
                    ("selections compared", f"{st.n_runs} outer folds"),
                    (
                        "features",
                        f"{st.n_features}, of which {fmt(st.mean_size, 1)} kept on average",
                    ),
                )
            )
        )
        blocks.append(
            Text(
                "1 means every fold kept the same columns; about 0 means the kept columns agree no more "
                "than columns drawn at random would (the estimate is corrected for chance and can be "
                "negative). Nogueira, Sechidis & Brown (2018), JMLR 18(174)."
            )
        )
    n_f = int(fs.get("n_folds") or len(folds))
    if int(fs.get("folds_with_selection") or 0) < n_f:
        blocks.append(
            Text(
                f"Only {fs.get('folds_with_selection')} of {n_f} outer folds chose a pipeline that "
                f"reports its kept columns; the others are left out.",
                kind="note",
            )
        )
    times = fs.get("times_selected") or {}
    m = int(fs.get("folds_with_selection") or n_f) or 1
    top = list(times.items())[:30]
    blocks.append(
        Table(
            ("input column", "kept in folds", "share"),
            tuple((k, str(v), f"{int(v) / m:.0%}") for k, v in top),
            caption="How often each input column was kept"
            + (f" (the 30 most frequent of {len(times)})" if len(times) > 30 else ""),
            numeric=(False, True, True),
        )
    )
    return Section("feature-selection", title, tuple(blocks))


def _register() -> None:
    for key, title, order, build in (
        ("settings", "Chosen settings and their stability", 50, _settings),
        ("feature-selection", "Feature-selection stability", 60, _feature_selection),
    ):
        register_section(key, title=title, order=order, build=build, replace=True)


_register()
