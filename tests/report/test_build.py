"""The result builder on hand-made records: every number traced to the records it came from."""

from __future__ import annotations

import numpy as np
import pytest
from sklearn.linear_model import LogisticRegression

from foldwall._candidate import candidate_from_estimator
from foldwall.compare import corrected_ttest
from foldwall.plan import SplitRule, compile_plan
from foldwall.records import AuditStamp, RunOutcome, StudySource, UnitKey, UnitRecord
from foldwall.report import build_result
from foldwall.settings import CompareSettings
from foldwall.table import dataset_from_arrays


def _setup():
    y = np.repeat([0, 1], 20)
    X = np.random.default_rng(0).normal(size=(40, 2))
    data = dataset_from_arrays(X, y, None, task="classification")
    cands = [
        candidate_from_estimator("a", LogisticRegression(), {"C": [0.1, 1.0]}),
        candidate_from_estimator(
            "base", LogisticRegression(), {"C": [0.01, 10.0]}, role="baseline"
        ),
    ]
    plan = compile_plan(
        y=y,
        groups=None,
        task="classification",
        candidates=cands,
        outer=SplitRule(4, stratify=True),
        inner=SplitRule(2, stratify=True, label="inner"),
        repeats=1,
        seed=0,
        metrics=["roc_auc", "accuracy"],
        search_method="grid",
        trials=None,
    )
    return data, plan


def _records(plan, a_scores, b_scores):
    out = []
    for f, sa, sb in zip(plan.folds, a_scores, b_scores, strict=True):
        for ci, (name, role, s) in enumerate(
            (("a", "candidate", sa), ("base", "baseline", sb))
        ):
            out.append(
                UnitRecord(
                    unit=UnitKey(0, f.repeat, f.fold, ci).uid,
                    perm=0,
                    repeat=f.repeat,
                    fold=f.fold,
                    candidate=name,
                    role=role,
                    settings={},
                    inner_score=0.5 if role == "candidate" else None,
                    inner_sd=0.0 if role == "candidate" else None,
                    test={"roc_auc": s, "accuracy": s - 0.1},
                    train={"roc_auc": s + 0.05, "accuracy": s},
                    n_train=len(f.train),
                    n_test=len(f.test),
                    audit=AuditStamp(
                        fits=3,
                        test_rows_seen=0,
                        validation_rows_seen=0,
                        digest=f"d{ci}{f.fold}",
                    ),
                    fit_seconds=0.0,
                    task_seconds=0.0,
                )
            )
    return out


def test_builder_takes_every_number_from_the_records():
    data, plan = _setup()
    a, b = [0.8, 0.7, 0.9, 0.75], [0.7, 0.72, 0.8, 0.7]
    recs = _records(plan, a, b)
    result = build_result(
        RunOutcome(records=tuple(recs), control=None, timing=None),
        plan=plan,
        data=data,
        source=StudySource(name="t"),
        compare=CompareSettings(),
        clinical=False,
    )
    d = result.to_dict()
    assert d["score"]["per_fold"] == a and d["score"]["mean"] == pytest.approx(
        np.mean(a)
    )
    assert d["score"]["sd"] == pytest.approx(np.std(a, ddof=1))
    assert d["train_score"]["gap"] == pytest.approx(0.05)
    assert d["other_metrics"]["accuracy"]["per_fold"] == pytest.approx(
        [x - 0.1 for x in a]
    )
    assert [f["chosen"] for f in d["folds"]] == ["a"] * 4
    assert d["audit"]["fits"] == 3 * len(recs) and d["audit"]["units"] == len(recs)
    assert d["control"] is None and d["reference"] is None
    (cmp,) = d["comparisons"]
    diffs = np.array(a) - np.array(b)
    # Source: the corrected resampled t-test (Nadeau & Bengio 2003) as foldwall.compare computes it,
    # checked there against REFERENCES.md section 5.
    main = corrected_ttest(diffs, n_train=30, n_test=10)
    assert cmp["p_value"] == pytest.approx(main.p_value)
    assert cmp["per_split_differences"] == pytest.approx(diffs.tolist())
    assert cmp["family_size"] == 1 and cmp["p_adjusted"] == pytest.approx(main.p_value)
    assert len(d["cautions"]) == 1


def test_clinical_studies_carry_the_regulatory_caution():
    data, plan = _setup()
    recs = _records(plan, [0.8] * 4, [0.7] * 4)
    result = build_result(
        RunOutcome(records=tuple(recs), control=None, timing=None),
        plan=plan,
        data=data,
        source=StudySource(),
        compare=CompareSettings(),
        clinical=True,
    )
    assert any("local regulation" in c for c in result.to_dict()["cautions"])
