"""Do the predictions add anything beyond the acquisition columns? (Dinga et al. 2020)

The post-hoc approach of Dinga, Schmaal, Penninx, Veltman & Marquand (2020):
instead of removing acquisition effects from every feature, compare two models of
the outcome, fitted on the test parts (the out-of-fold predictions):

* reduced: outcome ~ acquisition columns;
* full: outcome ~ acquisition columns + out-of-fold prediction.

The likelihood-ratio statistic ``2 (loglik_full - loglik_reduced)`` is compared
with a chi-square distribution whose degrees of freedom are the number of
prediction columns that add to the acquisition design. The effect is reported as
the explained variance (continuous outcome: R^2) or explained deviance
(categorical outcome: D^2 = 1 - deviance / null deviance) of each model, their
difference (``added``) and the partial share ``1 - deviance_full /
deviance_reduced``. For a continuous outcome the exact F test of the same
comparison is given too.

Models: ordinary least squares (continuous outcome), logistic regression (two
classes) and multinomial logistic regression (more classes), fitted by Newton's
method with step halving. Acquisition columns with text, categories or few whole
numbers enter as indicators (first level left out), other columns as numbers. A
classifier's probabilities enter as log-odds against the first class.

A permutation p-value can be added: the predictions are shuffled within the
cells of the (categorical) acquisition columns, which keeps their link to the
acquisition and breaks only their link to the outcome within each cell.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass
from typing import TYPE_CHECKING, Any, Literal

import numpy as np
import pandas as pd
from scipy import linalg, stats

from foldwall.audit._checks import Task, as_frame, infer_task
from foldwall.exceptions import DataError

if TYPE_CHECKING:
    from numpy.typing import ArrayLike, NDArray

__all__ = ["PosthocTest", "acquisition_design", "posthoc_test"]

Family = Literal["gaussian", "binomial", "multinomial"]


@dataclass(frozen=True)
class PosthocTest:
    """Result of :func:`posthoc_test`.

    Attributes
    ----------
    family : {"gaussian", "binomial", "multinomial"}
        The outcome model.
    n : int
        Rows used.
    df : int
        Degrees of freedom of the test (prediction columns that add to the design).
    statistic : float
        Likelihood-ratio statistic ``2 (loglik_full - loglik_reduced)``.
    p_value : float
        Chi-square p-value of ``statistic`` with ``df`` degrees of freedom.
    loglik_reduced, loglik_full : float
        Maximised log-likelihoods.
    deviance_null, deviance_reduced, deviance_full : float
        Deviances of the intercept-only, reduced and full models (residual sum of
        squares for a continuous outcome).
    explained_reduced, explained_full : float
        R^2 (continuous) or D^2 (categorical) of the reduced and full models.
    added : float
        ``explained_full - explained_reduced``.
    partial : float
        ``1 - deviance_full / deviance_reduced``: the share of what the
        acquisition columns leave unexplained that the predictions explain.
    f_statistic, f_p_value : float or None
        The F test of the same comparison (continuous outcome only).
    permutation_p : float or None
        Share of within-cell shuffles of the predictions whose statistic reaches
        the observed one (``(1 + hits) / (1 + n_permutations)``).
    n_permutations : int
        Shuffles drawn (0 when none).
    separation : bool
        True when a logistic fit did not converge because some cells are
        predicted perfectly (coefficients run off); the statistic then uses the
        largest likelihood reached.
    note : str
        Anything the reader must know (dropped columns, no permutation, ...).
    """

    family: Family
    n: int
    df: int
    statistic: float
    p_value: float
    loglik_reduced: float
    loglik_full: float
    deviance_null: float
    deviance_reduced: float
    deviance_full: float
    explained_reduced: float
    explained_full: float
    added: float
    partial: float
    f_statistic: float | None
    f_p_value: float | None
    permutation_p: float | None
    n_permutations: int
    separation: bool
    note: str

    def to_json(self) -> dict[str, Any]:
        """Plain dict, NaN written as None."""
        out = asdict(self)
        for k, v in out.items():
            if isinstance(v, float) and not math.isfinite(v):
                out[k] = None
        return out


def _is_categorical(col: pd.Series, max_levels: int = 10) -> bool:
    if not pd.api.types.is_numeric_dtype(col) or pd.api.types.is_bool_dtype(col):
        return True
    v = col.to_numpy(dtype=np.float64, na_value=np.nan)
    return bool(np.all(v == np.round(v))) and col.nunique() <= max_levels


def acquisition_design(
    acquisition: Any, *, drop_first: bool = True
) -> tuple[NDArray[np.float64], list[str], list[str]]:
    """Numeric design matrix of the acquisition columns (no intercept).

    Parameters
    ----------
    acquisition : DataFrame or array-like of shape (n_samples, n_columns)
        Columns describing how rows were acquired.
    drop_first : bool, default=True
        Leave out the first level of each categorical column (for a model
        with an intercept).

    Returns
    -------
    design : ndarray of shape (n_samples, n_design)
    names : list of str
        Name of each design column (``site=b``, ``age``).
    categorical : list of str
        The acquisition columns that entered as indicators.

    Raises
    ------
    DataError
        If an acquisition column has missing values.
    """
    frame = as_frame(acquisition, "acquisition")
    blocks: list[NDArray[np.float64]] = []
    names: list[str] = []
    cats: list[str] = []
    for c in frame.columns:
        col = frame[c]
        if col.isna().any():
            raise DataError(
                f"acquisition column {c!r} has {int(col.isna().sum())} missing "
                "values; fill them (for example with 'unknown') or drop those rows."
            )
        if _is_categorical(col):
            cats.append(c)
            levels = sorted(pd.unique(col), key=lambda v: str(v))
            use = levels[1:] if drop_first else levels
            for lv in use:
                blocks.append((col.to_numpy() == lv).astype(np.float64)[:, None])
                names.append(f"{c}={lv}")
        else:
            blocks.append(col.to_numpy(dtype=np.float64)[:, None])
            names.append(c)
    n = len(frame)
    design = np.hstack(blocks) if blocks else np.empty((n, 0))
    return design, names, cats


def _independent(M: NDArray[np.float64]) -> NDArray[np.intp]:
    """Columns of M to keep so that the kept ones are linearly independent.

    Columns are taken in order, so earlier columns are preferred.
    """
    if M.shape[1] == 0:
        return np.empty(0, dtype=np.intp)
    scale = np.linalg.norm(M, axis=0)
    scale[scale == 0] = 1.0
    Ms = M / scale
    keep: list[int] = []
    Q = np.empty((M.shape[0], 0))
    tol = 1e-8 * max(M.shape)
    for j in range(M.shape[1]):
        v = Ms[:, j] - Q @ (Q.T @ Ms[:, j])
        v = v - Q @ (Q.T @ v)
        nv = float(np.linalg.norm(v))
        if nv > tol:
            keep.append(j)
            Q = np.hstack([Q, (v / nv)[:, None]])
    return np.asarray(keep, dtype=np.intp)


def _fit_gaussian(
    D: NDArray[np.float64], y: NDArray[np.float64]
) -> tuple[float, float]:
    """(log-likelihood, residual sum of squares) of OLS with the variance at its MLE."""
    beta, *_ = np.linalg.lstsq(D, y, rcond=None)
    rss = float(((y - D @ beta) ** 2).sum())
    n = len(y)
    ll = -0.5 * n * (math.log(2 * math.pi * max(rss, 1e-300) / n) + 1.0)
    return ll, rss


def _fit_logistic(
    D: NDArray[np.float64], Y: NDArray[np.float64], *, max_iter: int = 100
) -> tuple[float, bool]:
    """Multinomial (or binary) logistic regression by Newton's method.

    ``Y`` is the (n, K) indicator matrix; class 0 is the reference. Returns the
    maximised log-likelihood and whether the fit converged.
    """
    n, d = D.shape
    K = Y.shape[1]
    m = K - 1
    W = np.zeros((d, m))

    def loglik(W: NDArray[np.float64]) -> tuple[float, NDArray[np.float64]]:
        eta = np.hstack([np.zeros((n, 1)), D @ W])
        lse = np.logaddexp.reduce(eta, axis=1)
        P = np.exp(eta - lse[:, None])
        return float((Y * eta).sum() - lse.sum()), P

    ll, P = loglik(W)
    converged = False
    for _ in range(max_iter):
        G = D.T @ (Y[:, 1:] - P[:, 1:])  # (d, m)
        H = np.zeros((d * m, d * m))
        for a in range(m):
            for b in range(a, m):
                w = P[:, a + 1] * ((a == b) - P[:, b + 1])
                block = D.T @ (D * w[:, None])
                H[a * d : (a + 1) * d, b * d : (b + 1) * d] = block
                H[b * d : (b + 1) * d, a * d : (a + 1) * d] = block
        H[np.diag_indices_from(H)] += 1e-10 * (1.0 + np.abs(np.diag(H)))
        try:
            step = linalg.solve(H, G.T.reshape(-1), assume_a="pos")
        except (linalg.LinAlgError, ValueError):
            step = np.linalg.lstsq(H, G.T.reshape(-1), rcond=None)[0]
        step_w = step.reshape(m, d).T
        t = 1.0
        while True:
            W_new = W + t * step_w
            ll_new, P_new = loglik(W_new)
            if ll_new >= ll - 1e-12 or t < 1e-8:
                break
            t *= 0.5
        gain = ll_new - ll
        W, ll, P = W_new, ll_new, P_new
        if abs(gain) <= 1e-10 * (1.0 + abs(ll)):
            converged = True
            break
    runaway = bool(np.abs(W).max(initial=0.0) > 25.0)
    return ll, converged and not runaway


def _prediction_columns(
    predictions: ArrayLike, family: Family, n: int, scale: str = "auto"
) -> NDArray[np.float64]:
    P = np.asarray(predictions, dtype=np.float64)
    if P.ndim == 1:
        P = P[:, None]
    if P.ndim != 2 or P.shape[0] != n:
        raise DataError(
            f"predictions must have one row per row of the table ({n}), got shape "
            f"{np.asarray(predictions).shape}."
        )
    if not np.isfinite(P).all():
        raise DataError(
            "predictions hold NaN or infinite values; pass the out-of-fold "
            "predictions of rows that were tested."
        )
    if scale not in ("auto", "probability", "raw"):
        raise DataError(
            f"prediction_scale must be auto, probability or raw, got {scale!r}."
        )
    as_probability = scale == "probability" or (
        scale == "auto" and family != "gaussian" and P.min() >= 0 and P.max() <= 1
    )
    if as_probability:
        eps = 1e-6
        Pc = np.clip(P, eps, 1 - eps)
        if P.shape[1] == 1:
            return np.log(Pc / (1 - Pc))
        return np.log(Pc[:, 1:] / Pc[:, :1])
    return P


def _cells(
    acquisition: pd.DataFrame, categorical: list[str]
) -> NDArray[np.intp] | None:
    if len(categorical) != acquisition.shape[1]:
        return None
    key = acquisition[categorical].astype(str).agg("\x1f".join, axis=1)
    return np.asarray(pd.factorize(key)[0], dtype=np.intp)


def posthoc_test(
    y: ArrayLike,
    acquisition: Any,
    predictions: ArrayLike,
    *,
    task: Task | None = None,
    n_permutations: int = 0,
    random_state: int | np.random.Generator | None = None,
    prediction_scale: Literal["auto", "probability", "raw"] = "auto",
) -> PosthocTest:
    """Test whether out-of-fold predictions explain the outcome beyond the acquisition columns.

    Parameters
    ----------
    y : array-like of shape (n_samples,)
        The outcome of the tested rows.
    acquisition : DataFrame or array-like of shape (n_samples, n_columns)
        The acquisition columns of the same rows.
    predictions : array-like of shape (n_samples,) or (n_samples, n_classes)
        Out-of-fold predictions: a regression's predicted values, a binary
        classifier's probability of the second class (or its decision value),
        or a classifier's class probabilities.
    task : {"classification", "regression"}, default=None
        Inferred from ``y`` when None.
    n_permutations : int, default=0
        Within-cell shuffles of the predictions for a permutation p-value
        (only when every acquisition column is categorical).
    random_state : int, Generator or None, default=None
        Seed of the shuffles.
    prediction_scale : {"auto", "probability", "raw"}, default="auto"
        ``probability``: class probabilities, entered as log-odds; ``raw``:
        entered as they are (decision values, indicators of predicted classes);
        ``auto``: probabilities when a categorical outcome's predictions lie
        in [0, 1].

    Returns
    -------
    PosthocTest

    References
    ----------
    Dinga, R., Schmaal, L., Penninx, B. W. J. H., Veltman, D. J., Marquand, A. F.
    (2020). Controlling for effects of confounding variables on machine learning
    predictions. bioRxiv 2020.08.17.255034.
    """
    yy = np.asarray(y)
    n = yy.shape[0]
    if yy.ndim != 1 or pd.isna(yy).any():
        raise DataError("the outcome must be 1-d without missing values.")
    task = task or infer_task(yy)
    frame = as_frame(acquisition, "acquisition")
    if len(frame) != n:
        raise DataError(
            f"acquisition has {len(frame)} rows but the outcome has {n}; pass the "
            "same rows."
        )
    design, _, categorical = acquisition_design(frame)
    if task == "regression":
        family: Family = "gaussian"
        classes = np.empty(0)
    else:
        codes, classes = pd.factorize(yy, sort=True)
        if len(classes) < 2:
            raise DataError("the outcome has a single class; nothing to test.")
        family = "binomial" if len(classes) == 2 else "multinomial"
    P = _prediction_columns(predictions, family, n, prediction_scale)
    ones = np.ones((n, 1))
    reduced_all = np.hstack([ones, design])
    keep_r = _independent(reduced_all)
    R = reduced_all[:, keep_r]
    full_all = np.hstack([R, P])
    keep_f = _independent(full_all)
    F = full_all[:, keep_f]
    df = F.shape[1] - R.shape[1]
    notes = []
    if len(keep_r) < reduced_all.shape[1]:
        notes.append(
            f"{reduced_all.shape[1] - len(keep_r)} acquisition design column(s) "
            "were collinear and left out"
        )
    if df < P.shape[1]:
        notes.append(
            f"{P.shape[1] - df} prediction column(s) are a linear function of the "
            "acquisition columns"
        )

    separation = False
    if family == "gaussian":
        yf = yy.astype(np.float64)
        ll0, dev0 = _fit_gaussian(ones, yf)
        llr, devr = _fit_gaussian(R, yf)

        def full_fit(Fm: NDArray[np.float64]) -> tuple[float, float]:
            return _fit_gaussian(Fm, yf)

        llf, devf = full_fit(F)
    else:
        Y = np.eye(len(classes))[codes]
        ll0, _ = _fit_logistic(ones, Y)
        llr, ok_r = _fit_logistic(R, Y)

        def full_fit(Fm: NDArray[np.float64]) -> tuple[float, float]:
            ll, ok = _fit_logistic(Fm, Y)
            return ll, float(ok)

        llf, ok_f = full_fit(F)
        separation = not (ok_r and bool(ok_f))
        dev0, devr, devf = -2 * ll0, -2 * llr, -2 * llf
    stat = max(0.0, 2.0 * (llf - llr)) if df > 0 else 0.0
    p = float(stats.chi2.sf(stat, df)) if df > 0 else 1.0
    exp_r = 1.0 - devr / dev0 if dev0 > 0 else float("nan")
    exp_f = 1.0 - devf / dev0 if dev0 > 0 else float("nan")
    partial = 1.0 - devf / devr if devr > 0 else float("nan")
    f_stat = f_p = None
    if family == "gaussian" and df > 0:
        dof_f = n - F.shape[1]
        if dof_f > 0 and devf > 0:
            f_stat = ((devr - devf) / df) / (devf / dof_f)
            f_p = float(stats.f.sf(f_stat, df, dof_f))

    perm_p: float | None = None
    m = int(n_permutations)
    if m < 0:
        raise DataError(f"n_permutations must be 0 or more, got {n_permutations!r}.")
    if m > 0:
        cells = _cells(frame, categorical)
        if cells is None:
            notes.append(
                "no permutation p-value: an acquisition column is numeric, so there "
                "are no cells to shuffle within"
            )
            m_done = 0
        elif df == 0:
            perm_p, m_done = 1.0, 0
        else:
            rng = (
                random_state
                if isinstance(random_state, np.random.Generator)
                else np.random.default_rng(random_state)
            )
            hits = 0
            pred_cols = F[:, R.shape[1] :]
            for _ in range(m):
                idx = np.arange(n)
                for c in np.unique(cells):
                    rows = np.flatnonzero(cells == c)
                    idx[rows] = rows[rng.permutation(rows.size)]
                llp, _ = full_fit(np.hstack([R, pred_cols[idx]]))
                if 2.0 * (llp - llr) >= stat - 1e-9 * (1.0 + abs(stat)):
                    hits += 1
            perm_p = (1 + hits) / (1 + m)
            m_done = m
        m = m_done
    if separation:
        notes.append(
            "some cells are predicted perfectly (separation): the statistic uses the "
            "largest likelihood reached"
        )
    return PosthocTest(
        family=family,
        n=n,
        df=df,
        statistic=stat,
        p_value=p,
        loglik_reduced=llr,
        loglik_full=llf,
        deviance_null=dev0,
        deviance_reduced=devr,
        deviance_full=devf,
        explained_reduced=exp_r,
        explained_full=exp_f,
        added=exp_f - exp_r,
        partial=partial,
        f_statistic=f_stat,
        f_p_value=f_p,
        permutation_p=perm_p,
        n_permutations=m,
        separation=separation,
        note="; ".join(notes),
    )
