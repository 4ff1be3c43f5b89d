"""Restricted permutation schemes for groups whose outcome varies within the group.

Sources: the schemes are the within-block and whole-block permutations of
Winkler et al. (2015), *Multi-level block permutation*, NeuroImage 123:253-268
(structure from memory, REFERENCES.md section 14). Counts are checked against a
brute-force enumeration of every permutation the scheme allows (itertools), and
the sampler against that enumeration: every reachable label vector, and only
those, with equal frequency (chi-square goodness of fit, scipy). The level rule
``m >= 1/alpha - 1`` follows from the p-value floor 1/(m + 1) of Phipson & Smyth
(2010), REFERENCES.md section 3a.
"""

from __future__ import annotations

import itertools
from collections import Counter

import numpy as np
import pytest
from scipy import stats
from sklearn.model_selection import GroupKFold

from foldwall.controls import (
    GROUP_SCHEMES,
    PERMUTATION_SCHEMES,
    check_permutations_possible,
    count_permutations,
    permutation_pvalue,
    permutations_needed,
    permute_by_scheme,
    permute_whole_groups,
    permute_within_groups,
)
from foldwall.exceptions import DataError, SpecError


@pytest.fixture(params=[0, 7, 42])
def seed(request):
    return request.param


# ------------------------------------------------------------ brute-force enumeration


def _cells_of(n, folds, blocks):
    fold_of = np.zeros(n, int)
    if folds is not None:
        for i, f in enumerate(folds):
            fold_of[np.asarray(f)] = i
    block_of = (
        np.zeros(n, int)
        if blocks is None
        else np.unique(blocks, return_inverse=True)[1]
    )
    return [(int(f), int(b)) for f, b in zip(fold_of, block_of, strict=True)]


def _enumerate(y, scheme, groups=None, folds=None, blocks=None):
    """Every label vector the scheme can produce, by permuting units in each cell."""
    y = np.asarray(y)
    n = y.size
    cell = _cells_of(n, folds, blocks)
    if scheme == "rows":
        units = {}
        for i in range(n):
            units.setdefault(cell[i], []).append([i])
    else:
        g = np.asarray(groups)
        members = {}
        for i in range(n):
            members.setdefault(g[i], []).append(i)
        units = {}
        if scheme == "within-groups":
            for i in range(n):
                units.setdefault((g[i], cell[i]), []).append([i])
        elif scheme == "groups":
            for rows in members.values():
                units.setdefault(cell[rows[0]], []).append(rows)
        else:  # whole-groups: same cell and same size
            for rows in members.values():
                units.setdefault((cell[rows[0]], len(rows)), []).append(rows)
    classes = list(units.values())
    out = set()
    for choice in itertools.product(
        *[itertools.permutations(range(len(c))) for c in classes]
    ):
        vec = y.copy()
        for c, perm in zip(classes, choice, strict=True):
            for dest, src in zip(c, perm, strict=True):
                # "groups": one label per group, so sizes may differ
                vec[dest] = y[c[src][0]] if scheme == "groups" else y[c[src]]
        out.add(tuple(vec.tolist()))
    return out


# Tiny designs: rows of a group not adjacent; labels repeat so that equal labels matter.
TINY = [
    # (y, groups, folds, blocks)
    ([1, 2, 1, 3, 2, 2, 5], [0, 1, 0, 1, 2, 2, 2], None, None),
    ([0, 1, 1, 0, 0, 1, 1, 0], [0, 0, 1, 1, 2, 2, 3, 3], None, None),
    (
        [0, 1, 1, 0, 0, 1, 1, 0],
        [0, 0, 1, 1, 2, 2, 3, 3],
        [[0, 1, 2, 3], [4, 5, 6, 7]],
        None,
    ),
    (
        [1, 2, 3, 4, 5, 6, 7],
        [0, 0, 1, 1, 2, 2, 2],
        None,
        ["s", "s", "s", "s", "t", "t", "t"],
    ),
    ([4, 4, 1, 2, 3, 1, 2, 3], [9, 9, 5, 5, 5, 6, 6, 6], None, None),
]
CONSTANT_GROUPS = [
    ([0, 0, 1, 1, 1, 0, 2], [0, 0, 1, 1, 1, 2, 3], None, None),
    (
        [0, 0, 1, 1, 0, 0, 1, 1],
        [0, 0, 1, 1, 2, 2, 3, 3],
        [[0, 1, 2, 3], [4, 5, 6, 7]],
        None,
    ),
]


@pytest.mark.parametrize("scheme", ["rows", "within-groups", "whole-groups"])
@pytest.mark.parametrize("case", range(len(TINY)))
def test_count_equals_brute_force_enumeration(scheme, case):
    y, groups, folds, blocks = TINY[case]
    expected = len(_enumerate(y, scheme, groups, folds, blocks))
    got = count_permutations(
        y, scheme=scheme, groups=groups, folds=folds, blocks=blocks
    )
    assert got == expected


@pytest.mark.parametrize("case", range(len(CONSTANT_GROUPS)))
def test_count_of_group_scheme_equals_brute_force_enumeration(case):
    y, groups, folds, blocks = CONSTANT_GROUPS[case]
    expected = len(_enumerate(y, "groups", groups, folds, blocks))
    assert (
        count_permutations(
            y, scheme="groups", groups=groups, folds=folds, blocks=blocks
        )
        == expected
    )


@pytest.mark.parametrize(
    ("scheme", "case"),
    [
        ("within-groups", 0),
        ("whole-groups", 1),
        ("whole-groups", 2),
        ("within-groups", 3),
    ],
)
def test_sampler_reaches_exactly_the_enumerated_vectors_uniformly(scheme, case):
    y, groups, folds, blocks = TINY[case]
    allowed = _enumerate(y, scheme, groups, folds, blocks)
    rng = np.random.default_rng(123)
    draws = 400 * len(allowed)
    seen = Counter(
        tuple(
            permute_by_scheme(
                np.array(y),
                scheme=scheme,
                rng=rng,
                groups=groups,
                folds=folds,
                blocks=blocks,
            ).tolist()
        )
        for _ in range(draws)
    )
    assert set(seen) == allowed
    # Uniform over the reachable vectors (chi-square, generous threshold).
    assert stats.chisquare(list(seen.values())).pvalue > 1e-3


def test_whole_groups_matches_rows_by_position_inside_the_group():
    # Group 'a' rows 0 and 2, group 'b' rows 1 and 3: a swap sends a's first label
    # (row 0) to b's first row (row 1) and a's second (row 2) to b's second (row 3).
    y = np.array([10, 20, 11, 21])
    groups = np.array(["a", "b", "a", "b"])
    outs = {
        tuple(
            permute_whole_groups(
                y, rng=np.random.default_rng(s), groups=groups
            ).tolist()
        )
        for s in range(20)
    }
    assert outs == {(10, 20, 11, 21), (20, 10, 21, 11)}


def test_whole_groups_never_swaps_groups_of_different_size(seed):
    rng = np.random.default_rng(seed)
    sizes = rng.integers(2, 5, size=15)
    groups = np.repeat(np.arange(15), sizes)
    y = rng.normal(size=groups.size)
    out = permute_whole_groups(y, rng=rng, groups=groups)
    for g in range(15):
        seq = tuple(out[groups == g])
        same_size = [tuple(y[groups == h]) for h in range(15) if sizes[h] == sizes[g]]
        assert seq in same_size


def test_whole_groups_within_folds_keeps_every_fold_multiset(seed):
    rng = np.random.default_rng(seed)
    groups = np.repeat(np.arange(12), 3)
    y = rng.integers(0, 4, size=groups.size)
    folds = [t for _, t in GroupKFold(3).split(np.zeros((groups.size, 1)), y, groups)]
    out = permute_whole_groups(y, rng=rng, groups=groups, folds=folds)
    for f in folds:
        assert Counter(out[f].tolist()) == Counter(y[f].tolist())


def test_within_groups_keeps_every_group_multiset(seed):
    rng = np.random.default_rng(seed)
    groups = rng.integers(0, 6, size=40)
    y = rng.normal(size=40)
    out = permute_within_groups(y, rng=rng, groups=groups)
    assert not np.array_equal(out, y)
    for g in np.unique(groups):
        assert sorted(out[groups == g]) == sorted(y[groups == g])


def test_schemes_never_modify_their_inputs():
    y = np.array([1.0, 2.0, 3.0, 4.0])
    groups = np.array([0, 0, 1, 1])
    for scheme in GROUP_SCHEMES:
        permute_by_scheme(y, scheme=scheme, rng=np.random.default_rng(0), groups=groups)
    assert y.tolist() == [1.0, 2.0, 3.0, 4.0]


def test_count_is_an_exact_integer_for_large_designs():
    # 100 rows, 50/50: C(100, 50), an exact integer beyond float precision.
    y = np.repeat([0, 1], 50)
    assert count_permutations(y, scheme="rows") == 100891344545564193334812497256


def test_a_group_alone_in_its_size_class_keeps_its_labels():
    y = np.array([1, 2, 3, 4, 5])
    groups = np.array([0, 0, 1, 1, 1])
    assert count_permutations(y, scheme="whole-groups", groups=groups) == 1
    out = permute_whole_groups(y, rng=np.random.default_rng(0), groups=groups)
    assert out.tolist() == y.tolist()


# ----------------------------------------------------------------------- bad input


def test_unknown_scheme_is_refused_with_the_names():
    with pytest.raises(SpecError, match="rows, groups, within-groups, whole-groups"):
        count_permutations([0, 1], scheme="blocks")
    assert PERMUTATION_SCHEMES == ("rows", "groups", "within-groups", "whole-groups")


@pytest.mark.parametrize("scheme", ["groups", "within-groups", "whole-groups"])
def test_group_schemes_need_groups(scheme):
    with pytest.raises(SpecError, match="needs a group column"):
        permute_by_scheme([0, 1, 0, 1], scheme=scheme, rng=np.random.default_rng(0))


def test_whole_groups_refuses_a_group_split_across_folds():
    groups = np.array([0, 0, 1, 1])
    with pytest.raises(DataError, match="group 0 has rows in outer test folds 0 and 1"):
        permute_whole_groups(
            [1, 2, 3, 4],
            rng=np.random.default_rng(0),
            groups=groups,
            folds=[np.array([0, 2]), np.array([1, 3])],
        )


def test_group_scheme_with_varying_labels_still_refused():
    with pytest.raises(DataError, match="not constant within group"):
        count_permutations([0, 1, 0, 0], scheme="groups", groups=[0, 0, 1, 1])


# ------------------------------------------------------------------ level checks


@pytest.mark.parametrize(
    ("alpha", "m"),
    [(0.05, 19), (0.01, 99), (0.1, 9), (0.2, 4), (0.03, 33), (0.001, 999)],
)
def test_permutations_needed_is_the_smallest_m_whose_floor_reaches_alpha(alpha, m):
    assert permutations_needed(alpha) == m
    assert 1 / (m + 1) <= alpha < 1 / m


def test_control_that_cannot_reach_alpha_is_refused_in_one_line():
    check_permutations_possible(
        20, alpha=0.05, scheme="whole-groups"
    )  # 19 besides: enough
    with pytest.raises(SpecError) as info:
        check_permutations_possible(19, alpha=0.05, scheme="whole-groups")
    message = str(info.value)
    assert "\n" not in message
    assert "'whole-groups' allows only 19" in message and "needs at least 19" in message
    assert "rows, groups, within-groups, whole-groups" in message


@pytest.mark.parametrize("bad", [0.0, 1.0, -0.1, "0.05", True])
def test_bad_alpha_is_refused(bad):
    with pytest.raises(
        SpecError, match="alpha must be a number strictly between 0 and 1"
    ):
        permutations_needed(bad)


# --------------------------------------------------- reduced calibration (fast)


def _grouped_null(rng):
    """Between-group association only: within a group, y is exchangeable."""
    groups = np.repeat(np.arange(12), 4)
    u = rng.normal(size=12)
    x = u[groups] + 0.5 * rng.normal(size=groups.size)
    y = u[groups] + rng.normal(size=groups.size)
    return x, y, groups


def _stat(x, y, groups):
    # Within-group association: correlation of the group-centred values.
    xc = x - np.bincount(groups, x)[groups] / np.bincount(groups)[groups]
    yc = y - np.bincount(groups, y)[groups] / np.bincount(groups)[groups]
    return abs(float(np.corrcoef(xc, yc)[0, 1]))


def test_within_groups_control_holds_its_level_where_rows_scheme_does_not():
    # 600 null data sets, m = 19 (reject only at p = 0.05). The statistic looks at
    # raw correlation, which the between-group link inflates: row permutation
    # breaks that link and rejects far too often; within-group permutation keeps it.
    rng = np.random.default_rng(2024)
    hits = {"within-groups": 0, "rows": 0}
    for _ in range(600):
        x, y, groups = _grouped_null(rng)
        observed = abs(float(np.corrcoef(x, y)[0, 1]))
        for scheme in hits:
            null = [
                abs(
                    float(
                        np.corrcoef(
                            x,
                            permute_by_scheme(y, scheme=scheme, rng=rng, groups=groups),
                        )[0, 1]
                    )
                )
                for _ in range(19)
            ]
            hits[scheme] += permutation_pvalue(observed, null) <= 0.05
    # Binomial(600, 0.05): mean 30, 99.9% upper quantile 48.
    assert hits["within-groups"] <= int(stats.binom.ppf(0.999, 600, 0.05))
    assert hits["rows"] > 200


def test_whole_groups_control_holds_its_level_with_structure_inside_groups():
    # Outcome sequence with a subject level and a trend over visits, independent of
    # the subject's features; the statistic is fooled by the trend (feature = visit
    # number + noise), which whole-group swaps keep and row permutation destroys.
    rng = np.random.default_rng(7)
    hits = {"whole-groups": 0, "rows": 0}
    groups = np.repeat(np.arange(12), 4)
    visit = np.tile(np.arange(4.0), 12)
    for _ in range(600):
        x = visit + rng.normal(size=groups.size)
        y = rng.normal(size=12)[groups] + 0.5 * visit + rng.normal(size=groups.size)
        observed = float(np.corrcoef(x, y)[0, 1])
        for scheme in hits:
            null = [
                float(
                    np.corrcoef(
                        x, permute_by_scheme(y, scheme=scheme, rng=rng, groups=groups)
                    )[0, 1]
                )
                for _ in range(19)
            ]
            hits[scheme] += permutation_pvalue(observed, null) <= 0.05
    assert hits["whole-groups"] <= int(stats.binom.ppf(0.999, 600, 0.05))
    assert hits["rows"] > 300


def test_budget_messages_warn_when_m_cannot_reach_alpha():
    from foldwall.controls import control_budget_messages

    assert control_budget_messages(19, alpha=0.05) == []
    assert control_budget_messages(0, alpha=0.05) == []  # no control, nothing to say
    (msg,) = control_budget_messages(18, alpha=0.05)
    assert msg == (
        "control.permutations = 18 cannot reach alpha = 0.05: the smallest "
        "possible p-value is 1/19 = 0.053; use at least 19 permutations."
    )
    assert control_budget_messages(98, alpha=0.01)[0].startswith(
        "control.permutations = 98"
    )


def test_budget_messages_suggest_stopping_early_for_very_large_plans():
    from foldwall.controls import control_budget_messages

    (msg,) = control_budget_messages(1000, alpha=0.05, n_fits=3_000_000)
    assert "about 3,000,000 models" in msg and "stop_early" in msg
    (msg,) = control_budget_messages(
        1000, alpha=0.05, n_fits=3_000_000, stop_early=True
    )
    assert "stop_early" not in msg
    assert control_budget_messages(1000, alpha=0.05, n_fits=1000) == []
