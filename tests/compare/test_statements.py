"""The comparison sentence never says more than its numbers allow.

The decision rule under test is the project's (design brief for
foldwall.compare): a direction may be stated only when the adjusted p-value is
below alpha AND the interval excludes zero on the side of the mean difference.
The exact sentences checked below are the wording of that brief, not of an
outside source.
"""

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
CLAIM = re.compile(r"scored (higher|lower) than")

BASE = {
    "a": "model_a",
    "b": "model_b",
    "metric": "roc_auc",
    "correction": "holm",
    "family_size": 3,
}


def make(mean, ci, p, alpha=0.05, **overrides):
    kwargs = {**BASE, **overrides}
    return comparison_statement(
        mean_difference=mean, ci=ci, p_adjusted=p, alpha=alpha, **kwargs
    )


def _is_one_sentence(text):
    # Ends with a full stop and has no full stop followed by a new sentence.
    return text.endswith(".") and re.search(r"\.\s+[A-Z]", text) is None


# (mean, ci, p_adjusted, alpha, claim expected)
ROWS = [
    (0.042, (0.011, 0.073), 0.012, 0.05, True),  # both agree, positive
    (-0.042, (-0.073, -0.011), 0.012, 0.05, True),  # both agree, negative
    (0.012, (-0.020, 0.044), 0.41, 0.05, False),  # both say no
    (0.012, (-0.020, 0.044), 0.01, 0.05, False),  # p below, CI has zero
    (0.012, (0.002, 0.044), 0.20, 0.05, False),  # CI excludes zero, p not below
    (0.03, (0.0, 0.06), 0.01, 0.05, False),  # CI touches zero: not excluded
    (-0.03, (-0.06, 0.0), 0.01, 0.05, False),  # CI touches zero from below
    (0.03, (0.01, 0.05), 0.05, 0.05, False),  # p equal to alpha: not below
    (0.03, (0.01, 0.05), 0.0499, 0.05, True),  # just below alpha
    (0.03, (0.01, 0.05), 0.02, 0.01, False),  # stricter alpha
    (0.0, (-0.01, 0.01), 0.9, 0.05, False),  # nothing at all
    (0.0, (0.01, 0.02), 0.001, 0.05, False),  # zero mean never claims
    (0.03, (-0.05, -0.01), 0.001, 0.05, False),  # CI on the other side of the mean
    (-0.03, (0.01, 0.05), 0.001, 0.05, False),  # same, mirrored
    (0.5, (0.4, 0.6), 0.0, 0.05, True),  # p exactly 0
    (0.5, (0.4, 0.6), 1e-9, 0.05, True),  # p printed as "< 0.001"
    (0.0004, (0.0001, 0.0007), 0.003, 0.05, True),  # tiny effect, tiny numbers
    (12.5, (3.1, 21.9), 0.02, 0.05, True),  # large-scale metric (e.g. RMSE)
    (0.03, (0.01, 0.05), math.nan, 0.05, False),  # not testable
    (math.nan, (0.01, 0.05), 0.01, 0.05, False),  # mean missing
    (0.03, (math.nan, math.nan), 0.01, 0.05, False),  # interval missing
    (0.03, (-math.inf, math.inf), 0.01, 0.05, False),  # unbounded interval
]


@pytest.mark.parametrize("greater_is_better", [True, False])
@pytest.mark.parametrize("family_size", [1, 3])
@pytest.mark.parametrize("correction", ["holm", "bonferroni", "bh", "none"])
@pytest.mark.parametrize(("mean", "ci", "p", "alpha", "claim"), ROWS)
def test_claim_appears_only_when_p_and_interval_agree(
    mean, ci, p, alpha, claim, correction, family_size, greater_is_better
):
    text = make(
        mean,
        ci,
        p,
        alpha,
        correction=correction,
        family_size=family_size,
        greater_is_better=greater_is_better,
    )
    assert bool(CLAIM.search(text)) is claim, text
    assert FORBIDDEN.search(text) is None, text
    assert _is_one_sentence(text), text
    if not claim:
        assert ("no reliable difference" in text) or ("makes no claim" in text), text
    if claim:
        direction = "higher" if mean > 0 else "lower"
        assert f"model_a scored {direction} than model_b on roc_auc" in text


@pytest.mark.parametrize("seed", range(5))
def test_claim_rule_on_random_rows(seed):
    rng = np.random.default_rng(seed)
    for _ in range(200):
        mean = float(rng.normal(0, 0.05))
        half = float(rng.uniform(0, 0.08))
        shift = float(rng.normal(0, 0.01))  # intervals not always centred
        lo, hi = mean - half + shift, mean + half + shift
        p = float(rng.uniform(0, 0.2))
        alpha = float(rng.choice([0.01, 0.05, 0.1]))
        text = make(mean, (lo, hi), p, alpha)
        allowed = p < alpha and ((mean > 0 and lo > 0) or (mean < 0 and hi < 0))
        assert bool(CLAIM.search(text)) is allowed, text
        assert FORBIDDEN.search(text) is None, text


def test_claim_sentence_wording():
    text = make(0.042, (0.011, 0.073), 0.012)
    assert text == (
        "model_a scored higher than model_b on roc_auc by 0.042 (95% CI 0.011 to "
        "0.073); the difference holds after Holm correction over 3 comparisons "
        "(adjusted p = 0.012)."
    )


def test_no_difference_sentence_wording():
    text = make(0.012, (-0.020, 0.044), 0.41)
    assert text == (
        "model_a minus model_b on roc_auc: mean difference 0.012 (95% CI -0.020 to "
        "0.044); adjusted p = 0.41 (Holm, 3 comparisons): this study shows no "
        "reliable difference between model_a and model_b."
    )


def test_disagreeing_criteria_are_called_inconclusive():
    text = make(0.012, (-0.020, 0.044), 0.01)
    assert "inconclusive" in text and "includes zero" in text
    text = make(0.012, (0.002, 0.044), 0.20)
    assert "inconclusive" in text and "not below 0.05" in text


def test_negative_claim_reports_size_with_matching_interval():
    text = make(-0.042, (-0.073, -0.011), 0.012)
    expected = "scored lower than model_b on roc_auc by 0.042 (95% CI 0.011 to 0.073)"
    assert expected in text


def test_lower_is_better_metric_is_flagged_only_when_claimed():
    claimed = make(
        -0.042, (-0.073, -0.011), 0.012, metric="log_loss", greater_is_better=False
    )
    assert "scored lower than" in claimed
    assert "lower is preferred for this metric" in claimed
    # Numbers are reported as they are: a higher log loss is "scored higher".
    claimed_up = make(
        0.042, (0.011, 0.073), 0.012, metric="log_loss", greater_is_better=False
    )
    assert "scored higher than" in claimed_up
    assert "lower is preferred for this metric" in claimed_up
    unclaimed = make(
        -0.01, (-0.04, 0.02), 0.5, metric="log_loss", greater_is_better=False
    )
    assert "preferred" not in unclaimed


@pytest.mark.parametrize(
    ("p", "expected"),
    [
        (1e-9, "adjusted p < 0.001"),
        (0.0, "adjusted p < 0.001"),
        (0.0005, "adjusted p < 0.001"),
        (0.001, "adjusted p = 0.001"),
        (0.00123, "adjusted p = 0.0012"),
        (0.41, "adjusted p = 0.41"),
        (0.4149, "adjusted p = 0.41"),
        (1.0, "adjusted p = 1"),
        # Two significant digits would print 0.05 next to a claim; keep the digit
        # that shows which side of alpha the value is on.
        (0.0496, "adjusted p = 0.0496"),
        (0.04999, "adjusted p = 0.04999"),
        # 0.05 is not below alpha = 0.05, like 0.0504 itself: two digits suffice.
        (0.0504, "adjusted p = 0.05 "),
    ],
)
def test_p_value_formatting(p, expected):
    ci = (0.01, 0.05) if p < 0.05 else (-0.01, 0.05)
    assert expected in make(0.03, ci, p)


def test_small_numbers_keep_two_significant_digits():
    text = make(0.0004, (0.0001, 0.0007), 0.003)
    assert "by 0.00040 (95% CI 0.00010 to 0.00070)" in text


def test_no_negative_zero_in_output():
    text = make(-0.0001, (-0.02, 0.02), 0.9)
    assert "-0.000 " not in text and "mean difference 0.000 " in text


def test_single_comparison_and_uncorrected_wording():
    one = make(0.042, (0.011, 0.073), 0.012, family_size=1)
    assert "single comparison (p = 0.012)" in one
    raw = make(0.012, (-0.02, 0.044), 0.41, correction="none")
    assert "p = 0.41 (not corrected for 3 comparisons)" in raw


def test_confidence_label_follows_the_interval():
    assert "(90% CI" in make(0.042, (0.011, 0.073), 0.012, confidence=0.9)


@pytest.mark.parametrize(
    ("overrides", "match"),
    [
        ({"alpha": 0.0}, "alpha must lie strictly between 0 and 1"),
        ({"alpha": 1.0}, "alpha must lie strictly between 0 and 1"),
        ({"p": 1.5}, r"p_adjusted must lie in \[0, 1\]"),
        ({"p": -0.1}, r"p_adjusted must lie in \[0, 1\]"),
        ({"ci": (0.05, 0.01)}, "lower <= upper"),
        ({"ci": (0.05,)}, "pair"),
        ({"family_size": 0}, "family_size must be an integer >= 1"),
        ({"family_size": 2.5}, "family_size must be an integer >= 1"),
        ({"a": ""}, "a must be a non-empty string"),
        ({"mean": "0.1"}, "mean_difference must be a number"),
    ],
)
def test_invalid_arguments_raise_spec_error(overrides, match):
    args = {"mean": 0.03, "ci": (0.01, 0.05), "p": 0.01, "alpha": 0.05}
    extra = {k: v for k, v in overrides.items() if k not in args}
    args.update({k: v for k, v in overrides.items() if k in args})
    with pytest.raises(SpecError, match=match):
        make(args["mean"], args["ci"], args["p"], args["alpha"], **extra)
