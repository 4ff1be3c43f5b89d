"""The rows of a study: features, target, groups, and their fingerprints."""

from __future__ import annotations

import dataclasses
import hashlib
import os
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from ..audit import row_fingerprints, time_values
from ..exceptions import DataError
from ..labels import RatingTable
from ..records import SealedRows
from ._file import (
    DEFAULT_MAX_TABLE_BYTES,
    TableFile,
    excerpt_names,
    open_table,
    parse_table,
    sanitise,
)

__all__ = [
    "Dataset",
    "read_table",
    "read_table_file",
    "dataset_from_table",
    "dataset_from_arrays",
    "file_sha256",
    "attach_columns",
    "join_features",
]


def file_sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


@dataclass
class Dataset:
    """Features X (numpy array, or DataFrame when columns are not all numeric), y, groups."""

    X: Any
    y: np.ndarray
    groups: np.ndarray | None
    task: str
    feature_names: list[str]
    target_name: str = "y"
    group_name: str | None = None
    extra: dict[str, np.ndarray] = field(default_factory=dict)
    sha256: str | None = None
    sha256_of: str = "table file"
    positive_class: Any = None
    # several raters: their checked ratings, one row per row of X (the target y is
    # their per-case consensus)
    ratings: RatingTable | None = None
    ids: np.ndarray | None = None
    id_name: str | None = None
    acquisition: pd.DataFrame | None = None
    time: np.ndarray | None = None
    time_name: str | None = None
    merged_duplicates: dict[str, Any] | None = None
    # the sealed hold-out these rows were developed without (issue 14); None: none
    holdout: SealedRows | None = None

    def __post_init__(self) -> None:
        self.fingerprints = row_fingerprints(self.X)

    def take(self, rows: np.ndarray) -> Dataset:
        """The same study data restricted to ``rows`` (indices), every per-row field cut.

        Per-row fields are recognised by their length, so fields added later are
        cut too: arrays and DataFrames with one entry per row, dicts of them, and
        records with a ``take(rows)`` method (the raters' ratings).
        """
        rows = np.asarray(rows)
        n = self.n_samples

        def cut(value: Any) -> Any:
            if callable(getattr(value, "take", None)) and not isinstance(
                value, (np.ndarray, pd.DataFrame)
            ):
                return value.take(rows)  # a per-row record that knows how to cut itself
            if isinstance(value, pd.DataFrame) and len(value) == n:
                return value.iloc[rows].reset_index(drop=True)
            if isinstance(value, np.ndarray) and value.ndim >= 1 and len(value) == n:
                return value[rows]
            if isinstance(value, dict):
                return {k: cut(v) for k, v in value.items()}
            return value

        changes = {
            f.name: cut(getattr(self, f.name))
            for f in dataclasses.fields(self)
            if f.init
        }
        return Dataset(**changes)

    @property
    def n_samples(self) -> int:
        return int(len(self.y))

    @property
    def classes(self) -> np.ndarray | None:
        return np.unique(self.y) if self.task == "classification" else None


def read_table_file(
    path: str | os.PathLike[str],
    *,
    key: str = "data.table",
    max_bytes: int = DEFAULT_MAX_TABLE_BYTES,
    inside: str | os.PathLike[str] | None = None,
) -> tuple[pd.DataFrame, TableFile]:
    """Read a CSV/TSV or Parquet table safely; return it with the bytes it came from.

    The file must be a regular file (links are followed and named), at most
    ``max_bytes``, and, when ``inside`` is given, lie in that folder. Its
    SHA-256 (``TableFile.sha256``) is of the very bytes that were parsed.

    Raises
    ------
    DataError
        One line naming ``key``, the file (and a link's target) and the fix.
    """
    tf = open_table(path, key=key, max_bytes=max_bytes, inside=inside)
    return parse_table(tf, key=key, max_bytes=max_bytes), tf


def read_table(
    path: str | os.PathLike[str],
    *,
    key: str = "data.table",
    max_bytes: int = DEFAULT_MAX_TABLE_BYTES,
    inside: str | os.PathLike[str] | None = None,
) -> pd.DataFrame:
    """Read a CSV/TSV or Parquet table safely (see :func:`read_table_file`)."""
    return read_table_file(path, key=key, max_bytes=max_bytes, inside=inside)[0]


def _check_column_names(df: pd.DataFrame) -> None:
    """Column names end up on terminals and in reports: no control or invisible characters."""
    bad = [str(c) for c in df.columns if not str(c).isprintable()]
    if bad:
        raise DataError(
            f"data.table: {len(bad)} column name(s) hold control or invisible characters (first: "
            f"'{sanitise(bad[0], limit=40)}', shown escaped); rename the column(s)"
        )


def _missing_column(df: pd.DataFrame, col: str, key: str) -> DataError:
    import difflib

    close = difflib.get_close_matches(col, [str(c) for c in df.columns], n=1)
    hint = (
        f"; did you mean '{sanitise(close[0], limit=40)}'?"
        if close
        else f"; columns are: {excerpt_names(df.columns)}"
    )
    return DataError(
        f"{key}: column '{sanitise(col, limit=60)}' is not in the table{hint}"
    )


def _check_target(y: pd.Series, name: str, task: str) -> np.ndarray:
    if len(y) == 0:
        raise DataError(f"data.target: column '{name}' has no rows; the table is empty")
    n_nan = int(y.isna().sum())
    if n_nan:
        first = int(np.flatnonzero(y.isna().to_numpy())[0])
        raise DataError(
            f"data.target: column '{name}' has {n_nan} missing value(s) (first at row {first}); "
            f"drop or fill those rows before the study (a missing label cannot be imputed inside a fold)"
        )
    if task == "regression":
        try:
            return y.to_numpy(dtype=float)
        except (TypeError, ValueError):
            raise DataError(
                f"data.target: column '{name}' is not numeric, but the task is regression"
            ) from None
    arr = y.to_numpy()
    fractional = (
        arr[np.mod(arr, 1) != 0] if pd.api.types.is_float_dtype(arr.dtype) else arr[:0]
    )
    if fractional.size:
        raise DataError(
            f"data.target: column '{name}' holds continuous values (e.g. {sanitise(repr(_plain(fractional[0])), limit=40)}), but the "
            f"models are classifiers; use a regressor, or turn the values into classes"
        )
    if np.unique(arr).size < 2:
        raise DataError(
            f"data.target: column '{name}' has a single class ({sanitise(repr(_plain(arr[0])), limit=40)}); a classifier needs two or more"
        )
    return arr


def _plain(v: Any) -> Any:
    """A numpy scalar as the Python value, so messages show 1, not np.int64(1)."""
    return v.item() if isinstance(v, np.generic) else v


def _as_features(frame: pd.DataFrame) -> Any:
    numeric = all(
        pd.api.types.is_numeric_dtype(t) and not pd.api.types.is_bool_dtype(t)
        for t in frame.dtypes
    )
    if numeric:
        return frame.to_numpy(dtype=float)
    return frame.reset_index(drop=True)


def dataset_from_table(
    df: pd.DataFrame,
    *,
    target: str,
    groups: str | None,
    drop: list[str],
    features: list[str] | None,
    task: str,
    extra_columns: Sequence[str] = (),
    sha256: str | None = None,
    id: str | None = None,
    acquisition: Sequence[str] = (),
    acquisition_as_features: bool = False,
    time: str | None = None,
) -> Dataset:
    """Split a table into features, target and groups, with checks that name the column.

    The id, time and acquisition columns are kept out of the features (the
    acquisition columns stay in with ``acquisition_as_features``).
    """
    if target not in df.columns:
        raise _missing_column(df, target, "data.target")
    if groups is not None and groups not in df.columns:
        raise _missing_column(df, groups, "data.groups")
    for c in drop:
        if c not in df.columns:
            raise _missing_column(df, c, "data.drop")
    for c in extra_columns:
        if c not in df.columns:
            raise _missing_column(df, c, "control.blocks")
    _check_column_names(df)
    y = _check_target(df[target], target, task)
    g = None
    if groups is not None:
        gs = df[groups]
        if gs.isna().any():
            raise DataError(
                f"data.groups: column '{groups}' has {int(gs.isna().sum())} missing id(s); every row needs its group id"
            )
        g = gs.astype(str).to_numpy()
    for key, cols_ in (
        ("data.id", [id] if id else []),
        ("data.acquisition", list(acquisition)),
        ("data.time", [time] if time else []),
    ):
        for c in cols_:
            if c not in df.columns:
                raise _missing_column(df, c, key)
            if c == target:
                raise DataError(
                    f"{key}: column '{c}' is the target; name another column"
                )
    not_features = {
        target,
        *(drop or []),
        *([groups] if groups else []),
        *([id] if id else []),
        *([time] if time else []),
        *([] if acquisition_as_features else list(acquisition)),
    }
    if features is not None:
        for c in features:
            if c not in df.columns:
                raise _missing_column(df, c, "data.features")
            if c in not_features:
                raise DataError(
                    f"data.features: column '{c}' is also the target, the groups, the id, the "
                    f"time, an acquisition column or dropped; list it in one place only"
                )
        cols = list(features)
    else:
        cols = [c for c in df.columns if c not in not_features]
    if not cols:
        raise DataError(
            "data: no feature columns are left after removing the target, groups and dropped columns"
        )
    X = _as_features(df[cols])
    extra = {c: df[c].astype(str).to_numpy() for c in extra_columns}
    data = Dataset(
        X=X,
        y=y,
        groups=g,
        task=task,
        feature_names=[str(c) for c in cols],
        target_name=target,
        group_name=groups,
        extra=extra,
        sha256=sha256,
    )
    attach_columns(
        data,
        ids=None if id is None else df[id],
        acquisition=df[list(acquisition)] if acquisition else None,
        time=None if time is None else df[time],
        names={
            "ids": "data.id",
            "acquisition": "data.acquisition",
            "time": "data.time",
        },
    )
    return data


def attach_columns(
    data: Dataset,
    *,
    ids: Any = None,
    acquisition: Any = None,
    time: Any = None,
    names: dict[str, str] | None = None,
) -> Dataset:
    """Check and attach the id, acquisition and time columns (never features).

    ``names`` says how each input is named in messages (study-file keys, or
    the ``run()`` arguments by default).
    """
    key = {"ids": "ids", "acquisition": "acquisition", "time": "time", **(names or {})}
    n = data.n_samples
    if ids is not None:
        if not isinstance(ids, pd.Series) and np.ndim(ids) != 1:
            raise DataError(
                f"{key['ids']}: give one id per row ({n}); got shape {np.shape(ids)}"
            )
        s = ids if isinstance(ids, pd.Series) else pd.Series(np.asarray(ids))
        label = (
            f"column '{s.name}'" if isinstance(ids, pd.Series) and s.name else "the ids"
        )
        verb_s = "" if label == "the ids" else "s"
        if len(s) != n:
            raise DataError(
                f"{key['ids']}: {len(s)} ids for {n} rows; give one id per row"
            )
        if s.isna().any():
            raise DataError(
                f"{key['ids']}: {label} lack{verb_s} {int(s.isna().sum())} id(s); every row needs its id"
            )
        dup = s[s.duplicated()]
        if len(dup):
            raise DataError(
                f"{key['ids']}: {label} repeat{verb_s} {dup.nunique()} id(s) (first: {_plain(dup.iloc[0])!r}); an id "
                f"names one row - for a unit with several rows use data.groups (groups=)"
            )
        data.ids = s.to_numpy()
        data.id_name = str(s.name) if isinstance(ids, pd.Series) and s.name else "id"
    if acquisition is not None:
        frame = (
            acquisition.reset_index(drop=True)
            if isinstance(acquisition, pd.DataFrame)
            else pd.DataFrame(np.asarray(acquisition))
        )
        if frame.ndim != 2 or len(frame) != n:
            raise DataError(
                f"{key['acquisition']}: {len(frame)} rows for {n} rows of the table; give one row per row"
            )
        frame.columns = [str(c) for c in frame.columns]
        for c in frame.columns:
            miss = int(frame[c].isna().sum())
            if miss:
                raise DataError(
                    f"{key['acquisition']}: column '{c}' has {miss} missing value(s); fill them "
                    f"(for example with 'unknown') so every row has its acquisition"
                )
        data.acquisition = frame
    if time is not None:
        s = time if isinstance(time, pd.Series) else pd.Series(np.asarray(time))
        name = str(s.name) if isinstance(time, pd.Series) and s.name else "time"
        if len(s) != n:
            raise DataError(
                f"{key['time']}: {len(s)} times for {n} rows; give one per row"
            )
        try:
            data.time = time_values(s, name=name)
        except DataError as exc:
            raise DataError(f"{key['time']}: {exc}") from None
        data.time_name = name
    return data


def join_features(X: Any, acquisition: Any) -> Any:
    """X with the acquisition columns appended (``acquisition_as_features``)."""
    frame = (
        acquisition.reset_index(drop=True)
        if isinstance(acquisition, pd.DataFrame)
        else pd.DataFrame(np.asarray(acquisition))
    )
    frame.columns = [str(c) for c in frame.columns]
    base = (
        X.reset_index(drop=True)
        if isinstance(X, pd.DataFrame)
        else pd.DataFrame(
            np.asarray(X), columns=[f"x{i}" for i in range(np.shape(X)[1])]
        )
    )
    clash = [c for c in frame.columns if c in set(map(str, base.columns))]
    if clash:
        raise DataError(
            f"acquisition column '{clash[0]}' is already a feature; with "
            f"acquisition_as_features it is added to the features once - drop it from X"
        )
    return pd.concat([base, frame], axis=1)


def dataset_from_arrays(X: Any, y: Any, groups: Any, *, task: str) -> Dataset:
    """From Python inputs: X a numpy array or DataFrame, y a 1-d array or Series."""
    if isinstance(X, pd.DataFrame):
        names = [str(c) for c in X.columns]
        Xv = _as_features(X)
    else:
        Xv = np.asarray(X)
        if Xv.ndim != 2:
            raise DataError(f"X must be 2-d (rows x features), got shape {Xv.shape}")
        names = [f"x{i}" for i in range(Xv.shape[1])]
        if Xv.dtype.kind in "biuf":
            Xv = Xv.astype(float, copy=False)
    ys = (
        y
        if isinstance(y, pd.Series)
        else pd.Series(
            np.asarray(y).ravel() if np.ndim(y) == 2 and np.shape(y)[1] == 1 else y
        )
    )
    if ys.ndim != 1 if hasattr(ys, "ndim") else False:
        raise DataError("y must be 1-d")
    if len(ys) != len(Xv):
        raise DataError(f"X has {len(Xv)} rows but y has {len(ys)}; they must match")
    yv = _check_target(ys.reset_index(drop=True), str(ys.name or "y"), task)
    g = None
    if groups is not None:
        g = np.asarray(groups).astype(str)
        if len(g) != len(yv):
            raise DataError(
                f"groups has {len(g)} values but y has {len(yv)}; they must match"
            )
    h = hashlib.sha256()
    if isinstance(Xv, pd.DataFrame):
        h.update(pd.util.hash_pandas_object(Xv, index=False).to_numpy().tobytes())
    else:
        h.update(np.ascontiguousarray(Xv).tobytes())
    h.update("\n".join(map(str, yv)).encode("utf-8"))
    return Dataset(
        X=Xv,
        y=yv,
        groups=g,
        task=task,
        feature_names=names,
        target_name=str(ys.name or "y"),
        sha256=h.hexdigest(),
        sha256_of="arrays",
    )
