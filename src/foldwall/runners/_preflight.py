"""One fit of every candidate before the run, to fail in the first second."""

from __future__ import annotations

from ..plan import Plan
from ..records import UnitKey
from ..table import Dataset
from ._engine import RunContext, finish_unit

__all__ = ["preflight", "PreflightError"]


class PreflightError(Exception):
    """A candidate failed its pre-flight fit; ``cause`` is what the estimator raised."""

    def __init__(self, candidate: str, cause: BaseException) -> None:
        super().__init__(candidate)
        self.candidate = candidate
        self.cause = cause


def preflight(plan: Plan, data: Dataset) -> list[float]:
    """Fit every candidate once on the first outer-training part; return seconds per candidate.

    Nothing is kept. Raises :class:`PreflightError` naming the candidate that failed.
    """
    ctx = RunContext(
        X=data.X,
        candidates=plan.candidates,
        metrics=plan.metrics,
        seed=plan.seed,
        search_method=plan.search_method,
        trials=plan.trials,
        allow_failed=False,
        share_fits=False,
        pos_label=data.positive_class,
    )
    f = plan.folds[0]
    seconds = []
    for ci, c in enumerate(plan.candidates):
        settings = plan.settings_of(ci)[0]
        try:
            out = finish_unit(
                ctx,
                UnitKey(0, 0, 0, ci),
                data.y,
                f.train,
                f.test,
                settings,
                keep_predictions=False,
            )
        except Exception as exc:
            raise PreflightError(c.name, exc.__cause__ or exc) from None
        seconds.append(out.task_seconds)
    return seconds
