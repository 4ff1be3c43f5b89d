"""The result of one table audit: :class:`AuditCheck`, and helpers shared by the checks.

Every check returns one :class:`AuditCheck` (or a list of them): which check ran,
how serious its finding is (``info``, ``warning`` or ``problem``), a one-line
title, the evidence (numbers, columns, row ids, folds) and what to do. The
evidence is plain JSON (str, int, float, bool, None, lists and dicts of these),
so a check can be written to ``results.json`` and read back unchanged.

Severity, in the words of the docs: ``info`` says what was checked and found
unremarkable; ``warning`` says something may inflate the estimate and should be
looked at; ``problem`` says the estimate is very likely inflated as it stands.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, Literal, cast

import numpy as np
import pandas as pd

from foldwall.exceptions import AuditWarning, DataError

if TYPE_CHECKING:
    from numpy.typing import ArrayLike, NDArray

__all__ = [
    "SEVERITIES",
    "AuditCheck",
    "AuditWarning",
    "Severity",
    "Task",
    "checks_from_json",
    "checks_to_json",
    "infer_task",
    "worst_severity",
]

Severity = Literal["info", "warning", "problem"]
Task = Literal["classification", "regression"]
SEVERITIES: tuple[Severity, ...] = ("info", "warning", "problem")

# Long id lists are cut in the evidence; the count is always given in full.
MAX_LISTED = 50


def _plain(value: Any, where: str) -> Any:
    """``value`` as plain JSON: numpy scalars and arrays become Python values."""
    if value is None or isinstance(value, (bool, str)):
        return value
    if isinstance(value, np.bool_):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        f = float(value)
        # JSON has no NaN or infinity; None says "not available".
        return f if math.isfinite(f) else None
    if isinstance(value, np.ndarray):
        return [_plain(v, where) for v in value.tolist()]
    if isinstance(value, Mapping):
        return {str(k): _plain(v, f"{where}.{k}") for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_plain(v, where) for v in value]
    if isinstance(value, pd.Timestamp):
        return value.isoformat()
    raise DataError(
        f"audit evidence {where} holds a {type(value).__name__}, which JSON cannot "
        "store; pass numbers, strings, lists or dicts."
    )


@dataclass(frozen=True)
class AuditCheck:
    """One finding of a table audit.

    Parameters
    ----------
    check : str
        Name of the check that ran (``"exact_duplicates"``, ``"leaky_column"``, ...).
    severity : {"info", "warning", "problem"}
        How serious the finding is.
    title : str
        One line that says what was found.
    evidence : dict
        Numbers, columns, row ids and folds behind the finding (plain JSON).
    advice : str
        What to do about it (empty when there is nothing to do).

    Examples
    --------
    >>> c = AuditCheck("id_columns", "info", "No id-like column among the features.")
    >>> AuditCheck.from_json(c.to_json()) == c
    True
    """

    check: str
    severity: Severity
    title: str
    evidence: dict[str, Any] = field(default_factory=dict, hash=False)
    advice: str = ""

    def __post_init__(self) -> None:
        if self.severity not in SEVERITIES:
            raise DataError(
                f"audit check {self.check!r} has severity {self.severity!r}; use one "
                f"of {', '.join(SEVERITIES)}."
            )
        object.__setattr__(self, "evidence", _plain(dict(self.evidence), "evidence"))

    def to_json(self) -> dict[str, Any]:
        """The check as a plain dict (the ``results.json`` form)."""
        return {
            "check": self.check,
            "severity": self.severity,
            "title": self.title,
            "evidence": dict(self.evidence),
            "advice": self.advice,
        }

    @classmethod
    def from_json(cls, data: Mapping[str, Any]) -> AuditCheck:
        """Read a check written by :meth:`to_json`.

        Raises
        ------
        DataError
            If a field is missing or the severity is unknown.
        """
        missing = [k for k in ("check", "severity", "title") if k not in data]
        if missing:
            raise DataError(
                f"an audit check in results.json lacks {', '.join(missing)}; the file "
                "was not written by foldwall or was edited by hand."
            )
        return cls(
            check=str(data["check"]),
            severity=cast("Severity", data["severity"]),
            title=str(data["title"]),
            evidence=dict(data.get("evidence") or {}),
            advice=str(data.get("advice", "")),
        )


def worst_severity(checks: Sequence[AuditCheck]) -> Severity:
    """The most serious severity among ``checks`` (``"info"`` when there are none)."""
    rank = {s: i for i, s in enumerate(SEVERITIES)}
    worst: Severity = "info"
    for c in checks:
        if rank[c.severity] > rank[worst]:
            worst = c.severity
    return worst


def checks_to_json(checks: Sequence[AuditCheck]) -> list[dict[str, Any]]:
    """A list of checks in their ``results.json`` form."""
    return [c.to_json() for c in checks]


def checks_from_json(data: Sequence[Mapping[str, Any]]) -> list[AuditCheck]:
    """Read a list written by :func:`checks_to_json`."""
    return [AuditCheck.from_json(d) for d in data]


def infer_task(y: ArrayLike) -> Task:
    """``"regression"`` for a float outcome with more than 10 values, else classification."""
    s = pd.Series(np.asarray(y))
    if pd.api.types.is_float_dtype(s) and s.nunique() > 10:
        return "regression"
    return "classification"


# ---- helpers shared by the checks (private to the audit package) ----


def count(n: int, singular: str, plural: str | None = None) -> str:
    """``"1 set"``, ``"3 sets"``: a number with its noun in the right form."""
    return f"{n} {singular if n == 1 else plural or singular + 's'}"


def listed(values: Sequence[Any] | NDArray[Any]) -> list[Any]:
    """At most ``MAX_LISTED`` values, for evidence that also gives the full count."""
    return list(values[:MAX_LISTED])


def row_ids(ids: ArrayLike | None, n: int) -> NDArray[Any]:
    """The row ids to show in evidence: the given ids, or row numbers 0..n-1."""
    if ids is None:
        return np.arange(n)
    arr = np.asarray(ids)
    if arr.ndim != 1 or arr.shape[0] != n:
        raise DataError(
            f"ids must be 1-d with one entry per row ({n} rows), got shape "
            f"{arr.shape}. Pass the id column of the same table."
        )
    return arr


def as_frame(X: Any, what: str = "X") -> pd.DataFrame:
    """``X`` as a DataFrame with string column names (arrays get x0, x1, ...)."""
    if isinstance(X, pd.DataFrame):
        frame = X.reset_index(drop=True)
        frame.columns = [str(c) for c in frame.columns]
        return frame
    arr = np.asarray(X)
    if arr.ndim == 1:
        arr = arr[:, None]
    if arr.ndim != 2:
        raise DataError(f"{what} must be a 2-d table, got shape {arr.shape}.")
    return pd.DataFrame(arr, columns=[f"x{j}" for j in range(arr.shape[1])])


def check_splits(
    splits: Sequence[tuple[ArrayLike, ArrayLike]], n: int
) -> list[tuple[NDArray[np.intp], NDArray[np.intp]]]:
    """(train, test) pairs of row indices, checked against the number of rows."""
    out = []
    for k, (tr, te) in enumerate(splits):
        a = np.asarray(tr, dtype=np.intp).ravel()
        b = np.asarray(te, dtype=np.intp).ravel()
        for part, name in ((a, "training"), (b, "test")):
            if part.size and (part.min() < 0 or part.max() >= n):
                raise DataError(
                    f"outer fold {k}: a {name} row index is outside 0..{n - 1}; pass "
                    "the splits of the same table."
                )
        if np.intersect1d(a, b).size:
            raise DataError(
                f"outer fold {k} has rows in both its training and its test part; "
                "pass (train, test) index pairs that do not overlap."
            )
        out.append((a, b))
    if not out:
        raise DataError("no outer splits given; pass at least one (train, test) pair.")
    return out
