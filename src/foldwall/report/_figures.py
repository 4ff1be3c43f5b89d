"""The report's plots: matplotlib figures written as SVG text, the same bytes every time.

No pyplot and no global backend: each plot is a ``matplotlib.figure.Figure`` saved
with the SVG backend, so a user's own matplotlib session is left alone. Colours
are the Okabe-Ito palette (safe for the common colour-vision deficiencies),
markers and line styles differ too, and every axis names the metric and the rows
its values came from.
"""

from __future__ import annotations

import io
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure as MplFigure

__all__ = [
    "OKABE_ITO",
    "FoldPoint",
    "SettingTrack",
    "calibration_svg",
    "differences_svg",
    "fold_scores_svg",
    "metric_label",
    "null_distribution_svg",
    "precision_recall_svg",
    "regression_svg",
    "roc_svg",
    "settings_svg",
]

# Okabe & Ito (2008), "Color universal design": black, orange, sky blue,
# bluish green, yellow, blue, vermillion, reddish purple.
OKABE_ITO = (
    "#000000",
    "#E69F00",
    "#56B4E9",
    "#009E73",
    "#F0E442",
    "#0072B2",
    "#D55E00",
    "#CC79A7",
)
BLUE, ORANGE, VERMILLION, GREEN, SKY, PURPLE = (
    "#0072B2",
    "#E69F00",
    "#D55E00",
    "#009E73",
    "#56B4E9",
    "#CC79A7",
)
_CYCLE = (BLUE, ORANGE, GREEN, VERMILLION, PURPLE, SKY, "#000000")

_METRIC_LABELS = {
    "roc_auc": "ROC AUC",
    "accuracy": "accuracy",
    "balanced_accuracy": "balanced accuracy",
    "average_precision": "average precision",
    "f1": "F1",
    "r2": "R²",
    "neg_mean_absolute_error": "negative mean absolute error",
    "neg_mean_squared_error": "negative mean squared error",
    "neg_root_mean_squared_error": "negative root mean squared error",
    "neg_log_loss": "negative log loss",
    "neg_brier_score": "negative Brier score",
}


def metric_label(metric: str) -> str:
    """A readable name for a scikit-learn scorer name (the name itself when unknown)."""
    return _METRIC_LABELS.get(metric, metric)


def _rc() -> dict[str, Any]:
    from cycler import cycler

    return {
        "svg.hashsalt": "foldwall-report",
        "svg.fonttype": "none",
        "font.family": "sans-serif",
        "font.size": 9.0,
        "axes.titlesize": 10.0,
        "axes.labelsize": 9.0,
        "axes.prop_cycle": cycler(color=list(_CYCLE)),
        "axes.spines.top": False,
        "axes.spines.right": False,
        "axes.grid": True,
        "grid.color": "#e3e3e3",
        "grid.linewidth": 0.6,
        "legend.fontsize": 8.0,
        "legend.frameon": False,
        "path.simplify": False,
    }


def _figure(
    width: float = 6.4, height: float = 3.4, nrows: int = 1
) -> tuple[MplFigure, list[Axes]]:
    from matplotlib.figure import Figure as MplFigure

    fig = MplFigure(figsize=(width, height), layout="constrained")
    axes = fig.subplots(nrows, 1, squeeze=False)[:, 0]
    return fig, list(axes)


def _svg(fig: MplFigure) -> str:
    buf = io.StringIO()
    fig.savefig(
        buf, format="svg", metadata={"Date": None, "Creator": "foldwall report"}
    )
    return buf.getvalue()


def _draw(kind: Any, *args: Any, **kwargs: Any) -> str:
    """Run a drawing function inside the report's style and return its SVG."""
    import matplotlib

    with matplotlib.rc_context(_rc()):  # type: ignore[arg-type]
        fig = kind(*args, **kwargs)
        return _svg(fig)


# ------------------------------------------------------------------ folds


@dataclass(frozen=True)
class FoldPoint:
    """One outer fold's test and training scores."""

    label: str
    test: float
    train: float | None


def fold_scores_svg(
    points: Sequence[FoldPoint],
    *,
    metric: str,
    mean: float,
    ci: tuple[float, float] | None,
    chance: float | None,
) -> str:
    """Per-fold test scores (filled) and training scores (hollow), with the mean and its interval."""

    def draw() -> MplFigure:
        fig, (ax,) = _figure(7.6, 3.3)
        x = np.arange(len(points))
        test = np.array([p.test for p in points], dtype=float)
        if ci is not None:
            ax.axhspan(
                ci[0],
                ci[1],
                color=SKY,
                alpha=0.25,
                lw=0,
                label="95% interval of the mean (corrected t)",
            )
        ax.axhline(mean, color=BLUE, lw=1.4, label=f"mean over outer folds: {mean:.3f}")
        if chance is not None:
            ax.axhline(
                chance,
                color="#000000",
                lw=1.0,
                ls="--",
                label=f"chance level: {chance:.3f}",
            )
        trains = [p.train for p in points]
        if all(t is not None for t in trains):
            tr = np.array(trains, dtype=float)
            ax.vlines(
                x, np.minimum(test, tr), np.maximum(test, tr), color="#999999", lw=0.8
            )
            ax.scatter(
                x,
                tr,
                marker="s",
                facecolor="white",
                edgecolor=ORANGE,
                s=30,
                zorder=3,
                label="training rows of the fold (hollow)",
            )
        ax.scatter(
            x,
            test,
            marker="o",
            color=BLUE,
            s=32,
            zorder=4,
            label="outer test rows of the fold (filled)",
        )
        ax.set_xticks(
            x, [p.label for p in points], rotation=0 if len(points) <= 12 else 90
        )
        ax.set_xlabel("outer fold (repeat r, fold f)")
        ax.set_ylabel(f"{metric_label(metric)} of the chosen model")
        fig.legend(loc="outside right upper", fontsize=7.5)
        return fig

    return _draw(draw)


# ------------------------------------------------------------------ control


def null_distribution_svg(
    null_scores: Sequence[float], *, metric: str, observed: float, chance: float | None
) -> str:
    """Histogram of the permuted-label scores with the observed (real-label) score."""

    def draw() -> MplFigure:
        from matplotlib.ticker import MaxNLocator

        fig, (ax,) = _figure(7.6, 3.1)
        null = np.asarray(null_scores, dtype=float)
        bins = int(min(30, max(5, np.ceil(np.sqrt(null.size)) * 2)))
        ax.hist(
            null,
            bins=bins,
            color=SKY,
            edgecolor=BLUE,
            lw=0.6,
            label=f"{null.size} permutations of the labels",
        )
        ax.axvline(
            observed,
            color=VERMILLION,
            lw=2.0,
            label=f"observed with the real labels: {observed:.3f}",
        )
        if chance is not None:
            ax.axvline(
                chance,
                color="#000000",
                lw=1.0,
                ls="--",
                label=f"chance level: {chance:.3f}",
            )
        ax.set_xlabel(
            f"{metric_label(metric)} of the whole procedure\n(mean over outer folds, scored on outer test rows)"
        )
        ax.set_ylabel("number of permutations")
        ax.yaxis.set_major_locator(MaxNLocator(integer=True))
        fig.legend(loc="outside right upper")
        return fig

    return _draw(draw)


# ------------------------------------------------------------ predictions


def roc_svg(
    per_fold: Sequence[tuple[np.ndarray, np.ndarray]],
    pooled: tuple[np.ndarray, np.ndarray, float],
    *,
    positive: str,
    pooled_label: str,
) -> str:
    """ROC curves of each outer fold (thin) and of the pooled out-of-fold values (thick)."""

    def draw() -> MplFigure:
        fig, (ax,) = _figure(4.6, 4.2)
        ax.plot(
            [0, 1], [0, 1], color="#000000", lw=0.8, ls="--", label="chance (no skill)"
        )
        for i, (fpr, tpr) in enumerate(per_fold):
            ax.plot(
                fpr,
                tpr,
                color=SKY,
                lw=0.9,
                alpha=0.9,
                label="each outer fold" if i == 0 else None,
            )
        fpr, tpr, auc = pooled
        ax.plot(fpr, tpr, color=BLUE, lw=2.0, label=f"{pooled_label} (area {auc:.3f})")
        ax.set_xlim(-0.01, 1.01)
        ax.set_ylim(-0.01, 1.01)
        ax.set_aspect("equal")
        ax.set_xlabel(f"false positive rate (not '{positive}'; outer test rows)")
        ax.set_ylabel(f"true positive rate ('{positive}'; outer test rows)")
        ax.legend(loc="lower right")
        return fig

    return _draw(draw)


def precision_recall_svg(
    per_fold: Sequence[tuple[np.ndarray, np.ndarray]],
    pooled: tuple[np.ndarray, np.ndarray, float],
    *,
    positive: str,
    prevalence: float,
    pooled_label: str,
) -> str:
    """Precision-recall curves per outer fold and pooled, with the prevalence (no-skill) line."""

    def draw() -> MplFigure:
        fig, (ax,) = _figure(4.6, 4.2)
        ax.axhline(
            prevalence,
            color="#000000",
            lw=0.8,
            ls="--",
            label=f"no skill: share of '{positive}' {prevalence:.3f}",
        )
        for i, (rec, prec) in enumerate(per_fold):
            ax.plot(
                rec,
                prec,
                color=SKY,
                lw=0.9,
                drawstyle="steps-post",
                label="each outer fold" if i == 0 else None,
            )
        rec, prec, ap = pooled
        ax.plot(
            rec,
            prec,
            color=BLUE,
            lw=2.0,
            drawstyle="steps-post",
            label=f"{pooled_label} (average precision {ap:.3f})",
        )
        ax.set_xlim(-0.01, 1.01)
        ax.set_ylim(-0.01, 1.01)
        ax.set_aspect("equal")
        ax.set_xlabel(f"recall of '{positive}' (outer test rows)")
        ax.set_ylabel(f"precision for '{positive}' (outer test rows)")
        ax.legend(loc="lower left")
        return fig

    return _draw(draw)


def calibration_svg(
    mean_predicted: np.ndarray,
    observed: np.ndarray,
    counts: np.ndarray,
    *,
    positive: str,
    rows_label: str,
) -> str:
    """Reliability curve: mean predicted probability against the observed share, per bin."""

    def draw() -> MplFigure:
        fig, (ax,) = _figure(4.6, 4.2)
        ax.plot(
            [0, 1],
            [0, 1],
            color="#000000",
            lw=0.8,
            ls="--",
            label="perfect calibration",
        )
        ax.plot(
            mean_predicted,
            observed,
            color=BLUE,
            lw=1.6,
            marker="o",
            ms=4,
            label=f"bins of equal size ({int(counts.min())}-{int(counts.max())} rows each)",
        )
        ax.set_xlim(-0.01, 1.01)
        ax.set_ylim(-0.01, 1.01)
        ax.set_aspect("equal")
        ax.set_xlabel(
            f"mean predicted probability of '{positive}' in the bin\n({rows_label})"
        )
        ax.set_ylabel(f"observed share of '{positive}' (same rows)")
        ax.legend(loc="upper left")
        return fig

    return _draw(draw)


def regression_svg(true: np.ndarray, predicted: np.ndarray, *, rows_label: str) -> str:
    """Predicted against true values of the pooled out-of-fold predictions."""

    def draw() -> MplFigure:
        fig, (ax,) = _figure(4.6, 4.2)
        lo = float(min(np.min(true), np.min(predicted)))
        hi = float(max(np.max(true), np.max(predicted)))
        ax.plot(
            [lo, hi],
            [lo, hi],
            color="#000000",
            lw=0.8,
            ls="--",
            label="predicted = true",
        )
        ax.scatter(true, predicted, s=12, color=BLUE, alpha=0.7, label=rows_label)
        ax.set_xlabel(f"true value\n({rows_label})")
        ax.set_ylabel("predicted value (the chosen model of the row's fold)")
        ax.legend(loc="upper left")
        return fig

    return _draw(draw)


# --------------------------------------------------------------- settings


@dataclass(frozen=True)
class SettingTrack:
    """The values one setting took over the outer folds (``None``: another candidate won).

    ``low``/``high`` are the ends of a searched range (numbers), ``choices`` the
    listed values of a categorical setting, ``log`` whether the range is on a log scale.
    """

    candidate: str
    name: str
    values: tuple[Any, ...]
    low: float | None = None
    high: float | None = None
    choices: tuple[Any, ...] = ()
    log: bool = False


def settings_svg(tracks: Sequence[SettingTrack], fold_labels: Sequence[str]) -> str:
    """One panel per setting: the value chosen in each outer fold, with the searched range."""

    def draw() -> MplFigure:
        n = len(tracks)
        fig, axes = _figure(6.4, 1.25 + 1.35 * n, nrows=n)
        x = np.arange(len(fold_labels))
        for ax, tr in zip(axes, tracks, strict=True):
            numeric = all(
                isinstance(v, (int, float)) and not isinstance(v, bool)
                for v in tr.values
                if v is not None
            )
            if numeric:
                xs = [i for i, v in enumerate(tr.values) if v is not None]
                ys = [float(v) for v in tr.values if v is not None]
                if tr.log and all(v > 0 for v in ys) and (tr.low is None or tr.low > 0):
                    ax.set_yscale("log")
                ends = [v for v in (tr.low, tr.high) if v is not None]
                if not ends and tr.choices:
                    nums = [
                        float(c)
                        for c in tr.choices
                        if isinstance(c, (int, float)) and not isinstance(c, bool)
                    ]
                    ends = [min(nums), max(nums)] if nums else []
                for j, e in enumerate(ends):
                    ax.axhline(
                        e,
                        color="#000000",
                        lw=0.8,
                        ls=":",
                        label="ends of the range searched" if j == 0 else None,
                    )
                ax.plot(
                    xs,
                    ys,
                    color=BLUE,
                    marker="o",
                    lw=0.8,
                    ms=5,
                    label="value chosen by the inner search",
                )
            else:
                cats = [str(c) for c in tr.choices] or sorted(
                    {str(v) for v in tr.values if v is not None}
                )
                pos = {c: i for i, c in enumerate(cats)}
                xs = [i for i, v in enumerate(tr.values) if v is not None]
                ys = [pos.get(str(v), 0) for v in tr.values if v is not None]
                ax.plot(
                    xs,
                    ys,
                    color=BLUE,
                    marker="o",
                    lw=0,
                    ms=5,
                    label="value chosen by the inner search",
                )
                ax.set_yticks(range(len(cats)), cats)
                ax.set_ylim(-0.5, len(cats) - 0.5)
            ax.set_xticks(
                x, list(fold_labels), rotation=0 if len(fold_labels) <= 12 else 90
            )
            ax.set_xlim(-0.5, len(fold_labels) - 0.5)
            ax.set_ylabel(tr.name, fontsize=8)
            ax.set_title(f"'{tr.candidate}': {tr.name}", loc="left", fontsize=9)
            ax.legend(loc="upper right", fontsize=7)
        axes[-1].set_xlabel(
            "outer fold (repeat r, fold f); gaps: another candidate was chosen"
        )
        return fig

    return _draw(draw)


# ------------------------------------------------------------ comparisons


def differences_svg(rows: Sequence[Mapping[str, Any]], *, metric: str) -> str:
    """Mean paired difference of each comparison with its 95% interval."""

    def draw() -> MplFigure:
        fig, (ax,) = _figure(6.4, 1.3 + 0.45 * len(rows))
        y = np.arange(len(rows))[::-1]
        for yi, r in zip(y, rows, strict=True):
            ci = r.get("ci")
            if ci:
                ax.hlines(yi, ci[0], ci[1], color=BLUE, lw=2.0)
            ax.plot(
                r["mean_difference"], yi, marker="D", color=VERMILLION, ms=6, zorder=3
            )
        ax.axvline(0.0, color="#000000", lw=0.8, ls="--")
        ax.set_yticks(y, [f"{r['a']} - {r['b']}" for r in rows])
        ax.set_ylim(-0.7, len(rows) - 0.3)
        ax.set_xlabel(
            f"difference in {metric_label(metric)} (a minus b) over the same outer test rows:\n"
            "mean over folds (diamond) and 95% corrected t interval (bar)"
        )
        return fig

    return _draw(draw)
