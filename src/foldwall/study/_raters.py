"""The consensus target of a study whose labels come from several raters.

Each case's training label is built from that case's own ratings only (the rule
is in :func:`foldwall.labels.label_distribution`), so no label depends on
another case, and the rater columns never become features.
"""

from __future__ import annotations

import difflib
from typing import Any

import numpy as np
import pandas as pd

from ..exceptions import DataError, FoldwallError, SpecError
from ..labels import (
    RatingTable,
    agreement,
    label_distribution,
    rating_table,
    warn_low_agreement,
)
from ..settings import RaterSettings

__all__ = ["CONSENSUS_NAME", "rater_target", "rater_frame_of", "consensus_column"]

CONSENSUS_NAME = "consensus"


def consensus_column(columns: Any) -> str:
    """A name for the consensus target that no column of the table already has."""
    taken = {str(c) for c in columns}
    name = CONSENSUS_NAME
    n = 1
    while name in taken:
        name = f"{CONSENSUS_NAME}_{n}"
        n += 1
    return name


def rater_frame_of(
    df: pd.DataFrame, columns: list[str], *, key: str = "raters.columns"
) -> pd.DataFrame:
    """The rater columns of a table, each checked to exist."""
    for c in columns:
        if c not in df.columns:
            close = difflib.get_close_matches(c, [str(x) for x in df.columns], n=1)
            hint = (
                f"; did you mean '{close[0]}'?"
                if close
                else f"; columns are: {', '.join(map(str, df.columns[:12]))}"
            )
            raise DataError(f"{key}: column '{c}' is not in the table{hint}")
    if len(set(columns)) != len(columns):
        dup = sorted({c for c in columns if columns.count(c) > 1})
        raise SpecError(f"{key}: column(s) {', '.join(dup)} listed twice")
    return df[columns]


def _reworded(exc: FoldwallError, key: str) -> str:
    text = str(exc)
    return f"{key}: {text.removeprefix('ratings: ')}"


def rater_target(
    ratings: pd.DataFrame,
    settings: RaterSettings,
    *,
    task: str,
    key: str,
    random_state: int = 0,
) -> tuple[np.ndarray, RatingTable]:
    """Check the ratings and build the per-case consensus target.

    Parameters
    ----------
    ratings : DataFrame of shape (n_cases, n_raters)
        One column per rater, one row per case (a row of the study's table).
    settings : RaterSettings
    task : {"classification", "regression"}
        The kind of model the study fits; it must fit the scale.
    key : str
        How the ratings are named in messages (``raters.columns`` or ``ratings``).
    random_state : int, default=0
        Seed of the agreement check's bootstrap (its interval is in the warning).

    Returns
    -------
    y : ndarray of shape (n_cases,)
        The consensus of each case (labels, or numbers for interval ratings).
    table : RatingTable

    Raises
    ------
    SpecError, DataError
        One line naming ``key``.

    Warns
    -----
    LowAgreementWarning
        When Krippendorff's alpha is below ``settings.warn_below``.
    """
    scale = settings.scale
    wanted = "regression" if scale == "interval" else "classification"
    if task != wanted:
        models = "regressors" if wanted == "regression" else "classifiers"
        raise SpecError(
            f"raters.scale is {scale}, so the consensus is "
            f"{'a number' if scale == 'interval' else 'a class'} and the models must be "
            f"{models}, but the candidates are for {task}"
        )
    try:
        table = rating_table(
            ratings,
            scale=scale,
            categories=None if settings.classes is None else list(settings.classes),
        )
        dist = label_distribution(table, rule=settings.consensus)
    except (DataError, SpecError) as exc:
        raise type(exc)(_reworded(exc, key)) from None
    if scale == "interval":
        y = np.asarray(dist.consensus, dtype=float)
    else:
        y = _plain_labels(dist.consensus)
        found = np.unique(dist.consensus_code if dist.consensus_code is not None else y)
        if found.size < 2:
            raise DataError(
                f"{key}: the consensus gives every case the same label "
                f"({y[0]!r}); a classifier needs two or more classes"
            )
    # the same resamples as the results section, so the warning quotes its numbers
    report = agreement(table, n_resamples=1000, random_state=random_state)
    warn_low_agreement(report, threshold=settings.warn_below, stacklevel=4)
    return y, table


def _plain_labels(labels: np.ndarray) -> np.ndarray:
    """Consensus labels as a numeric or string array (not a mixed object array)."""
    values = list(labels)
    if all(
        isinstance(v, (int, np.integer)) and not isinstance(v, bool) for v in values
    ):
        return np.asarray(values, dtype=np.int64)
    if all(isinstance(v, (float, np.floating)) for v in values):
        return np.asarray(values, dtype=float)
    if all(isinstance(v, (bool, np.bool_)) for v in values):
        return np.asarray(values, dtype=bool)
    return np.asarray([str(v) for v in values], dtype=object)
