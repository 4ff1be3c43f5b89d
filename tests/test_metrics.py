"""The one metric table: every scorer's facts, chance levels, direction words."""

from __future__ import annotations

import numpy as np
import pytest
from sklearn.dummy import DummyClassifier
from sklearn.metrics import (
    accuracy_score,
    average_precision_score,
    balanced_accuracy_score,
    get_scorer,
    get_scorer_names,
    r2_score,
    roc_auc_score,
)

from foldwall._metrics import (
    METRICS,
    chance_level,
    check_metrics,
    check_metrics_fit,
    metric_info,
    scorer_for,
)
from foldwall.exceptions import DataError, SpecError

CLS = "classification"


def test_every_supervised_scorer_of_scikit_learn_has_an_entry():
    # Source: sklearn.metrics.get_scorer_names() of the installed scikit-learn.
    clustering = {
        n for n in get_scorer_names() if n.endswith("_score") and "d2_" not in n
    }
    missing = set(get_scorer_names()) - clustering - set(METRICS)
    assert not missing


def test_scorer_signs_match_the_loss_flag():
    # scikit-learn negates losses (its _sign is -1 exactly for greater_is_better=False)
    for name, info in METRICS.items():
        sign = get_scorer(name)._sign
        assert (sign == -1) == (info.loss or name == "neg_negative_likelihood_ratio"), (
            name
        )


@pytest.mark.parametrize(
    ("name", "better"),
    [
        ("roc_auc", "higher ROC AUC"),
        ("neg_mean_absolute_error", "lower mean absolute error"),
        ("neg_brier_score", "lower Brier score"),
        ("r2", "higher R²"),
    ],
)
def test_direction_words_use_the_quantity_people_speak_of(name, better):
    assert metric_info(name).better() == better


def test_check_metrics_suggests_the_scorer_name_for_a_function_name():
    with pytest.raises(SpecError, match="did you mean 'roc_auc'"):
        check_metrics(["roc_auc_score"], key="metrics")
    with pytest.raises(SpecError, match="scores clusterings"):
        check_metrics("adjusted_rand_score")


def test_check_metrics_fit_knows_every_kind():
    check_metrics_fit(
        ["neg_max_error", "d2_absolute_error_score"], task="regression", n_classes=None
    )
    check_metrics_fit(["d2_brier_score", "neg_log_loss"], task=CLS, n_classes=2)
    with pytest.raises(SpecError, match="'roc_auc' is for two classes.*roc_auc_ovr"):
        check_metrics_fit(["roc_auc"], task=CLS, n_classes=3)
    with pytest.raises(SpecError, match="regression metric"):
        check_metrics_fit(["r2"], task=CLS, n_classes=2)
    with pytest.raises(SpecError, match="classification metric"):
        check_metrics_fit(["accuracy"], task="regression", n_classes=None)


def test_scorer_for_counts_the_named_positive_class():
    # Source: scikit-learn f1_score with pos_label; the scorer must equal it.
    from sklearn.linear_model import LogisticRegression
    from sklearn.metrics import f1_score

    rng = np.random.default_rng(0)
    X = rng.normal(size=(40, 2))
    y = np.where(X[:, 0] + rng.normal(size=40) > 0, "yes", "no")
    est = LogisticRegression().fit(X, y)
    got = scorer_for("f1", "no")(est, X, y)
    assert got == pytest.approx(f1_score(y, est.predict(X), pos_label="no"))


def test_chance_level_of_average_precision_uses_the_positive_class_issue_8():
    # Issue 8: with positive_class "no" the chance level is the share of "no"
    # (0.783 here), not of the other class. Source: average_precision_score of a
    # constant score equals the positive-class share (scikit-learn).
    y = np.array(["no"] * 36 + ["yes"] * 10)
    got = chance_level("average_precision", y, task=CLS, positive_class="no")
    assert got == pytest.approx(36 / 46)
    assert average_precision_score(y == "no", np.full(46, 0.5)) == pytest.approx(
        36 / 46
    )


# --------------------------------------------------------------------------------------
# chance_level
# --------------------------------------------------------------------------------------


def test_chance_accuracy_balanced_three_classes_is_one_third():
    # Source: REFERENCES §13, chance level for accuracy with k balanced classes is 1/k;
    # cross-checked with scikit-learn's DummyClassifier(strategy="most_frequent").
    y = np.repeat(["a", "b", "c"], 10)
    assert chance_level("accuracy", y, task=CLS) == pytest.approx(1 / 3)
    dummy = DummyClassifier(strategy="most_frequent").fit(np.zeros((30, 1)), y)
    assert accuracy_score(y, dummy.predict(np.zeros((30, 1)))) == pytest.approx(1 / 3)


def test_chance_accuracy_is_majority_share_and_balanced_accuracy_half_on_90_10():
    # Source: REFERENCES §13 balanced-accuracy check: always predicting the majority
    # class on a 90/10 split gives accuracy 0.900 and BA 0.500 (scikit-learn
    # accuracy_score / balanced_accuracy_score).
    y = np.array([0] * 90 + [1] * 10)
    majority = np.zeros(100, dtype=int)
    assert chance_level("accuracy", y, task=CLS) == pytest.approx(0.9)
    assert accuracy_score(y, majority) == pytest.approx(0.9)
    assert chance_level("balanced_accuracy", y, task=CLS) == pytest.approx(0.5)
    assert balanced_accuracy_score(y, majority) == pytest.approx(0.5)


def test_chance_balanced_accuracy_is_one_over_k_whatever_the_balance():
    # Source: REFERENCES §13 (Brodersen et al. 2010): BA chance level is 1/k whatever
    # the class balance; scikit-learn balanced_accuracy_score of a constant prediction.
    y = np.array([0] * 30 + [1] * 8 + [2] * 2)
    assert chance_level("balanced_accuracy", y, task=CLS) == pytest.approx(1 / 3)
    assert balanced_accuracy_score(y, np.ones(40, dtype=int)) == pytest.approx(1 / 3)


@pytest.mark.parametrize(
    "metric", ["roc_auc", "roc_auc_ovr", "roc_auc_ovo", "roc_auc_ovr_weighted"]
)
def test_chance_roc_auc_is_one_half(metric):
    # Source: REFERENCES §13 chance checks; scikit-learn roc_auc_score of a constant
    # (data-blind) score is 0.5.
    y = np.array([0] * 12 + [1] * 28)
    assert chance_level(metric, y, task=CLS) == 0.5
    assert roc_auc_score(y, np.full(40, 0.3)) == pytest.approx(0.5)


def test_chance_average_precision_is_positive_prevalence():
    # Source: scikit-learn average_precision_score of a constant score equals the
    # positive-class share (one threshold: precision = prevalence at recall 1).
    y = np.array([0] * 28 + [1] * 12)
    assert chance_level("average_precision", y, task=CLS) == pytest.approx(0.3)
    assert average_precision_score(y, np.full(40, 0.5)) == pytest.approx(0.3)
    # string labels: the positive class is the larger label, as in scikit-learn's
    # scorer (classes_[1]); positive_class overrides it
    ys = np.where(y == 1, "yes", "no")
    assert chance_level("average_precision", ys, task=CLS) == pytest.approx(0.3)
    assert chance_level(
        "average_precision", ys, task="classification", positive_class="no"
    ) == pytest.approx(0.7)
    with pytest.raises(DataError, match="positive class 'maybe' does not occur"):
        chance_level(
            "average_precision", ys, task="classification", positive_class="maybe"
        )


def test_chance_average_precision_multiclass_is_macro_share():
    # Source: scikit-learn average_precision_score (macro, one-vs-rest) of constant
    # scores on three unbalanced classes is the mean of the class shares, 1/3.
    y = np.array([0] * 20 + [1] * 15 + [2] * 5)
    const = np.full((40, 3), 1 / 3)
    assert average_precision_score(y, const) == pytest.approx(1 / 3)
    assert chance_level("average_precision", y, task=CLS) == pytest.approx(1 / 3)


def test_chance_r2_is_zero():
    # Source: scikit-learn r2_score of predicting the mean of the evaluated rows is 0.
    y = np.random.default_rng(0).normal(size=30)
    assert chance_level("r2", y, task="regression") == 0.0
    assert r2_score(y, np.full(30, y.mean())) == pytest.approx(0.0, abs=1e-12)


@pytest.mark.parametrize(
    ("metric", "task"),
    [
        ("f1", "classification"),
        ("neg_log_loss", "classification"),
        ("neg_mean_squared_error", "regression"),
        ("neg_mean_absolute_error", "regression"),
    ],
)
def test_chance_is_none_for_metrics_without_a_data_free_level(metric, task):
    y = np.array([0, 1, 0, 1, 1, 0])
    assert chance_level(metric, y, task=task) is None


def test_chance_rejects_classification_metric_for_regression():
    with pytest.raises(SpecError, match="'accuracy' is a classification metric"):
        chance_level("accuracy", [0.1, 0.5], task="regression")


def test_chance_rejects_unknown_task_and_single_class():
    with pytest.raises(SpecError, match="task must be 'classification' or"):
        chance_level("accuracy", [0, 1], task="clustering")
    with pytest.raises(DataError, match="single class"):
        chance_level("accuracy", [1, 1, 1], task=CLS)
    with pytest.raises(DataError, match="1 missing values"):
        chance_level("accuracy", [1.0, np.nan, 0.0], task=CLS)
