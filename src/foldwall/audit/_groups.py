"""Hidden groups: id-like columns, and rows that cluster far more tightly than the rest.

When one patient, subject, animal or device contributes several rows, those rows
are not independent: a random split puts some in training and some in test, and
the model is scored on cases it has partly seen. Two audits look for such units
that the study has not declared:

* **id-like columns** among the features: a column whose name reads as an
  identifier (``id``, ``subject``, ``patient``, ``participant``, ``record``, ...)
  or whose discrete values are nearly unique with a few repeats;
* **tight clusters**: rows whose nearest other row is far closer than their
  10th nearest: closer than ``tight_ratio`` = 0.35 times that distance, *and*
  closer than a cluster-free table of the same intrinsic dimension would put
  the nearest neighbour of 1 row in 100 (see :mod:`foldwall.audit._neighbours`).
  When a large share of rows is that tight (``tight_share`` = 0.1 or more, ten
  times what chance gives), the table probably holds several rows per unit and
  the study may need a group column.

The thresholds are our rule. On the clean data sets scikit-learn ships (breast
cancer, wine, diabetes, digits) at most 0.6% of rows are tight; 50 invented
subjects seen 4 times with visit noise of 0.2 standard deviations make 99% of
rows tight. With fewer than five numeric columns the audit only reports.
"""

from __future__ import annotations

import re
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components

from foldwall.audit._checks import AuditCheck, as_frame, listed, row_ids
from foldwall.audit._neighbours import Neighbours, nearest_neighbours
from foldwall.exceptions import DataError

if TYPE_CHECKING:
    from numpy.typing import ArrayLike

__all__ = [
    "id_column_checks",
    "id_like_name",
    "is_discrete",
    "tight_cluster_check",
    "tight_pairs",
]

# Words that, as a whole word of a column name, mark an identifier.
_ID_WORDS = frozenset(
    {
        "id",
        "ids",
        "uid",
        "uuid",
        "guid",
        "identifier",
        "subject",
        "subj",
        "patient",
        "participant",
        "person",
        "mrn",
        "pid",
        "sid",
        "record",
        "accession",
        "idx",
        "index",
        "rownum",
        "serial",
    }
)


def _words(name: str) -> list[str]:
    # "PatientID" -> patient, id; "subject_no" -> subject, no; "caseId" -> case, id
    spaced = re.sub(r"([a-z0-9])([A-Z])", r"\1 \2", name)
    spaced = re.sub(r"([A-Z]+)([A-Z][a-z])", r"\1 \2", spaced)
    return [w.lower() for w in re.split(r"[^A-Za-z0-9]+", spaced) if w]


def id_like_name(name: str) -> bool:
    """True when a word of the column name reads as an identifier.

    Examples
    --------
    >>> [id_like_name(n) for n in ["PatientID", "subject_no", "bmi", "valid"]]
    [True, True, False, False]
    """
    return any(w in _ID_WORDS for w in _words(str(name)))


def is_discrete(col: pd.Series) -> bool:
    """Text, categories, booleans, integers, or floats that hold only whole numbers."""
    if not pd.api.types.is_numeric_dtype(col) or pd.api.types.is_bool_dtype(col):
        return True
    if pd.api.types.is_integer_dtype(col):
        return True
    v = col.to_numpy(dtype=np.float64, na_value=np.nan)
    v = v[np.isfinite(v)]
    return bool(v.size) and bool(np.all(v == np.round(v)))


def id_column_checks(X: Any, *, near_unique: float = 0.95) -> list[AuditCheck]:
    """Find id-like columns among the features.

    A column is id-like when a word of its name reads as an identifier, or when
    it is discrete (text, category or whole numbers) with at least
    ``near_unique`` of its values distinct but some repeated (a column unique
    on every row is reported by the leaky-column audit instead).

    Parameters
    ----------
    X : DataFrame or array-like of shape (n_samples, n_features)
        The feature table.
    near_unique : float, default=0.95
        Share of distinct values from which a discrete column counts as id-like.

    Returns
    -------
    list of AuditCheck
        One ``id_columns`` check: ``problem`` when an id-like column is among the
        features, else ``info``.
    """
    frame = as_frame(X)
    n = len(frame)
    found = []
    for c in frame.columns:
        col = frame[c]
        distinct = int(col.nunique(dropna=True))
        by_name = id_like_name(c)
        by_values = n >= 20 and is_discrete(col) and near_unique * n <= distinct < n
        if by_name or by_values:
            counts = col.value_counts(dropna=True)
            found.append(
                {
                    "column": c,
                    "distinct": distinct,
                    "rows": n,
                    "repeated_values": int((counts > 1).sum()),
                    "why": "name" if by_name else "nearly unique values",
                }
            )
    ev: dict[str, Any] = {"columns": found}
    if not found:
        return [
            AuditCheck(
                "id_columns", "info", "No id-like column among the features.", ev
            )
        ]
    names = ", ".join(repr(f["column"]) for f in found)
    repeats = [f["column"] for f in found if f["repeated_values"]]
    advice = (
        "Declare an identifier as data.id (it is then kept out of the features and "
        "shown in the reports); a column whose values repeat names the unit that "
        "several rows belong to: declare it as data.groups so that its rows are "
        "never split."
    )
    title = f"Id-like column(s) among the features: {names}"
    if repeats:
        title += f" ({len(repeats)} with repeated values: rows may share a unit)"
    return [AuditCheck("id_columns", "problem", title + ".", ev, advice)]


def tight_pairs(nb: Neighbours, *, tight_ratio: float = 0.35) -> np.ndarray:
    """Row pairs (i < j) that are tight by the rule of the module doc.

    A row's neighbour is tight when it is closer than ``tight_ratio`` times the
    row's distance to its k-th neighbour and a cluster-free table of the same
    intrinsic dimension would put it that close less often than 1 time in 100.

    Returns
    -------
    ndarray of shape (n_pairs, 2)
    """
    if nb.distance.shape[1] == 0:
        return np.empty((0, 2), dtype=np.intp)
    local = nb.local_ratio()
    tight = (local < tight_ratio) & (nb.chance_within(local) < 0.01)
    return nb.pairs_below(np.inf, mask=tight)


def tight_cluster_check(
    X: Any,
    *,
    ids: ArrayLike | None = None,
    groups: ArrayLike | None = None,
    neighbours: Neighbours | None = None,
    tight_ratio: float = 0.35,
    tight_share: float = 0.1,
) -> AuditCheck:
    """Do rows cluster far more tightly than the rest of the table?

    Parameters
    ----------
    X : DataFrame or array-like of shape (n_samples, n_features)
        The feature table.
    ids : array-like of shape (n_samples,), default=None
        Row ids for the evidence.
    groups : array-like of shape (n_samples,), default=None
        The study's groups, if any: tight pairs inside one group are expected.
    neighbours : Neighbours, default=None
        Precomputed by :func:`nearest_neighbours`.
    tight_ratio : float, default=0.35
        A row is in a tight cluster when its nearest other row is closer than
        this share of the typical distance.
    tight_share : float, default=0.1
        Share of rows in tight clusters (across groups, if given) from which the
        audit warns.

    Returns
    -------
    AuditCheck
        ``tight_clusters``: ``warning`` when at least ``tight_share`` of the rows
        sit in tight clusters that the declared groups (if any) do not explain,
        else ``info``.
    """
    frame = as_frame(X)
    n = len(frame)
    shown = row_ids(ids, n)
    nb = neighbours if neighbours is not None else nearest_neighbours(frame)
    if nb.distance.shape[1] == 0 or not np.isfinite(nb.typical) or nb.typical == 0:
        return AuditCheck(
            "tight_clusters",
            "info",
            "Too few rows or numeric columns to judge how rows cluster.",
            {"rows": n, "numeric_columns": len(nb.columns)},
        )
    local = nb.local_ratio()
    pairs = tight_pairs(nb, tight_ratio=tight_ratio)
    g = None
    if groups is not None:
        g = np.asarray(groups)
        if g.shape != (n,):
            raise DataError(
                f"groups must have one entry per row ({n}), got shape {g.shape}."
            )
        within = g[pairs[:, 0]] == g[pairs[:, 1]]
    else:
        within = np.zeros(len(pairs), dtype=bool)
    across = pairs[~within]
    graph = coo_matrix(
        (np.ones(len(across), dtype=np.int8), (across[:, 0], across[:, 1])),
        shape=(n, n),
    )
    _, comp = connected_components(graph, directed=False)
    sizes = np.bincount(comp)
    clustered = sizes[comp] > 1
    share = float(clustered.mean()) if n else 0.0
    big = np.argsort(-sizes, kind="stable")
    examples = [
        [v.item() if isinstance(v, np.generic) else v for v in shown[comp == c]]
        for c in big
        if sizes[c] > 1
    ]
    ev: dict[str, Any] = {
        "rows": n,
        "numeric_columns": len(nb.columns),
        "typical_distance": nb.typical,
        "intrinsic_dimension": nb.dimension,
        "tight_ratio": tight_ratio,
        "rule": "nearest row closer than tight_ratio x the distance to the 10th nearest, "
        "and less likely than 0.01 for a cluster-free table of this dimension",
        "tight_pairs": len(pairs),
        "tight_pairs_within_groups": int(within.sum()),
        "rows_in_tight_clusters": int(clustered.sum()),
        "share_in_tight_clusters": share,
        "clusters": int((sizes > 1).sum()),
        "largest_cluster": int(sizes.max()) if n else 0,
        "median_nearest_over_tenth": float(np.median(local[:, 0])),
        "examples": listed(examples[:10]),
    }
    if len(nb.columns) < 5:
        return AuditCheck(
            "tight_clusters",
            "info",
            f"{share:.0%} of rows sit in tight clusters; with fewer than five numeric "
            "columns this is not judged.",
            ev,
        )
    if share >= tight_share:
        declared = " beyond the declared groups" if groups is not None else ""
        return AuditCheck(
            "tight_clusters",
            "warning",
            f"{share:.0%} of rows sit in tight clusters{declared} ({ev['clusters']} "
            "clusters, each row far closer to its nearest row than chance allows): "
            "several rows may come from one unit.",
            ev,
            "Find out whether these rows come from the same patient, subject, "
            "device or batch; if so, declare that column as data.groups so that "
            "a unit's rows are never split.",
        )
    return AuditCheck(
        "tight_clusters",
        "info",
        f"{share:.0%} of rows sit in tight clusters{' beyond the declared groups' if groups is not None else ''}; "
        "rows do not cluster unusually.",
        ev,
    )
