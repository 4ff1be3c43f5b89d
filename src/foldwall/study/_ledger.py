"""A study's use of its table's ledger: where the file is, the entry, the ledger section.

Every run of a study appends one entry to the table's ledger (``docs/holdout.md``);
the run's ``results.json`` then says how many studies were run on the table before,
the control's p-value adjusted over all of them (Holm), and how often the hold-out
was opened. A ledger that cannot be written costs one line, never the results.
"""

from __future__ import annotations

import hashlib
import json
import os
from pathlib import Path
from typing import Any

from .._version import __version__
from ..exceptions import DataError, RunError, SpecError
from ..store import (
    LedgerEntry,
    append_or_explain,
    control_family,
    default_ledger_path,
    ledger_history,
    read_entries,
)
from ..table import Dataset, file_sha256

__all__ = [
    "ONLY_FIRST",
    "ledger_listing",
    "ledger_path",
    "ledger_section",
    "record_opening",
    "record_run",
    "study_hash",
    "table_key",
]

JSONDict = dict[str, Any]

ONLY_FIRST = (
    "only the first opening of a hold-out is an unbiased estimate; every later "
    "opening follows choices that may have been made after seeing it"
)


def ledger_path(
    setting: str | bool | None, *, table: str | None, base_dir: Path | None
) -> Path | None:
    """Where a study's ledger lives, or None when it keeps none.

    ``True`` (the study file's default): beside the table file; a path: that file,
    relative to the study file's folder; ``False`` or ``None``: no ledger (a study
    run from Python on arrays has no table file, so it keeps one only when
    ``ledger=`` names it).
    """
    if setting is False or setting is None:
        return None
    if setting is True:
        return (
            None
            if table is None
            else Path(os.path.normpath(default_ledger_path(table)))
        )
    path = Path(setting)
    if not path.is_absolute() and base_dir is not None:
        path = base_dir / path
    return Path(os.path.normpath(path))


def table_key(data: Dataset) -> str:
    """The ledger's key of the table: the table file's SHA-256.

    For arrays passed from Python it is the SHA-256 of the target (and groups) as
    text lines: studies of the same labels, on whatever features, are studies of
    one table.
    """
    if data.sha256_of == "table file" and data.sha256:
        return str(data.sha256)
    h = hashlib.sha256(b"foldwall-labels\n")
    h.update("\n".join(map(str, data.y)).encode("utf-8"))
    if data.groups is not None:
        h.update(b"\ngroups\n")
        h.update("\n".join(map(str, data.groups)).encode("utf-8"))
    return h.hexdigest()


def study_hash(source_sha: str | None, plan_dict: JSONDict, features: list[str]) -> str:
    """The study's hash: its file's SHA-256, or (from Python) its plan and features."""
    if source_sha:
        return source_sha
    text = json.dumps(
        {"plan": plan_dict, "features": features}, sort_keys=True, default=str
    )
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _comparison_ps(results: JSONDict) -> dict[str, float | None]:
    out: dict[str, float | None] = {}
    for row in results.get("comparisons") or []:
        p = row.get("p_value")
        out[f"{row['a']} vs {row['b']}"] = None if p is None else float(p)
    return out


def record_run(
    path: Path,
    results: JSONDict,
    *,
    data: Dataset,
    name: str,
    hash_: str,
    location: str | None,
) -> JSONDict:
    """Append a run to the ledger and return results.json's ``ledger`` section."""
    control = results.get("control") or None
    entry = LedgerEntry(
        table_hash=table_key(data),
        kind="run",
        study_name=name,
        study_hash=hash_,
        metric=results["score"]["metric"],
        score=float(results["score"]["mean"]),
        control_p=None if control is None else float(control["p_value"]),
        comparison_p=_comparison_ps(results),
        holdout=None if data.holdout is None else data.holdout.key,
        foldwall_version=__version__,
        location=location,
    )
    permutations = None if control is None else int(control["permutations"])
    return _append_and_describe(path, entry, permutations=permutations)


def record_opening(
    path: Path,
    *,
    data: Dataset,
    name: str,
    hash_: str,
    metric: str,
    score: float,
    p_value: float | None,
    holdout_key: str,
    location: str | None,
) -> JSONDict:
    """Append an opening of the hold-out and return the ledger facts about it."""
    entry = LedgerEntry(
        table_hash=table_key(data),
        kind="opening",
        study_name=name,
        study_hash=hash_,
        metric=metric,
        score=score,
        control_p=p_value,
        holdout=holdout_key,
        holdout_opened=True,
        foldwall_version=__version__,
        location=location,
    )
    return _append_and_describe(path, entry, permutations=None)


def _append_and_describe(
    path: Path, entry: LedgerEntry, *, permutations: int | None
) -> JSONDict:
    stored, message = append_or_explain(path, entry)
    if stored is None:
        return {"file": str(path), "written": False, "message": message}
    try:
        entries = read_entries(path, entry.table_hash)
    except RunError as exc:  # the entry is written; say why there is no history
        return {
            "file": str(path),
            "written": True,
            "message": f"the ledger was written but could not be read back ({exc})",
        }
    return ledger_section(
        path, entries, stored, own_p=entry.control_p, permutations=permutations
    )


def ledger_section(
    path: Path,
    entries: list[LedgerEntry],
    stored: LedgerEntry,
    *,
    own_p: float | None,
    permutations: int | None,
) -> JSONDict:
    """What the ledger says about one stored entry, as it stood when it was written."""
    assert stored.entry_id is not None
    history = ledger_history(
        entries,
        study_hash=stored.study_hash,
        holdout=stored.holdout,
        before=stored.entry_id,
    )
    out: JSONDict = {
        "file": str(path),
        "written": True,
        "message": None,
        "table_sha256": stored.table_hash,
        "study_sha256": stored.study_hash,
        "studies_before": history.n_prior_studies,
        "prior_studies": list(history.prior_studies),
    }
    if stored.kind == "run":
        family = control_family(entries, upto=stored.entry_id)
        adjusted = family.adjusted_for(stored.study_hash)
        out["control"] = {
            "p_value": own_p,
            "p_adjusted": adjusted,
            "correction": "holm",
            "family_size": family.size,
            "family": family.to_dict()["members"],
            "without_control": list(family.without_control),
            "smallest_possible_adjusted": None
            if permutations is None
            else family.smallest_attainable(permutations),
            "meaning": "the control's p-value adjusted for every distinct study run on "
            "this table so far (Holm 1979); it grows as more studies are run, and "
            "`foldwall ledger` shows it as it stands now",
        }
    if stored.holdout is not None:
        first = history.openings[0] if history.openings else None
        out["holdout"] = {
            "key": stored.holdout,
            "openings_before": history.n_prior_openings,
            "first_opened_by": None if first is None else first.study_name,
            "first_opened_at": None if first is None else first.time,
            "studies_without_this_holdout": list(history.other_holdout_studies),
            "note": ONLY_FIRST if history.n_prior_openings else None,
        }
    return out


def ledger_listing(table: Path, ledger: Path | None = None) -> JSONDict:
    """Everything the ledger of a table file holds, with the Holm family as it stands.

    Parameters
    ----------
    table : Path
        The table file; its SHA-256 selects the entries.
    ledger : Path, default=None
        The ledger file; by default the one beside the table.

    Raises
    ------
    DataError
        If the table file does not exist.
    SpecError
        If there is no ledger, or the file is not one (one line with the fix).
    """
    if not table.exists():
        raise DataError(f"TABLE: file '{table}' does not exist; give the table's path")
    if not table.is_file():
        raise DataError(f"TABLE: '{table}' is not a file; give the table file's path")
    path = ledger if ledger is not None else default_ledger_path(table)
    key = file_sha256(table)
    try:
        every = read_entries(path)
    except RunError as exc:
        where = "--ledger" if ledger is not None else "the ledger beside the table"
        said = str(exc).rstrip(".")
        if "; give" not in said:
            said += (
                "; give the path of the table's ledger file with --ledger (a study "
                "file's `ledger:` key says where it is)"
            )
        raise SpecError(f"{where}: {said}") from None
    mine = [e for e in every if e.table_hash == key]
    family = control_family(mine)
    adjusted = dict(zip(family.study_hashes, family.adjusted, strict=True))
    openings: dict[str, list[str]] = {}
    for e in mine:
        if e.kind == "opening" and e.holdout is not None:
            openings.setdefault(e.holdout, []).append(e.study_name)
    return {
        "table": str(table),
        "table_sha256": key,
        "ledger": str(path),
        "entries": [
            {
                **e.to_dict(),
                "p_adjusted_now": adjusted.get(e.study_hash)
                if e.kind == "run"
                else None,
            }
            for e in mine
        ],
        "family": family.to_dict(),
        "openings": [
            {"holdout": k, "times": len(v), "first_by": v[0]}
            for k, v in openings.items()
        ],
        "other_tables": len(every) - len(mine),
    }
