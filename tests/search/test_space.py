"""Search spaces: our syntax, mapped onto scikit-learn's grid order and optuna distributions."""

from __future__ import annotations

import numpy as np
import pytest
from optuna.distributions import (
    CategoricalDistribution,
    FloatDistribution,
    IntDistribution,
)
from sklearn.model_selection import ParameterGrid
from sklearn.preprocessing import StandardScaler

from foldwall.exceptions import SpecError
from foldwall.search import (
    Choice,
    Range,
    check_searchable,
    describe_space,
    grid_settings,
    normalise_space,
    optuna_space,
)


def test_grid_order_is_scikit_learns_parameter_grid():
    # Source: sklearn.model_selection.ParameterGrid (the order GridSearchCV uses).
    space = {"m__C": [0.1, 1.0], "s__k": [1, 2, 3]}
    assert grid_settings(normalise_space(space)) == list(ParameterGrid(space))


def test_ranges_on_a_grid_are_numpy_spaced():
    # Source: numpy.geomspace / numpy.linspace.
    assert Range(0.001, 10, log=True, grid_points=5).grid("k") == pytest.approx(
        list(np.geomspace(0.001, 10, 5))
    )
    assert Range(0, 1, grid_points=3).grid("k") == [0.0, 0.5, 1.0]
    assert Range(1, 10, integer=True, log=True, grid_points=4).grid("k") == [
        1,
        2,
        5,
        10,
    ]
    with pytest.raises(SpecError, match="add 'grid_points: N'"):
        Range(0, 1).grid("m__C")


def test_normalise_space_keeps_distributions_and_refuses_bad_dimensions():
    d = FloatDistribution(0.1, 1.0)
    out = normalise_space({"a": [1, 2], "b": d})
    assert out["a"] == Choice((1, 2)) and out["b"] is d
    with pytest.raises(SpecError, match="empty list"):
        normalise_space({"a": []})
    with pytest.raises(SpecError, match="must be a list of values"):
        normalise_space({"a": 3})
    with pytest.raises(SpecError, match="must be a mapping"):
        normalise_space([("a", [1])])  # type: ignore[arg-type]


def test_optuna_space_maps_ranges_and_indexes_objects():
    space = {
        "a": Range(0.01, 1.0, log=True),
        "b": Range(1, 5, integer=True),
        "c": Choice(("x", "y")),
        "d": Choice((StandardScaler(), None)),
    }
    dists, lookups = optuna_space(space)
    assert dists["a"] == FloatDistribution(0.01, 1.0, log=True)
    assert dists["b"] == IntDistribution(1, 5)
    assert dists["c"] == CategoricalDistribution(["x", "y"])
    assert dists["d"] == CategoricalDistribution([0, 1]) and lookups["d"][1] is None


def test_a_continuous_distribution_needs_a_sampled_search():
    check_searchable({"a": FloatDistribution(0, 1)}, method="tpe", name="m")
    check_searchable({"a": CategoricalDistribution([1, 2])}, method="grid", name="m")
    with pytest.raises(SpecError, match="pass trials=N"):
        check_searchable({"a": FloatDistribution(0, 1)}, method="grid", name="m")


def test_describe_space_is_plain_json():
    out = describe_space(
        {
            "a": Range(0.1, 1, log=True, grid_points=3),
            "b": Choice((1, StandardScaler())),
        }
    )
    assert out == {
        "a": {"between": [0.1, 1], "scale": "log", "grid_points": 3},
        "b": [1, "StandardScaler()"],
    }
