"""The checker that keeps numbers in recipe READMEs and docs equal to a fresh run."""

from __future__ import annotations

import pytest
from readme_numbers import check_numbers, lookup

RESULTS = {
    "score": {"mean": 0.89375, "ci": [0.7012, 1.0862]},
    "candidates": [
        {"name": "logistic", "chosen_in_folds": 4},
        {"name": "forest", "chosen_in_folds": 0},
    ],
    "comparisons": [{"mean_difference": -0.0004, "p_value": 0.4412}],
    "data": {"classes": {"0": 105, "1": 75}},
    "pooled": {"accuracy": 0.41666},
}


def test_lookup_follows_keys_positions_and_fields():
    assert lookup(RESULTS, "score.ci.1") == 1.0862
    assert lookup(RESULTS, "score.ci[0]") == 0.7012
    assert lookup(RESULTS, "candidates[name=forest].chosen_in_folds") == 0
    assert lookup(RESULTS, "data.classes.1") == 75
    with pytest.raises(KeyError):
        lookup(RESULTS, "candidates[name=tree].chosen_in_folds")


def test_agreeing_numbers_pass_at_the_precision_written():
    text = (
        "roc_auc 0.894<!-- = score.mean --> (95% CI 0.70<!-- = score.ci.0 --> to 1.086<!-- = score.ci.1 -->); "
        "logistic won 4<!-- = candidates[name=logistic].chosen_in_folds --> folds, "
        "accuracy 41.7%<!-- = pooled.accuracy -->, difference -0.000<!-- = comparisons.0.mean_difference -->."
    )
    assert check_numbers(text, RESULTS) == []


def test_a_stale_number_is_reported_with_its_line():
    # the repeated_visits README once said 0.859 while the run gave 0.894 (issue 13)
    text = "intro\n\nroc_auc 0.859<!-- = score.mean --> and 3<!-- = candidates[name=logistic].chosen_in_folds -->"
    problems = check_numbers(text, RESULTS)
    assert len(problems) == 2
    assert problems[0].startswith(
        "line 3: the page says 0.859 for 'score.mean'; a fresh run gives 0.894"
    )
    assert "gives 4" in problems[1]


def test_a_path_the_results_lack_is_reported():
    assert (
        "does not have"
        in check_numbers("p = 0.05<!-- = control.p_value -->", RESULTS)[0]
    )


def test_skipped_prefixes_are_not_checked():
    assert (
        check_numbers("p = 0.05<!-- = control.p_value -->", RESULTS, skip=("control.",))
        == []
    )


def test_unmarked_numbers_are_left_alone():
    assert check_numbers("19 permutations, 0.859 somewhere", RESULTS) == []
