"""Sentences that match the power, the relevant size and degenerate cases (issue 10).

The rules checked are the project's (issue 10 of the tracker): a result that is
not below alpha reads "could not detect a difference" with the interval and the
detectable size, never as evidence of no difference; a comparison that cannot be
assessed makes no claim; with a smallest relevant difference the sentence says
whether a difference is smaller than it (two one-sided tests, Schuirmann 1987);
direction words come from the caller. The wording is the project's own.
"""

from __future__ import annotations

import math
import re

import numpy as np
import pytest

from foldwall.compare import comparison_statement
from foldwall.exceptions import SpecError

FORBIDDEN = re.compile(
    r"outperform|better|superior|significant|beats?\b|wins?\b|proves?|worse|inferior",
    re.IGNORECASE,
)
CLAIM = re.compile(r"(scored|had) (higher|lower)\b.* than")
BASE = {
    "a": "model_a",
    "b": "model_b",
    "metric": "roc_auc",
    "correction": "holm",
    "family_size": 3,
    "alpha": 0.05,
}


def make(mean, ci, p, **kw):
    return comparison_statement(
        mean_difference=mean, ci=ci, p_adjusted=p, **{**BASE, **kw}
    )


def test_underpowered_result_says_could_not_detect_with_the_detectable_size():
    # The case of the issue: +0.15 AUC, interval -0.05 to 0.35.
    text = make(0.15, (-0.05, 0.35), 0.13, detectable_difference=0.28)
    assert text == (
        "model_a minus model_b on roc_auc: mean difference 0.150 (95% CI -0.050 to "
        "0.350); adjusted p = 0.13 (Holm, 3 comparisons): this study could not detect "
        "a difference between model_a and model_b; with the spread seen here it would "
        "detect a difference of 0.280 or more with 80% power."
    )
    assert "no reliable difference" not in text


def test_zero_spread_makes_no_claim_even_with_p_zero():
    reason = (
        "cannot be assessed: every split shows the same difference (0.05), so "
        "there is no spread to measure its uncertainty; use more folds or repeats"
    )
    for p in (math.nan, 0.0):
        text = make(0.05, (0.05, 0.05), p, reason=reason)
        assert CLAIM.search(text) is None
        assert text == (
            "model_a minus model_b on roc_auc: the difference "
            + reason
            + "; this study makes no claim about a difference between model_a and model_b."
        )


def test_significant_but_smaller_than_the_relevant_size():
    text = make(
        0.002, (0.001, 0.003), 0.001, smallest_difference=0.02, equivalence_p=0.0001
    )
    assert text.startswith("model_a scored higher than model_b on roc_auc by 0.0020")
    assert text.endswith(
        "; it is smaller than the smallest relevant difference of 0.0200 (equivalence "
        "test p < 0.001), so it may not matter in practice."
    )


def test_significant_and_beyond_the_relevant_size():
    text = make(0.1, (0.05, 0.15), 0.001, smallest_difference=0.02, equivalence_p=0.99)
    assert CLAIM.search(text)
    assert text.endswith(
        "; the whole interval lies beyond the smallest relevant difference of 0.020."
    )


def test_significant_with_the_interval_spanning_the_relevant_size():
    text = make(
        -0.04, (-0.07, -0.01), 0.01, smallest_difference=0.02, equivalence_p=0.6
    )
    assert "scored lower than model_b" in text
    assert text.endswith(
        "; whether it reaches the smallest relevant difference of 0.020 is not settled."
    )


def test_equivalence_is_reported_when_shown():
    text = make(
        0.001,
        (-0.004, 0.006),
        0.6,
        smallest_difference=0.02,
        equivalence_p=0.001,
        detectable_difference=0.009,
    )
    assert CLAIM.search(text) is None
    assert text.endswith(
        "; model_a and model_b are equivalent within +/-0.0200 (two one-sided tests, "
        "p = 0.001): any difference is smaller than the smallest relevant difference."
    )


def test_neither_difference_nor_equivalence_shown():
    text = make(
        0.01,
        (-0.03, 0.05),
        0.5,
        smallest_difference=0.02,
        equivalence_p=0.3,
        detectable_difference=0.06,
    )
    assert "could not detect a difference" in text
    assert text.endswith(
        "with 80% power, and it does not show that any difference is smaller than "
        "0.020 (equivalence test p = 0.3)."
    )


def test_direction_words_from_the_caller():
    words = ("lower mean absolute error", "higher mean absolute error")
    up = make(
        0.3,
        (0.1, 0.5),
        0.01,
        metric="neg_mean_absolute_error",
        direction_words=words,
        greater_is_better=True,
    )
    assert up.startswith(
        "model_a had lower mean absolute error than model_b by 0.300 (95% CI "
        "0.100 to 0.500); "
    )
    assert "neg_mean_absolute_error" not in up
    down = make(
        -0.3,
        (-0.5, -0.1),
        0.01,
        metric="neg_mean_absolute_error",
        direction_words=words,
    )
    assert down.startswith(
        "model_a had higher mean absolute error than model_b by 0.300"
    )


@pytest.fixture(params=[0, 7, 42])
def seed(request):
    return request.param


def test_no_sentence_claims_more_than_its_numbers(seed):
    rng = np.random.default_rng(seed)
    for _ in range(400):
        mean = float(rng.normal(0, 0.05))
        half = float(rng.uniform(0.001, 0.08))
        ci = (mean - half, mean + half)
        p = float(rng.choice([rng.uniform(0, 0.1), rng.uniform(0, 1), 0.0]))
        delta = float(rng.uniform(0.005, 0.05))
        eq_p = float(rng.uniform(0, 0.2))
        reason = "cannot be assessed: no spread" if rng.random() < 0.1 else None
        text = make(
            mean,
            ci,
            p,
            detectable_difference=float(rng.uniform(0.01, 0.2)),
            smallest_difference=delta,
            equivalence_p=eq_p,
            reason=reason,
            direction_words=("higher ROC AUC", "lower ROC AUC"),
        )
        claimed = CLAIM.search(text) is not None
        allowed = (
            reason is None
            and p < 0.05
            and ((mean > 0 and ci[0] > 0) or (mean < 0 and ci[1] < 0))
        )
        assert claimed == allowed, text
        assert FORBIDDEN.search(text) is None, text
        assert "no reliable difference" not in text
        assert text.endswith(".") and re.search(r"\.\s+[A-Z]", text) is None, text
        if "equivalent within" in text:
            assert eq_p < 0.05 and not claimed


@pytest.mark.parametrize(
    ("kw", "match"),
    [
        ({"equivalence_p": 0.01}, "equivalence_p needs smallest_difference"),
        ({"smallest_difference": 0.0}, "smallest_difference must be a positive number"),
        ({"direction_words": "higher"}, "direction_words must be a pair"),
        (
            {"direction_words": ("higher", "")},
            r"direction_words\[1\] must be a non-empty string",
        ),
        ({"power": 1.5}, "power must lie strictly between 0 and 1"),
        ({"reason": ""}, "reason must be a non-empty string"),
    ],
)
def test_new_arguments_are_validated(kw, match):
    with pytest.raises(SpecError, match=match):
        make(0.01, (-0.01, 0.03), 0.4, **kw)
