"""Sealing a study's hold-out: which rows are set aside, and the development rows left.

The split itself is a pure function in :mod:`foldwall.plan`; here it is applied to a
study's :class:`~foldwall.table.Dataset`. The development rows get a
:class:`~foldwall.records.SealedRows` record (counts, a key naming the sealed rows,
their fingerprints for the row audit) and nothing else of the sealed rows: their
features and labels are not in the development data at all.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from ..audit import (
    boundary_checks,
    sealed_audit_fingerprints,
    straddling_duplicates,
)
from ..exceptions import DataError, SpecError
from ..plan import (
    HoldoutSplit,
    holdout_by_column,
    holdout_by_fraction,
    holdout_from_table,
)
from ..records import SealedRows
from ..runners import feature_frame
from ..settings import HoldoutSettings
from ..table import Dataset, read_table_file
from ._ledger import table_key

__all__ = [
    "HoldoutRows",
    "holdout_key",
    "read_second_table",
    "seal",
    "split_rows",
    "take_marking_column",
]


class HoldoutRows:
    """Where the hold-out rows of a study come from, before the split.

    Parameters
    ----------
    settings : HoldoutSettings or None
        The study's ``holdout`` settings.
    column : ndarray or None
        The marking column's values (``holdout.column``), taken out of the features.
    n_second : int or None
        Rows of the second table, appended after the main table's rows
        (``holdout.table``).
    mask : ndarray of bool or None
        A mask passed from Python (``run(..., holdout=mask)``); wins over settings.
    second_sha256 : str or None
        SHA-256 of the second table's file (``holdout.table``), part of the
        hold-out's key.
    """

    def __init__(
        self,
        settings: HoldoutSettings | None,
        *,
        column: np.ndarray | None = None,
        n_second: int | None = None,
        mask: np.ndarray | None = None,
        second_sha256: str | None = None,
    ) -> None:
        self.settings = settings
        self.column = column
        self.n_second = n_second
        self.mask = mask
        self.second_sha256 = second_sha256

    @property
    def active(self) -> bool:
        """True when the study seals rows."""
        return self.settings is not None or self.mask is not None


def split_rows(
    rows: HoldoutRows, data: Dataset, *, seed: int, from_file: bool
) -> HoldoutSplit:
    """Which rows of ``data`` are sealed.

    Raises
    ------
    SpecError, DataError
        One line naming the study-file key (or the Python argument) and the fix.
    """
    key = "holdout" if from_file else "argument 'holdout'"
    if rows.mask is not None:
        mask = np.asarray(rows.mask)
        if mask.shape != (data.n_samples,):
            raise DataError(
                f"{key}: the mask has {mask.size} values but there are "
                f"{data.n_samples} rows; give one true/false per row"
            )
        return holdout_by_column(
            mask, groups=data.groups, name="mask", key="argument 'holdout'"
        )
    settings = rows.settings
    if settings is None:
        raise SpecError(f"{key}: no rows are sealed")  # callers check .active first
    if settings.fraction is not None:
        return holdout_by_fraction(
            data.y,
            settings.fraction,
            groups=data.groups,
            classification=data.task == "classification",
            random_state=seed,
            key=f"{key}.fraction" if from_file else key,
        )
    if settings.column is not None:
        if rows.column is None:
            raise SpecError(
                f"{key}: holdout.column '{settings.column}' needs a table (or a DataFrame "
                "X) that holds that column"
            )
        return holdout_by_column(
            rows.column,
            groups=data.groups,
            name=settings.column,
            key="holdout.column" if from_file else key,
        )
    if rows.n_second is None:
        raise SpecError(
            f"{key}: a second table is for study files (holdout.table); in Python, "
            "stack the rows and pass run(..., holdout=mask)"
        )
    return holdout_from_table(
        data.n_samples - rows.n_second,
        rows.n_second,
        groups=data.groups,
        name=str(settings.table),
        key="holdout.table",
    )


def holdout_key(split: HoldoutSplit, data: Dataset, rows: HoldoutRows) -> str:
    """The hold-out's name in the ledger: the table's key and the sealed row numbers."""
    return split.key(table_key(data) + (rows.second_sha256 or ""))


def seal(data: Dataset, split: HoldoutSplit, key: str) -> tuple[Dataset, Dataset]:
    """Cut ``data`` into development rows (carrying the seal record) and sealed rows.

    The record also carries the audits that look across the boundary: they use the
    features of both sides (never the outcome), with the table's ids or row numbers.
    """
    dev = data.take(split.development)
    sealed = data.take(split.holdout)
    shown = np.arange(data.n_samples) if data.ids is None else data.ids
    checks = boundary_checks(
        feature_frame(dev),
        feature_frame(sealed),
        ids_development=shown[split.development],
        ids_sealed=shown[split.holdout],
    )
    classification = data.task == "classification"
    record = SealedRows(
        description=split.describe(
            data.y if classification else None, groups=data.groups
        ),
        key=key,
        audit_fingerprints=sealed_audit_fingerprints(
            dev.fingerprints, sealed.fingerprints
        ),
        duplicates_across=straddling_duplicates(dev.fingerprints, sealed.fingerprints),
        checks=tuple(checks),
    )
    dev.holdout = record
    return dev, sealed


def read_second_table(
    path: Path, main: pd.DataFrame, *, max_bytes: int, inside: Path | None
) -> tuple[pd.DataFrame, str]:
    """Read ``holdout.table``, check it has the main table's columns; (rows, SHA-256)."""
    second, tf = read_table_file(
        path, key="holdout.table", max_bytes=max_bytes, inside=inside
    )
    missing = [c for c in main.columns if c not in second.columns]
    if missing:
        raise DataError(
            f"holdout.table: '{path.name}' lacks the column(s) "
            f"{', '.join(repr(c) for c in missing[:5])} of the main table; give it the "
            "same columns"
        )
    extra = [c for c in second.columns if c not in main.columns]
    if extra:
        raise DataError(
            f"holdout.table: '{path.name}' has column(s) the main table lacks "
            f"({', '.join(repr(c) for c in extra[:5])}); give both tables the same "
            "columns"
        )
    return second[list(main.columns)], tf.sha256


def take_marking_column(X: Any, column: str, *, key: str) -> tuple[Any, np.ndarray]:
    """Take the marking column out of a DataFrame X: (features without it, its values)."""
    if not isinstance(X, pd.DataFrame) or column not in X.columns:
        raise SpecError(
            f"{key}: holdout column '{column}' is not a column of X; pass X as a "
            "DataFrame holding it, or pass run(..., holdout=mask)"
        )
    return X.drop(columns=[column]), X[column].to_numpy()
