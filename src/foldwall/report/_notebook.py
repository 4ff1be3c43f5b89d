"""A result in a Python session: a one-line ``repr`` and a compact HTML summary for notebooks."""

from __future__ import annotations

import html
from collections.abc import Mapping
from typing import Any

from ._figures import metric_label
from ._sections import fmt

__all__ = ["short_repr", "summary_html"]


def short_repr(results: Mapping[str, Any]) -> str:
    """One line: study, headline with its interval, folds, control p.

    Examples
    --------
    ``Result('breath pilot': roc_auc 0.716 (95% CI 0.614 to 0.818) over 5 outer folds;
    control p = 0.25 from m = 3)``
    """
    st = results.get("study") or {}
    sc = results.get("score") or {}
    name = st.get("name") or "study"
    ci = sc.get("ci")
    ci_s = f" (95% CI {fmt(ci[0])} to {fmt(ci[1])})" if ci else ""
    out = (
        f"Result({name!r}: {sc.get('metric')} {fmt(sc.get('mean'))}{ci_s} over "
        f"{sc.get('n_folds')} outer folds"
    )
    ctl = results.get("control")
    if ctl:
        out += f"; control p = {fmt(ctl.get('p_value'), 4)} from m = {ctl.get('permutations')}"
    return out + ")"


def _e(v: Any) -> str:
    return html.escape(str(v), quote=True)


def summary_html(results: Mapping[str, Any]) -> str:
    """A compact HTML summary (headline, folds, control, comparisons, audit) for notebooks.

    Plain HTML with one scoped ``<style>``; no script, no external resource.
    """
    st = results.get("study") or {}
    d = results.get("data") or {}
    sc = results["score"]
    m = str(sc["metric"])
    ci = sc.get("ci")
    ref = results.get("reference") or {}
    chance = (ref.get("score") or {}).get("mean")
    parts = [
        '<div class="foldwall-summary">',
        (
            "<style>.foldwall-summary table{border-collapse:collapse;font-size:90%}"
            ".foldwall-summary td,.foldwall-summary th{padding:2px 8px;text-align:right}"
            ".foldwall-summary td:nth-child(5),.foldwall-summary th:nth-child(5){text-align:left}"
            ".foldwall-summary .muted{color:#666}</style>"
        ),
        (
            f"<p><b>{_e(st.get('name') or 'study')}</b>: {_e(d.get('n_samples'))} rows, "
            f"{_e(d.get('n_features'))} features, target '{_e(d.get('target'))}'</p>"
        ),
        f"<p><b>{_e(metric_label(m))}</b> of the whole procedure on outer test rows: "
        f"<b>{_e(fmt(sc['mean']))}</b>"
        + (f" (95% CI {_e(fmt(ci[0]))} to {_e(fmt(ci[1]))}, corrected t)" if ci else "")
        + f" over {_e(sc.get('n_folds'))} outer folds"
        + (f"; chance level {_e(fmt(chance))}" if chance is not None else "")
        + "</p>",
    ]
    rows = "".join(
        f"<tr><td>{_e(f['repeat'])}</td><td>{_e(f['fold'])}</td><td>{_e(f['n_train'])}</td>"
        f"<td>{_e(f['n_test'])}</td><td>{_e(f['chosen'])}</td><td>{_e(fmt(f.get('inner_score')))}</td>"
        f"<td>{_e(fmt(f.get('test_' + m)))}</td><td>{_e(fmt(f.get('train_' + m)))}</td></tr>"
        for f in results.get("folds") or []
    )
    parts.append(
        "<table><thead><tr><th>repeat</th><th>fold</th><th>n train</th><th>n test</th><th>chosen</th>"
        f"<th>inner</th><th>test</th><th>train</th></tr></thead><tbody>{rows}</tbody></table>"
    )
    ctl = results.get("control")
    if ctl:
        parts.append(
            f"<p><b>random-label control</b>: p = {_e(fmt(ctl.get('p_value'), 4))} from m = "
            f"{_e(ctl.get('permutations'))} permutations (null mean {_e(fmt(ctl.get('null_mean')))}). "
            f"{_e(ctl.get('statement') or '')}</p>"
        )
    for c in results.get("comparisons") or []:
        if c.get("statement"):
            parts.append(f"<p>{_e(c['statement'])}</p>")
    a = results.get("audit") or {}
    parts.append(
        f'<p class="muted">row audit: {_e(a.get("fits"))} step fits audited; outer-test rows seen by any fit: '
        f"{_e(a.get('test_rows_seen'))}. The full report is report.html in the run folder.</p>"
    )
    parts.append("</div>")
    return "".join(parts)
