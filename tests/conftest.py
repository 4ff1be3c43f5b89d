"""Shared fixtures: small data sets from scikit-learn (no download) and seeds."""

from __future__ import annotations

import numpy as np
import pytest


@pytest.fixture
def noise_data():
    """Pure noise: 60 rows x 40 features, labels 30/30, independent of X."""
    rng = np.random.default_rng(11)
    X = rng.normal(size=(60, 40))
    y = np.array([0, 1] * 30)
    rng.shuffle(y)
    return X, y


@pytest.fixture
def signal_data():
    from sklearn.datasets import make_classification

    return make_classification(
        n_samples=120, n_features=30, n_informative=5, random_state=3
    )


@pytest.fixture(scope="session")
def recipe_run(tmp_path_factory):
    """``recipe_run(name)``: the recipe run once per session (see tests/recipe_runs.py)."""
    from recipe_runs import recipe_runner

    return recipe_runner(tmp_path_factory.mktemp("recipes"))
