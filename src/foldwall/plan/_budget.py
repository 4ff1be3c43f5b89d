"""How much work a plan is, and whether it may start without the user's confirmation.

A study file from someone else can ask for legal settings whose product is tens
of millions of model fits. Such a plan does not start without ``--long-run``
(``long_run=True`` in Python); the refusal says how many fits, how long they
would take (from one timed fit per candidate) and that the random-label control
can stop early.
"""

from __future__ import annotations

from dataclasses import dataclass

from ..exceptions import SpecError
from ._compile import Plan

__all__ = [
    "MAX_FITS",
    "MAX_SECONDS",
    "WorkEstimate",
    "check_work",
    "duration_text",
    "estimate_work",
    "over_limit",
]

MAX_FITS = 2_000_000
"""Model fits a plan may need before it has to be confirmed."""

MAX_SECONDS = 6 * 3600.0
"""Estimated wall time (seconds) a plan may need before it has to be confirmed."""


@dataclass(frozen=True)
class WorkEstimate:
    """The work of a plan.

    Attributes
    ----------
    fits : int
        Model fits, real labels and permutations together (before any sharing).
    seconds : float or None
        Estimated wall time with ``n_jobs`` workers, when a fit was timed.
    n_jobs : int
    """

    fits: int
    seconds: float | None
    n_jobs: int


def duration_text(seconds: float) -> str:
    """``'about 3.2 hours'``-style wording of a duration."""
    if seconds < 90:
        return f"about {seconds:.0f} s"
    if seconds < 90 * 60:
        return f"about {seconds / 60:.0f} minutes"
    if seconds < 48 * 3600:
        return f"about {seconds / 3600:.1f} hours"
    return f"about {seconds / 86400:.0f} days"


def estimate_work(
    plan: Plan, *, fit_seconds: float | None, n_jobs: int
) -> WorkEstimate:
    """Fits of ``plan`` and, given the mean seconds of one fit, the wall time."""
    counts = plan.model_fits()
    fits = int(counts["real"] + counts["permutations"])
    seconds = None if fit_seconds is None else fit_seconds * fits / max(1, n_jobs)
    return WorkEstimate(fits=fits, seconds=seconds, n_jobs=n_jobs)


def over_limit(
    work: WorkEstimate, *, max_fits: int = MAX_FITS, max_seconds: float = MAX_SECONDS
) -> bool:
    """Whether ``work`` needs the user's confirmation."""
    return work.fits > max_fits or (
        work.seconds is not None and work.seconds > max_seconds
    )


def check_work(
    work: WorkEstimate,
    *,
    confirmed: bool,
    max_fits: int = MAX_FITS,
    max_seconds: float = MAX_SECONDS,
    flag: str = "--long-run",
) -> None:
    """Refuse a plan above the limits unless the user confirmed it.

    Raises
    ------
    SpecError
        One line: the number of fits, the estimated time, the flag, and the
        smaller alternatives (sequential early stopping of the control).
    """
    if confirmed or not over_limit(work, max_fits=max_fits, max_seconds=max_seconds):
        return
    when = (
        f" ({duration_text(work.seconds)} with {work.n_jobs} worker(s), from one timed fit per candidate)"
        if work.seconds is not None
        else ""
    )
    raise SpecError(
        f"the plan makes {work.fits:,} model fits{when}, more than a run starts without confirmation "
        f"({max_fits:,} fits or {duration_text(max_seconds)}); pass {flag} to start it anyway, or make it "
        f"smaller (fewer permutations, repeats or grid values); control.stop_early: true stops the "
        f"random-label control as soon as its answer is clear (sequential early stopping)"
    )
