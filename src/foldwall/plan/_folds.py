"""Splitting rules: which scikit-learn splitter, with which seed, checked for group overlap.

foldwall owns all splitting. A rule is applied to a subset of rows (all rows for
the outer loop, one outer-training part for the inner loop) and returns global
row indices, so groups reach every level without any routing machinery.
"""

from __future__ import annotations

import zlib
from dataclasses import dataclass
from typing import Any

import numpy as np
from sklearn.model_selection import (
    GroupKFold,
    KFold,
    StratifiedGroupKFold,
    StratifiedKFold,
)

from ..exceptions import DataError, SpecError

__all__ = ["SplitRule", "derive_seed", "check_no_group_overlap"]


def _key_int(part: Any) -> int:
    if isinstance(part, (int, np.integer)):
        return int(part)
    return zlib.crc32(str(part).encode("utf-8"))


def derive_seed(seed: int, *key: Any) -> int:
    """A 32-bit seed for one unit of work, from the study seed and the unit's identity.

    Uses ``numpy.random.SeedSequence(seed, spawn_key=key)``, so the seed depends
    only on what the unit is, never on the order in which units run.
    """
    ss = np.random.SeedSequence(int(seed), spawn_key=tuple(_key_int(k) for k in key))
    return int(ss.generate_state(1, dtype=np.uint32)[0])


def _plain(v: Any) -> Any:
    """A numpy scalar as the Python value, so messages show 1, not np.int64(1)."""
    return v.item() if isinstance(v, np.generic) else v


def check_no_group_overlap(
    groups: np.ndarray | None, train: np.ndarray, test: np.ndarray, *, where: str
) -> None:
    if groups is None:
        return
    both = np.intersect1d(groups[train], groups[test])
    if both.size:
        raise DataError(
            f"{where} puts group {_plain(both[0])!r} on both sides of a split ({both.size} group(s) in all); "
            f"use a group-aware splitter"
        )


@dataclass(frozen=True)
class SplitRule:
    """How one loop splits rows.

    Parameters
    ----------
    n_splits : int
    shuffle : bool
    stratify : bool
        Keep class proportions (classification).
    grouped : bool
        Never split a group (a group column exists).
    splitter : object, default=None
        A user's scikit-learn splitter; when given it is used as it is.
    label : str
        "outer" or "inner", for messages.
    forward : bool, default=False
        Split forward in time (every training row strictly earlier than every
        test row; see :func:`foldwall.audit.forward_splits`); needs the rows'
        times at ``split``.
    """

    n_splits: int
    shuffle: bool = True
    stratify: bool = False
    grouped: bool = False
    splitter: Any = None
    label: str = "outer"
    forward: bool = False

    def describe(self) -> dict[str, Any]:
        if self.splitter is not None:
            return {"splitter": repr(self.splitter)}
        if self.forward:
            return {
                "splitter": "forward in time",
                "folds": self.n_splits,
                "grouped": self.grouped,
                "rule": "distinct times cut into folds + 1 blocks of about equal size; split k trains on "
                "blocks 0..k and tests on block k + 1; with groups, a group is tested only where it first appears",
            }
        return {
            "splitter": self._sklearn_name(),
            "folds": self.n_splits,
            "shuffle": self.shuffle,
            "stratified": self.stratify,
            "grouped": self.grouped,
        }

    def _forward(
        self, rows: np.ndarray, groups: np.ndarray | None, time: np.ndarray | None
    ) -> list[tuple[np.ndarray, np.ndarray]]:
        return _forward_parts(self, rows, groups, time)

    def _sklearn_name(self) -> str:
        if self.grouped:
            return "StratifiedGroupKFold" if self.stratify else "GroupKFold"
        return "StratifiedKFold" if self.stratify else "KFold"

    def check(
        self,
        rows: np.ndarray,
        y: np.ndarray,
        groups: np.ndarray | None,
        *,
        where: str,
        time: np.ndarray | None = None,
    ) -> None:
        """Fail early, with a fix, when the rows cannot be split this way."""
        if self.splitter is not None:
            return
        k = self.n_splits
        key = f"{self.label}.folds"
        if self.forward:
            if time is None:
                raise SpecError(
                    f"{self.label}.forward needs the time of every row (data.time, or run(..., time=))"
                )
            n_times = np.unique(time[rows]).size
            if n_times < k + 1:
                raise DataError(
                    f"{key} asks for {k} forward splits, which need {k + 1} distinct times, but {where} "
                    f"has {n_times}; use {key} <= {max(1, n_times - 1)}"
                )
            return
        if len(rows) < k:
            raise DataError(
                f"{key} asks for {k} folds, but {where} has only {len(rows)} rows; "
                + self._fewer(key, len(rows), "rows")
            )
        if self.grouped and groups is not None:
            n_groups = np.unique(groups[rows]).size
            if n_groups < k:
                raise DataError(
                    f"{key} asks for {k} folds, but {where} has only {n_groups} groups; "
                    + self._fewer(key, n_groups, "units (groups)")
                )
        if self.stratify:
            classes, counts = np.unique(y[rows], return_counts=True)
            small = int(np.argmin(counts))
            if counts[small] < k:
                raise DataError(
                    f"{key} asks for {k} folds, but in {where} the smallest class ({_plain(classes[small])!r}) has only "
                    f"{counts[small]} rows; "
                    + self._fewer(key, int(counts[small]), "rows of that class")
                    + ", or merge rare classes"
                )

    def _fewer(self, key: str, n: int, what: str) -> str:
        """The fix: fewer folds when 2 or more are possible, else more data (never 'folds <= 1')."""
        if n >= 2:
            return f"use {key} <= {n}"
        more = f"a split needs at least 2 folds: collect more {what}"
        if self.label == "inner":
            return (
                more + " (or use fewer outer folds, which leaves larger training parts)"
            )
        return more

    def split(
        self,
        rows: np.ndarray,
        y: np.ndarray,
        groups: np.ndarray | None,
        *,
        seed: int,
        time: np.ndarray | None = None,
    ) -> list[tuple[np.ndarray, np.ndarray]]:
        """Split ``rows`` (global indices); return (train, test) pairs of global indices."""
        rows = np.asarray(rows)
        if self.forward and self.splitter is None:
            return self._forward(rows, groups, time)
        y_sub = y[rows]
        g_sub = groups[rows] if groups is not None else None
        dummy = np.zeros((len(rows), 1))
        if self.splitter is not None:
            try:
                parts = list(self.splitter.split(dummy, y_sub, g_sub))
            except ValueError as exc:
                raise DataError(
                    f"{self.label} splitter {self.splitter!r} cannot split these rows: {exc}"
                ) from None
        elif self.grouped:
            # Seeded relabelling of the groups: the splitters order groups by their
            # sorted ids, so random codes give a seeded, platform-independent shuffle.
            uniq, inv = np.unique(np.asarray(g_sub), return_inverse=True)
            if self.shuffle:
                codes = np.random.default_rng(seed).permutation(uniq.size)[inv]
            else:
                codes = inv
            splitter = (
                StratifiedGroupKFold(self.n_splits)
                if self.stratify
                else GroupKFold(self.n_splits)
            )
            parts = list(splitter.split(dummy, y_sub, codes))
        elif self.stratify:
            parts = list(
                StratifiedKFold(
                    self.n_splits,
                    shuffle=self.shuffle,
                    random_state=seed if self.shuffle else None,
                ).split(dummy, y_sub)
            )
        else:
            parts = list(
                KFold(
                    self.n_splits,
                    shuffle=self.shuffle,
                    random_state=seed if self.shuffle else None,
                ).split(dummy)
            )
        out = []
        for j, (tr, te) in enumerate(parts):
            if len(te) == 0 or len(tr) == 0:
                raise DataError(
                    f"{self.label} fold {j} is empty; use fewer {self.label}.folds"
                )
            tr_g, te_g = rows[np.sort(tr)], rows[np.sort(te)]
            check_no_group_overlap(groups, tr_g, te_g, where=f"{self.label} fold {j}")
            out.append((tr_g, te_g))
        return out


def _forward_parts(
    rule: SplitRule,
    rows: np.ndarray,
    groups: np.ndarray | None,
    time: np.ndarray | None,
) -> list[tuple[np.ndarray, np.ndarray]]:
    from ..audit import forward_splits

    if time is None:
        raise SpecError(
            f"{rule.label}.forward needs the time of every row (data.time, or run(..., time=))"
        )
    try:
        return forward_splits(
            time,
            rule.n_splits,
            rows=rows,
            groups=groups,
            name=f"{rule.label}.forward",
        )
    except DataError as exc:
        raise DataError(f"{rule.label}.folds: {exc}") from None


def make_rule(
    loop: Any, *, label: str, classification: bool, grouped: bool
) -> SplitRule:
    """A rule from a study's loop settings, an int, or a scikit-learn splitter."""
    if isinstance(loop, (int, np.integer)):
        if loop < 2:
            raise SpecError(f"{label} must be at least 2 folds, got {loop}")
        return SplitRule(int(loop), True, classification, grouped, None, label)
    if hasattr(loop, "split") and hasattr(loop, "get_n_splits"):
        return SplitRule(
            int(loop.get_n_splits()) if _n_splits_known(loop) else 0,
            False,
            False,
            grouped,
            loop,
            label,
        )
    # a LoopSpec
    stratify = classification if loop.stratify is None else bool(loop.stratify)
    if stratify and not classification:
        raise SpecError(
            f"{label}.stratify is true, but the target is continuous (regression); remove it"
        )
    if getattr(loop, "forward", False):
        return SplitRule(loop.folds, False, False, grouped, None, label, forward=True)
    return SplitRule(loop.folds, loop.shuffle, stratify, grouped, None, label)


def _n_splits_known(splitter: Any) -> bool:
    try:
        splitter.get_n_splits()
        return True
    except (TypeError, ValueError):
        return False
