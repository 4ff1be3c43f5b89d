"""Stability of feature selection over repeated runs (Nogueira, Sechidis & Brown 2018).

A pure function on a binary selection matrix: no study, plan or store.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike
from scipy import stats

from foldwall.exceptions import SpecError

__all__ = ["SelectionStability", "selection_stability"]


@dataclass(frozen=True)
class SelectionStability:
    """The stability estimate of a selection matrix, with its variance and interval.

    Attributes
    ----------
    stability : float
        The estimate :math:`\\hat\\Phi` (1 for identical subsets; about 0 for
        subsets drawn at random; it can be negative).
    variance : float
        Estimated variance of :math:`\\hat\\Phi` (Nogueira et al. 2018).
    ci : tuple of (float, float)
        Normal-approximation interval ``stability -/+ z * sqrt(variance)``
        (not clipped; the approximation is poor for few runs).
    confidence : float
        Coverage of ``ci``.
    n_runs : int
        Number of selection runs ``M`` (rows of the matrix).
    n_features : int
        Number of features ``d`` (columns of the matrix).
    mean_size : float
        Mean number of features kept per run, :math:`\\bar k`.
    """

    stability: float
    variance: float
    ci: tuple[float, float]
    confidence: float
    n_runs: int
    n_features: int
    mean_size: float


def selection_stability(
    selected: ArrayLike, *, confidence: float = 0.95
) -> SelectionStability:
    """Stability of a feature-selection procedure from its repeated selections.

    Parameters
    ----------
    selected : array-like of shape (n_runs, n_features)
        Binary matrix ``Z``: ``Z[i, f]`` is 1 when run ``i`` kept feature ``f``.
        At least two runs; not every run may keep all features or none.
    confidence : float, default=0.95
        Coverage of the two-sided interval, strictly between 0 and 1.

    Returns
    -------
    SelectionStability
        The estimate, its variance and a normal-approximation interval.

    Raises
    ------
    SpecError
        When the matrix is not 2-D and binary, has fewer than two runs, or
        every run kept all features (or none), where the estimate is undefined.

    Notes
    -----
    With :math:`\\hat p_f` the share of runs that kept feature :math:`f`,
    :math:`\\bar k = \\sum_f \\hat p_f`, :math:`k_i` the size of run :math:`i`,
    :math:`s_f^2 = \\frac{M}{M-1}\\hat p_f(1-\\hat p_f)` and
    :math:`D = \\frac{\\bar k}{d}(1 - \\frac{\\bar k}{d})`, the estimate is
    (Nogueira, Sechidis & Brown 2018, Definition 4)

    .. math:: \\hat\\Phi = 1 - \\frac{\\frac1d\\sum_f s_f^2}{D}.

    Its variance is :math:`\\frac{4}{M^2}\\sum_i(\\hat\\phi_i - \\bar\\phi)^2`, with
    per-run terms

    .. math:: \\hat\\phi_i = \\frac1D\\Big[\\frac1d\\sum_f Z_{if}\\hat p_f
       - \\frac{k_i\\bar k}{d^2} + \\frac{\\hat\\Phi}{2}\\Big(\\frac{2k_i\\bar k}{d^2}
       - \\frac{k_i}{d} - \\frac{\\bar k}{d} + 1\\Big)\\Big],

    and the interval is :math:`\\hat\\Phi \\pm z_{1-\\alpha/2}\\sqrt{\\mathrm{var}}`
    (the paper's asymptotic interval). :math:`\\hat\\Phi` equals Fleiss' kappa on
    the features x {kept, not kept} table, and, when every run keeps the same
    number of features, the mean pairwise Kuncheva index.

    References
    ----------
    Nogueira, S., Sechidis, K., Brown, G. (2018). On the stability of feature
    selection algorithms. *Journal of Machine Learning Research* 18(174):1-54.

    Examples
    --------
    >>> z = [[1, 1, 1, 0, 0, 0], [1, 1, 0, 1, 0, 0], [1, 1, 1, 0, 0, 0], [1, 0, 1, 1, 0, 0]]
    >>> round(selection_stability(z).stability, 6)  # 4/9
    0.444444
    """
    where = "selection_stability"
    z = np.asarray(selected)
    if z.ndim != 2:
        raise SpecError(
            f"{where}: selected must be a 2-D matrix (runs x features), "
            f"got {z.ndim} dimension(s)."
        )
    if z.size and not np.all((z == 0) | (z == 1)):
        raise SpecError(f"{where}: selected must hold only 0 and 1 (or booleans).")
    m, d = z.shape
    if m < 2:
        raise SpecError(f"{where}: needs at least two selection runs, got {m}.")
    if d < 1:
        raise SpecError(f"{where}: needs at least one feature column, got none.")
    if isinstance(confidence, bool) or not 0.0 < float(confidence) < 1.0:
        raise SpecError(
            f"{where}: confidence must lie strictly between 0 and 1, "
            f"got {confidence!r}."
        )
    zf = z.astype(float)
    p = zf.mean(axis=0)
    kbar = float(p.sum())
    denom = (kbar / d) * (1.0 - kbar / d)
    if denom <= 0.0:
        raise SpecError(
            f"{where}: every run kept all {d} features or none; stability is "
            f"undefined (there was no selection to compare)."
        )
    stability = 1.0 - (m / (m - 1)) * float(np.mean(p * (1.0 - p))) / denom
    k = zf.sum(axis=1)
    phi = (
        (zf @ p) / d
        - k * kbar / d**2
        + stability / 2.0 * (2.0 * k * kbar / d**2 - k / d - kbar / d + 1.0)
    ) / denom
    variance = 4.0 / m**2 * float(np.sum((phi - phi.mean()) ** 2))
    zq = float(stats.norm.isf((1.0 - float(confidence)) / 2.0))
    half = zq * math.sqrt(variance)
    return SelectionStability(
        stability=float(stability),
        variance=variance,
        ci=(float(stability - half), float(stability + half)),
        confidence=float(confidence),
        n_runs=int(m),
        n_features=int(d),
        mean_size=kbar,
    )
