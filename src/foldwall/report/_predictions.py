"""Out-of-fold predictions as one long table (``predictions.csv``) a reviewer can recompute from.

One row per outer test row, per repeat, per candidate and baseline: the row's id
(when the table has an id column), its 0-based position in the table, the repeat
and outer fold, the candidate, whether the inner search chose that candidate in
that fold, the true label, the predicted label and the decision value.
"""

from __future__ import annotations

import os
from collections.abc import Iterable, Mapping, Sequence
from typing import Any

import numpy as np
import pandas as pd
from numpy.typing import ArrayLike

from ..exceptions import SpecError
from ..records import UnitRecord

__all__ = [
    "PREDICTION_COLUMNS",
    "positive_scores",
    "predictions_frame",
    "read_predictions",
    "write_predictions",
]

PREDICTION_COLUMNS = (
    "id",
    "row",
    "repeat",
    "fold",
    "candidate",
    "role",
    "chosen",
    "true",
    "predicted",
    "decision",
    "decision_for",
    "decision_kind",
)
"""Columns of ``predictions.csv`` (``id`` only when the table has an id column).

- ``row``: 0-based position of the row in the table as read.
- ``chosen``: true when the inner search chose this candidate in this outer fold
  (these rows make the headline estimate; baselines are never chosen).
- ``decision``: the model's value for class ``decision_for`` (scikit-learn's
  convention: ``predict_proba(X)[:, 1]`` or ``decision_function(X)``, both for the
  second class in sorted order); empty when the model gives neither or for
  regression.
- ``decision_kind``: ``probability`` or ``decision_function`` (empty when unknown).
"""


def predictions_frame(
    records: Iterable[UnitRecord],
    y: ArrayLike,
    *,
    chosen: Mapping[tuple[int, int], str],
    task: str,
    ids: ArrayLike | None = None,
) -> pd.DataFrame:
    """The predictions table of the real-label units.

    Parameters
    ----------
    records : iterable of UnitRecord
        Unit records; those of permuted labels (``perm != 0``) are skipped.
    y : array-like of shape (n_samples,)
        The target of the whole table, indexed by row position.
    chosen : mapping of (repeat, fold) to str
        The candidate the inner search chose in each outer fold.
    task : {"classification", "regression"}
        The study's task.
    ids : array-like of shape (n_samples,), default=None
        The id column, when the table has one.

    Returns
    -------
    pandas.DataFrame
        Columns :data:`PREDICTION_COLUMNS` (without ``id`` when ``ids`` is None),
        sorted by repeat, fold, candidate (plan order) and row.

    Raises
    ------
    SpecError
        When a unit kept no predictions, or their number differs from its rows.
    """
    yv = np.asarray(y)
    idv = None if ids is None else np.asarray(ids)
    labels = np.unique(yv) if task == "classification" else None
    decision_for = str(labels[1]) if labels is not None and labels.size == 2 else ""
    frames = []
    for u in sorted(records, key=lambda r: (r.repeat, r.fold, r.unit)):
        if u.perm != 0:
            continue
        where = f"candidate '{u.candidate}', repeat {u.repeat}, outer fold {u.fold}"
        if u.test_rows is None or u.predicted is None:
            raise SpecError(
                f"predictions: the unit of {where} kept no predictions; rerun to write them"
            )
        if len(u.test_rows) != len(u.predicted):
            raise SpecError(
                f"predictions: the unit of {where} has {len(u.test_rows)} rows but "
                f"{len(u.predicted)} predictions"
            )
        frames.append(_unit_frame(u, yv, idv, chosen, decision_for))
    if not frames:
        cols = [c for c in PREDICTION_COLUMNS if c != "id" or idv is not None]
        return pd.DataFrame(columns=cols)
    return pd.concat(frames, ignore_index=True)


def _unit_frame(
    u: UnitRecord,
    y: np.ndarray,
    ids: np.ndarray | None,
    chosen: Mapping[tuple[int, int], str],
    decision_for: str,
) -> pd.DataFrame:
    idx = np.asarray(u.test_rows, dtype=int)
    n = idx.size
    has_dec = u.decision is not None
    part = {
        "row": idx,
        "repeat": np.full(n, u.repeat),
        "fold": np.full(n, u.fold),
        "candidate": [u.candidate] * n,
        "role": [u.role] * n,
        "chosen": np.full(n, chosen.get((u.repeat, u.fold)) == u.candidate),
        "true": y[idx],
        "predicted": np.asarray(
            u.predicted, dtype=object if y.dtype.kind in "OUS" else None
        ),
        "decision": np.asarray(u.decision, dtype=float)
        if has_dec
        else np.full(n, np.nan),
        "decision_for": [decision_for if has_dec else ""] * n,
        "decision_kind": [(u.decision_kind or "") if has_dec else ""] * n,
    }
    df = pd.DataFrame(part)
    if ids is not None:
        df.insert(0, "id", ids[idx])
    return df.sort_values("row", kind="stable")


def write_predictions(frame: pd.DataFrame, path: str | os.PathLike[str]) -> None:
    """Write the table as CSV (floats at full precision, so sums recompute exactly)."""
    frame.to_csv(path, index=False, float_format=None, lineterminator="\n")


def read_predictions(path: str | os.PathLike[str], *, task: str) -> pd.DataFrame:
    """Read ``predictions.csv``; class labels and ids are read as text.

    Parameters
    ----------
    path : path-like
        The file.
    task : {"classification", "regression"}
        For classification, ``true`` and ``predicted`` are read as text.
    """
    text_cols: dict[str, Any] = {
        "id": str,
        "candidate": str,
        "role": str,
        "decision_for": str,
        "decision_kind": str,
    }
    if task == "classification":
        text_cols.update({"true": str, "predicted": str})
    df = pd.read_csv(
        path, dtype=text_cols, keep_default_na=False, na_values={"decision": [""]}
    )
    df["chosen"] = df["chosen"].astype(str).str.lower().eq("true")
    return df


def positive_scores(frame: pd.DataFrame, positive: str) -> np.ndarray | None:
    """Decision values oriented so that larger means more likely ``positive``.

    Returns None when a row has no decision value. A value for the other class is
    turned round: ``1 - p`` for a probability, ``-d`` for a decision function (and
    ``-d`` when the kind is unknown, which keeps the order and so ROC and
    precision-recall curves, but is not a probability).
    """
    dec = frame["decision"].to_numpy(dtype=float)
    if dec.size == 0 or np.any(~np.isfinite(dec)):
        return None
    out = dec.copy()
    other = frame["decision_for"].astype(str).to_numpy() != str(positive)
    prob = frame["decision_kind"].astype(str).to_numpy() == "probability"
    out[other & prob] = 1.0 - dec[other & prob]
    out[other & ~prob] = -dec[other & ~prob]
    return out


def fold_labels(folds: Sequence[Mapping[str, Any]]) -> list[str]:
    """Short labels ``r0 f1`` for outer folds in plan order."""
    return [f"r{f['repeat']} f{f['fold']}" for f in folds]
