"""Leave-one-rater-out reference, model versus a typical rater, and the sentence.

The constructed panel below is small enough to work out by hand; every expected
number is derived in the comments. The corrected resampled t-test is foldwall's own
(checked against Nadeau & Bengio 2003 in tests/compare/test_stats.py).
"""

from __future__ import annotations

import numpy as np
import pytest

from foldwall.compare import corrected_t_interval, corrected_ttest
from foldwall.exceptions import DataError, SpecError
from foldwall.labels import (
    human_reference_statement,
    leave_one_rater_out,
    model_vs_raters,
    rater_reference,
    rating_table,
)

# Four raters, two labels, six cases (rows).
#   case  A B C D
#   1     1 1 1 1
#   2     1 1 1 0
#   3     0 0 1 0
#   4     0 0 0 0
#   5     1 0 1 1
#   6     1 1 0 0
PANEL = [
    [1, 1, 1, 1],
    [1, 1, 1, 0],
    [0, 0, 1, 0],
    [0, 0, 0, 0],
    [1, 0, 1, 1],
    [1, 1, 0, 0],
]
RATERS = ["A", "B", "C", "D"]

# Majority of the three others (never tied with three binary votes):
#   without A (B, C, D): 1 1 0 0 1 0
#   without B (A, C, D): 1 1 0 0 1 0
#   without C (A, B, D): 1 1 0 0 1 1
#   without D (A, B, C): 1 1 0 0 1 1
LOO = [
    [1, 1, 1, 1],
    [1, 1, 1, 1],
    [0, 0, 0, 0],
    [0, 0, 0, 0],
    [1, 1, 1, 1],
    [0, 0, 1, 1],
]


def _table(rows=PANEL):
    return rating_table(rows, categories=[0, 1], raters=RATERS)


def test_leave_one_rater_out_consensus_by_hand():
    loo = leave_one_rater_out(_table())
    assert loo.consensus.tolist() == LOO
    assert not loo.tied.any()
    assert loo.defined.all()


def test_each_rater_against_the_others_by_hand():
    ref = rater_reference(_table(), n_resamples=0)
    # A: 1 1 0 0 1 1 vs 1 1 0 0 1 0 -> 5/6; B: 1 1 0 0 0 1 vs 1 1 0 0 1 0 -> 4/6
    # C: 1 1 1 0 1 0 vs 1 1 0 0 1 1 -> 4/6; D: 1 0 0 0 1 0 vs 1 1 0 0 1 1 -> 4/6
    assert [r.value for r in ref.raters] == pytest.approx([5 / 6, 4 / 6, 4 / 6, 4 / 6])
    assert ref.typical.value == pytest.approx(17 / 24)
    assert ref.metric == "accuracy" and ref.greater_is_better


def test_missing_rating_and_tied_reference_are_handled_by_hand():
    rows = [list(r) for r in PANEL]
    rows[5][3] = None  # D does not rate case 6
    ref = rater_reference(_table(rows), n_resamples=0)
    # Case 6 now: A=1 B=1 C=0. Without A: (B, C) = 1, 0 -> tied -> left out;
    # without B: (A, C) tied -> left out; without C: (A, B) = 1 -> C's 0 is wrong;
    # D did not rate it. Cases 1-5 are as before.
    # A: 5/5; B: 4/5; C: 4/6; D: 1 0 0 0 1 vs 1 1 0 0 1 -> 4/5
    assert [r.value for r in ref.raters] == pytest.approx([1.0, 0.8, 4 / 6, 0.8])
    assert [r.n_cases for r in ref.raters] == [5, 5, 6, 5]
    kept = rater_reference(_table(rows), drop_ties=False, n_resamples=0)
    # Kept ties go to the class listed first (0): A's 1 is wrong, B's 1 is wrong.
    assert kept.raters[0].value == pytest.approx(5 / 6)
    assert kept.raters[1].value == pytest.approx(4 / 6)


def test_model_against_a_typical_rater_by_hand():
    # The model predicts 1 1 0 0 1 1 (A's labels); split 1 = cases 1-3, split 2 =
    # cases 4-6.
    # Split 1, references (cases 1-3) are 1 1 0 for every rater:
    #   model 1 1 0 -> 1 against each; raters A 1, B 1, C 2/3, D 2/3
    #   model 1, typical 10/12, difference 1/6
    # Split 2, references (cases 4-6): A 0 1 0, B 0 1 0, C 0 1 1, D 0 1 1
    #   model 0 1 1 -> 2/3, 2/3, 1, 1 (mean 5/6)
    #   raters A 0 1 1 -> 2/3, B 0 0 1 -> 1/3, C 0 1 0 -> 2/3, D 0 1 0 -> 2/3 (7/12)
    #   difference 5/6 - 7/12 = 1/4
    splits = [([0, 1, 2], [1, 1, 0]), ([3, 4, 5], [0, 1, 1])]
    res = model_vs_raters(_table(), splits)
    assert [s.difference for s in res.splits] == pytest.approx([1 / 6, 1 / 4])
    assert [s.model for s in res.splits] == pytest.approx([1.0, 5 / 6])
    assert [s.typical_rater for s in res.splits] == pytest.approx([10 / 12, 7 / 12])
    assert res.model == pytest.approx(11 / 12)
    assert res.typical_rater == pytest.approx(17 / 24)
    assert res.difference == pytest.approx(5 / 24)
    # Correction with the default sizes: n_test = 3, n_train = 6 - 3 = 3.
    assert (res.n_train, res.n_test) == (3, 3)
    expected = corrected_ttest([1 / 6, 1 / 4], n_train=3, n_test=3)
    assert res.test.p_value == pytest.approx(expected.p_value)
    assert res.difference_ci == pytest.approx(
        corrected_t_interval([1 / 6, 1 / 4], n_train=3, n_test=3)
    )
    # Per rater (split 1, split 2): A model (1, 2/3) vs rater (1, 2/3)
    a = res.per_rater[0]
    assert (a.model, a.rater_score) == pytest.approx((5 / 6, 5 / 6))


def test_model_is_scored_only_on_the_cases_the_rater_rated():
    rows = [list(r) for r in PANEL]
    rows[2][3] = None  # D does not rate case 3
    splits = [([0, 1, 2], [1, 1, 1]), ([3, 4, 5], [0, 1, 1])]
    res = model_vs_raters(_table(rows), splits)
    d_model_split1 = next(c for c in res.per_rater if c.rater == "D")
    # D's reference on cases 1-2 (A, B, C) = 1 1; the model's wrong 1 on case 3 is
    # not counted for D, so D's model score in split 1 is 2/2.
    # Split 2 against D's reference 0 1 1: model 0 1 1 -> 1. Mean (1 + 1) / 2.
    assert d_model_split1.model == pytest.approx(1.0)


def test_mean_absolute_error_is_lower_is_better_for_ordinal_grades():
    rows = [[0, 1, 1], [2, 2, 1], [1, 1, 1], [0, 0, 1]]
    table = rating_table(rows, scale="ordinal", categories=[0, 1, 2])
    res = model_vs_raters(table, [([0, 1], [1, 2]), ([2, 3], [1, 0])], rule="median")
    assert res.metric == "mean_absolute_error"
    assert not res.greater_is_better


def test_bad_splits_and_predictions_are_one_line():
    with pytest.raises(DataError, match=r"'maybe' is not one of the classes") as info:
        model_vs_raters(
            _table(), [([0, 1, 2], [1, "maybe", 0]), ([3, 4, 5], [0, 1, 1])]
        )
    assert "\n" not in str(info.value)
    with pytest.raises(SpecError, match="at least 2"):
        model_vs_raters(_table(), [([0, 1, 2], [1, 1, 0])])
    with pytest.raises(SpecError, match=r"positions 0\.\.5"):
        model_vs_raters(_table(), [([0, 9], [1, 1]), ([3], [0])])
    with pytest.raises(SpecError, match="3 test cases but 2 predictions"):
        model_vs_raters(_table(), [([0, 1, 2], [1, 1]), ([3, 4, 5], [0, 1, 1])])
    with pytest.raises(SpecError, match="metric 'mean_absolute_error' does not fit"):
        rater_reference(_table(), metric="mean_absolute_error")


# ----------------------------------------------------------------- sentences

BASE = {
    "model": "logreg",
    "metric": "accuracy",
    "model_score": 0.80,
    "rater_score": 0.82,
    "alpha": 0.05,
    "n_splits": 5,
    "n_raters": 4,
}


def test_sentence_without_significance_says_it_could_not_tell_and_gives_the_interval():
    s = human_reference_statement(
        **BASE, mean_difference=-0.02, ci=(-0.09, 0.05), p_value=0.52
    )
    assert s.startswith("Could not tell whether logreg agrees")
    assert "-0.090 to 0.050" in s and "p = 0.52" in s
    assert "as well as a typical rater of these 4 does" in s
    assert "cannot be shown" in s


def test_sentence_states_a_difference_only_with_test_and_interval_agreeing():
    closer = human_reference_statement(
        **BASE, mean_difference=0.06, ci=(0.01, 0.11), p_value=0.02
    )
    assert closer.startswith(
        "logreg agreed with the consensus of the other raters more"
    )
    further = human_reference_statement(
        **BASE, mean_difference=-0.06, ci=(-0.11, -0.01), p_value=0.02
    )
    assert "less closely" in further and "not supported" in further
    # p below alpha but an interval across zero: inconclusive, no direction.
    odd = human_reference_statement(
        **BASE, mean_difference=0.06, ci=(-0.01, 0.11), p_value=0.02
    )
    assert odd.startswith("Could not tell") and "inconclusive" in odd


def test_sentence_direction_follows_the_metric():
    # A lower mean absolute error means closer agreement.
    s = human_reference_statement(
        **{**BASE, "metric": "mean_absolute_error"},
        mean_difference=-0.3,
        ci=(-0.5, -0.1),
        p_value=0.01,
        greater_is_better=False,
    )
    assert "more closely" in s


def test_sentence_says_as_well_as_only_inside_the_margin():
    inside = human_reference_statement(
        **BASE,
        mean_difference=-0.01,
        ci=(-0.05, 0.03),
        p_value=0.6,
        margin=0.05,
        equivalence_ci=(-0.04, 0.02),
    )
    assert inside.startswith(
        "logreg agreed with the consensus of the other raters as well as"
    )
    assert "±0.050" in inside and "two one-sided tests" in inside
    shortfall_ruled_out = human_reference_statement(
        **BASE,
        mean_difference=0.02,
        ci=(-0.03, 0.09),
        p_value=0.4,
        margin=0.05,
        equivalence_ci=(-0.02, 0.08),
    )
    assert "no less closely than a typical rater" in shortfall_ruled_out
    assert "a shortfall of 0.050 or more is ruled out" in shortfall_ruled_out
    # an error metric: the unfavourable end is the upper one
    mae = human_reference_statement(
        **{**BASE, "metric": "mean_absolute_error"},
        mean_difference=-0.18,
        ci=(-0.39, 0.03),
        p_value=0.07,
        greater_is_better=False,
        margin=0.2,
        equivalence_ci=(-0.32, -0.04),
    )
    assert "no less closely" in mae
    worse_mae = human_reference_statement(
        **{**BASE, "metric": "mean_absolute_error"},
        mean_difference=0.18,
        ci=(-0.03, 0.39),
        p_value=0.07,
        greater_is_better=False,
        margin=0.2,
        equivalence_ci=(0.04, 0.32),
    )
    assert worse_mae.startswith("Could not tell")
    wide = human_reference_statement(
        **BASE,
        mean_difference=0.0,
        ci=(-0.2, 0.2),
        p_value=1.0,
        margin=0.05,
        equivalence_ci=(-0.15, 0.15),
    )
    assert (
        wide.startswith("Could not tell") and "beyond the smallest difference" in wide
    )


def test_sentence_rounding_never_crosses_alpha():
    s = human_reference_statement(
        **BASE, mean_difference=0.06, ci=(0.001, 0.11), p_value=0.0496
    )
    assert "p = 0.0496" in s


def test_sentence_rejects_bad_numbers_in_one_line():
    with pytest.raises(SpecError, match="p_value must lie in") as info:
        human_reference_statement(**BASE, mean_difference=0.0, ci=(0, 1), p_value=2.0)
    assert "\n" not in str(info.value)
    with pytest.raises(SpecError, match="needs equivalence_ci"):
        human_reference_statement(
            **BASE, mean_difference=0.0, ci=(0, 1), p_value=0.5, margin=0.1
        )


def test_comparison_sentence_from_the_result_object():
    splits = [([0, 1, 2], [1, 1, 0]), ([3, 4, 5], [0, 1, 1])]
    res = model_vs_raters(_table(), splits)
    text = res.statement("the model")
    # Two splits of three cases cannot show a difference.
    assert text.startswith("Could not tell whether the model agrees")
    assert res.to_dict()["statement"] == text
    assert np.isfinite(res.difference_ci[0])
