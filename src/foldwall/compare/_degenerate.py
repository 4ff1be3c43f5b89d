"""Degenerate folds and degenerate chosen models, found before they become claims.

Two situations make a fold's score meaningless even though a number comes out:

* **a test part with a single class** under a metric that needs both classes (ROC
  AUC, average precision): scikit-learn returns NaN with a warning, and a mean over
  folds is then NaN or silently drops the fold;
* **a chosen model that predicts a single class** (or, in regression, one constant
  value) on the whole test part: its accuracy is the share of that class and its
  balanced accuracy exactly ``1/k``, whatever the features hold; its ROC AUC may
  still look respectable because the decision values vary slightly. A search range
  whose edge forces such a model (a very small ``C``) is the common cause.

The functions here only look at labels and predictions; the caller decides which
metrics need two classes and how to word the fold names.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from foldwall.exceptions import SpecError

if TYPE_CHECKING:
    from numpy.typing import ArrayLike

__all__ = [
    "classes_missing_from_test_parts",
    "degenerate_folds_note",
    "prediction_flag",
]


def classes_missing_from_test_parts(
    y: ArrayLike, test_parts: Sequence[ArrayLike], *, classes: ArrayLike | None = None
) -> list[tuple[int, list[Any]]]:
    """Test parts in which some class never appears.

    Parameters
    ----------
    y : array-like of shape (n_samples,)
        Class labels.
    test_parts : sequence of array-like of int
        Row indices of each outer test part, in plan order.
    classes : array-like, default=None
        The classes every test part should hold; ``None`` uses the classes of
        ``y``.

    Returns
    -------
    list of (int, list)
        ``(position in test_parts, the classes missing there)`` for every test
        part that lacks a class, in order. Empty test parts are skipped.

    Raises
    ------
    SpecError
        If ``y`` is not 1-d or an index is out of range.

    Examples
    --------
    >>> classes_missing_from_test_parts([0, 0, 1, 1, 0, 0], [[0, 1], [2, 4], [3, 5]])
    [(0, [1])]
    """
    labels = np.asarray(y)
    if labels.ndim != 1:
        raise SpecError(
            f"classes_missing_from_test_parts: y must be 1-d, got shape {labels.shape}."
        )
    wanted = pd.unique(labels if classes is None else np.asarray(classes))
    out: list[tuple[int, list[Any]]] = []
    for i, part in enumerate(test_parts):
        idx = np.asarray(part, dtype=np.intp)
        if idx.size == 0:
            continue
        if idx.min() < 0 or idx.max() >= labels.size:
            raise SpecError(
                f"classes_missing_from_test_parts: test part {i} holds row indices outside "
                f"0..{labels.size - 1}."
            )
        present = set(pd.unique(labels[idx]).tolist())
        missing = [c for c in wanted.tolist() if c not in present]
        if missing:
            out.append((i, missing))
    return out


def prediction_flag(predicted: ArrayLike, *, task: str) -> str | None:
    """Say whether a model's predictions on one test part are degenerate.

    Parameters
    ----------
    predicted : array-like of shape (n_test,)
        Predicted labels (classification) or values (regression) of the chosen
        model on the outer test part.
    task : {"classification", "regression"}
        Kind of prediction.

    Returns
    -------
    str or None
        ``"single class"`` when every predicted label is the same,
        ``"constant"`` when every predicted value is the same (regression,
        up to ``1e-12`` of the values' scale), else ``None``. A test part with
        fewer than two rows is never flagged.

    Raises
    ------
    SpecError
        On an unknown ``task`` or predictions that are not 1-d.

    Examples
    --------
    >>> prediction_flag(["ill", "ill", "ill"], task="classification")
    'single class'
    >>> prediction_flag([1.5, 1.5, 1.5 + 1e-15], task="regression")
    'constant'
    >>> prediction_flag([0, 1, 0], task="classification") is None
    True
    """
    if task not in ("classification", "regression"):
        raise SpecError(
            f"prediction_flag: task must be 'classification' or 'regression', got "
            f"{task!r}."
        )
    pred = np.asarray(predicted)
    if pred.ndim != 1:
        raise SpecError(
            f"prediction_flag: predictions must be 1-d, got shape {pred.shape}."
        )
    if pred.size < 2:
        return None
    if task == "classification":
        return "single class" if pd.unique(pred).size == 1 else None
    values = pred.astype(float)
    scale = max(1.0, float(np.max(np.abs(values))))
    return "constant" if float(np.ptp(values)) <= 1e-12 * scale else None


def degenerate_folds_note(
    flags: Sequence[str | None],
    fold_names: Sequence[str],
    *,
    task: str = "classification",
) -> str | None:
    """One note counting the outer folds whose chosen model was degenerate.

    Parameters
    ----------
    flags : sequence of str or None
        :func:`prediction_flag` of each outer fold's chosen model.
    fold_names : sequence of str
        How to name each fold in the note (e.g. ``"fold 2"`` or
        ``"repeat 1 fold 2"``); same length as ``flags``.
    task : {"classification", "regression"}, default="classification"
        Selects the wording.

    Returns
    -------
    str or None
        ``None`` when no fold is flagged; otherwise one sentence with the count,
        the folds (at most five named) and what to check.

    Raises
    ------
    SpecError
        If the two sequences differ in length.

    Examples
    --------
    >>> degenerate_folds_note(
    ...     ["single class", None, "single class"], ["fold 0", "fold 1", "fold 2"])
    'In 2 of 3 outer folds (fold 0, fold 2) the chosen model predicted a single \
class for the whole test part: its score there does not come from telling the \
classes apart; check the search ranges (a value at the edge of its range, such as \
a very small C, often causes this).'
    """
    if len(flags) != len(fold_names):
        raise SpecError(
            f"degenerate_folds_note: {len(flags)} flags for {len(fold_names)} folds."
        )
    hit = [name for flag, name in zip(flags, fold_names, strict=True) if flag]
    if not hit:
        return None
    shown = ", ".join(hit[:5]) + (f" and {len(hit) - 5} more" if len(hit) > 5 else "")
    what = (
        "predicted a single class for the whole test part: its score there does not "
        "come from telling the classes apart"
        if task == "classification"
        else "predicted one constant value for the whole test part: its score there "
        "does not come from the features"
    )
    return (
        f"In {len(hit)} of {len(flags)} outer folds ({shown}) the chosen model "
        f"{what}; check the search ranges (a value at the edge of its range, such as "
        "a very small C, often causes this)."
    )
