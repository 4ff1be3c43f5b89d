"""Leaky columns: columns that carry the outcome, or show preprocessing before the split.

Four audits, each on the feature table alone:

* ``single_column``: every column on its own predicts the outcome inside the
  outer folds (fitted on each training part, scored on its test part). A column
  that alone predicts almost perfectly is usually recorded after the outcome,
  computed from it, or a stand-in for it. The one-column model: the column's
  values are cut into bins (quantiles of the *training* rows for a continuous
  column; its own values for a column with few values; missing values a bin of
  their own); each bin predicts the training rows' most likely class (scaled by
  class size, which suits balanced accuracy) or their mean outcome; for a
  binary outcome a single threshold fitted on the training rows is tried as
  well, and the better of the two kept. Score: balanced accuracy
  (classification) or R^2 (regression) over the pooled out-of-fold predictions.
* ``scaled_before_split``: columns whose whole-table mean is 0 and standard
  deviation 1 (either denominator), or minimum 0 and maximum 1: someone scaled
  the table before it was split, and other steps (imputation, selection) may
  have seen all rows too.
* ``unique_columns``: a discrete column (text, category, whole numbers) with a
  different value on every row: an identifier or row number a model can memorise.
* ``outcome_function``: a column whose values are a function of the outcome
  (one value per class; or, for a continuous outcome, a strictly monotone
  function of it).

Thresholds (our rule): ``single_column`` warns from balanced accuracy 0.95 or
R^2 0.90 and reports a problem from 0.98. On the clean data sets that
scikit-learn ships the best single column reaches far less (see the tests).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, Any, Literal

import numpy as np
import pandas as pd

from foldwall.audit._checks import AuditCheck, Task, as_frame, check_splits, infer_task
from foldwall.audit._groups import id_like_name, is_discrete
from foldwall.exceptions import DataError

if TYPE_CHECKING:
    from numpy.typing import ArrayLike, NDArray

__all__ = ["leaky_column_checks", "single_column_scores"]

_WARN = {"classification": 0.95, "regression": 0.90}
_PROBLEM = {"classification": 0.98, "regression": 0.98}


def _check_y(y: ArrayLike, n: int) -> NDArray[Any]:
    arr = np.asarray(y)
    if arr.ndim != 1 or arr.shape[0] != n:
        raise DataError(
            f"the outcome must be 1-d with one entry per row ({n} rows), got shape "
            f"{arr.shape}."
        )
    if pd.isna(arr).any():
        raise DataError(
            "the outcome has missing values; drop those rows before the audit."
        )
    return arr


def _n_bins(n_train: int) -> int:
    return int(min(32, max(4, n_train // 10)))


def _codes_fixed(frame: pd.DataFrame, cols: list[str]) -> NDArray[np.intp]:
    """Bin codes for columns with few values: each value its own bin, NaN bin 0."""
    out = np.zeros((len(frame), len(cols)), dtype=np.intp)
    for j, c in enumerate(cols):
        codes = pd.factorize(frame[c], use_na_sentinel=True)[0]
        out[:, j] = codes + 1
    return out


def _codes_quantile(
    A: NDArray[np.float64], train: NDArray[np.intp], n_bins: int
) -> NDArray[np.intp]:
    """Bins from the training rows' quantiles (inner edges only), NaN bin 0."""
    qs = np.linspace(0.0, 1.0, n_bins + 1)[1:-1]
    with np.errstate(all="ignore"):
        import warnings

        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)  # all-NaN column
            T = A[train]
            if np.isnan(T).any():
                edges = np.nanquantile(T, qs, axis=0)
            else:
                edges = np.quantile(T, qs, axis=0)
    out = np.zeros(A.shape, dtype=np.intp)
    for j in range(A.shape[1]):
        e = edges[:, j]
        col = A[:, j]
        ok = ~np.isnan(col)
        if np.isnan(e).any():
            continue
        out[ok, j] = np.searchsorted(e, col[ok], side="right") + 1
    return out


def _class_scores(
    codes: NDArray[np.intp],
    yk: NDArray[np.intp],
    K: int,
    train: NDArray[np.intp],
    test: NDArray[np.intp],
    n_codes: int,
) -> NDArray[np.intp]:
    """Predicted class of every test row, per column, from per-bin class counts."""
    p = codes.shape[1]
    flat_tr = codes[train] + (np.arange(p) * n_codes)[None, :]
    flat_te = codes[test] + (np.arange(p) * n_codes)[None, :]
    y_tr = yk[train]
    n_k = np.bincount(y_tr, minlength=K).astype(np.float64)
    alpha = 0.5
    lik = np.empty((p * n_codes, K))
    for k in range(K):
        counts = np.bincount(flat_tr[y_tr == k].ravel(), minlength=p * n_codes)
        lik[:, k] = (counts + alpha) / (n_k[k] + alpha * n_codes)
    return np.asarray(np.argmax(lik[flat_te], axis=2), dtype=np.intp)


def _stump(
    A: NDArray[np.float64],
    yk: NDArray[np.intp],
    train: NDArray[np.intp],
    test: NDArray[np.intp],
) -> NDArray[np.intp]:
    """Binary outcome: the best single threshold per column (training rows), applied to test."""
    T = A[train]
    T = np.where(np.isnan(T), np.nanmedian(T, axis=0)[None, :], T)
    y_tr = yk[train]
    n1 = max(int(y_tr.sum()), 1)
    n0 = max(len(y_tr) - int(y_tr.sum()), 1)
    order = np.argsort(T, axis=0, kind="stable")
    Ts = np.take_along_axis(T, order, axis=0)
    ys = y_tr[order]
    ones_below = np.cumsum(ys, axis=0)[:-1]  # rows 0..i below a cut after row i
    zeros_below = np.arange(1, len(y_tr))[:, None] - ones_below
    # "value above the cut -> class 1": balanced accuracy
    up = 0.5 * (zeros_below / n0 + (n1 - ones_below) / n1)
    score = np.maximum(up, 1.0 - up)
    valid = Ts[1:] > Ts[:-1]
    score = np.where(valid, score, -1.0)
    best = np.argmax(score, axis=0)
    cols = np.arange(A.shape[1])
    cut = 0.5 * (Ts[best, cols] + Ts[best + 1, cols])
    direction_up = up[best, cols] >= 0.5
    X_te = A[test]
    X_te = np.where(np.isnan(X_te), np.nanmedian(T, axis=0)[None, :], X_te)
    above = X_te > cut[None, :]
    pred = np.where(direction_up[None, :], above, ~above).astype(np.intp)
    no_cut = score[best, cols] < 0
    pred[:, no_cut] = int(n1 >= n0)
    return np.asarray(pred, dtype=np.intp)


def _balanced_accuracy(
    pred: NDArray[np.intp], yk: NDArray[np.intp], K: int
) -> NDArray[np.float64]:
    recalls = [(pred[yk == k] == k).mean(axis=0) for k in range(K) if (yk == k).any()]
    return np.asarray(np.mean(recalls, axis=0), dtype=np.float64)


def single_column_scores(
    X: Any,
    y: ArrayLike,
    splits: Sequence[tuple[ArrayLike, ArrayLike]],
    *,
    task: Task | None = None,
) -> pd.Series:
    """In-fold score of every column used alone as a model (see module doc).

    Parameters
    ----------
    X : DataFrame or array-like of shape (n_samples, n_features)
        The feature table.
    y : array-like of shape (n_samples,)
        The outcome.
    splits : list of (train, test) index pairs
        The outer splits; every column is fitted on each training part and
        scored on its test part.
    task : {"classification", "regression"}, default=None
        Inferred from ``y`` when None (:func:`infer_task`).

    Returns
    -------
    pandas.Series
        Balanced accuracy (classification) or R^2 (regression) per column,
        over the pooled out-of-fold predictions, best first.
    """
    frame = as_frame(X)
    n = len(frame)
    yy = _check_y(y, n)
    task = task or infer_task(yy)
    parts = check_splits(splits, n)
    tested = np.zeros(n, dtype=bool)
    for _, te in parts:
        tested[te] = True
    cols = list(frame.columns)
    if not cols:
        return pd.Series(dtype=np.float64)
    n_train_min = min(len(tr) for tr, _ in parts)
    n_bins = _n_bins(n_train_min)
    fixed = [
        c
        for c in cols
        if is_discrete(frame[c]) and frame[c].nunique(dropna=True) <= n_bins
    ]
    cont = [c for c in cols if c not in set(fixed)]
    bad = [
        c
        for c in cont
        if not (
            pd.api.types.is_numeric_dtype(frame[c])
            and not pd.api.types.is_bool_dtype(frame[c])
        )
    ]
    # Text columns with many values: each value its own bin (unseen values fall back).
    fixed += bad
    cont = [c for c in cont if c not in set(bad)]
    A = (
        frame[cont].to_numpy(dtype=np.float64, na_value=np.nan)
        if cont
        else np.empty((n, 0))
    )
    F = _codes_fixed(frame, fixed) if fixed else np.empty((n, 0), dtype=np.intp)
    n_fixed_codes = int(F.max()) + 1 if F.size else 1
    order = fixed + cont
    if task == "classification":
        yk, classes = pd.factorize(yy, sort=True)
        K = len(classes)
        pred = np.zeros((n, len(order)), dtype=np.intp)
        pred_stump = np.zeros((n, len(cont)), dtype=np.intp)
        for tr, te in parts:
            if F.size:
                pred[te, : len(fixed)] = _class_scores(F, yk, K, tr, te, n_fixed_codes)
            if cont:
                Q = _codes_quantile(A, tr, n_bins)
                pred[te, len(fixed) :] = _class_scores(Q, yk, K, tr, te, n_bins + 1)
                if K == 2:
                    pred_stump[te] = _stump(A, yk, tr, te)
        score = _balanced_accuracy(pred[tested], yk[tested], K)
        if K == 2 and cont:
            s2 = _balanced_accuracy(pred_stump[tested], yk[tested], K)
            score[len(fixed) :] = np.maximum(score[len(fixed) :], s2)
    else:
        yf = yy.astype(np.float64)
        predr = np.zeros((n, len(order)))
        for tr, te in parts:
            for block, codes, n_codes in (
                (slice(0, len(fixed)), F, n_fixed_codes),
                (
                    slice(len(fixed), len(order)),
                    _codes_quantile(A, tr, n_bins) if cont else None,
                    n_bins + 1,
                ),
            ):
                if codes is None or codes.size == 0:
                    continue
                p = codes.shape[1]
                off = (np.arange(p) * n_codes)[None, :]
                flat_tr = (codes[tr] + off).ravel()
                sums = np.bincount(
                    flat_tr, weights=np.repeat(yf[tr], p), minlength=p * n_codes
                )
                cnt = np.bincount(flat_tr, minlength=p * n_codes)
                means = np.where(cnt > 0, sums / np.maximum(cnt, 1), yf[tr].mean())
                predr[te, block] = means[codes[te] + off]
        yt = yf[tested]
        sst = float(((yt - yt.mean()) ** 2).sum())
        sse = ((predr[tested] - yt[:, None]) ** 2).sum(axis=0)
        score = 1.0 - sse / sst if sst > 0 else np.full(len(order), np.nan)
    out = pd.Series(np.asarray(score, dtype=np.float64), index=order, name="score")
    return out.reindex(cols).sort_values(ascending=False, kind="stable")


def _scaling(frame: pd.DataFrame) -> dict[str, list[str]]:
    standardised, minmax, centred = [], [], []
    for c in frame.columns:
        col = frame[c]
        if not pd.api.types.is_numeric_dtype(col) or pd.api.types.is_bool_dtype(col):
            continue
        v = col.to_numpy(dtype=np.float64, na_value=np.nan)
        v = v[np.isfinite(v)]
        if v.size < 3 or np.unique(v).size < 3:
            continue
        m = float(v.mean())
        s0, s1 = float(v.std()), float(v.std(ddof=1))
        if abs(m) <= 1e-4 and (abs(s0 - 1) <= 1e-4 or abs(s1 - 1) <= 1e-4):
            standardised.append(c)
        elif float(v.min()) == 0.0 and float(v.max()) == 1.0:
            minmax.append(c)
        elif abs(m) <= 1e-9 * max(1.0, s0):
            centred.append(c)
    return {"standardised": standardised, "min_max": minmax, "centred": centred}


def leaky_column_checks(
    X: Any,
    y: ArrayLike,
    *,
    splits: Sequence[tuple[ArrayLike, ArrayLike]] | None,
    task: Task | None = None,
    scores: pd.Series | None = None,
) -> list[AuditCheck]:
    """Run the four leaky-column audits (see module doc).

    Parameters
    ----------
    X : DataFrame or array-like of shape (n_samples, n_features)
        The feature table.
    y : array-like of shape (n_samples,)
        The outcome.
    splits : list of (train, test) index pairs, or None
        The outer splits for the one-column scores (skipped when None).
    task : {"classification", "regression"}, default=None
        Inferred from ``y`` when None.
    scores : pandas.Series, default=None
        Precomputed :func:`single_column_scores`.

    Returns
    -------
    list of AuditCheck
        ``single_column``, ``scaled_before_split``, ``unique_columns``,
        ``outcome_function``.
    """
    frame = as_frame(X)
    n = len(frame)
    yy = _check_y(y, n)
    task = task or infer_task(yy)
    out: list[AuditCheck] = []
    metric = "balanced_accuracy" if task == "classification" else "r2"

    # ---- one column alone ----
    if scores is None and splits is not None:
        scores = single_column_scores(frame, yy, splits, task=task)
    if scores is None:
        out.append(
            AuditCheck(
                "single_column",
                "info",
                "One-column scores not computed (no outer splits given).",
                {},
            )
        )
    else:
        warn, prob = _WARN[task], _PROBLEM[task]
        top: list[dict[str, Any]] = [
            {"column": str(c), "score": float(s)}
            for c, s in scores.head(10).items()
            if np.isfinite(s)
        ]
        flagged: list[dict[str, Any]] = [t for t in top if t["score"] >= warn] + [
            {"column": str(c), "score": float(s)}
            for c, s in scores.iloc[10:].items()
            if np.isfinite(s) and s >= warn
        ]
        ev: dict[str, Any] = {
            "metric": metric,
            "rule": "each column alone, fitted on each outer training part, "
            "scored on its test part (pooled out-of-fold predictions)",
            "warning_from": warn,
            "problem_from": prob,
            "best": top,
            "flagged": flagged,
        }
        if flagged and flagged[0]["score"] >= prob:
            sev: Literal["info", "warning", "problem"] = "problem"
        elif flagged:
            sev = "warning"
        else:
            sev = "info"
        if flagged:
            names = ", ".join(
                f"{f['column']!r} ({metric} {f['score']:.3f})" for f in flagged[:5]
            )
            title = (
                f"Column(s) that alone predict the outcome almost perfectly: {names}."
            )
            advice = (
                "Check when and how each of these columns was recorded: a column "
                "measured after the outcome, computed from it or standing in for it "
                "must be dropped (data.drop)."
            )
        else:
            best = top[0] if top else None
            title = "No single column predicts the outcome almost perfectly" + (
                f" (best: {best['column']!r}, {metric} {best['score']:.3f})."
                if best
                else "."
            )
            advice = ""
        out.append(AuditCheck("single_column", sev, title, ev, advice))

    # ---- scaled before the split ----
    sc = _scaling(frame)
    ev2: dict[str, Any] = dict(sc)
    n_scaled = len(sc["standardised"]) + len(sc["min_max"])
    if sc["standardised"] or len(sc["min_max"]) >= 2:
        cols = sc["standardised"] + sc["min_max"]
        out.append(
            AuditCheck(
                "scaled_before_split",
                "warning",
                f"{n_scaled} column(s) look scaled on the whole table (mean 0 and sd 1, "
                f"or min 0 and max 1): {', '.join(map(repr, cols[:5]))}"
                f"{' ...' if len(cols) > 5 else ''}.",
                ev2,
                "Give foldwall the raw values and put scaling in the steps, where it "
                "is fitted on training rows only; make sure no other step (imputation, "
                "feature selection, confound removal) was run on the whole table.",
            )
        )
    else:
        extra = []
        if sc["min_max"]:
            extra.append(f"1 column spans exactly 0 to 1 ({sc['min_max'][0]!r})")
        if sc["centred"]:
            extra.append(
                f"{len(sc['centred'])} column(s) have mean exactly 0 (centred on the "
                "whole table; harmless for most models, but a sign of preprocessing "
                "before the split)"
            )
        out.append(
            AuditCheck(
                "scaled_before_split",
                "info",
                "No column looks standardised on the whole table"
                + (f"; {'; '.join(extra)}." if extra else "."),
                ev2,
            )
        )

    # ---- unique per row ----
    uniq = []
    if n >= 20:
        for c in frame.columns:
            col = frame[c]
            if id_like_name(c) or not is_discrete(col) or col.isna().any():
                continue
            if col.nunique() != n:
                continue
            text = not pd.api.types.is_numeric_dtype(col) or pd.api.types.is_bool_dtype(
                col
            )
            kind = "text"
            if not text:
                v = col.to_numpy(dtype=np.float64)
                consecutive = float(v.max() - v.min()) == n - 1
                monotone = bool(np.all(np.diff(v) > 0) or np.all(np.diff(v) < 0))
                kind = (
                    "row number"
                    if consecutive
                    else "ordered with the rows"
                    if monotone
                    else "whole numbers"
                )
            uniq.append({"column": c, "kind": kind})
    ev3: dict[str, Any] = {"columns": uniq}
    if not uniq:
        out.append(
            AuditCheck(
                "unique_columns",
                "info",
                "No discrete column has a different value on every row.",
                ev3,
            )
        )
    else:
        serious = [u for u in uniq if u["kind"] != "whole numbers"]
        out.append(
            AuditCheck(
                "unique_columns",
                "problem" if serious else "warning",
                "Discrete column(s) with a different value on every row: "
                + ", ".join(f"{u['column']!r} ({u['kind']})" for u in uniq[:5])
                + ".",
                ev3,
                "A value unique to each row identifies the row: declare an identifier "
                "as data.id, drop a row number (data.drop); keep a genuine measurement "
                "only if it is one.",
            )
        )

    # ---- a function of the outcome ----
    func = []
    ys = pd.Series(yy)
    if task == "classification":
        for c in frame.columns:
            col = frame[c]
            if col.nunique(dropna=False) < 2:
                continue
            per_class = col.groupby(np.asarray(yy)).nunique(dropna=False)
            if bool((per_class == 1).all()):
                func.append({"column": c, "how": "one value per class"})
    else:
        num = [
            c
            for c in frame.columns
            if pd.api.types.is_numeric_dtype(frame[c])
            and not pd.api.types.is_bool_dtype(frame[c])
            and frame[c].nunique() >= 3
        ]
        if num and ys.nunique() >= 3:
            ranks = frame[num].rank()
            rho = ranks.corrwith(ys.rank())
            for name, r in rho.items():
                if np.isfinite(r) and abs(r) >= 1 - 1e-9:
                    func.append(
                        {"column": str(name), "how": "strictly monotone in the outcome"}
                    )
    ev4: dict[str, Any] = {"columns": func}
    if func:
        out.append(
            AuditCheck(
                "outcome_function",
                "problem",
                "Column(s) whose values are a function of the outcome: "
                + ", ".join(f"{f['column']!r} ({f['how']})" for f in func[:5])
                + ".",
                ev4,
                "Such a column is the outcome in disguise: drop it (data.drop), or "
                "find out how it was computed.",
            )
        )
    else:
        out.append(
            AuditCheck(
                "outcome_function",
                "info",
                "No column is a function of the outcome.",
                ev4,
            )
        )
    return out
