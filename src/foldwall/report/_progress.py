"""Progress of a run on screen: a live bar on a terminal or in a notebook, plain lines otherwise.

Used by ``foldwall run`` and by :meth:`foldwall.Study.run` when the session is
interactive. It is an ``on_progress(event, info)`` hook (the events are listed in
:class:`foldwall.runners.Progress`); it never changes a result.
"""

from __future__ import annotations

import sys
import time
from typing import Any

from rich.console import Console

__all__ = ["ConsoleProgress", "interactive_session"]


def interactive_session() -> bool:
    """True on a terminal or in a notebook kernel (where a progress display helps)."""
    return sys.stderr.isatty() or "ipykernel" in sys.modules


class ConsoleProgress:
    """Per phase (real labels, permutations): units done of total, fits per second, time left.

    Parameters
    ----------
    quiet : bool, default=False
        Show nothing.
    live : bool or None, default=None
        A live bar (rich); None: when stderr is a terminal or in a notebook.
        Without it, one plain line a second goes to stderr.
    """

    NAMES = {"real": "real labels", "permutations": "permutations"}

    def __init__(self, *, quiet: bool = False, live: bool | None = None) -> None:
        self.quiet = quiet
        self.state: dict[str, dict[str, float]] = {}
        self.live: Any = None
        self.ids: dict[str, Any] = {}
        if live is None:
            live = interactive_session()
        if not quiet and live:
            from rich.progress import (
                BarColumn,
                Progress,
                TextColumn,
                TimeRemainingColumn,
            )

            self.live = Progress(
                TextColumn("{task.description}"),
                BarColumn(),
                TextColumn("{task.fields[units]}"),
                TextColumn("{task.fields[rate]}"),
                TimeRemainingColumn(),
                transient=False,
            )
            self.live.start()

    @property
    def console(self) -> Console | None:
        """The console to print on while the bar is shown (None: print as usual)."""
        return None if self.live is None else self.live.console

    def __call__(self, event: str, info: dict[str, Any]) -> None:
        if self.quiet:
            return
        if event.endswith(":start"):
            self._start(event.split(":")[0], info)
            return
        st = self.state.get(event)
        if st is None:
            return
        st["done_tasks"] += info["tasks"]
        st["done_units"] += info["units"]
        st["fits"] += info["fits"]
        rate = st["fits"] / max(1e-9, time.perf_counter() - st["t0"])
        units = f"{int(st['done_units'])}/{int(st['units'])} units"
        if self.live is not None:
            self.live.update(
                self.ids[event],
                advance=info["tasks"],
                units=units,
                rate=f"{rate:.0f} fits/s",
            )
        elif info["units"]:
            self._line(event, st, units, rate)

    def _start(self, name: str, info: dict[str, Any]) -> None:
        self.state[name] = {
            "tasks": info["tasks"],
            "units": info["units"],
            "done_tasks": 0,
            "done_units": 0,
            "fits": 0,
            "t0": time.perf_counter(),
            "last": 0,
        }
        if self.live is not None:
            self.ids[name] = self.live.add_task(
                self.NAMES.get(name, name),
                total=info["tasks"],
                units=f"0/{info['units']} units",
                rate="",
            )

    def _line(self, phase: str, st: dict[str, float], units: str, rate: float) -> None:
        # one plain line per finished unit, at most one a second for long phases
        now = time.perf_counter()
        if st["done_units"] == st["units"] or now - st["last"] >= 1.0:
            st["last"] = now
            left = (
                (st["tasks"] - st["done_tasks"])
                * (now - st["t0"])
                / max(1, st["done_tasks"])
            )
            print(
                f"foldwall: {self.NAMES.get(phase, phase)}: {units}, {rate:.0f} fits/s, "
                f"about {left:.0f} s left",
                file=sys.stderr,
                flush=True,
            )

    def stop(self) -> None:
        """End the live bar (idempotent)."""
        if self.live is not None:
            self.live.stop()
            self.live = None
