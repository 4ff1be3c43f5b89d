"""scikit-learn scorers by name, with the positive class set where a metric needs one."""

from __future__ import annotations

from typing import Any

from sklearn.metrics import (
    average_precision_score,
    brier_score_loss,
    f1_score,
    get_scorer,
    jaccard_score,
    make_scorer,
    precision_score,
    recall_score,
)

from .exceptions import SpecError

__all__ = ["scorer_for", "NEEDS_POSITIVE_CLASS", "positive_class_of"]

# metric -> (function, response_method, greater_is_better)
NEEDS_POSITIVE_CLASS: dict[str, tuple[Any, Any, bool]] = {
    "f1": (f1_score, "predict", True),
    "precision": (precision_score, "predict", True),
    "recall": (recall_score, "predict", True),
    "jaccard": (jaccard_score, "predict", True),
    "average_precision": (average_precision_score, ("decision_function", "predict_proba"), True),
    "neg_brier_score": (brier_score_loss, "predict_proba", False),
}


def scorer_for(metric: str, pos_label: Any = None) -> Any:
    """The scorer scikit-learn's ``get_scorer(metric)`` gives, with ``pos_label`` where it matters."""
    if pos_label is None or metric not in NEEDS_POSITIVE_CLASS:
        return get_scorer(metric)
    fn, response, greater = NEEDS_POSITIVE_CLASS[metric]
    return make_scorer(fn, response_method=response, greater_is_better=greater, pos_label=pos_label)


def positive_class_of(classes: Any, given: Any, metrics: list[str], *, key: str) -> Any:
    """Check or infer the positive class of a two-class target.

    scikit-learn's default is the label 1 (or True); ROC AUC does not depend on
    it. Other labels need ``positive_class`` for the metrics that count one class.
    """
    labels = list(classes)
    if given is not None:
        if len(labels) != 2:
            raise SpecError(f"{key}: a positive class is for two-class targets; this target has {len(labels)} classes")
        match = [c for c in labels if str(c) == str(given)]
        if not match:
            raise SpecError(f"{key}: {given!r} is not a class of the target; the classes are "
                            f"{', '.join(map(repr, map(str, labels)))}")
        return match[0]
    if len(labels) != 2:
        return None
    needs = [m for m in metrics if m in NEEDS_POSITIVE_CLASS]
    default = next((c for c in labels if str(c) in ("1", "True")), None)
    if needs and default is None:
        raise SpecError(f"{key}: the metric '{needs[0]}' counts one class as positive, and the classes are "
                        f"{', '.join(repr(str(c)) for c in labels)}; name the positive one")
    return default if default is not None else labels[-1]
