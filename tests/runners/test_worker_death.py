"""A worker process that dies is reported with the units it was running."""

from __future__ import annotations

import os

import numpy as np
import pytest
from sklearn.linear_model import LogisticRegression

import foldwall


class DiesInFit(LogisticRegression):
    """Kills its own process when fitted on the training rows of one inner split."""

    def fit(self, X, y, sample_weight=None):
        if len(X) < 30 and os.environ.get("FOLDWALL_TEST_PARENT") != str(os.getpid()):
            os._exit(1)  # as the kernel's out-of-memory killer would
        return super().fit(X, y, sample_weight=sample_weight)


def test_dead_worker_is_reported_with_its_units(monkeypatch):
    monkeypatch.setenv("FOLDWALL_TEST_PARENT", str(os.getpid()))
    rng = np.random.default_rng(0)
    X, y = rng.normal(size=(60, 3)), np.repeat([0, 1], 30)
    study = foldwall.wrap(
        DiesInFit(), space={"C": [0.1, 1.0]}, outer=3, inner=3, n_jobs=2
    )
    with pytest.raises(
        foldwall.RunError,
        match=r"a worker process died .* run the same command to resume",
    ):
        study.run(X, y)
