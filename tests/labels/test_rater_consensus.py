"""Per-case label distribution, consensus rules and ambiguity strata.

The expected values are worked out by hand in the comments; entropy is Shannon's
(1948) in bits.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from foldwall.exceptions import SpecError
from foldwall.labels import ambiguity_strata, label_distribution, rating_table


def test_shares_entropy_and_majority_consensus_by_hand():
    ratings = [
        ["pos", "pos", "pos", "pos"],  # unanimous
        ["pos", "pos", "neg", None],  # 2 of 3
        ["neg", "pos", "neg", "pos"],  # tie -> first class listed
        ["neg", "unsure", "pos", None],  # three labels, no majority
    ]
    table = rating_table(ratings, categories=["neg", "pos", "unsure"])
    d = label_distribution(table)
    assert d.rule == "majority"
    np.testing.assert_allclose(
        d.shares,
        [[0, 1, 0], [1 / 3, 2 / 3, 0], [0.5, 0.5, 0], [1 / 3, 1 / 3, 1 / 3]],
    )
    # H = -sum p log2 p: 0; 0.9183; 1; log2(3) = 1.585
    np.testing.assert_allclose(
        d.entropy,
        [
            0.0,
            -(1 / 3) * math.log2(1 / 3) - (2 / 3) * math.log2(2 / 3),
            1.0,
            math.log2(3),
        ],
    )
    assert d.consensus.tolist() == ["pos", "pos", "neg", "neg"]
    assert d.tied.tolist() == [False, False, True, True]
    np.testing.assert_allclose(d.consensus_share, [1.0, 2 / 3, 0.5, 1 / 3])
    assert d.n_ratings.tolist() == [4, 3, 4, 3]


def test_tie_rule_follows_the_order_of_the_classes():
    ratings = [["a", "b"], ["b", "a"]]
    first_a = label_distribution(rating_table(ratings, categories=["a", "b"]))
    first_b = label_distribution(rating_table(ratings, categories=["b", "a"]))
    assert first_a.consensus.tolist() == ["a", "a"]
    assert first_b.consensus.tolist() == ["b", "b"]


def test_consensus_reads_only_its_own_case():
    # Adding other cases must not change a case's consensus (no leak across folds).
    base = [[0, 1], [1, 1]]
    more = base + [[0, 0]] * 20
    a = label_distribution(rating_table(base, categories=[0, 1]))
    b = label_distribution(rating_table(more, categories=[0, 1]))
    assert a.consensus.tolist() == b.consensus[:2].tolist()


def test_median_for_ordinal_ratings_takes_the_lower_middle_on_a_split():
    grades = ["mild", "moderate", "severe"]
    ratings = [
        ["mild", "severe", "severe", None],  # median severe
        [
            "mild",
            "moderate",
            "severe",
            "severe",
        ],  # middles moderate, severe -> moderate
        ["mild", "mild", "severe", None],  # median mild
        ["moderate", "moderate", None, None],
    ]
    d = label_distribution(rating_table(ratings, scale="ordinal", categories=grades))
    assert d.rule == "median"
    assert d.consensus.tolist() == ["severe", "moderate", "mild", "moderate"]
    assert d.tied.tolist() == [False, True, False, False]
    np.testing.assert_allclose(d.consensus_share, [2 / 3, 1 / 4, 2 / 3, 1.0])


def test_mean_for_interval_ratings_and_spread():
    d = label_distribution(rating_table([[1.0, 3.0], [2.0, None]], scale="interval"))
    assert d.rule == "mean"
    np.testing.assert_allclose(d.consensus.astype(float), [2.0, 2.0])
    np.testing.assert_allclose(d.spread, [1.0, 0.0])


def test_rule_must_fit_the_scale():
    with pytest.raises(SpecError, match=r"consensus 'mean' does not fit nominal"):
        label_distribution([["a", "b"]], rule="mean")
    with pytest.raises(SpecError, match=r"consensus must be 'majority'"):
        label_distribution([["a", "b"]], rule="vote")


def test_strata_by_consensus_share_and_single_ratings_apart():
    ratings = [
        [1, 1, 1, 1],  # share 1
        [1, 1, 1, 0],  # 0.75 -> clear at 0.75
        [1, 1, 0, None],  # 2/3 -> ambiguous at 0.75
        [1, 0, None, None],  # tie 0.5 -> ambiguous
        [0, None, None, None],  # one rating
    ]
    d = label_distribution(rating_table(ratings, categories=[0, 1]))
    s = ambiguity_strata(d, clear_share=0.75)
    assert s.stratum.tolist() == [
        "clear",
        "clear",
        "ambiguous",
        "ambiguous",
        "one rating",
    ]
    assert s.counts() == {"clear": 2, "ambiguous": 2, "one rating": 1}
    assert ambiguity_strata(d, clear_share=0.6).stratum.tolist()[2] == "clear"
    assert "0.75" in s.rule


def test_interval_strata_need_a_spread():
    d = label_distribution(rating_table([[1.0, 3.0], [2.0, 2.5]], scale="interval"))
    with pytest.raises(SpecError, match="clear_spread is needed"):
        ambiguity_strata(d)
    s = ambiguity_strata(d, clear_spread=0.5)
    assert s.stratum.tolist() == ["ambiguous", "clear"]


@pytest.mark.parametrize("bad", [0, 1.5, -0.1, "high", True])
def test_clear_share_out_of_range_is_one_line(bad):
    d = label_distribution([[0, 1], [1, 1]])
    with pytest.raises(SpecError, match="clear_share must") as info:
        ambiguity_strata(d, clear_share=bad)
    assert "\n" not in str(info.value)


def test_summary_is_plain_json():
    import json

    d = label_distribution(rating_table([[0, 1, 1], [1, 1, 1]], categories=[0, 1]))
    out = json.loads(json.dumps(d.summary()))
    assert out["consensus_counts"] == {"0": 0, "1": 2}
    assert out["n_tied"] == 0
