"""Confound statistics on the study's outer folds, each with its own random-label control.

Columns that describe how rows were acquired (site, device, batch, operator, age,
sex, ...) are kept out of the features. Three questions are asked of them, each
answered in-fold (fitted on every outer training part, scored on its test part):

* ``acquisition_outcome``: how well do the acquisition columns alone predict
  the outcome? (How much of the score could the site explain?)
* ``features_acquisition``: how well do the features predict each acquisition
  column? (Do the features encode the site or the device?)
* ``posthoc``: do the study's out-of-fold predictions explain the outcome beyond
  the acquisition columns? (:func:`foldwall.audit.posthoc_test`, Dinga et al.
  2020.)

Each of the first two has its own random-label control: the target of that
question (the outcome, or the acquisition column) is shuffled within the outer
test folds, the same model refitted on every fold, and the p-value is
``(1 + hits) / (1 + n_permutations)``, where a hit is a shuffled score at least
as good as the observed one (Phipson & Smyth 2010). The post-hoc test adds a
permutation p-value when the acquisition columns are categorical.

The model for the first two: ridge regression on standardised inputs (scaling
fitted on the training part; missing feature values filled with the training
median; text and category columns of the features left out), one output per
class for a categorical target, the penalty chosen per target from 15 values
(``1e-6 .. 10`` times the largest squared singular value of the training part)
by the closed-form leave-one-out error on the training part. A shuffled target
is one more output of the same fit, so a control costs little. Scores: ROC AUC
(two classes; mean over folds), balanced accuracy (more classes; pooled
out-of-fold predictions), R^2 (continuous; pooled).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import asdict, dataclass
from typing import TYPE_CHECKING, Any, Literal

import numpy as np
import pandas as pd
from scipy import stats

from foldwall.audit._checks import (
    AuditCheck,
    Severity,
    Task,
    as_frame,
    check_splits,
    infer_task,
)
from foldwall.audit._posthoc import (
    PosthocTest,
    _is_categorical,
    acquisition_design,
    posthoc_test,
)
from foldwall.exceptions import DataError

if TYPE_CHECKING:
    from numpy.typing import ArrayLike, NDArray

__all__ = [
    "ConfoundScore",
    "acquisition_outcome_score",
    "confound_checks",
    "features_acquisition_scores",
    "ridge_out_of_fold",
]

_ALPHAS = np.logspace(-6, 1, 15)
ALPHA = 0.05  # significance level of the confound checks (common practice)


@dataclass(frozen=True)
class ConfoundScore:
    """In-fold score of one confound question and its random-label control.

    Attributes
    ----------
    question : str
        ``"acquisition -> outcome"`` or ``"features -> <column>"``.
    metric : str
        ``roc_auc``, ``balanced_accuracy`` or ``r2``.
    score : float
        Observed in-fold score.
    chance : float
        Score expected without any association (0.5, 1/levels, or 0).
    null_scores : list of float
        Scores with the target shuffled within the outer test folds.
    p_value : float
        ``(1 + hits) / (1 + n_permutations)``.
    """

    question: str
    metric: str
    score: float
    chance: float
    null_scores: list[float]
    p_value: float

    def to_json(self) -> dict[str, Any]:
        """Plain dict (the null scores summarised by their count and quantiles)."""
        out = asdict(self)
        null = np.asarray(self.null_scores, dtype=np.float64)
        out["null_scores"] = None
        out["n_permutations"] = int(null.size)
        out["null_median"] = float(np.median(null)) if null.size else None
        out["null_95th"] = float(np.quantile(null, 0.95)) if null.size else None
        return out


# ---- the model ----


def _standardise(
    X: NDArray[np.float64], train: NDArray[np.intp]
) -> NDArray[np.float64]:
    """Fill NaN with the training median, scale with training mean and sd."""
    T = X[train]
    if np.isnan(T).any() or np.isnan(X).any():
        import warnings

        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            med = np.nanmedian(T, axis=0)
        med = np.where(np.isnan(med), 0.0, med)
        X = np.where(np.isnan(X), med[None, :], X)
        T = X[train]
    mu = T.mean(axis=0)
    sd = T.std(axis=0)
    sd[sd == 0] = 1.0
    return np.asarray((X - mu) / sd, dtype=np.float64)


def _thin_svd(
    Z: NDArray[np.float64],
) -> tuple[NDArray[np.float64], NDArray[np.float64], NDArray[np.float64]]:
    """U, s, V of Z (only directions with s > 0), from the smaller Gram matrix.

    The eigendecomposition of ``Z'Z`` (or ``ZZ'``) is several times faster than
    a direct SVD of a tall (or wide) table; directions whose squared singular
    value is below 1e-10 of the largest are dropped (a ridge penalty removes
    them anyway).
    """
    n, p = Z.shape
    if p <= n:
        w, V = np.linalg.eigh(Z.T @ Z)
        keep = w > 1e-10 * max(float(w.max(initial=0.0)), 1e-300)
        s = np.sqrt(w[keep])
        V = V[:, keep]
        U = (Z @ V) / s
    else:
        w, U = np.linalg.eigh(Z @ Z.T)
        keep = w > 1e-10 * max(float(w.max(initial=0.0)), 1e-300)
        s = np.sqrt(w[keep])
        U = U[:, keep]
        V = (Z.T @ U) / s
    return U, s, V


def _auc(y01: NDArray[np.intp], score: NDArray[np.float64]) -> float:
    """ROC AUC by ranks (Mann-Whitney U), ties counted half."""
    r = stats.rankdata(score)
    pos = y01 == 1
    n1, n0 = int(pos.sum()), int((~pos).sum())
    return float((r[pos].sum() - n1 * (n1 + 1) / 2) / (n1 * n0))


def ridge_out_of_fold(
    X: ArrayLike,
    Y: ArrayLike,
    splits: Sequence[tuple[ArrayLike, ArrayLike]],
    *,
    target_of_column: ArrayLike | None = None,
    alpha: float | None = None,
) -> NDArray[np.float64]:
    """Out-of-fold ridge predictions of every column of ``Y`` (see module doc).

    Parameters
    ----------
    X : array-like of shape (n_samples, n_features)
        Numeric inputs (NaN allowed; filled in-fold).
    Y : array-like of shape (n_samples, n_outputs)
        Outputs, fitted jointly (one SVD per fold).
    splits : list of (train, test) index pairs
    target_of_column : array-like of shape (n_outputs,), default=None
        Outputs that share a number share one penalty (the columns of one
        categorical target); by default each output chooses its own.
    alpha : float, default=None
        A fixed penalty instead of the leave-one-out choice (used by the tests).

    Returns
    -------
    ndarray of shape (n_samples, n_outputs)
        Predictions for the test rows of each split (NaN for rows never tested;
        the last split wins for rows tested twice).
    """
    Xa = np.asarray(X, dtype=np.float64)
    Ya = np.asarray(Y, dtype=np.float64)
    if Ya.ndim == 1:
        Ya = Ya[:, None]
    n = Xa.shape[0]
    parts = check_splits(splits, n)
    T = Ya.shape[1]
    tgt = (
        np.arange(T)
        if target_of_column is None
        else np.asarray(target_of_column, dtype=np.intp)
    )
    out = np.full((n, T), np.nan)
    for tr, te in parts:
        Z = _standardise(Xa, tr)
        Ztr, Zte = Z[tr], Z[te]
        ymean = Ya[tr].mean(axis=0)
        Yc = Ya[tr] - ymean
        if Z.shape[1] == 0:
            out[te] = ymean
            continue
        U, s, V = _thin_svd(Ztr)
        UtY = U.T @ Yc
        s2 = s**2
        scale = float(s2.max()) if s2.size and s2.max() > 0 else 1.0
        alphas = np.array([alpha]) if alpha is not None else _ALPHAS * scale
        ZteV = Zte @ V
        best_err = np.full(T, np.inf)
        best_pred = np.zeros((len(te), T))
        n_tr = len(tr)
        for a in alphas:
            shrink = s2 / (s2 + a)
            if alpha is None:
                fitted = U @ (shrink[:, None] * UtY)
                h = (U**2) @ shrink + 1.0 / n_tr
                loo = (Yc - fitted) / np.maximum(1.0 - h, 1e-12)[:, None]
                err_col = (loo**2).sum(axis=0)
                err: NDArray[np.float64] = np.asarray(
                    np.bincount(tgt, weights=err_col)[tgt], dtype=np.float64
                )
            else:
                err = np.zeros(T, dtype=np.float64)
            pred = ZteV @ ((s / (s2 + a))[:, None] * UtY) + ymean
            better = err < best_err
            best_err[better] = err[better]
            best_pred[:, better] = pred[:, better]
        out[te] = best_pred
    return out


# ---- targets and scores ----


@dataclass(frozen=True)
class _Target:
    name: str
    kind: str  # "binary" | "classes" | "continuous"
    values: NDArray[Any]
    levels: NDArray[Any]


def _target(name: str, values: ArrayLike, categorical: bool) -> _Target:
    v = np.asarray(values)
    if categorical:
        codes, levels = pd.factorize(v, sort=True)
        kind = "binary" if len(levels) == 2 else "classes"
        return _Target(name, kind, codes.astype(np.intp), np.asarray(levels))
    return _Target(name, "continuous", v.astype(np.float64), np.empty(0))


def _indicator(t: _Target, values: NDArray[Any]) -> NDArray[np.float64]:
    if t.kind == "continuous":
        return values.astype(np.float64)[:, None]
    return np.asarray(np.eye(len(t.levels))[values], dtype=np.float64)


def _score(
    t: _Target,
    values: NDArray[Any],
    pred: NDArray[np.float64],
    parts: list[tuple[NDArray[np.intp], NDArray[np.intp]]],
    tested: NDArray[np.bool_],
) -> float:
    if t.kind == "binary":
        d = pred[:, 1] - pred[:, 0]
        scores = [
            _auc(values[te], d[te])
            for _, te in parts
            if np.unique(values[te]).size == 2
        ]
        if scores:
            return float(np.mean(scores))
        return _auc(values[tested], d[tested])
    if t.kind == "classes":
        hat = np.argmax(pred[tested], axis=1)
        truth = values[tested]
        recalls = [
            float((hat[truth == k] == k).mean())
            for k in range(len(t.levels))
            if (truth == k).any()
        ]
        return float(np.mean(recalls))
    yt = values[tested].astype(np.float64)
    sst = float(((yt - yt.mean()) ** 2).sum())
    if sst == 0:
        return float("nan")
    return 1.0 - float(((pred[tested, 0] - yt) ** 2).sum()) / sst


def _metric(t: _Target) -> tuple[str, float]:
    if t.kind == "binary":
        return "roc_auc", 0.5
    if t.kind == "classes":
        return "balanced_accuracy", 1.0 / len(t.levels)
    return "r2", 0.0


def _shuffles(
    parts: list[tuple[NDArray[np.intp], NDArray[np.intp]]],
    n: int,
    m: int,
    rng: np.random.Generator,
) -> list[NDArray[np.intp]]:
    """Row orders that shuffle a target within the outer test folds.

    When the test folds do not cover every row exactly once (forward splits,
    repeats), the shuffle runs over all rows.
    """
    counts = np.zeros(n, dtype=np.intp)
    for _, te in parts:
        counts[te] += 1
    cells = [te for _, te in parts] if (counts == 1).all() else [np.arange(n)]
    out = []
    for _ in range(m):
        idx = np.arange(n)
        for rows in cells:
            idx[rows] = rows[rng.permutation(rows.size)]
        out.append(idx)
    return out


def _controlled_score(
    question: str,
    X: NDArray[np.float64],
    t: _Target,
    parts: list[tuple[NDArray[np.intp], NDArray[np.intp]]],
    n_permutations: int,
    rng: np.random.Generator,
) -> ConfoundScore:
    n = X.shape[0]
    tested = np.zeros(n, dtype=bool)
    for _, te in parts:
        tested[te] = True
    orders = [np.arange(n)] + _shuffles(parts, n, n_permutations, rng)
    blocks = [_indicator(t, t.values[o]) for o in orders]
    width = blocks[0].shape[1]
    Y = np.hstack(blocks)
    tgt = np.repeat(np.arange(len(orders)), width)
    pred = ridge_out_of_fold(X, Y, parts, target_of_column=tgt)
    scores = [
        _score(t, t.values[o], pred[:, i * width : (i + 1) * width], parts, tested)
        for i, o in enumerate(orders)
    ]
    metric, chance = _metric(t)
    obs = scores[0]
    null = np.asarray(scores[1:], dtype=np.float64)
    hits = int((null >= obs - 1e-12).sum())
    p = (1 + hits) / (1 + len(null)) if len(null) else float("nan")
    return ConfoundScore(question, metric, obs, chance, [float(v) for v in null], p)


def _rng(random_state: int | np.random.Generator | None) -> np.random.Generator:
    if isinstance(random_state, np.random.Generator):
        return random_state
    return np.random.default_rng(random_state)


def acquisition_outcome_score(
    acquisition: Any,
    y: ArrayLike,
    splits: Sequence[tuple[ArrayLike, ArrayLike]],
    *,
    task: Task | None = None,
    n_permutations: int = 19,
    random_state: int | np.random.Generator | None = None,
) -> ConfoundScore:
    """In-fold score of the acquisition columns alone predicting the outcome.

    Parameters
    ----------
    acquisition : DataFrame or array-like of shape (n_samples, n_columns)
    y : array-like of shape (n_samples,)
    splits : list of (train, test) index pairs
        The study's outer splits.
    task : {"classification", "regression"}, default=None
    n_permutations : int, default=19
        Shuffles of the outcome within the outer test folds.
    random_state : int, Generator or None, default=None

    Returns
    -------
    ConfoundScore
    """
    frame = as_frame(acquisition, "acquisition")
    yy = np.asarray(y)
    n = len(yy)
    if len(frame) != n:
        raise DataError(
            f"acquisition has {len(frame)} rows but the outcome has {n}; pass the "
            "same rows."
        )
    parts = check_splits(splits, n)
    design, _, _ = acquisition_design(frame, drop_first=False)
    task = task or infer_task(yy)
    t = _target("outcome", yy, task == "classification")
    return _controlled_score(
        "acquisition -> outcome", design, t, parts, n_permutations, _rng(random_state)
    )


def _numeric_features(X: Any) -> tuple[NDArray[np.float64], list[str]]:
    frame = as_frame(X)
    cols = [
        c
        for c in frame.columns
        if pd.api.types.is_numeric_dtype(frame[c])
        or pd.api.types.is_bool_dtype(frame[c])
    ]
    return frame[cols].to_numpy(dtype=np.float64, na_value=np.nan), cols


def features_acquisition_scores(
    X: Any,
    acquisition: Any,
    splits: Sequence[tuple[ArrayLike, ArrayLike]],
    *,
    n_permutations: int = 19,
    random_state: int | np.random.Generator | None = None,
) -> list[ConfoundScore]:
    """In-fold score of the features predicting each acquisition column.

    Parameters
    ----------
    X : DataFrame or array-like of shape (n_samples, n_features)
        The features (numeric columns are used).
    acquisition : DataFrame or array-like of shape (n_samples, n_columns)
    splits : list of (train, test) index pairs
    n_permutations : int, default=19
        Shuffles of each acquisition column within the outer test folds.
    random_state : int, Generator or None, default=None

    Returns
    -------
    list of ConfoundScore
        One per acquisition column.
    """
    A, _ = _numeric_features(X)
    frame = as_frame(acquisition, "acquisition")
    n = A.shape[0]
    if len(frame) != n:
        raise DataError(
            f"acquisition has {len(frame)} rows but the features have {n}; pass the "
            "same rows."
        )
    parts = check_splits(splits, n)
    rng = _rng(random_state)
    out = []
    for c in frame.columns:
        col = frame[c]
        if col.isna().any():
            raise DataError(
                f"acquisition column {c!r} has missing values; fill them (for example "
                "with 'unknown') or drop those rows."
            )
        if col.nunique() < 2:
            continue
        t = _target(c, col.to_numpy(), _is_categorical(col))
        out.append(
            _controlled_score(f"features -> {c}", A, t, parts, n_permutations, rng)
        )
    return out


# ---- the checks ----


def _far_from_chance(s: ConfoundScore, margin: float) -> bool:
    return s.p_value <= ALPHA and s.score - s.chance >= margin


def confound_checks(
    acquisition: Any,
    y: ArrayLike,
    splits: Sequence[tuple[ArrayLike, ArrayLike]],
    *,
    X: Any = None,
    predictions: ArrayLike | None = None,
    tested: ArrayLike | None = None,
    task: Task | None = None,
    n_permutations: int = 19,
    random_state: int | np.random.Generator | None = None,
    prediction_scale: Literal["auto", "probability", "raw"] = "auto",
) -> tuple[list[AuditCheck], dict[str, Any]]:
    """Run the confound statistics on the study's outer folds.

    Parameters
    ----------
    acquisition : DataFrame of shape (n_samples, n_columns)
        The acquisition columns.
    y : array-like of shape (n_samples,)
        The outcome.
    splits : list of (train, test) index pairs
        The study's outer splits.
    X : DataFrame or array-like of shape (n_samples, n_features), default=None
        The features; without them ``features_acquisition`` is skipped.
    predictions : array-like, default=None
        The study's out-of-fold predictions (one row per row of the table, or
        per row of ``tested``); without them ``posthoc`` is skipped.
    tested : array-like of int, default=None
        Rows that ``predictions`` belong to (all rows when None).
    task : {"classification", "regression"}, default=None
    n_permutations : int, default=19
        Random-label shuffles for each question.
    random_state : int, Generator or None, default=None
    prediction_scale : {"auto", "probability", "raw"}, default="auto"
        How the predictions enter the post-hoc test (see :func:`posthoc_test`).

    Returns
    -------
    checks : list of AuditCheck
        ``acquisition_outcome``, one ``features_acquisition`` per column,
        ``posthoc`` (or ``confound_path`` without predictions).
    details : dict
        The numbers behind the checks, for ``results.json``'s ``confounds``.

    Notes
    -----
    Severity. ``acquisition_outcome`` and ``features_acquisition`` warn when
    the score beats its random-label control (p <= 0.05) by a clear margin
    (0.05 above chance in ROC AUC, balanced accuracy or R^2). ``posthoc`` is a
    ``problem`` when the acquisition columns predict the outcome but the
    predictions add nothing significant beyond them: the study's score may be
    the acquisition's. Without predictions, ``confound_path`` warns when both
    links exist (the features carry an acquisition column that predicts the
    outcome).
    """
    frame = as_frame(acquisition, "acquisition")
    yy = np.asarray(y)
    task = task or infer_task(yy)
    rng = _rng(random_state)
    margin = 0.05
    checks: list[AuditCheck] = []
    details: dict[str, Any] = {"alpha": ALPHA, "margin": margin}

    ao = acquisition_outcome_score(
        frame, yy, splits, task=task, n_permutations=n_permutations, random_state=rng
    )
    details["acquisition_outcome"] = ao.to_json()
    ao_flag = _far_from_chance(ao, margin)
    cols = ", ".join(map(repr, frame.columns))
    checks.append(
        AuditCheck(
            "acquisition_outcome",
            "warning" if ao_flag else "info",
            (
                f"The acquisition columns ({cols}) alone predict the outcome: "
                f"{ao.metric} {ao.score:.3f} in-fold (chance {ao.chance:.3g}, "
                f"random-label control p = {ao.p_value:.3g})."
            )
            if ao_flag
            else (
                f"The acquisition columns ({cols}) alone do not clearly predict the "
                f"outcome ({ao.metric} {ao.score:.3f}, p = {ao.p_value:.3g})."
            ),
            ao.to_json(),
            "Part of the study's score may come from how rows were acquired; read "
            "the post-hoc test, the leave-one-level-out estimate and the "
            "within-level control before drawing conclusions."
            if ao_flag
            else "",
        )
    )

    fa_flags: list[str] = []
    if X is not None:
        scores = features_acquisition_scores(
            X, frame, splits, n_permutations=n_permutations, random_state=rng
        )
        details["features_acquisition"] = [s.to_json() for s in scores]
        for s in scores:
            col = s.question.split(" -> ", 1)[1]
            flag = _far_from_chance(s, margin)
            if flag:
                fa_flags.append(col)
            checks.append(
                AuditCheck(
                    "features_acquisition",
                    "warning" if flag else "info",
                    (
                        f"The features encode {col!r}: {s.metric} {s.score:.3f} "
                        f"in-fold (chance {s.chance:.3g}, p = {s.p_value:.3g})."
                    )
                    if flag
                    else (
                        f"The features do not clearly encode {col!r} ({s.metric} "
                        f"{s.score:.3f}, p = {s.p_value:.3g})."
                    ),
                    {"column": col, **s.to_json()},
                    "A model can recognise the acquisition from the features; if "
                    "the acquisition also predicts the outcome, the score may be "
                    "the acquisition's."
                    if flag
                    else "",
                )
            )

    if predictions is not None:
        rows = (
            np.arange(len(yy))
            if tested is None
            else np.asarray(tested, dtype=np.intp).ravel()
        )
        pt = posthoc_test(
            yy[rows],
            frame.iloc[rows].reset_index(drop=True),
            predictions,
            task=task,
            n_permutations=n_permutations,
            random_state=rng,
            prediction_scale=prediction_scale,
        )
        details["posthoc"] = pt.to_json()
        checks.append(_posthoc_check(pt, ao_flag))
    elif X is not None:
        both = ao_flag and bool(fa_flags)
        checks.append(
            AuditCheck(
                "confound_path",
                "warning" if both else "info",
                (
                    "The features carry "
                    + ", ".join(map(repr, fa_flags))
                    + ", and the acquisition columns predict the outcome: a model "
                    "can score through the acquisition."
                )
                if both
                else "No path from the acquisition columns through the features to "
                "the outcome was found.",
                {"acquisition_predicts_outcome": ao_flag, "features_encode": fa_flags},
                "Run the study to get the post-hoc test on its predictions, and ask "
                "for the leave-one-level-out estimate (audits.leave_one_out)."
                if both
                else "",
            )
        )
    return checks, details


def _posthoc_check(pt: PosthocTest, ao_flag: bool) -> AuditCheck:
    kind = "explained variance" if pt.family == "gaussian" else "explained deviance"
    adds = pt.p_value <= ALPHA
    if pt.permutation_p is not None:
        adds = adds and pt.permutation_p <= ALPHA
    sev: Severity
    if adds:
        sev = "info"
        title = (
            f"The predictions explain the outcome beyond the acquisition columns: "
            f"{kind} {pt.explained_reduced:.3f} -> {pt.explained_full:.3f} "
            f"(+{pt.added:.3f}; likelihood-ratio test p = {pt.p_value:.3g})."
        )
        advice = ""
    elif ao_flag:
        sev = "problem"
        title = (
            f"The predictions add nothing significant beyond the acquisition columns "
            f"({kind} {pt.explained_reduced:.3f} -> {pt.explained_full:.3f}, "
            f"likelihood-ratio test p = {pt.p_value:.3g}): the study's score may be "
            "the acquisition's."
        )
        advice = (
            "Do not report the score as evidence about the features: look at the "
            "leave-one-level-out estimate and the within-level control, balance the "
            "acquisition across outcomes, or collect data where they are not linked."
        )
    else:
        sev = "info"
        title = (
            f"The predictions add nothing significant beyond the acquisition columns "
            f"(likelihood-ratio test p = {pt.p_value:.3g}), which explain little of "
            "the outcome themselves."
        )
        advice = ""
    ev = pt.to_json()
    ev["method"] = (
        "outcome ~ acquisition vs outcome ~ acquisition + out-of-fold prediction "
        "(Dinga et al. 2020)"
    )
    return AuditCheck("posthoc", sev, title, ev, advice)
