"""Feature-selection stability (Nogueira, Sechidis & Brown 2018) against outside values.

Check values: /work/shared/REFERENCES.md section 11 (worked examples, the Fleiss-kappa
identity and the Kuncheva identity for subsets of equal size).
"""

from __future__ import annotations

from itertools import combinations

import numpy as np
import pytest
from statsmodels.stats.inter_rater import fleiss_kappa

from foldwall.compare._stability import selection_stability
from foldwall.exceptions import SpecError

EQUAL_SIZE = [
    [1, 1, 1, 0, 0, 0],
    [1, 1, 0, 1, 0, 0],
    [1, 1, 1, 0, 0, 0],
    [1, 0, 1, 1, 0, 0],
]
VARIABLE_SIZE = [[1, 1, 0, 0, 0], [1, 0, 1, 0, 0], [1, 1, 1, 0, 0]]


def _fleiss(z: np.ndarray) -> float:
    """statsmodels' Fleiss kappa with features as subjects, runs as raters."""
    kept = z.sum(axis=0)
    table = np.column_stack([kept, z.shape[0] - kept])
    return float(fleiss_kappa(table, method="fleiss"))


def _mean_kuncheva(z: np.ndarray) -> float:
    """Mean pairwise Kuncheva index, KI = (r d - k^2) / (k (d - k)) (equal sizes only)."""
    d = z.shape[1]
    k = int(z[0].sum())
    vals = [
        (int(np.sum(a & b)) * d - k * k) / (k * (d - k))
        for a, b in combinations(z.astype(bool), 2)
    ]
    return float(np.mean(vals))


def test_equal_size_worked_example_is_four_ninths():
    # REFERENCES.md section 11: p = [1, .75, .75, .5, 0, 0], k = 3, phi = 4/9
    res = selection_stability(EQUAL_SIZE)
    assert res.stability == pytest.approx(4 / 9, rel=1e-12)
    assert res.mean_size == pytest.approx(3.0)
    assert (res.n_runs, res.n_features) == (4, 6)


def test_equal_size_worked_example_matches_fleiss_and_kuncheva():
    z = np.array(EQUAL_SIZE)
    res = selection_stability(z)
    assert res.stability == pytest.approx(
        _fleiss(z), rel=1e-12
    )  # statsmodels fleiss_kappa
    assert res.stability == pytest.approx(_mean_kuncheva(z), rel=1e-12)


def test_variable_size_worked_example():
    # REFERENCES.md section 11: 0.464286, the same as Fleiss' kappa
    z = np.array(VARIABLE_SIZE)
    res = selection_stability(z)
    assert res.stability == pytest.approx(0.464286, abs=1e-6)
    assert res.stability == pytest.approx(_fleiss(z), rel=1e-12)


def test_variance_of_equal_size_example_by_hand():
    # Derived by hand from the paper's variance formula (the one in the authors'
    # reference code, nogueirs/JMLR2018): every k_i = 3, so phi_i - mean(phi)
    # = (1/D)(1/d)(Z_i . p - mean) = 4 * (1/6) * (+-0.125) = +-1/12, and
    # var = 4/M^2 * sum (phi_i - mean)^2 = 4/16 * 4/144 = 1/144.
    res = selection_stability(EQUAL_SIZE)
    assert res.variance == pytest.approx(1 / 144, rel=1e-12)
    lo, hi = res.ci
    assert lo == pytest.approx(4 / 9 - 1.959964 / 12, rel=1e-6)
    assert hi == pytest.approx(4 / 9 + 1.959964 / 12, rel=1e-6)


@pytest.mark.parametrize("seed", [0, 1, 7, 42, 99])
def test_any_matrix_equals_fleiss_kappa(seed):
    # Identity derived in REFERENCES.md section 11, for any subset sizes
    rng = np.random.default_rng(seed)
    z = (rng.random((7, 12)) < 0.4).astype(int)
    if z.sum(axis=0).sum() in (0, z.size):
        pytest.skip("degenerate draw")
    assert selection_stability(z).stability == pytest.approx(_fleiss(z), rel=1e-10)


def test_equal_size_random_subsets_equal_mean_kuncheva():
    # REFERENCES.md section 11: 6 subsets of size 4 from the first 6 of 15 features
    rng = np.random.default_rng(1)
    z = np.zeros((6, 15), dtype=int)
    for row in z:
        row[rng.choice(6, 4, replace=False)] = 1
    res = selection_stability(z)
    assert res.stability == pytest.approx(_mean_kuncheva(z), rel=1e-12)


def test_identical_subsets_give_one_with_zero_variance():
    res = selection_stability([[1, 0, 1, 0]] * 5)
    assert res.stability == pytest.approx(1.0)
    assert res.variance == pytest.approx(0.0, abs=1e-15)
    assert res.ci == pytest.approx((1.0, 1.0))


def test_random_selection_is_near_zero_on_average():
    # Statistical check (fixed seed, wide margin): subsets drawn at random have
    # expected stability 0 under the paper's correction for chance.
    rng = np.random.default_rng(5)
    vals = []
    for _ in range(200):
        z = np.zeros((5, 30), dtype=int)
        for row in z:
            row[rng.choice(30, 6, replace=False)] = 1
        vals.append(selection_stability(z).stability)
    assert abs(np.mean(vals)) < 0.03


@pytest.mark.parametrize(
    ("z", "match"),
    [
        ([1, 0, 1], "2-D"),
        ([[1, 0, 2], [0, 1, 1]], "only 0 and 1"),
        ([[1, 0, 1]], "at least two"),
        ([[1, 1], [1, 1]], "undefined"),
        ([[0, 0], [0, 0]], "undefined"),
    ],
)
def test_bad_matrices_are_rejected(z, match):
    with pytest.raises(SpecError, match=match):
        selection_stability(z)


def test_bad_confidence_is_rejected():
    with pytest.raises(SpecError, match="confidence"):
        selection_stability(EQUAL_SIZE, confidence=1.5)
