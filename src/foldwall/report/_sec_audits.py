"""Report section: the data audits (table checks, confounds, held-out levels).

Built from results.json's ``audits`` section (docs/audits.md); left out for a run
that has none (results written before the audits existed).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from ._document import Bullets, Facts, Section, Subheading, Table, Text
from ._sections import ReportInput, fmt, register_section

_ORDER = {"problem": 0, "warning": 1, "info": 2}


def _checks(checks: Sequence[Mapping[str, Any]]) -> list[Any]:
    counts = {s: sum(1 for c in checks if c.get("severity") == s) for s in _ORDER}
    blocks: list[Any] = [
        Text(
            f"{len(checks)} checks of the table itself: {counts['problem']} problem(s), "
            f"{counts['warning']} warning(s), {counts['info']} with nothing to report. "
            "A problem means the estimate is very likely inflated as it stands; a "
            "warning, that something may inflate it and should be looked at."
        )
    ]
    ordered = sorted(checks, key=lambda c: _ORDER.get(str(c.get("severity")), 3))
    blocks.append(
        Table(
            ("severity", "check", "finding"),
            tuple(
                (str(c.get("severity")), str(c.get("check")), str(c.get("title")))
                for c in ordered
            ),
        )
    )
    advice = [
        f"{c.get('check')}: {c.get('advice')}"
        for c in ordered
        if c.get("severity") != "info" and c.get("advice")
    ]
    if advice:
        blocks += [Subheading("What to do"), Bullets(tuple(advice))]
    return blocks


def _leave_one_out(loo: Mapping[str, Any]) -> list[Any]:
    levels = loo.get("levels") or []
    rows = tuple(
        (
            str(lv.get("level")),
            str(lv.get("n_test")),
            fmt(lv.get("score")),
            fmt(lv.get("chance")),
            str(lv.get("chosen")),
        )
        for lv in levels
    )
    blocks: list[Any] = [
        Subheading(f"Each level of '{loo.get('column')}' held out in turn"),
        Text(
            f"{loo.get('metric')}: {fmt(loo.get('mean'))} on held-out levels (trivial "
            f"model {fmt(loo.get('chance'))}), against {fmt(loo.get('main_mean'))} in the "
            f"main estimate (trivial model {fmt(loo.get('main_chance'))}). "
            f"{loo.get('rows', '')}"
        ),
        Table(
            ("level", "rows", str(loo.get("metric")), "trivial model", "chosen"),
            rows,
            numeric=(False, True, True, True, False),
        ),
    ]
    skipped = loo.get("skipped") or []
    if skipped:
        blocks.append(
            Text(
                "Not held out: "
                + "; ".join(f"{s.get('level')} ({s.get('why')})" for s in skipped)
                + ".",
                kind="note",
            )
        )
    return blocks


def _confounds(conf: Mapping[str, Any]) -> list[Any]:
    pairs: list[tuple[str, str]] = []
    ao = conf.get("acquisition_outcome")
    if ao:
        pairs.append(
            (
                "acquisition columns -> outcome",
                f"{ao.get('metric')} {fmt(ao.get('score'))} (chance {fmt(ao.get('chance'))}; "
                f"random-label control p = {fmt(ao.get('p_value'), 3)})",
            )
        )
    for fa in conf.get("features_acquisition") or []:
        pairs.append(
            (
                str(fa.get("question")),
                f"{fa.get('metric')} {fmt(fa.get('score'))} (chance {fmt(fa.get('chance'))}; "
                f"p = {fmt(fa.get('p_value'), 3)})",
            )
        )
    ph = conf.get("posthoc")
    if ph:
        kind = "R^2" if ph.get("family") == "gaussian" else "D^2"
        perm = (
            ""
            if ph.get("permutation_p") is None
            else f"; within-cell permutation p = {fmt(ph.get('permutation_p'), 3)}"
        )
        pairs.append(
            (
                "predictions beyond the acquisition (Dinga et al. 2020)",
                f"{kind} {fmt(ph.get('explained_reduced'))} -> {fmt(ph.get('explained_full'))} "
                f"(+{fmt(ph.get('added'))}); likelihood-ratio test p = "
                f"{fmt(ph.get('p_value'), 4)}{perm}",
            )
        )
    if not pairs:
        return []
    return [
        Subheading("How rows were acquired"),
        Text(
            "Each statistic is computed on the study's own outer folds (fitted on every "
            "training part, scored on its test part), with its own random-label control."
        ),
        Facts(tuple(pairs)),
    ]


def _audits(inp: ReportInput) -> Section | None:
    audits = inp.results.get("audits")
    if not isinstance(audits, Mapping):
        return None
    blocks = _checks(audits.get("checks") or [])
    if audits.get("leave_one_out"):
        blocks += _leave_one_out(audits["leave_one_out"])
    if audits.get("confounds"):
        blocks += _confounds(audits["confounds"])
    blocks.append(
        Text(
            "What these checks cover, and which kinds of leakage only the authors can "
            "rule out (Kapoor & Narayanan 2023): docs/audits.md.",
            kind="note",
        )
    )
    return Section("data-audits", "Data audits", tuple(blocks))


register_section(
    "data-audits", title="Data audits", order=85, build=_audits, replace=True
)
