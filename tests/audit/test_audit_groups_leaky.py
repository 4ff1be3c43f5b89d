"""Hidden groups (id-like columns, tight clusters) and leaky columns."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sklearn.model_selection import KFold, StratifiedKFold
from sklearn.preprocessing import MinMaxScaler, StandardScaler

from foldwall.audit import (
    id_column_checks,
    id_like_name,
    leaky_column_checks,
    single_column_scores,
    tight_cluster_check,
)


def _classification(seed=0, n=240, p=15):
    rng = np.random.default_rng(seed)
    X = pd.DataFrame(rng.normal(size=(n, p)), columns=[f"m{j}" for j in range(p)])
    y = (X["m0"] + X["m1"] + rng.normal(size=n) > 0).astype(int).to_numpy()
    splits = list(StratifiedKFold(5, shuffle=True, random_state=0).split(X, y))
    return X, y, splits, rng


def _by_check(checks):
    return {c.check: c for c in checks}


@pytest.mark.parametrize(
    "name, expected",
    [
        ("PatientID", True),
        ("subject_no", True),
        ("record", True),
        ("case_id", True),
        ("valid", False),
        ("bmi", False),
        ("idea_score", False),
    ],
)
def test_id_like_names_are_whole_words(name, expected):
    assert id_like_name(name) is expected


def test_an_id_column_left_among_the_features_is_a_problem():
    X, _, _, _ = _classification()
    X["participant"] = np.repeat(np.arange(120), 2)  # two rows per participant
    (c,) = id_column_checks(X)
    assert c.severity == "problem"
    (col,) = c.evidence["columns"]
    assert col["column"] == "participant"
    assert col["repeated_values"] == 120
    assert "data.groups" in c.advice


def test_nearly_unique_codes_are_id_like_by_value():
    X, _, _, _ = _classification()
    codes = np.arange(1000, 1240).astype(str)
    codes[5] = codes[4]  # one repeat
    X["code"] = codes
    (c,) = id_column_checks(X)
    assert [f["column"] for f in c.evidence["columns"]] == ["code"]
    assert c.evidence["columns"][0]["why"] == "nearly unique values"


def test_repeated_visits_cluster_tightly_and_declared_groups_explain_them():
    rng = np.random.default_rng(5)
    subjects = rng.normal(size=(50, 20))
    X = np.repeat(subjects, 4, axis=0) + 0.2 * rng.normal(size=(200, 20))
    groups = np.repeat(np.arange(50), 4)
    c = tight_cluster_check(X)
    assert c.severity == "warning"
    assert c.evidence["share_in_tight_clusters"] > 0.5
    assert tight_cluster_check(X, groups=groups).severity == "info"


def test_independent_rows_do_not_cluster():
    X, _, _, _ = _classification(1)
    assert tight_cluster_check(X).severity == "info"


def test_a_planted_leaky_column_is_found_with_its_in_fold_score():
    X, y, splits, rng = _classification(2)
    flip = rng.random(len(y)) < 0.005
    X["discharge_code"] = np.where(flip, 1 - y, y) * 3.0 + rng.normal(0, 0.1, len(y))
    checks = _by_check(leaky_column_checks(X, y, splits=splits))
    c = checks["single_column"]
    assert c.severity == "problem"
    assert c.evidence["flagged"][0]["column"] == "discharge_code"
    assert c.evidence["flagged"][0]["score"] >= 0.98
    # the honest columns score far lower (m0 and m1 each carry part of the signal)
    assert all(b["score"] < 0.9 for b in c.evidence["best"][1:])


def test_single_column_scores_are_fitted_inside_the_folds():
    # A column equal to the row's position in its own test fold, sorted by y,
    # would be perfect if bins were cut on all rows; here the score must be
    # computed from training rows only, so pure noise scores about chance.
    rng = np.random.default_rng(0)
    X = pd.DataFrame({"noise": rng.normal(size=400)})
    y = rng.integers(0, 2, 400)
    splits = list(StratifiedKFold(5, shuffle=True, random_state=0).split(X, y))
    s = single_column_scores(X, y, splits)
    assert 0.4 < s["noise"] < 0.6


def test_leaky_column_in_a_regression():
    rng = np.random.default_rng(3)
    X = pd.DataFrame(rng.normal(size=(200, 8)), columns=[f"v{j}" for j in range(8)])
    y = X["v0"].to_numpy() + rng.normal(size=200)
    X["outcome_copy"] = np.exp(y / 4)  # a function of the outcome
    splits = list(KFold(5, shuffle=True, random_state=0).split(X))
    checks = _by_check(leaky_column_checks(X, y, splits=splits))
    assert checks["single_column"].evidence["flagged"][0]["column"] == "outcome_copy"
    assert checks["single_column"].severity == "problem"
    f = checks["outcome_function"]
    assert f.severity == "problem"
    assert f.evidence["columns"] == [
        {"column": "outcome_copy", "how": "strictly monotone in the outcome"}
    ]


def test_a_class_label_recoded_as_a_column_is_a_function_of_the_outcome():
    X, y, splits, _ = _classification(4)
    X["group_code"] = np.where(y == 1, "B", "A")
    f = _by_check(leaky_column_checks(X, y, splits=splits))["outcome_function"]
    assert f.severity == "problem"
    assert f.evidence["columns"][0]["column"] == "group_code"


@pytest.mark.parametrize("scaler", [StandardScaler(), MinMaxScaler()])
def test_a_table_scaled_before_splitting_is_flagged(scaler):
    X, y, splits, _ = _classification(5)
    raw = X * 7.0 + 3.0
    scaled = pd.DataFrame(scaler.fit_transform(raw), columns=X.columns)
    c = _by_check(leaky_column_checks(scaled, y, splits=splits))["scaled_before_split"]
    assert c.severity == "warning"
    found = c.evidence["standardised"] + c.evidence["min_max"]
    assert sorted(found) == sorted(X.columns)
    # the raw table is not flagged
    c_raw = _by_check(leaky_column_checks(raw, y, splits=splits))["scaled_before_split"]
    assert c_raw.severity == "info"


def test_standardised_values_rounded_for_a_csv_file_are_still_found():
    X, y, splits, _ = _classification(6)
    scaled = pd.DataFrame(StandardScaler().fit_transform(X * 3 + 1), columns=X.columns)
    rounded = scaled.round(6)
    c = _by_check(leaky_column_checks(rounded, y, splits=splits))["scaled_before_split"]
    assert len(c.evidence["standardised"]) == X.shape[1]


def test_a_row_number_among_the_features_is_unique_per_row():
    X, y, splits, _ = _classification(7)
    X["row_no"] = np.arange(1, len(X) + 1)
    X["income"] = np.random.default_rng(0).permutation(
        np.arange(10_000, 10_000 + 5 * len(X), 5)
    )
    c = _by_check(leaky_column_checks(X, y, splits=splits))["unique_columns"]
    assert c.severity == "problem"
    kinds = {u["column"]: u["kind"] for u in c.evidence["columns"]}
    assert kinds == {"row_no": "row number", "income": "whole numbers"}


def test_low_dimensional_tables_do_not_look_clustered():
    # Nearest neighbours are naturally close when rows fill few dimensions; the
    # audit judges closeness against the table's own intrinsic dimension.
    from sklearn.datasets import make_classification

    rng = np.random.default_rng(8)
    X3 = rng.normal(size=(300, 5))
    X3[:, 3:] = X3[:, :2] @ rng.normal(size=(2, 2))  # rows fill 3 of 5 dimensions
    assert tight_cluster_check(X3).severity == "info"
    Xc, _ = make_classification(n_samples=90, n_features=6, random_state=4)
    assert tight_cluster_check(Xc).severity == "info"
