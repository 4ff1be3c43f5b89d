"""Numbers in recipe READMEs and docs, checked against a fresh run's results.json.

A page marks a number it took from a run with an HTML comment right after it,
naming where the number lives in results.json (the comment does not show when the
page is rendered)::

    roc_auc 0.894<!-- = score.mean --> over 4 outer folds; the forest won
    0<!-- = candidates[name=forest].chosen_in_folds --> folds.

A path is keys and list positions joined by dots: ``score.ci.0``,
``comparisons.0.p_value``, or a list item picked by a field,
``candidates[name=forest]``. The number is compared at the precision written
(``0.894`` against the value rounded to 3 decimals; ``41.7%`` against 100 x the
value rounded to 1 decimal; integers exactly).
"""

from __future__ import annotations

import re
from typing import Any

__all__ = ["MARK", "check_numbers", "lookup"]

MARK = re.compile(r"(-?\d+(?:\.\d+)?)(%?)\s*<!--\s*=\s*([^>]+?)\s*-->")
_PART = re.compile(r"([^.\[\]]+)|\[([^=\]]+)=([^\]]+)\]|\[(\d+)\]")


def lookup(data: Any, path: str) -> Any:
    """The value at ``path`` in ``data`` (see the module docstring); KeyError when absent."""
    cur = data
    for m in _PART.finditer(path):
        key, field, value, index = m.groups()
        if index is not None:
            cur = cur[int(index)]
        elif field is not None:
            hits = [x for x in cur if str(x.get(field)) == value]
            if len(hits) != 1:
                raise KeyError(f"{path}: {len(hits)} items with {field}={value}")
            cur = hits[0]
        elif isinstance(cur, list):
            cur = cur[int(key)]
        else:
            if key not in cur:
                raise KeyError(f"{path}: no key '{key}'")
            cur = cur[key]
    return cur


def check_numbers(
    text: str, results: dict[str, Any], *, skip: tuple[str, ...] = ()
) -> list[str]:
    """Every marked number that disagrees with ``results``, as one line each (empty: all agree).

    Parameters
    ----------
    text : str
        The Markdown page.
    results : dict
        The content of a fresh run's results.json.
    skip : tuple of str
        Path prefixes not checked (for example ``("control.",)`` when the test ran
        fewer permutations than the page describes).
    """
    problems = []
    for m in MARK.finditer(text):
        shown, pct, path = m.group(1), m.group(2), m.group(3)
        if any(path.startswith(s) for s in skip):
            continue
        line = text.count("\n", 0, m.start()) + 1
        try:
            value = lookup(results, path)
        except (KeyError, IndexError, TypeError, ValueError) as exc:
            problems.append(
                f"line {line}: {shown}{pct} marked '{path}', which results.json does not have ({exc})"
            )
            continue
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            problems.append(f"line {line}: '{path}' is {value!r}, not a number")
            continue
        v = float(value) * (100 if pct else 1)
        decimals = len(shown.split(".")[1]) if "." in shown else 0
        expected = f"{v:.{decimals}f}"
        if shown.lstrip("-") != expected.lstrip("-") or (
            float(shown) != 0 and shown[0] != expected[0]
        ):
            problems.append(
                f"line {line}: the page says {shown}{pct} for '{path}'; a fresh run gives {expected}{pct}"
            )
    return problems
