"""Time order: forward splits (train strictly before test) and an outcome-drift audit.

When rows were collected over time, a random split trains on later cases and
tests on earlier ones: the estimate then says how well the model fills gaps in
the past, not how well it predicts the next cases. Two tools:

* :func:`forward_splits`: the distinct times are cut into ``n_splits + 1``
  consecutive blocks of about equal row counts; split ``k`` trains on blocks
  ``0..k`` and tests on block ``k + 1``. Rows with equal times always share a
  block, so every training row is strictly earlier than every test row. The
  first block is never tested. With groups, test rows of a group that already
  has training rows are left out of that test part (a group is tested only on
  its first appearance), so no group straddles a split.
* :func:`time_drift_check`: does the outcome drift with time? Two classes:
  Mann-Whitney U test of time between the classes, effect as the ROC AUC of
  time for the second class; more classes: Kruskal-Wallis H test, effect as
  epsilon-squared ``H / (n - 1)``; continuous outcome: Spearman correlation.
  A study that splits at random while its outcome drifts (p <= 0.01 and an
  effect of at least 0.1 in ``|AUC - 0.5|``, epsilon-squared or ``|rho|``,
  our rule) gets a warning.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd
from scipy import stats

from foldwall.audit._checks import AuditCheck, Task, infer_task
from foldwall.exceptions import DataError

if TYPE_CHECKING:
    from numpy.typing import ArrayLike, NDArray

__all__ = ["forward_splits", "time_drift_check", "time_values"]


def time_values(time: ArrayLike, *, name: str = "time") -> NDArray[np.float64]:
    """A time column as numbers (dates and times as nanoseconds since 1970).

    Raises
    ------
    DataError
        If the column has missing values or cannot be read as numbers or dates.
    """
    s = pd.Series(np.asarray(time) if not isinstance(time, pd.Series) else time)
    if s.isna().any():
        raise DataError(
            f"time column {name!r} has {int(s.isna().sum())} missing values; fill or "
            "drop those rows."
        )
    if pd.api.types.is_datetime64_any_dtype(s):
        return np.asarray(s.astype("int64").to_numpy(), dtype=np.float64)
    if pd.api.types.is_numeric_dtype(s) and not pd.api.types.is_bool_dtype(s):
        return s.to_numpy(dtype=np.float64)
    try:
        try:
            parsed = pd.to_datetime(s, errors="raise", format="ISO8601")
        except (ValueError, TypeError):
            parsed = pd.to_datetime(s, errors="raise", format="mixed")
    except (ValueError, TypeError):
        raise DataError(
            f"time column {name!r} holds values that are neither numbers nor dates "
            f"(first: {s.iloc[0]!r}); write dates as YYYY-MM-DD or use numbers."
        ) from None
    return np.asarray(parsed.astype("int64").to_numpy(), dtype=np.float64)


def forward_splits(
    time: ArrayLike,
    n_splits: int,
    *,
    rows: ArrayLike | None = None,
    groups: ArrayLike | None = None,
    name: str = "time",
) -> list[tuple[NDArray[np.intp], NDArray[np.intp]]]:
    """Forward splits: every training row strictly earlier than every test row.

    Parameters
    ----------
    time : array-like of shape (n_samples,)
        Time of every row of the table (numbers or dates).
    n_splits : int
        Number of splits (there are ``n_splits + 1`` time blocks).
    rows : array-like of int, default=None
        Split only these rows (for example one outer training part, for the
        inner loop); indices returned are rows of the whole table.
    groups : array-like of shape (n_samples,), default=None
        Group of every row; a group is tested only where it first appears.
    name : str, default="time"
        Column name for messages.

    Returns
    -------
    list of (train, test) pairs of row indices, in time order.

    Raises
    ------
    DataError
        If there are fewer distinct times than blocks, or a test part is empty.

    Examples
    --------
    >>> [(tr.tolist(), te.tolist()) for tr, te in forward_splits([3, 1, 2, 4], 3)]
    [([1], [2]), ([1, 2], [0]), ([1, 2, 0], [3])]
    """
    t_all = time_values(time, name=name)
    if int(n_splits) < 1:
        raise DataError(f"forward splits need n_splits >= 1, got {n_splits!r}.")
    sub = np.arange(len(t_all)) if rows is None else np.asarray(rows, dtype=np.intp)
    t = t_all[sub]
    uniq, inv, counts = np.unique(t, return_inverse=True, return_counts=True)
    inv = inv.ravel()
    n_blocks = int(n_splits) + 1
    if uniq.size < n_blocks:
        raise DataError(
            f"forward splits need at least {n_blocks} distinct values of {name!r} "
            f"for {n_splits} splits, found {uniq.size}; use fewer folds."
        )
    # Each distinct time goes to the block that holds the middle of its rows, so
    # blocks have about equal row counts and rows with one time share a block.
    middle = np.cumsum(counts) - counts / 2.0
    block_of_value = np.minimum(
        (middle * n_blocks / len(t)).astype(np.intp), n_blocks - 1
    )
    if np.unique(block_of_value).size < n_blocks:
        raise DataError(
            f"forward splits: too many rows share one value of {name!r} to cut "
            f"{n_blocks} time blocks; use fewer folds."
        )
    block = block_of_value[inv]
    order = np.argsort(t, kind="stable")
    g = None if groups is None else np.asarray(groups)
    out = []
    for k in range(int(n_splits)):
        tr_local = order[block[order] <= k]
        te_local = order[block[order] == k + 1]
        tr, te = sub[tr_local], sub[te_local]
        if g is not None:
            te = te[~np.isin(g[te], g[tr])]
        if te.size == 0:
            raise DataError(
                f"forward split {k} has no test rows (every group in it was seen "
                f"earlier); use fewer folds."
            )
        out.append((tr.astype(np.intp), te.astype(np.intp)))
    return out


def time_drift_check(
    time: ArrayLike,
    y: ArrayLike,
    *,
    forward: bool,
    task: Task | None = None,
    name: str = "time",
    alpha: float = 0.01,
    min_effect: float = 0.1,
) -> AuditCheck:
    """Does the outcome drift with time while the study splits at random?

    Parameters
    ----------
    time : array-like of shape (n_samples,)
    y : array-like of shape (n_samples,)
    forward : bool
        Whether the study's splits are forward (then drift is only reported).
    task : {"classification", "regression"}, default=None
    name : str, default="time"
        Column name for the evidence.
    alpha : float, default=0.01
        Significance level of the drift test.
    min_effect : float, default=0.1
        Smallest effect that counts as drift (see module doc).

    Returns
    -------
    AuditCheck
        ``time_drift``: ``warning`` for drift with random splits, else ``info``.
    """
    t = time_values(time, name=name)
    yy = np.asarray(y)
    if yy.shape != t.shape:
        raise DataError(
            f"time column {name!r} has {t.size} rows but the outcome has {yy.size}."
        )
    task = task or infer_task(yy)
    ev: dict[str, Any] = {"column": name, "forward_splits": forward}
    if task == "regression":
        rho, p = stats.spearmanr(t, yy.astype(np.float64))
        effect = abs(float(rho))
        ev.update(test="Spearman correlation", rho=float(rho), p_value=float(p))
        how = f"Spearman rho {float(rho):.2f}"
    else:
        codes, classes = pd.factorize(yy, sort=True)
        if len(classes) == 2:
            u = stats.mannwhitneyu(t[codes == 1], t[codes == 0])
            auc = float(u.statistic) / ((codes == 1).sum() * (codes == 0).sum())
            p = float(u.pvalue)
            effect = abs(auc - 0.5)
            ev.update(test="Mann-Whitney U", auc_of_time=auc, p_value=p)
            how = f"ROC AUC of time {auc:.2f}"
        else:
            h = stats.kruskal(*[t[codes == k] for k in range(len(classes))])
            p = float(h.pvalue)
            effect = float(h.statistic) / (len(t) - 1)
            ev.update(test="Kruskal-Wallis H", epsilon_squared=effect, p_value=p)
            how = f"epsilon-squared {effect:.2f}"
    ev.update(alpha=alpha, min_effect=min_effect)
    drifts = bool(p <= alpha and effect >= min_effect)
    if drifts and not forward:
        return AuditCheck(
            "time_drift",
            "warning",
            f"The outcome drifts with {name!r} ({how}, p = {p:.3g}) while the splits "
            "are random: the estimate mixes past and future.",
            ev,
            "Split forward in time (outer.forward: true, inner.forward: true) so that "
            "every model is tested on cases later than those it was trained on.",
        )
    if drifts:
        return AuditCheck(
            "time_drift",
            "info",
            f"The outcome drifts with {name!r} ({how}, p = {p:.3g}); the splits are "
            "forward, so every test part is later than its training part.",
            ev,
        )
    return AuditCheck(
        "time_drift",
        "info",
        f"No clear drift of the outcome with {name!r} ({how}, p = {p:.3g}).",
        ev,
    )
