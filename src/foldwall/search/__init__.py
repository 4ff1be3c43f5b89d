"""Search spaces, mapped onto a plain grid or onto optuna distributions."""

from ._space import (
    Choice,
    Range,
    check_searchable,
    describe_space,
    grid_settings,
    normalise_space,
    optuna_space,
)

__all__ = [
    "Choice",
    "Range",
    "normalise_space",
    "grid_settings",
    "optuna_space",
    "describe_space",
    "check_searchable",
]
