"""Typed records: JSON round trips and the choice of each fold's winner."""

from __future__ import annotations

import json

from foldwall.records import (
    AuditStamp,
    TrialRow,
    UnitKey,
    UnitRecord,
    UnitSeeds,
    fold_winners,
    procedure_score,
)


def rec(
    cand: str,
    fold: int,
    inner: float | None,
    test: float,
    *,
    role: str = "candidate",
    c: int = 0,
) -> UnitRecord:
    return UnitRecord(
        unit=UnitKey(0, 0, fold, c).uid,
        perm=0,
        repeat=0,
        fold=fold,
        candidate=cand,
        role=role,
        settings={"m__C": 1.0},
        inner_score=inner,
        inner_sd=0.0 if inner is not None else None,
        test={"roc_auc": test},
        train={"roc_auc": 1.0},
        n_train=30,
        n_test=10,
        audit=AuditStamp(fits=4, test_rows_seen=0, validation_rows_seen=0, digest="d"),
        fit_seconds=0.1,
        task_seconds=0.2,
    )


def test_unit_record_round_trips_through_json():
    r = UnitRecord(
        **{
            **rec("a", 0, 0.7, 0.8).__dict__,
            "seeds": UnitSeeds(search=5, steps={"model": 9}),
            "trials": (TrialRow.from_scores({"m__C": 1.0}, [0.5, float("nan")]),),
            "test_rows": (3, 1),
            "predicted": ("yes", "no"),
            "decision": (0.9, 0.2),
            "selected_features": (0, 2),
        }
    )
    text = json.dumps(r.to_json(), sort_keys=True)
    back = UnitRecord.from_json(json.loads(text))
    assert back == r
    assert (
        back.trials is not None and back.trials[0].mean is None
    )  # a failed split makes the mean undefined
    assert back.seeds.stored_seed() == 5


def test_stored_seed_is_the_seed_that_was_used():
    assert UnitSeeds(search=None, steps={"a": 3, "model": 4}).stored_seed() == 4
    assert UnitSeeds().stored_seed() is None


def test_winner_is_best_inner_score_first_unit_on_ties_and_baselines_never_win():
    records = [
        rec("a", 0, 0.7, 0.6, c=0),
        rec("b", 0, 0.7, 0.9, c=1),  # a tie: the first unit id wins
        rec("base", 0, 0.99, 0.99, role="baseline", c=2),
        rec("a", 1, 0.5, 0.4, c=0),
        rec("b", 1, 0.6, 0.8, c=1),
    ]
    w = fold_winners(records)
    assert w[(0, 0, 0)].candidate == "a" and w[(0, 0, 1)].candidate == "b"
    assert procedure_score(records, "roc_auc") == (0.6 + 0.8) / 2
