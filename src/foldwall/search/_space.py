"""Search spaces: one internal form, mapped onto a plain grid or optuna distributions.

A space maps ``STEP__param`` to a *dimension*:

- a list of values: a choice (every value on a grid; a categorical for optuna);
- a :class:`Range` (from the study file's ``{between: [lo, hi], scale: log}``):
  a float or integer range; on a grid it needs ``grid_points``;
- an optuna distribution object (from Python): used as it is.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np
from optuna.distributions import (
    BaseDistribution,
    CategoricalDistribution,
    FloatDistribution,
    IntDistribution,
)
from sklearn.model_selection import ParameterGrid

from ..exceptions import SpecError

__all__ = [
    "MAX_GRID_SETTINGS",
    "Range",
    "Choice",
    "normalise_space",
    "grid_settings",
    "optuna_space",
    "describe_space",
    "check_searchable",
]

_PRIMITIVE = (type(None), bool, int, float, str)

MAX_GRID_SETTINGS = 100_000
"""Most settings one grid search may hold (the product of its lists)."""


@dataclass(frozen=True)
class Choice:
    values: tuple[Any, ...]

    def describe(self) -> Any:
        return [_describe_value(v) for v in self.values]


@dataclass(frozen=True)
class Range:
    low: float
    high: float
    log: bool = False
    integer: bool = False
    grid_points: int | None = None

    def grid(self, key: str) -> list[Any]:
        if self.grid_points is None:
            raise SpecError(
                f"search space '{key}' is a range, which a grid cannot enumerate; add "
                f"'grid_points: N' to it, or set search.method to tpe or random with a trials budget"
            )
        if self.log:
            vals = np.geomspace(self.low, self.high, self.grid_points)
        else:
            vals = np.linspace(self.low, self.high, self.grid_points)
        if self.integer:
            out = sorted({int(round(v)) for v in vals})
            return out
        return [float(v) for v in vals]

    def describe(self) -> Any:
        d: dict[str, Any] = {
            "between": [self.low, self.high],
            "scale": "log" if self.log else "linear",
        }
        if self.integer:
            d["integer"] = True
        if self.grid_points:
            d["grid_points"] = self.grid_points
        return d


def _describe_value(v: Any) -> Any:
    if isinstance(v, _PRIMITIVE):
        return v
    return repr(v)


def normalise_space(
    space: Mapping[str, Any] | None,
) -> dict[str, Choice | Range | BaseDistribution]:
    """Check a search space and bring every dimension to its internal form."""
    if space is None:
        return {}
    if not isinstance(space, Mapping):
        raise SpecError(
            f"space must be a mapping of 'step__param' to values, got {type(space).__name__}"
        )
    out: dict[str, Choice | Range | BaseDistribution] = {}
    for key, dim in space.items():
        if not isinstance(key, str) or not key:
            raise SpecError(
                f"search space key {key!r} must be a parameter name such as 'model__C'"
            )
        if isinstance(dim, BaseDistribution):
            out[key] = dim
        elif isinstance(dim, (Choice, Range)):
            out[key] = dim
        elif hasattr(dim, "between"):  # RangeSpec from the study file
            lo, hi = dim.between
            if dim.integer and (lo != int(lo) or hi != int(hi)):
                raise SpecError(
                    f"search space '{key}': an integer range needs whole-number ends, got [{lo}, {hi}]"
                )
            out[key] = Range(
                float(lo),
                float(hi),
                dim.scale == "log",
                bool(dim.integer),
                dim.grid_points,
            )
        elif isinstance(dim, Sequence) and not isinstance(dim, (str, bytes)):
            if len(dim) == 0:
                raise SpecError(
                    f"search space '{key}' is an empty list; give at least one value"
                )
            out[key] = Choice(tuple(dim))
        else:
            raise SpecError(
                f"search space '{key}' must be a list of values, a range {{between: [low, high]}}, "
                f"or an optuna distribution; got {dim!r}"
            )
    return out


def grid_settings(
    space: Mapping[str, Any], *, key_order: bool = True, name: str | None = None
) -> list[dict[str, Any]]:
    """Every combination of a space, in scikit-learn's ``ParameterGrid`` order.

    Raises
    ------
    SpecError
        When the grid would hold more than ``MAX_GRID_SETTINGS`` settings (counted
        before any is built).
    """
    grid: dict[str, list[Any]] = {}
    for key, dim in space.items():
        if isinstance(dim, Choice):
            grid[key] = list(dim.values)
        elif isinstance(dim, Range):
            grid[key] = dim.grid(key)
        elif isinstance(dim, CategoricalDistribution):
            grid[key] = list(dim.choices)
        else:
            raise SpecError(
                f"search space '{key}' is a continuous distribution, which a grid cannot enumerate; "
                f"pass trials=N to search it with optuna, or give a list of values"
            )
    if not grid:
        return [{}]
    sizes = [len(v) for v in grid.values()]
    n = math.prod(sizes)
    if n > MAX_GRID_SETTINGS:
        shown = " x ".join(map(str, sizes))
        raise SpecError(
            f"the search space of '{name or 'the candidate'}' has {n} settings on a grid ({shown}), "
            f"more than the {MAX_GRID_SETTINGS} allowed; use fewer values, or search.method: random "
            f"with a trials budget"
        )
    return list(ParameterGrid(grid))


def optuna_space(
    space: Mapping[str, Any],
) -> tuple[dict[str, BaseDistribution], dict[str, tuple[Any, ...]]]:
    """Optuna distributions for a space.

    Returns the distributions and, for choices whose values optuna cannot store
    (estimator objects, tuples), a lookup from the stored index to the value.
    """
    dists: dict[str, BaseDistribution] = {}
    lookups: dict[str, tuple[Any, ...]] = {}
    for key, dim in space.items():
        if isinstance(dim, BaseDistribution):
            dists[key] = dim
        elif isinstance(dim, Range):
            if dim.integer:
                dists[key] = IntDistribution(int(dim.low), int(dim.high), log=dim.log)
            else:
                dists[key] = FloatDistribution(dim.low, dim.high, log=dim.log)
        elif isinstance(dim, Choice):
            if all(isinstance(v, _PRIMITIVE) for v in dim.values):
                dists[key] = CategoricalDistribution(list(dim.values))
            else:
                dists[key] = CategoricalDistribution(list(range(len(dim.values))))
                lookups[key] = dim.values
        else:  # pragma: no cover - normalise_space guards this
            raise SpecError(
                f"search space '{key}' has an unsupported dimension {dim!r}"
            )
    return dists, lookups


def describe_space(space: Mapping[str, Any]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for key, dim in space.items():
        out[key] = dim.describe() if isinstance(dim, (Choice, Range)) else repr(dim)
    return out


def check_searchable(space: Mapping[str, Any], *, method: str, name: str) -> None:
    """A continuous distribution needs a sampled search (the one place this rule lives)."""
    if method != "grid":
        return
    for key, dim in space.items():
        if isinstance(dim, BaseDistribution) and not isinstance(
            dim, CategoricalDistribution
        ):
            raise SpecError(
                f"'{name}': search space '{key}' is a continuous distribution, which a grid cannot "
                f"enumerate; pass trials=N to search it with optuna, or give a list of values"
            )
