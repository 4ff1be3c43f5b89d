"""A study with a sealed hold-out: development rows only, proved by the row audit (issue 14)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sklearn.base import BaseEstimator, TransformerMixin
from sklearn.linear_model import LogisticRegression
from sklearn.pipeline import make_pipeline
from statsmodels.stats.multitest import multipletests

import foldwall
from foldwall import LeakageError, SpecError
from foldwall.report import print_summary

SEEN_IDS: set[int] = set()


class IdSpy(TransformerMixin, BaseEstimator):
    """Records the row ids (column 0) every fit is given, and drops the id column."""

    def fit(self, X, y=None):
        SEEN_IDS.update(int(v) for v in np.asarray(X)[:, 0])
        return self

    def transform(self, X):
        return np.asarray(X)[:, 1:]


def _data(n=48, seed=0):
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n, 4))
    y = (X[:, 0] + 0.5 * rng.normal(size=n) > 0).astype(int)
    return np.column_stack([np.arange(n), X]), y


def _study(**kw):
    pipe = make_pipeline(IdSpy(), LogisticRegression())
    return foldwall.wrap(
        pipe, {"logisticregression__C": [0.1, 1.0]}, outer=3, inner=2, **kw
    )


def test_no_fit_sees_a_sealed_row_and_the_audit_says_so():
    X, y = _data()
    SEEN_IDS.clear()
    result = _study(holdout={"fraction": 0.25}, n_permutations=3).run(X, y)
    sealed = result.data["holdout"]
    assert sealed["rows"] == {"development": 36, "holdout": 12}
    assert result.data["data"]["n_samples"] == 36
    # the spy saw development rows only (real labels and permutations)
    assert len(SEEN_IDS) == 36
    audit = result.data["audit"]
    assert audit["holdout_rows_seen"] == 0 and audit["holdout_rows_checked"] == 12
    # and the sealed rows are exactly the ids the spy never saw
    held = sorted(set(range(48)) - SEEN_IDS)
    assert len(held) == 12
    assert sealed["classes"]["holdout"] == {
        str(k): int(v)
        for k, v in zip(*np.unique(y[held], return_counts=True), strict=True)
    }
    assert "score" in sealed and "never" in sealed["score"]


def test_a_leak_injected_on_purpose_fails_loudly(monkeypatch):
    import foldwall.study._study as study_module

    real_seal = study_module.seal

    def leaky_seal(data, split, key):
        dev, _ = real_seal(data, split, key)
        data.holdout = dev.holdout  # the record says "sealed", but every row stays
        return data, None

    monkeypatch.setattr(study_module, "seal", leaky_seal)
    X, y = _data()
    with pytest.raises(LeakageError, match=r"sealed hold-out row\(s\) reached a fit"):
        _study(holdout={"fraction": 0.25}).run(X, y)


def test_mask_from_python_and_groups_are_never_split():
    X, y = _data(n=60)
    groups = np.repeat(np.arange(20), 3)
    y = np.repeat(np.array([0, 1] * 10), 3)
    result = _study(holdout={"fraction": 0.3}).run(X, y, groups)
    d = result.data["holdout"]
    assert d["grouped"] is True
    assert d["groups"]["development"] + d["groups"]["holdout"] == 20
    mask = np.zeros(60, dtype=bool)
    mask[:9] = True
    r2 = _study().run(X, y, groups, holdout=mask)
    assert r2.data["holdout"]["rows"]["holdout"] == 9
    bad = mask.copy()
    bad[9] = True  # the first row of group 3 only
    with pytest.raises(foldwall.DataError, match="group '3' has rows on both sides"):
        _study().run(X, y, groups, holdout=bad)


def test_marking_column_of_a_dataframe_is_never_a_feature():
    X, y = _data()
    frame = pd.DataFrame(X, columns=["id", "a", "b", "c", "d"])
    frame["sealed"] = np.arange(48) % 6 == 0
    result = _study(holdout={"column": "sealed"}).run(frame, y)
    assert result.data["data"]["n_features"] == 5
    assert result.data["holdout"]["rows"]["holdout"] == 8


@pytest.mark.parametrize(
    ("holdout", "match"),
    [
        (
            {"fraction": 1.5},
            r"argument 'holdout\[\"fraction\"\]': Input should be less than 1",
        ),
        ({"fraction": 0.2, "column": "s"}, "exactly one of holdout.fraction"),
        ({}, "exactly one of holdout.fraction"),
        ({"table": "later.csv"}, "a second table is for study files"),
    ],
)
def test_bad_holdout_arguments_are_one_line_before_any_fit(holdout, match):
    with pytest.raises(SpecError, match=match) as info:
        _study(holdout=holdout)
    assert "\n" not in str(info.value)


def test_each_run_is_appended_and_adjusted_over_the_family(tmp_path, capsys):
    X, y = _data()
    ledger = tmp_path / "wards.ledger.sqlite"
    first = _study(n_permutations=4, ledger=ledger).run(X, y)
    second = _study(n_permutations=4, ledger=ledger, random_state=5).run(X, y)
    assert first.data["ledger"]["studies_before"] == 0
    led = second.data["ledger"]
    assert led["written"] and led["studies_before"] == 1
    ps = [first.control["p_value"], second.control["p_value"]]
    # source: statsmodels.stats.multitest.multipletests(method="holm")
    assert led["control"]["p_adjusted"] == pytest.approx(
        multipletests(ps, method="holm")[1][1]
    )
    assert led["control"]["family_size"] == 2
    # a study run again is not a new attempt
    again = _study(n_permutations=4, ledger=ledger).run(X, y)
    assert again.data["ledger"]["control"]["family_size"] == 2
    print_summary(second)
    out = capsys.readouterr().out
    assert "1 other study was run on this table before this one" in out
    assert "adjusted over all 2 studies on this table (Holm" in out


def test_an_unwritable_ledger_costs_one_line_not_the_results(tmp_path, capsys):
    X, y = _data()
    (tmp_path / "a_file").write_text("x")
    result = _study(ledger=tmp_path / "a_file" / "ledger.sqlite").run(X, y)
    assert result.score == result.score  # the run finished with its results
    led = result.data["ledger"]
    assert led["written"] is False and "\n" not in led["message"]
    print_summary(result)
    out = capsys.readouterr().out
    assert "ledger was not updated" in out


def test_no_ledger_without_a_table_file_unless_asked():
    X, y = _data()
    assert _study().run(X, y).data["ledger"] is None
    assert _study(ledger=False).ledger is False


def test_raters_and_a_hold_out_work_together():
    # issue 12 x issue 14: the ratings of sealed cases leave with them
    rng = np.random.default_rng(12)
    X = rng.normal(size=(60, 3))
    truth = (X[:, 0] > 0).astype(int)
    ratings = pd.DataFrame(
        {f"r{j}": np.where(rng.random(60) < 0.1, 1 - truth, truth) for j in range(3)}
    )
    study = foldwall.wrap(
        LogisticRegression(),
        {"C": [1.0]},
        outer=3,
        inner=2,
        raters={"classes": [0, 1]},
        holdout={"fraction": 0.25},
    )
    result = study.run(X, ratings=ratings)
    assert result.data["holdout"]["rows"]["holdout"] == 15
    assert result.data["data"]["n_samples"] == 45
    assert result.data["raters"] is not None


def test_a_plan_from_python_covers_the_development_rows_only():
    X, y = _data()
    study = _study(holdout={"fraction": 0.25}, n_permutations=0)
    plan = study.plan(X, y)
    rows = np.unique(
        np.concatenate([np.concatenate([f.train, f.test]) for f in plan.folds])
    )
    assert rows.size == 36  # 48 rows, a quarter sealed before the folds are made
