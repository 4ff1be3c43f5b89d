"""The group permutation schemes inside a whole run (issue 10).

Grouped designs whose outcome varies within the group (repeated visits with a
per-visit outcome, grouped regression) keep a valid control: labels are shuffled
within groups, or whole groups of equal size swap their label sequences (Winkler et
al. 2015, within-block and whole-block permutation; REFERENCES.md section 14). The
plan counts the arrangements a scheme allows and refuses one that cannot reach
alpha; the floor 1/(m + 1) is Phipson & Smyth (2010), REFERENCES.md section 3a.
"""

from __future__ import annotations

from collections import Counter

import numpy as np
import pytest
from sklearn.linear_model import Ridge
from sklearn.model_selection import GroupKFold

import foldwall
from foldwall.exceptions import ControlWarning, SpecError


def _visits(n_groups=12, size=4, seed=0):
    rng = np.random.default_rng(seed)
    groups = np.repeat(np.arange(n_groups), size)
    X = rng.normal(size=(groups.size, 3))
    y = rng.normal(size=n_groups)[groups] + 0.5 * X[:, 0] + rng.normal(size=groups.size)
    return X, y, groups


def _spy(monkeypatch):
    from foldwall.runners import _control

    seen = []
    real = _control.permute_for

    def spy(plan, data, p, scheme):
        out = real(plan, data, p, scheme)
        seen.append(out)
        return out

    monkeypatch.setattr(_control, "permute_for", spy)
    return seen


def _study(scheme, m=19):
    return foldwall.wrap(
        Ridge(),
        metric="r2",
        outer=GroupKFold(3),
        inner=GroupKFold(2),
        n_permutations=m,
        permutation_scheme=scheme,
    )


def test_within_groups_run_keeps_every_group_multiset(monkeypatch):
    X, y, groups = _visits()
    seen = _spy(monkeypatch)
    study = _study("within-groups")
    plan = study.plan(X, y, groups)
    assert plan.permutations_possible == 24**12  # 4! orders in each of 12 groups
    shown = plan.to_dict()["permutations"]
    assert shown["possible"] is None  # above 10^12: shown as a power of ten
    assert shown["possible_log10"] == pytest.approx(12 * np.log10(24), abs=0.01)
    res = study.run(X, y, groups)
    assert len(seen) == 19
    for yp in seen:
        for g in np.unique(groups):
            assert sorted(yp[groups == g]) == sorted(y[groups == g])
    assert 1 / 20 <= res.control["p_value"] <= 1
    assert res.control["scheme"] == "within-groups"


def test_whole_groups_run_swaps_sequences_within_folds(monkeypatch):
    X, y, groups = _visits(seed=1)
    seen = _spy(monkeypatch)
    study = _study("whole-groups")
    plan = study.plan(X, y, groups)
    # 3 folds of 4 groups of equal size, all sequences distinct: (4!)^3 arrangements
    assert plan.to_dict()["permutations"]["possible"] == 24**3
    study.run(X, y, groups)
    folds = [f.test for f in plan.folds]
    sequences = {g: tuple(y[groups == g]) for g in np.unique(groups)}
    for yp in seen:
        for fold in folds:
            assert Counter(yp[fold].tolist()) == Counter(y[fold].tolist())
        for g in np.unique(groups):
            assert tuple(yp[groups == g]) in sequences.values()


def test_scheme_with_too_few_arrangements_is_refused_in_one_line():
    X, y, groups = _visits(n_groups=6, size=4)  # 3 folds x 2 groups: 2^3 = 8 < 20
    with pytest.raises(SpecError) as info:
        _study("whole-groups").plan(X, y, groups)
    msg = str(info.value)
    assert "\n" not in msg
    assert msg.startswith("control.scheme 'whole-groups' allows only 8 distinct label")
    assert "within-groups" in msg


def test_varying_outcome_with_the_group_scheme_names_the_alternatives():
    X, y, groups = _visits()
    with pytest.raises(foldwall.DataError, match="within-groups .* or whole-groups"):
        _study("within-outer").plan(X, y, groups)


def test_group_scheme_needs_groups():
    X, y, _ = _visits()
    with pytest.raises(
        SpecError, match="permutation_scheme: the 'within-groups' scheme"
    ):
        _study("within-groups").plan(X, y)


def test_too_few_permutations_for_alpha_warn_at_plan_time():
    X, y, groups = _visits()
    with pytest.warns(ControlWarning, match="n_permutations = 5 cannot reach alpha"):
        _study("within-groups", m=5).plan(X, y, groups)
