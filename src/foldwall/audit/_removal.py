"""Removing acquisition effects from the features, fitted on training rows only.

:class:`AcquisitionEffectRemover` is a scikit-learn transformer. The acquisition
columns (site, device, batch, age, ...) travel inside ``X``; at ``fit`` it
regresses every other column on them by least squares, using the rows it is
given (a training part, inside a pipeline that foldwall refits per fold), and at
``transform`` it subtracts the fitted acquisition effect and drops the
acquisition columns. The mean of every feature is kept.

Two caveats from the literature, which is why foldwall never runs it on the whole
table and warns about what follows it:

* Snoek, Miletic & Scholte (2019) found that confound regression fitted on the
  whole data set before cross-validation biases the estimate (in their
  simulations and data downwards, even significantly below chance); fitted
  within each fold, the bias disappeared.
* Hamdan et al. (2023) showed that featurewise *linear* removal followed by a
  *non-linear* model can leak: information about the removed variable stays in
  the shape of the features' distribution, and a null or moderate effect can
  turn into near-perfect prediction. :func:`warn_removal_before_nonlinear` warns
  when a pipeline does this.
"""

from __future__ import annotations

import warnings
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd
from sklearn.base import BaseEstimator, TransformerMixin
from sklearn.utils.validation import check_is_fitted

from foldwall.audit._checks import AuditWarning

try:  # scikit-learn >= 1.6
    from sklearn.utils.validation import validate_data as _validate_data
except ImportError:  # pragma: no cover - older scikit-learn
    _validate_data = None

if TYPE_CHECKING:
    from numpy.typing import NDArray

__all__ = ["AcquisitionEffectRemover", "warn_removal_before_nonlinear"]


def _validate(est: BaseEstimator, X: Any, *, reset: bool) -> NDArray[np.float64]:
    if _validate_data is not None:
        out = _validate_data(est, X, reset=reset, dtype=np.float64)
    else:  # pragma: no cover
        out = est._validate_data(X, reset=reset, dtype=np.float64)
    return np.asarray(out, dtype=np.float64)


class AcquisitionEffectRemover(TransformerMixin, BaseEstimator):  # type: ignore[misc]
    """Remove the linear effect of acquisition columns from the other columns.

    Parameters
    ----------
    columns : list of int or list of str
        The acquisition columns inside ``X``: positions, or names when ``X`` is
        a DataFrame. They are used to estimate the effects and are not part of
        the output.
    categorical : bool or None, default=None
        Whether the acquisition columns are categories (each level its own
        effect) or numbers (one slope each). None decides per column: text and
        whole numbers with at most ``max_levels`` values are categories.
    max_levels : int, default=10
        See ``categorical``.

    Attributes
    ----------
    n_features_in_ : int
        Columns of ``X`` seen at ``fit``.
    feature_names_in_ : ndarray of str
        Column names of ``X``, when it was a DataFrame with string names.
    acquisition_index_ : ndarray of int
        Positions of the acquisition columns.
    feature_index_ : ndarray of int
        Positions of the columns that are cleaned and returned.
    levels_ : list of ndarray or None
        Levels of each categorical acquisition column (None for a numeric one).
    design_mean_ : ndarray
        Mean of the acquisition design over the training rows.
    coef_ : ndarray of shape (n_design, n_features_out)
        Fitted acquisition effects.

    Notes
    -----
    A level not seen at ``fit`` gets no correction (its indicators are set to
    the training mean). Text levels in a DataFrame are matched as text.

    References
    ----------
    Snoek, L., Miletic, S., Scholte, H. S. (2019). How to control for confounds
    in decoding analyses of neuroimaging data. NeuroImage 184:741-760.

    Hamdan, S. et al. (2023). Confound-leakage: confound removal in machine
    learning leads to leakage. GigaScience 12:giad071.

    Examples
    --------
    >>> import numpy as np
    >>> X = np.array([[0, 1.0], [0, 2.0], [1, 11.0], [1, 12.0]])
    >>> AcquisitionEffectRemover(columns=[0]).fit_transform(X).ravel().tolist()
    [6.0, 7.0, 6.0, 7.0]
    """

    def __init__(
        self,
        columns: Sequence[int] | Sequence[str] | None = None,
        *,
        categorical: bool | None = None,
        max_levels: int = 10,
    ) -> None:
        self.columns = columns
        self.categorical = categorical
        self.max_levels = max_levels

    # -- helpers --

    def _text_columns(self, X: Any) -> list[str]:
        if not isinstance(X, pd.DataFrame) or self.columns is None:
            return []
        names = [c for c in self.columns if isinstance(c, str) and c in X.columns]
        return [
            c
            for c in names
            if not pd.api.types.is_numeric_dtype(X[c])
            or pd.api.types.is_bool_dtype(X[c])
        ]

    def _encode_text(self, X: Any, *, fitting: bool) -> Any:
        """Replace text acquisition columns of a DataFrame by level numbers."""
        text = self._text_columns(X)
        if fitting:
            self.text_levels_ = {
                c: np.asarray(sorted(pd.unique(X[c].astype(str)))) for c in text
            }
        if not text:
            return X
        X = X.copy()
        for c in text:
            levels = self.text_levels_.get(c, np.empty(0))
            codes = pd.Index(levels).get_indexer(X[c].astype(str))
            # Unseen text -> a number no training row had (no correction).
            X[c] = np.where(codes < 0, -1.0, codes.astype(np.float64))
        return X

    def _resolve(self) -> NDArray[np.intp]:
        cols = self.columns
        if cols is None or isinstance(cols, (str, int)) or len(cols) == 0:
            raise ValueError(
                "AcquisitionEffectRemover needs columns=[...]: the positions or names "
                "of the acquisition columns inside X."
            )
        names = getattr(self, "feature_names_in_", None)
        idx = []
        for c in cols:
            if isinstance(c, str):
                if names is None:
                    raise ValueError(
                        f"column {c!r} is a name, but X has no column names; pass "
                        "positions, or a DataFrame."
                    )
                hit = np.flatnonzero(np.asarray(names) == c)
                if hit.size == 0:
                    raise ValueError(
                        f"acquisition column {c!r} is not in X (columns: "
                        f"{', '.join(map(str, names[:10]))})."
                    )
                idx.append(int(hit[0]))
            else:
                j = int(c)
                if not 0 <= j < self.n_features_in_:
                    raise ValueError(
                        f"acquisition column {j} is outside X's "
                        f"{self.n_features_in_} columns."
                    )
                idx.append(j)
        return np.asarray(sorted(set(idx)), dtype=np.intp)

    def _design(self, A: NDArray[np.float64]) -> NDArray[np.float64]:
        blocks = []
        for j, levels in enumerate(self.levels_):
            col = A[:, j]
            if levels is None:
                blocks.append(col[:, None])
            else:
                ind = (col[:, None] == levels[None, 1:]).astype(np.float64)
                unseen = ~np.isin(col, levels)
                if unseen.any():
                    start = sum(
                        1 if lv is None else len(lv) - 1 for lv in self.levels_[:j]
                    )
                    mean = self.design_mean_[start : start + len(levels) - 1]
                    ind[unseen] = mean
                blocks.append(ind)
        if not blocks:
            return np.empty((A.shape[0], 0))
        return np.hstack(blocks)

    # -- scikit-learn API --

    def fit(self, X: Any, y: Any = None) -> AcquisitionEffectRemover:
        """Estimate the acquisition effects on the rows of ``X``.

        Parameters
        ----------
        X : array-like or DataFrame of shape (n_samples, n_features)
            Features and acquisition columns.
        y : None
            Ignored.

        Returns
        -------
        self
        """
        Xe = self._encode_text(X, fitting=True)
        Xa = _validate(self, Xe, reset=True)
        self.acquisition_index_ = self._resolve()
        keep = np.setdiff1d(np.arange(self.n_features_in_), self.acquisition_index_)
        if keep.size == 0:
            raise ValueError(
                "AcquisitionEffectRemover needs at least one feature besides the "
                f"acquisition columns; X has {self.n_features_in_} feature(s)."
            )
        self.feature_index_ = keep.astype(np.intp)
        A = Xa[:, self.acquisition_index_]
        levels: list[NDArray[np.float64] | None] = []
        for j in range(A.shape[1]):
            col = A[:, j]
            uniq = np.unique(col)
            if self.categorical is None:
                cat = bool(np.all(uniq == np.round(uniq))) and (
                    uniq.size <= self.max_levels
                )
                cat = cat or int(self.acquisition_index_[j]) in self._text_positions()
            else:
                cat = bool(self.categorical)
            levels.append(uniq if cat else None)
        self.levels_ = levels
        self.design_mean_ = np.zeros(0)
        D = self._design(A)
        self.design_mean_ = D.mean(axis=0)
        F = Xa[:, self.feature_index_]
        Dc = D - self.design_mean_
        Fc = F - F.mean(axis=0)
        if Dc.shape[1]:
            self.coef_ = np.linalg.lstsq(Dc, Fc, rcond=None)[0]
        else:
            self.coef_ = np.zeros((0, F.shape[1]))
        return self

    def _text_positions(self) -> set[int]:
        names = getattr(self, "feature_names_in_", None)
        if names is None:
            return set()
        return {
            int(np.flatnonzero(np.asarray(names) == c)[0])
            for c in getattr(self, "text_levels_", {})
        }

    def transform(self, X: Any) -> NDArray[np.float64]:
        """Subtract the fitted acquisition effects; drop the acquisition columns.

        Parameters
        ----------
        X : array-like or DataFrame of shape (n_samples, n_features)

        Returns
        -------
        ndarray of shape (n_samples, n_features - n_acquisition)
        """
        check_is_fitted(self, "coef_")
        Xe = self._encode_text(X, fitting=False)
        Xa = _validate(self, Xe, reset=False)
        D = self._design(Xa[:, self.acquisition_index_])
        F = Xa[:, self.feature_index_]
        return np.asarray(F - (D - self.design_mean_) @ self.coef_, dtype=np.float64)

    def get_feature_names_out(self, input_features: Any = None) -> NDArray[np.object_]:
        """Names of the returned columns (the input names minus the acquisition columns).

        Parameters
        ----------
        input_features : array-like of str, default=None
            Input column names; by default ``feature_names_in_`` or ``x0, x1, ...``.

        Returns
        -------
        ndarray of str
        """
        check_is_fitted(self, "coef_")
        names_in = getattr(self, "feature_names_in_", None)
        if input_features is None:
            names = (
                np.asarray(names_in, dtype=object)
                if names_in is not None
                else np.asarray(
                    [f"x{i}" for i in range(self.n_features_in_)], dtype=object
                )
            )
        else:
            names = np.asarray(input_features, dtype=object)
            if len(names) != self.n_features_in_:
                raise ValueError(
                    f"input_features should have length equal to number of features "
                    f"({self.n_features_in_}), got {len(names)}"
                )
            if names_in is not None and not np.array_equal(names, names_in):
                raise ValueError("input_features is not equal to feature_names_in_")
        return np.asarray(names[self.feature_index_], dtype=object)


_LINEAR_NAMES = frozenset(
    {
        "LinearSVC",
        "LinearSVR",
        "LinearDiscriminantAnalysis",
        "PLSRegression",
        "PLSCanonical",
    }
)


def _is_linear(est: Any) -> bool:
    cls = type(est)
    if cls.__module__.startswith("sklearn.linear_model"):
        return True
    if cls.__name__ in _LINEAR_NAMES:
        return True
    if cls.__name__ in {"SVC", "SVR", "NuSVC", "NuSVR"}:
        return bool(getattr(est, "kernel", None) == "linear")
    return False


def _steps(est: Any) -> list[Any]:
    """The steps of a (possibly nested) pipeline, flattened in order."""
    steps = est if isinstance(est, (list, tuple)) else getattr(est, "steps", None)
    if steps is None:
        return [est]
    out: list[Any] = []
    for _, step in steps:
        if step is None or step == "passthrough":
            continue
        out.extend(_steps(step))
    return out


def warn_removal_before_nonlinear(
    estimator: Any, *, name: str = "the pipeline"
) -> bool:
    """Warn when an :class:`AcquisitionEffectRemover` precedes a non-linear model.

    Parameters
    ----------
    estimator : estimator, Pipeline or list of (name, estimator)
        The candidate to inspect.
    name : str, default="the pipeline"
        How to name it in the message (for example the candidate's name).

    Returns
    -------
    bool
        True when the warning was issued.
    """
    steps = _steps(estimator)
    pos = [i for i, s in enumerate(steps) if isinstance(s, AcquisitionEffectRemover)]
    if not pos or len(steps) < 2:
        return False
    final = steps[-1]
    if pos[-1] == len(steps) - 1 or _is_linear(final):
        return False
    warnings.warn(
        AuditWarning(
            f"{name}: linear removal of acquisition effects precedes a non-linear "
            f"model ({type(final).__name__}); the model can recover the removed "
            "information from what the linear removal leaves behind and score "
            "higher than it should (Hamdan et al. 2023). Prefer a linear model "
            "after removal, or no removal and the post-hoc test on the predictions."
        ),
        stacklevel=2,
    )
    return True
