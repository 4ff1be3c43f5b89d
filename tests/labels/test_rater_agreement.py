"""Agreement statistics checked against published examples and reference libraries.

Check values and their sources: /work/shared/REFERENCES.md sections 8 (Fleiss), 9
(Cohen) and 10 (Krippendorff). Reference libraries: statsmodels
(``fleiss_kappa``), scikit-learn (``cohen_kappa_score``) and the ``krippendorff``
package (test-only dependency).
"""

from __future__ import annotations

from fractions import Fraction

import krippendorff
import numpy as np
import pytest
from sklearn.metrics import cohen_kappa_score
from statsmodels.stats.inter_rater import fleiss_kappa as sm_fleiss_kappa

from foldwall.labels import (
    LowAgreementWarning,
    agreement,
    cohen_kappa,
    fleiss_kappa,
    krippendorff_alpha,
    landis_koch_band,
    low_agreement_message,
    pairwise_kappa,
    rating_table,
    warn_low_agreement,
)

# Fleiss (1971): 30 patients x 6 psychiatrists x 5 diagnoses, as category counts
# (REFERENCES.md section 8, example B; R irr::kappam.fleiss = 0.4302445).
FLEISS_1971 = """0 0 0 6 0; 0 3 0 0 3; 0 1 4 0 1; 0 0 0 0 6; 0 3 0 3 0; 2 0 4 0 0;
0 0 4 0 2; 2 0 3 1 0; 2 0 0 4 0; 0 0 0 0 6; 1 0 0 5 0; 1 1 0 4 0; 0 3 3 0 0;
1 0 0 5 0; 0 2 0 3 1; 0 0 5 0 1; 3 0 0 1 2; 5 1 0 0 0; 0 2 0 4 0; 1 0 2 0 3;
0 0 0 0 6; 0 1 0 5 0; 0 2 0 1 3; 2 0 0 4 0; 1 0 0 4 1; 0 5 0 1 0; 4 0 0 0 2;
0 2 0 4 0; 1 0 5 0 0; 0 0 0 0 6"""

# The 10 subjects x 14 raters x 5 categories table (REFERENCES.md section 8,
# example A; kappa 0.210 in statsmodels' own test suite).
TEN_BY_FOURTEEN = """0 0 0 0 14; 0 2 6 4 2; 0 0 3 5 6; 0 3 9 2 0; 2 2 8 1 1;
7 7 0 0 0; 3 2 6 3 0; 2 5 3 2 2; 6 5 2 1 0; 0 2 2 3 7"""

# Krippendorff (2011), nominal data with missing values, 4 observers x 12 units
# (REFERENCES.md section 10); None = missing. Rows are units here.
KRIPPENDORFF_2011 = [
    [1, 1, None, 1],
    [2, 2, 3, 2],
    [3, 3, 3, 3],
    [3, 3, 3, 3],
    [2, 2, 2, 2],
    [1, 2, 3, 4],
    [4, 4, 4, 4],
    [1, 1, 2, 1],
    [2, 2, 2, 2],
    [None, 5, 5, 5],
    [None, None, 1, 1],
    [None, 3, None, None],
]


def _counts(text: str) -> np.ndarray:
    return np.array([[int(x) for x in row.split()] for row in text.split(";")])


def _ratings_from_counts(counts: np.ndarray) -> np.ndarray:
    """One rating per rater slot: row i holds counts[i, j] copies of label j + 1."""
    return np.array(
        [np.repeat(np.arange(1, counts.shape[1] + 1), row) for row in counts]
    )


def _as_float(rows: list[list[object]]) -> np.ndarray:
    return np.array([[np.nan if v is None else v for v in row] for row in rows], float)


# ------------------------------------------------------------------ Fleiss


def test_fleiss_1971_example_gives_0_4302_as_in_the_paper_and_statsmodels():
    counts = _counts(FLEISS_1971)
    est = fleiss_kappa(_ratings_from_counts(counts), n_resamples=0)
    # Fleiss (1971) / R irr: 0.4302445 (REFERENCES.md section 8)
    assert est.value == pytest.approx(0.4302445, abs=1e-7)
    # statsmodels.stats.inter_rater.fleiss_kappa on the count table
    assert est.value == pytest.approx(sm_fleiss_kappa(counts), rel=1e-12)
    assert est.n_cases == 30
    assert "Fleiss's own setting" in est.method


def test_fleiss_ten_by_fourteen_example_gives_0_210_and_matches_statsmodels():
    counts = _counts(TEN_BY_FOURTEEN)
    est = fleiss_kappa(_ratings_from_counts(counts), n_resamples=0)
    # REFERENCES.md section 8, example A: kappa = 0.20993
    assert est.value == pytest.approx(0.20993, abs=1e-5)
    assert est.value == pytest.approx(sm_fleiss_kappa(counts), rel=1e-12)


def test_fleiss_with_missing_ratings_but_equal_counts_is_fleiss_own_statistic():
    # Fleiss (1971) lets the raters differ between cases as long as every case has
    # the same number of ratings: here 3 of 5 raters rate each case. The value
    # must equal statsmodels' fleiss_kappa on the count table.
    rng = np.random.default_rng(3)
    ratings = rng.integers(0, 3, size=(40, 5)).astype(float)
    for row in ratings:
        row[rng.choice(5, size=2, replace=False)] = np.nan
    table = rating_table(ratings)
    est = fleiss_kappa(table, n_resamples=0)
    assert est.value == pytest.approx(sm_fleiss_kappa(table.counts()), rel=1e-12)


def test_fleiss_with_unequal_counts_says_it_extends_the_paper():
    ratings = [[1, 1, 2], [1, 1, None], [2, 2, 2], [1, None, None]]
    est = fleiss_kappa(ratings, n_resamples=0)
    assert est.n_cases == 3  # the case with a single rating is left out
    assert "extension" in est.method
    # By hand: P_i = 1/3, 1, 1 (n_i = 3, 2, 3); P = 7/9; p = (4/8, 4/8); Pe = 1/2
    assert est.value == pytest.approx((7 / 9 - 0.5) / 0.5)


# ------------------------------------------------------------ Krippendorff


def test_krippendorff_2011_nominal_example_is_113_over_152():
    est = krippendorff_alpha(KRIPPENDORFF_2011, n_resamples=0)
    # Krippendorff (2011): alpha = 0.743; exactly 113/152 (REFERENCES.md section 10)
    assert est.value == pytest.approx(float(Fraction(113, 152)), abs=1e-12)
    assert est.n_cases == 11  # unit 12 has a single value: not pairable


@pytest.mark.parametrize(
    ("level", "expected"),
    [("nominal", 0.743421), ("ordinal", 0.8154), ("interval", 0.8491)],
)
def test_krippendorff_2011_example_at_each_level_matches_the_package(level, expected):
    table = rating_table(KRIPPENDORFF_2011, scale="ordinal")
    est = krippendorff_alpha(table, level=level, n_resamples=0)
    # values in REFERENCES.md section 10, computed there with krippendorff 0.9.0
    assert est.value == pytest.approx(expected, abs=1e-4)
    # krippendorff package: raters in rows, units in columns
    oracle = krippendorff.alpha(
        reliability_data=_as_float(KRIPPENDORFF_2011).T, level_of_measurement=level
    )
    assert est.value == pytest.approx(oracle, rel=1e-10)


def test_krippendorff_other_worked_examples():
    # Krippendorff (2011), binary, 2 observers x 10 units: 0.095 (from memory;
    # recomputed 0.0952 in REFERENCES.md section 10)
    a = [0, 1, 0, 0, 0, 0, 0, 0, 1, 0]
    b = [1, 1, 1, 0, 0, 1, 0, 0, 0, 0]
    assert krippendorff_alpha(
        np.column_stack([a, b]), n_resamples=0
    ).value == pytest.approx(0.0952, abs=1e-4)
    # Krippendorff (2011), nominal, 2 observers x 12 units: 0.692 (from memory;
    # 0.6920 in REFERENCES.md section 10)
    a2 = list("aabbdcccedda")
    b2 = list("babbbccceddd")
    assert krippendorff_alpha(
        np.column_stack([a2, b2]), n_resamples=0
    ).value == pytest.approx(0.6920, abs=1e-4)
    # krippendorff package docstring data, 3 coders x 15 units (REFERENCES.md
    # section 10): nominal 0.691358, interval 0.810845
    n = None
    coders = [
        [n, n, n, n, n, 3, 4, 1, 2, 1, 1, 3, 3, n, 3],
        [1, n, 2, 1, 3, 3, 4, 3, n, n, n, n, n, n, n],
        [n, n, 2, 1, 3, 4, 4, n, 2, 1, 1, 3, 3, n, 4],
    ]
    units = [list(u) for u in zip(*coders, strict=True)]
    units = [u for u in units if any(v is not None for v in u)]  # unit 2 and 14: empty
    assert krippendorff_alpha(units, n_resamples=0).value == pytest.approx(
        0.691358, abs=1e-6
    )
    assert krippendorff_alpha(
        units, level="interval", n_resamples=0
    ).value == pytest.approx(0.810845, abs=1e-6)


@pytest.mark.parametrize("level", ["nominal", "ordinal", "interval"])
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_krippendorff_matches_the_package_on_random_tables_with_gaps(level, seed):
    # 60 cases x 4 raters, 5 ordered grades, about a quarter of ratings missing
    rng = np.random.default_rng(seed)
    truth = rng.integers(1, 6, size=60)
    ratings = np.clip(truth[:, None] + rng.integers(-1, 2, size=(60, 4)), 1, 5)
    ratings = ratings.astype(float)
    ratings[rng.random(ratings.shape) < 0.25] = np.nan
    ratings = ratings[~np.isnan(ratings).all(axis=1)]
    scale = "interval" if level == "interval" else "ordinal"
    table = rating_table(ratings, scale=scale)
    est = krippendorff_alpha(table, level=level, n_resamples=0)
    oracle = krippendorff.alpha(reliability_data=ratings.T, level_of_measurement=level)
    assert est.value == pytest.approx(oracle, rel=1e-9)


def test_krippendorff_interval_with_continuous_ratings_matches_the_package():
    rng = np.random.default_rng(8)
    truth = rng.normal(50, 10, size=80)
    ratings = truth[:, None] + rng.normal(0, 5, size=(80, 3))
    ratings[rng.random(ratings.shape) < 0.2] = np.nan
    ratings = ratings[~np.isnan(ratings).all(axis=1)]
    est = krippendorff_alpha(ratings, level="interval", n_resamples=0)
    oracle = krippendorff.alpha(
        reliability_data=ratings.T, level_of_measurement="interval"
    )
    assert est.value == pytest.approx(oracle, rel=1e-9)


def test_krippendorff_is_undefined_when_every_rating_is_the_same():
    est = krippendorff_alpha([[1, 1], [1, 1], [1, None]], n_resamples=0)
    assert np.isnan(est.value)


# ------------------------------------------------------------------- Cohen


def test_cohen_kappa_textbook_two_by_two_is_0_40():
    # Table [[20, 5], [10, 15]], N = 50: p_o = 0.70, p_e = 0.50, kappa = 0.40
    # (REFERENCES.md section 9, example A, from memory)
    a = [0] * 25 + [1] * 25
    b = [0] * 20 + [1] * 5 + [0] * 10 + [1] * 15
    assert cohen_kappa(a, b, n_resamples=0).value == pytest.approx(0.40, abs=1e-12)


def test_cohen_kappa_sas_example_plain_and_linear_weighted():
    # SAS printout used in statsmodels' tests (REFERENCES.md section 9, example B):
    # table [[0, 4, 1], [0, 8, 0], [0, 1, 5]]: kappa 0.48416, linear-weighted 0.4701
    table = np.array([[0, 4, 1], [0, 8, 0], [0, 1, 5]])
    a, b = [], []
    for i in range(3):
        for j in range(3):
            a += [i] * table[i, j]
            b += [j] * table[i, j]
    cats = [0, 1, 2]
    plain = cohen_kappa(a, b, categories=cats, n_resamples=0).value
    linear = cohen_kappa(a, b, categories=cats, weights="linear", n_resamples=0).value
    assert plain == pytest.approx(0.48416, abs=1e-5)
    assert linear == pytest.approx(0.47012, abs=1e-5)


@pytest.mark.parametrize("weights", [None, "linear", "quadratic"])
def test_pairwise_kappa_matches_scikit_learn_skipping_missing_cases(weights):
    rng = np.random.default_rng(5)
    truth = rng.integers(0, 4, size=70)
    ratings = np.clip(truth[:, None] + rng.integers(-1, 2, size=(70, 3)), 0, 3)
    ratings = ratings.astype(float)
    ratings[rng.random(ratings.shape) < 0.2] = np.nan
    ratings = ratings[~np.isnan(ratings).all(axis=1)]
    table = rating_table(ratings, scale="ordinal", categories=[0, 1, 2, 3])
    pairs = pairwise_kappa(table, weights=weights, n_resamples=0)
    assert [(p.first, p.second) for p in pairs] == [
        ("rater_0", "rater_1"),
        ("rater_0", "rater_2"),
        ("rater_1", "rater_2"),
    ]
    for p, (i, j) in zip(pairs, [(0, 1), (0, 2), (1, 2)], strict=True):
        both = ~np.isnan(ratings[:, i]) & ~np.isnan(ratings[:, j])
        expected = cohen_kappa_score(
            ratings[both, i], ratings[both, j], labels=[0, 1, 2, 3], weights=weights
        )
        assert p.estimate.value == pytest.approx(expected, rel=1e-10)
        assert p.estimate.n_cases == both.sum()


# --------------------------------------------------------------- intervals


def test_bootstrap_interval_is_seeded_and_contains_the_estimate():
    ratings = _ratings_from_counts(_counts(FLEISS_1971))
    first = fleiss_kappa(ratings, random_state=7, n_resamples=500)
    again = fleiss_kappa(ratings, random_state=7, n_resamples=500)
    other = fleiss_kappa(ratings, random_state=8, n_resamples=500)
    assert first.ci == again.ci
    assert first.ci != other.ci
    assert first.ci[0] < first.value < first.ci[1]
    assert first.n_resamples == 500
    assert np.isnan(fleiss_kappa(ratings, n_resamples=0).ci[0])


def test_bootstrap_interval_matches_recomputing_on_resampled_cases():
    # The weighted form must equal the statistic recomputed on the resampled rows:
    # draw one resample by hand and compare with a one-resample bootstrap.
    from foldwall.labels._bootstrap import resample_weights

    table = rating_table(KRIPPENDORFF_2011, scale="ordinal")
    w = resample_weights(table.n_cases, 1, 11)[0]
    rows = np.repeat(np.arange(table.n_cases), w.astype(int))
    sub = [KRIPPENDORFF_2011[i] for i in rows]
    sub = [r for r in sub if sum(v is not None for v in r) >= 1]
    direct = krippendorff.alpha(
        reliability_data=_as_float(sub).T, level_of_measurement="ordinal"
    )
    from foldwall.labels._alpha import alpha_fn

    fn, _ = alpha_fn(table, "ordinal")
    assert fn(w[None, :])[0] == pytest.approx(direct, rel=1e-10)


def test_agreement_report_collects_every_statistic_and_per_rater_means():
    counts = _counts(FLEISS_1971)
    report = agreement(_ratings_from_counts(counts), random_state=0, n_resamples=200)
    assert report.fleiss is not None
    assert report.fleiss.value == pytest.approx(0.4302445, abs=1e-7)
    assert len(report.pairs) == 15  # 6 raters
    for r in report.per_rater:
        mine = [
            p.estimate.value for p in report.pairs if r.rater in (p.first, p.second)
        ]
        assert r.value == pytest.approx(np.mean(mine))
        assert r.n_pairs == 5
        assert r.ci[0] <= r.value <= r.ci[1]
    d = report.to_dict()
    assert d["krippendorff_alpha"]["statistic"] == "krippendorff_alpha"
    assert d["pair_statistic"] == "cohen_kappa"


def test_agreement_on_ordinal_ratings_uses_quadratic_weights_and_on_interval_alpha():
    ordinal = rating_table(KRIPPENDORFF_2011, scale="ordinal")
    report = agreement(ordinal, n_resamples=0)
    assert "quadratic" in report.pairs[0].estimate.method
    interval = agreement(
        rating_table(KRIPPENDORFF_2011, scale="interval"), n_resamples=0
    )
    assert interval.fleiss is None
    assert interval.pair_statistic == "krippendorff_alpha"
    a, b = _as_float(KRIPPENDORFF_2011)[:, 0], _as_float(KRIPPENDORFF_2011)[:, 1]
    oracle = krippendorff.alpha(
        reliability_data=np.vstack([a, b]), level_of_measurement="interval"
    )
    assert interval.pairs[0].estimate.value == pytest.approx(oracle, rel=1e-10)


# ------------------------------------------------------------- low agreement


@pytest.mark.parametrize(
    ("value", "band"),
    [
        (-0.05, "poor"),
        (0.0, "slight"),
        (0.20, "slight"),
        (0.21, "fair"),
        (0.40, "fair"),
        (0.41, "moderate"),
        (0.61, "substantial"),
        (0.81, "almost perfect"),
        (1.0, "almost perfect"),
    ],
)
def test_landis_koch_bands(value, band):
    # Landis & Koch (1977) bands (REFERENCES.md section 14), a convention
    assert landis_koch_band(value) == band


def test_low_agreement_warns_once_and_names_the_convention():
    rng = np.random.default_rng(0)
    noise = rng.integers(0, 2, size=(50, 3))
    report = agreement(noise, random_state=0, n_resamples=100)
    with pytest.warns(LowAgreementWarning, match=r"Landis & Koch \(1977\).*convention"):
        message = warn_low_agreement(report)
    assert message is not None and "\n" not in message
    good = agreement(_ratings_from_counts(_counts(FLEISS_1971)), n_resamples=0)
    assert low_agreement_message(good, threshold=0.41) is None
    assert low_agreement_message(good, threshold=0.6) is not None
