"""The row audit: no fitted step ever sees a row of its outer test part, and it says so."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from sklearn.base import BaseEstimator, TransformerMixin
from sklearn.linear_model import LogisticRegression
from sklearn.pipeline import Pipeline
from sklearn.preprocessing import StandardScaler

import foldwall
from foldwall.audit import row_fingerprints
from foldwall.runners import _engine

SEEN: list[set] = []


class RowSpy(TransformerMixin, BaseEstimator):
    """Records the row ids (column 0) that reach fit; passes the other columns on."""

    def fit(self, X, y=None):
        SEEN.append(set(np.asarray(X)[:, 0].astype(int)))
        return self

    def transform(self, X):
        return np.asarray(X)[:, 1:]


def test_outer_test_rows_never_reach_any_fit(noise_data):
    X, y = noise_data
    ids = np.arange(len(y))[:, None].astype(float)
    Xi = np.hstack([ids, X])
    SEEN.clear()
    pipe = Pipeline(
        [
            ("spy", RowSpy()),
            ("scale", StandardScaler()),
            ("model", LogisticRegression()),
        ]
    )
    res = foldwall.wrap(
        pipe, space={"model__C": [0.1, 1.0]}, outer=4, inner=3, random_state=3
    ).run(Xi, y)
    # Every fit must have been given exactly the training rows of one outer fold
    # or of one inner split of the plan -- never a row of the matching test part.
    allowed = []
    for f in res.plan_dict["folds"]:
        allowed.append(frozenset(f["train"]))
        allowed += [frozenset(s["train"]) for s in f["inner"]]
    assert SEEN, "the spy never ran"
    for rows in SEEN:
        assert frozenset(rows) in allowed
    n_inner_sets = sum(len(f["inner"]) for f in res.plan_dict["folds"])
    assert (
        len({frozenset(r) for r in SEEN}) == len(res.plan_dict["folds"]) + n_inner_sets
    )
    assert res.audit["test_rows_seen"] == 0
    assert res.audit["validation_rows_seen"] == 0


def test_audit_catches_test_rows_handed_to_a_fit(monkeypatch, noise_data):
    X, y = noise_data
    real = _engine._fitter

    def leaky(ctx, unit, role, X_, y_, train, test, ledger):
        # The injected fault: the outer refit is handed two of its test rows in
        # place of two training rows.
        if role == "outer":
            train = np.concatenate([train[:-2], test[:2]])
        return real(ctx, unit, role, X_, y_, train, test, ledger)

    monkeypatch.setattr(_engine, "_fitter", leaky)
    with pytest.raises(foldwall.LeakageError, match="outer-test row"):
        foldwall.wrap(LogisticRegression(), outer=3, inner=3).run(X, y)


def test_audit_catches_validation_rows_in_an_inner_fit(monkeypatch, noise_data):
    X, y = noise_data
    real = _engine._fitter

    def leaky(ctx, unit, role, X_, y_, train, test, ledger):
        if role.startswith("inner"):
            train = np.concatenate([train[:-1], test[:1]])
        return real(ctx, unit, role, X_, y_, train, test, ledger)

    monkeypatch.setattr(_engine, "_fitter", leaky)
    with pytest.raises(foldwall.LeakageError, match="inner-validation row"):
        foldwall.wrap(
            LogisticRegression(), space={"C": [0.1, 1.0]}, outer=3, inner=3
        ).run(X, y)


def test_fingerprints_are_per_row_and_content_based():
    rng = np.random.default_rng(0)
    A = rng.normal(size=(20, 5))
    fp = row_fingerprints(A)
    assert fp.dtype == np.uint64 and fp.shape == (20,)
    assert len(set(fp.tolist())) == 20
    np.testing.assert_array_equal(row_fingerprints(A[[3, 1]]), fp[[3, 1]])
    B = A.copy()
    B[4, 2] += 1e-12
    assert row_fingerprints(B)[4] != fp[4]
    # -0.0 and 0.0 are the same value
    C = np.zeros((1, 3))
    assert row_fingerprints(C)[0] == row_fingerprints(-C)[0]
    # a mixed table falls back to pandas' own row hash
    df = pd.DataFrame({"a": [1.0, 2.0], "b": ["x", "y"]})
    np.testing.assert_array_equal(
        row_fingerprints(df), pd.util.hash_pandas_object(df, index=False).to_numpy()
    )


def test_digest_is_reproducible_and_changes_with_the_plan(noise_data):
    X, y = noise_data
    a = foldwall.wrap(LogisticRegression(), outer=3, inner=3, random_state=1).run(X, y)
    b = foldwall.wrap(LogisticRegression(), outer=3, inner=3, random_state=1).run(X, y)
    c = foldwall.wrap(LogisticRegression(), outer=3, inner=3, random_state=2).run(X, y)
    assert a.audit["digest"] == b.audit["digest"] != c.audit["digest"]


def test_already_fitted_pipeline_is_reported_and_cloned(noise_data):
    X, y = noise_data
    fitted = Pipeline(
        [("scale", StandardScaler()), ("model", LogisticRegression())]
    ).fit(X, y)
    coef = fitted[-1].coef_.copy()
    with pytest.warns(foldwall.FoldwallWarning, match="already fitted"):
        study = foldwall.wrap(fitted, outer=3, inner=3)
    res = study.run(X, y)
    assert res.audit["already_fitted_input"] == ["pipeline"]
    np.testing.assert_array_equal(
        fitted[-1].coef_, coef
    )  # the user's object is untouched


def test_a_reviewer_can_recompute_the_digest_from_the_plan(noise_data):
    # Recomputed here from plan.json and the documented rule (docs/audit.md), using
    # only hashlib and the row fingerprints: no foldwall internals.
    import hashlib

    X, y = noise_data
    pipe = Pipeline([("scale", StandardScaler()), ("model", LogisticRegression())])
    res = foldwall.wrap(
        pipe, space={"model__C": [0.1, 1.0]}, outer=3, inner=2, random_state=4
    ).run(X, y)
    fp = row_fingerprints(X)
    plan = res.plan_dict

    def line(role, step, rows):
        f = fp[np.asarray(rows)]
        x = int(np.bitwise_xor.reduce(f))
        s = int(f.sum(dtype=np.uint64))
        return f"{role} {step} {len(rows)} {x:016x} {s:016x}"

    def sha(lines):
        h = hashlib.sha256()
        for ln in lines:
            h.update(ln.encode() + b"\n")
        return h.hexdigest()

    unit_lines = []
    for rec in res.records:
        fold = next(
            f
            for f in plan["folds"]
            if f["repeat"] == rec.repeat and f["fold"] == rec.fold
        )
        cand = next(c for c in plan["candidates"] if c["name"] == rec.candidate)
        steps = [n for n, _ in cand["steps"]]
        lines = [line("outer", s, fold["train"]) for s in steps]
        if cand["searched"]:
            for j, split in enumerate(fold["inner"]):
                lines += [line(f"inner:{j}", s, split["train"]) for s in steps]
        unit_lines.append(
            f"{rec.unit} {sha(sorted(rec.unit + ' ' + ln for ln in lines))}"
        )
    assert sha(sorted(unit_lines)) == res.audit["digest"]


def test_audit_catches_a_leaked_row_that_has_a_twin(monkeypatch):
    # Rows with identical content are checked by count: a fit may hold a row only
    # as often as it occurs among its own training rows.
    rng = np.random.default_rng(5)
    X = rng.normal(size=(30, 3))
    X[1] = X[0]  # row 0 and row 1 are twins
    y = np.tile([0, 1], 15)
    real = _engine._fitter

    def leaky(ctx, unit, role, X_, y_, train, test, ledger):
        if role == "outer" and 0 in test:
            train = np.concatenate([train[:-1], [0]])
        return real(ctx, unit, role, X_, y_, train, test, ledger)

    monkeypatch.setattr(_engine, "_fitter", leaky)
    with pytest.raises(foldwall.LeakageError):
        foldwall.wrap(LogisticRegression(), outer=3, inner=2, random_state=0).run(X, y)


def test_steps_that_write_in_place_do_not_change_shared_results():
    # StandardScaler(copy=False) would overwrite a shared input; foldwall makes it copy.
    from sklearn.impute import SimpleImputer
    from sklearn.linear_model import Ridge

    rng = np.random.default_rng(6)
    X = rng.normal(size=(50, 4))
    yv = X[:, 0] + rng.normal(size=50)
    pipe = Pipeline(
        [("imp", SimpleImputer()), ("sc", StandardScaler(copy=False)), ("m", Ridge())]
    )
    kw = dict(
        space={"sc__with_std": [True, False], "m__alpha": [0.1, 1.0]},
        metric="r2",
        outer=3,
        inner=2,
    )
    a = foldwall.wrap(pipe, share_fits=True, **kw).run(X, yv)
    b = foldwall.wrap(pipe, share_fits=False, **kw).run(X, yv)
    assert a.fold_scores == b.fold_scores
