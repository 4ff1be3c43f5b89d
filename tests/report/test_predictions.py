"""predictions.csv alone recomputes the run's numbers (per-fold scores, pooled accuracy, DeLong).

Oracles: scikit-learn's metric functions for the scores, and for DeLong the
two-sample jackknife built from ``sklearn.metrics.roc_auc_score`` only, which
equals the DeLong (co)variance exactly (REFERENCES.md section 12).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sklearn.metrics import (
    accuracy_score,
    average_precision_score,
    mean_absolute_error,
    roc_auc_score,
)

from foldwall.exceptions import SpecError
from foldwall.records import AuditStamp, UnitRecord
from foldwall.report._predictions import (
    PREDICTION_COLUMNS,
    positive_scores,
    predictions_frame,
    read_predictions,
    write_predictions,
)


def _rec(**kw):
    base = dict(
        unit="p00000-r00-f00-c00",
        perm=0,
        repeat=0,
        fold=0,
        candidate="m",
        role="candidate",
        settings={},
        inner_score=0.5,
        inner_sd=0.0,
        test={},
        train={},
        n_train=2,
        n_test=2,
        audit=AuditStamp(1, 0, 0, "d"),
        fit_seconds=0.0,
        task_seconds=0.0,
    )
    base.update(kw)
    for k in ("test_rows", "predicted", "decision"):
        if base.get(k) is not None:
            base[k] = tuple(base[k])
    return UnitRecord(**base)


def _from_csv(run, tmp_path):
    path = tmp_path / "predictions.csv"
    write_predictions(run.predictions, path)
    return read_predictions(path, task=run.results["data"]["task"])


def _jackknife_delong_z(y: np.ndarray, a: np.ndarray, b: np.ndarray) -> float:
    """z of AUC(a) - AUC(b) with the two-sample jackknife (co)variance (sklearn only)."""
    pos, neg = np.flatnonzero(y == 1), np.flatnonzero(y == 0)

    def aucs(keep):
        return np.array(
            [roc_auc_score(y[keep], a[keep]), roc_auc_score(y[keep], b[keep])]
        )

    full = np.arange(y.size)
    cov = np.zeros((2, 2))
    for group in (pos, neg):
        k = group.size
        loo = np.array([aucs(np.setdiff1d(full, [i])) for i in group])
        dev = loo - loo.mean(axis=0)
        cov += (k - 1) / k * dev.T @ dev
    diff = roc_auc_score(y, a) - roc_auc_score(y, b)
    return float(diff / np.sqrt(cov[0, 0] + cov[1, 1] - 2 * cov[0, 1]))


def test_one_row_per_test_row_per_repeat_and_candidate(classification_run):
    p, r = classification_run.predictions, classification_run.results
    n = r["data"]["n_samples"]
    assert list(p.columns) == [c for c in PREDICTION_COLUMNS if c != "id"]
    for (rep, cand), part in p.groupby(["repeat", "candidate"]):
        assert sorted(part["row"]) == list(range(n)), (rep, cand)
    for f in r["folds"]:
        part = p[(p["repeat"] == f["repeat"]) & (p["fold"] == f["fold"])]
        assert set(part.loc[part["chosen"], "candidate"]) == {f["chosen"]}
        assert part["chosen"].sum() == f["n_test"]
    assert not p.loc[p["role"] != "candidate", "chosen"].any()


def test_per_fold_scores_recompute_from_csv(classification_run, tmp_path):
    r = classification_run.results
    p = _from_csv(classification_run, tmp_path)
    pos = r["data"]["positive_class"]
    for f, score in zip(r["folds"], r["score"]["per_fold"], strict=True):
        part = p[p["chosen"] & (p["repeat"] == f["repeat"]) & (p["fold"] == f["fold"])]
        yb = (part["true"] == pos).astype(int)
        assert roc_auc_score(yb, positive_scores(part, pos)) == pytest.approx(
            score, rel=1e-12
        )
        assert accuracy_score(part["true"], part["predicted"]) == pytest.approx(
            f["test_accuracy"], rel=1e-12
        )


def test_pooled_accuracy_recomputes_from_csv(classification_run, tmp_path):
    r = classification_run.results
    p = _from_csv(classification_run, tmp_path)
    part = p[p["chosen"] & (p["repeat"] == 0)]
    assert len(part) == r["pooled"]["n"]
    assert int((part["true"] == part["predicted"]).sum()) == r["pooled"]["correct"]


def test_delong_statistic_recomputes_from_csv(classification_run, tmp_path):
    r = classification_run.results
    p = _from_csv(classification_run, tmp_path)
    comp = r["comparisons"][0]
    pos = r["data"]["positive_class"]
    a = p[(p["candidate"] == comp["a"]) & (p["repeat"] == 0)].sort_values("row")
    b = p[(p["candidate"] == comp["b"]) & (p["repeat"] == 0)].sort_values("row")
    assert list(a["row"]) == list(b["row"])
    y = (a["true"] == pos).to_numpy().astype(int)
    z = _jackknife_delong_z(y, positive_scores(a, pos), positive_scores(b, pos))
    assert z == pytest.approx(
        comp["conditional_checks"]["delong_pooled"]["z"], rel=1e-9
    )
    assert roc_auc_score(y, positive_scores(a, pos)) == pytest.approx(
        comp["conditional_checks"]["delong_pooled"]["auc_a"], rel=1e-12
    )


def test_positive_class_first_in_sorted_order_is_turned_round(text_label_run, tmp_path):
    # positive class 'no' is the first class in sorted order: decision values are
    # for 'yes' and must be turned round for the positive class.
    r = text_label_run.results
    p = _from_csv(text_label_run, tmp_path)
    assert set(p["decision_for"]) == {"yes"}
    for f, score in zip(r["folds"], r["score"]["per_fold"], strict=True):
        part = p[p["chosen"] & (p["repeat"] == f["repeat"]) & (p["fold"] == f["fold"])]
        yb = (part["true"] == "no").astype(int)
        assert average_precision_score(
            yb, positive_scores(part, "no")
        ) == pytest.approx(score, rel=1e-12)


def test_regression_scores_recompute_from_csv(regression_run, tmp_path):
    r = regression_run.results
    p = _from_csv(regression_run, tmp_path)
    assert p["decision"].isna().all()
    for f, score in zip(r["folds"], r["score"]["per_fold"], strict=True):
        part = p[p["chosen"] & (p["repeat"] == f["repeat"]) & (p["fold"] == f["fold"])]
        assert -mean_absolute_error(part["true"], part["predicted"]) == pytest.approx(
            score, rel=1e-12
        )


def test_ids_sit_beside_row_numbers_and_read_back_as_text():
    units = [
        _rec(
            perm=0,
            repeat=0,
            fold=0,
            candidate="m",
            role="candidate",
            unit="u0",
            test_rows=[2, 0],
            predicted=[1, 0],
            decision=[0.9, 0.2],
        )
    ]
    ids = np.array(["007", "a", "b"])
    df = predictions_frame(
        units, np.array([0, 1, 1]), chosen={(0, 0): "m"}, task="classification", ids=ids
    )
    assert list(df.columns) == list(PREDICTION_COLUMNS)
    assert list(df["row"]) == [0, 2]
    assert list(df["id"]) == ["007", "b"]


def test_ids_keep_leading_zeros_through_csv(tmp_path):
    units = [
        _rec(
            perm=0,
            repeat=0,
            fold=0,
            candidate="m",
            role="candidate",
            unit="u0",
            test_rows=[0, 1],
            predicted=[0, 1],
            decision=None,
        )
    ]
    df = predictions_frame(
        units,
        np.array([0, 1]),
        chosen={(0, 0): "m"},
        task="classification",
        ids=np.array(["007", "010"]),
    )
    write_predictions(df, tmp_path / "p.csv")
    back = read_predictions(tmp_path / "p.csv", task="classification")
    assert list(back["id"]) == ["007", "010"]
    assert back["decision"].isna().all()
    assert positive_scores(back, "1") is None


def test_permuted_units_are_left_out():
    units = [
        _rec(
            perm=3,
            repeat=0,
            fold=0,
            candidate="m",
            role="candidate",
            test_rows=[0],
            predicted=[0],
            decision=None,
        )
    ]
    df = predictions_frame(units, np.array([0, 1]), chosen={}, task="classification")
    assert df.empty and "row" in df.columns


def test_a_unit_without_predictions_is_refused():
    units = [
        _rec(
            perm=0,
            repeat=0,
            fold=1,
            candidate="m",
            role="candidate",
            test_rows=[0],
        )
    ]
    with pytest.raises(SpecError, match="candidate 'm', repeat 0, outer fold 1"):
        predictions_frame(units, np.array([0, 1]), chosen={}, task="classification")


def test_decision_function_values_are_negated_for_the_other_class():
    df = pd.DataFrame(
        {
            "decision": [1.5, -0.5],
            "decision_for": ["b", "b"],
            "decision_kind": ["decision_function"] * 2,
        }
    )
    assert list(positive_scores(df, "a")) == [-1.5, 0.5]
    assert list(positive_scores(df, "b")) == [1.5, -0.5]
