"""Nearest-neighbour distances between rows, on scaled features (shared by two audits).

The near-duplicate audit and the hidden-group audit both ask how close each row
is to its nearest other row, compared with how far apart rows of this table
usually are. Both read one :class:`Neighbours`, computed once.

How the distances are computed (documented so a reviewer can recompute them):
the numeric feature columns (booleans as 0/1) are taken; a missing value is
replaced by its column's median; columns with a single value are left out; each
remaining column is centred on its mean and divided by its standard deviation
over the whole table (this is an audit of the table, not a model, so no split
is involved); distances are Euclidean, from scikit-learn's ``NearestNeighbors``.

The *typical distance* is the median, over rows, of the distance to the row's
``k``-th nearest other row (``k = 10``, or fewer in a tiny table). The ``k``-th
neighbour rather than the first keeps the yardstick honest when a share of the
rows are duplicated: a row with two or three copies still has its tenth
neighbour among the other rows.

How close is *too* close depends on the table's intrinsic dimension: in a table
whose rows fill few dimensions, nearest neighbours are naturally close. The
yardstick is the Poisson-process model of nearest-neighbour distances behind
the intrinsic-dimension estimator of Levina & Bickel (2004, NIPS 17:777-784);
the Beta law below follows from that model (it is not the paper's estimator):
for rows drawn from a smooth
density without clusters in ``q`` dimensions, given the distance ``d_k`` to a
row's ``k``-th neighbour, the nearer ``k - 1`` neighbours fall uniformly in the
ball of that radius, so ``(d_j / d_k) ** q`` follows a Beta(j, k - j)
distribution. Hence ``q`` is estimated from the median over rows of ``d_{k/2} /
d_k`` (whose ``q``-th power has median 0.5), and the chance that a row's
nearest neighbour lies within ratio ``t`` of ``d_k`` is ``1 - (1 - t ** q) **
(k - 1)`` (:meth:`Neighbours.chance_within`). Tight groups of up to ``k / 2``
rows leave the estimate of ``q`` unchanged.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd
from sklearn.neighbors import NearestNeighbors

from foldwall.audit._checks import as_frame

if TYPE_CHECKING:
    from numpy.typing import NDArray

__all__ = ["Neighbours", "nearest_neighbours", "scaled_numeric"]


@dataclass(frozen=True)
class Neighbours:
    """The nearest other rows of every row, and the table's typical distance.

    Attributes
    ----------
    index : ndarray of shape (n_samples, k)
        Row numbers of each row's nearest other rows, nearest first.
    distance : ndarray of shape (n_samples, k)
        Their Euclidean distances on the scaled features.
    typical : float
        Median over rows of the distance to the k-th nearest other row.
    columns : list of str
        The feature columns the distances were computed on.
    """

    index: NDArray[np.intp]
    distance: NDArray[np.float64]
    typical: float
    columns: list[str]

    @property
    def nearest(self) -> NDArray[np.float64]:
        """Distance of every row to its nearest other row."""
        return self.distance[:, 0]

    @property
    def dimension(self) -> float:
        """Intrinsic dimension estimated from the median of ``d_{k/2} / d_k`` (module doc)."""
        k = self.distance.shape[1] - self.distance.shape[1] % 2
        if k < 2:
            return float(max(1, len(self.columns)))
        far = self.distance[:, k - 1]
        ok = far > 0
        if not ok.any():
            return float(max(1, len(self.columns)))
        ratio = float(np.median(self.distance[ok, k // 2 - 1] / far[ok]))
        if not 0 < ratio < 1:
            return float(max(1, len(self.columns)))
        return float(np.log(0.5) / np.log(ratio))

    def chance_within(self, ratio: NDArray[np.float64]) -> NDArray[np.float64]:
        """Chance, for a cluster-free table of this dimension, that a row's nearest
        neighbour is within ``ratio`` times the distance to its ``k``-th neighbour."""
        k = self.distance.shape[1]
        q = self.dimension
        r = np.clip(np.asarray(ratio, dtype=np.float64), 0.0, 1.0)
        return np.asarray(1.0 - (1.0 - r**q) ** max(1, k - 1), dtype=np.float64)

    def local_ratio(self) -> NDArray[np.float64]:
        """Every neighbour's distance over the row's distance to its ``k``-th neighbour."""
        far = self.distance[:, -1:]
        with np.errstate(invalid="ignore", divide="ignore"):
            out = np.where(far > 0, self.distance / np.where(far > 0, far, 1.0), 0.0)
        return np.asarray(out, dtype=np.float64)

    def pairs_below(
        self, threshold: float, *, mask: NDArray[np.bool_] | None = None
    ) -> NDArray[np.intp]:
        """Row pairs (i < j) closer than ``threshold`` (and where ``mask``), one row per pair.

        Returns
        -------
        ndarray of shape (n_pairs, 2)
        """
        hit = self.distance < threshold
        if mask is not None:
            hit &= mask
        rows, cols = np.nonzero(hit)
        a = np.arange(self.index.shape[0])[rows]
        b = self.index[rows, cols]
        pairs = np.stack([np.minimum(a, b), np.maximum(a, b)], axis=1)
        if pairs.size == 0:
            return np.empty((0, 2), dtype=np.intp)
        return np.unique(pairs, axis=0).astype(np.intp)


def scaled_numeric(X: object) -> tuple[NDArray[np.float64], list[str]]:
    """The numeric feature columns, median-filled and standardised (see module doc)."""
    frame = as_frame(X)
    numeric = [
        c
        for c in frame.columns
        if pd.api.types.is_numeric_dtype(frame[c])
        or pd.api.types.is_bool_dtype(frame[c])
    ]
    if not numeric:
        return np.empty((len(frame), 0)), []
    A = frame[numeric].to_numpy(dtype=np.float64, na_value=np.nan)
    med = np.nanmedian(np.where(np.isfinite(A), A, np.nan), axis=0)
    med = np.where(np.isnan(med), 0.0, med)
    bad = ~np.isfinite(A)
    if bad.any():
        A = np.where(bad, med[None, :], A)
    sd = A.std(axis=0)
    keep = sd > 0
    A = (A[:, keep] - A[:, keep].mean(axis=0)) / sd[keep]
    return A, [c for c, k in zip(numeric, keep, strict=True) if k]


def nearest_neighbours(X: object, *, k: int = 10) -> Neighbours:
    """Distances from every row to its ``k`` nearest other rows (see module doc).

    Parameters
    ----------
    X : DataFrame or array-like of shape (n_samples, n_features)
        The feature table.
    k : int, default=10
        How many neighbours to keep; the typical distance uses the k-th.

    Returns
    -------
    Neighbours
    """
    A, columns = scaled_numeric(X)
    n = A.shape[0]
    k = max(1, min(int(k), n - 1))
    if n < 2 or A.shape[1] == 0:
        return Neighbours(
            index=np.zeros((n, 0), dtype=np.intp),
            distance=np.zeros((n, 0)),
            typical=float("nan"),
            columns=columns,
        )
    nn = NearestNeighbors(n_neighbors=k, algorithm="brute").fit(A)
    distance, index = nn.kneighbors()  # no argument: a row is not its own neighbour
    typical = float(np.median(distance[:, -1]))
    return Neighbours(
        index=index.astype(np.intp),
        distance=distance.astype(np.float64),
        typical=typical,
        columns=columns,
    )
