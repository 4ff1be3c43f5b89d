"""A model family as the engine sees it: named steps, a search space, a role."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from sklearn.base import BaseEstimator, clone, is_classifier
from sklearn.pipeline import Pipeline

from .exceptions import SpecError
from .search import normalise_space

__all__ = ["Candidate", "candidate_from_estimator", "LABEL_FREE_MODULES"]

# scikit-learn modules whose transformers never look at y. A step from elsewhere is
# treated as supervised unless the study declares it label-free.
LABEL_FREE_MODULES = (
    "sklearn.preprocessing",
    "sklearn.impute",
    "sklearn.decomposition",
    "sklearn.random_projection",
    "sklearn.kernel_approximation",
)
_SUPERVISED_EXCEPTIONS = ("TargetEncoder",)
LABEL_FREE_CLASSES = ("VarianceThreshold",)


def is_label_free(est: Any) -> bool:
    cls = type(est)
    mod = cls.__module__
    if cls.__name__ in _SUPERVISED_EXCEPTIONS:
        return False
    if cls.__name__ in LABEL_FREE_CLASSES and mod.startswith("sklearn."):
        return True
    return any(mod == m or mod.startswith(m + ".") for m in LABEL_FREE_MODULES)


@dataclass(frozen=True)
class Candidate:
    """An unfitted pipeline with a search space.

    role is "candidate" (competes for the winner of each outer fold), "baseline"
    (searched with the same budget, compared, never chosen) or "reference" (a
    trivial dummy model showing chance level in the study's metric).
    """

    name: str
    steps: tuple[tuple[str, Any], ...]
    space: dict[str, Any] = field(default_factory=dict)
    role: str = "candidate"
    label_free: tuple[bool, ...] = ()
    was_fitted: bool = False

    @property
    def step_names(self) -> tuple[str, ...]:
        return tuple(n for n, _ in self.steps)

    @property
    def is_classifier(self) -> bool:
        return bool(is_classifier(self.steps[-1][1]))

    def check_space(self) -> None:
        names = set(self.step_names)
        for key in self.space:
            step = key.split("__", 1)[0]
            if "__" not in key or step not in names:
                import difflib

                close = difflib.get_close_matches(step, sorted(names), n=1)
                if close and "__" in key:
                    raise SpecError(
                        f"search space key '{key}' of '{self.name}': no step '{step}'; did you mean "
                        f"'{close[0]}__{key.split('__', 1)[1]}'?"
                    )
                guess = self._guess_key(key)
                hint = f"; did you mean '{guess}'?" if guess else ""
                raise SpecError(
                    f"search space key '{key}' of '{self.name}' must be STEP__param with STEP one of "
                    f"{', '.join(sorted(names))}{hint}"
                )
            _, param = key.split("__", 1)
            est = dict(self.steps)[step]
            valid = est.get_params(deep=True)
            if param not in valid:
                import difflib

                close = difflib.get_close_matches(param, list(valid), n=1)
                hint = f"; did you mean '{step}__{close[0]}'?" if close else ""
                raise SpecError(
                    f"search space key '{key}' of '{self.name}': {type(est).__name__} has no parameter "
                    f"'{param}'{hint}"
                )

    def _guess_key(self, key: str) -> str | None:
        """The STEP__param a key without '__' most likely meant ('model_C' -> 'model__C')."""
        import difflib

        valid = [
            f"{n}__{p}" for n, est in self.steps for p in est.get_params(deep=False)
        ]
        exact = [v for v in valid if v.split("__", 1)[1] == key]
        if len(exact) == 1:
            return exact[0]
        close = difflib.get_close_matches(key, valid, n=1, cutoff=0.75)
        return close[0] if close else None

    def as_pipeline(self) -> Pipeline:
        return Pipeline([(n, clone(e)) for n, e in self.steps])


def _looks_fitted(est: Any) -> bool:
    from sklearn.exceptions import NotFittedError
    from sklearn.utils.validation import check_is_fitted

    try:
        check_is_fitted(est)
    except (NotFittedError, TypeError):
        return False
    return True


def candidate_from_estimator(
    name: str, estimator: Any, space: Any = None, *, role: str = "candidate"
) -> Candidate:
    """Build a candidate from a scikit-learn estimator or Pipeline (cloned, never reused)."""
    if not isinstance(estimator, BaseEstimator) or not hasattr(estimator, "fit"):
        raise SpecError(
            f"'{name}' must be a scikit-learn estimator or Pipeline, got {type(estimator).__name__}"
        )
    was_fitted = _looks_fitted(estimator)
    if isinstance(estimator, Pipeline):
        steps = tuple(
            (n, clone(s)) for n, s in estimator.steps if s not in (None, "passthrough")
        )
    else:
        steps = (("model", clone(estimator)),)
    nspace = normalise_space(space)
    if not isinstance(estimator, Pipeline):
        nspace = {
            (k if "__" in k and k.split("__", 1)[0] == "model" else f"model__{k}"): v
            for k, v in nspace.items()
        }
    lf = tuple(is_label_free(s) for _, s in steps[:-1]) + (False,)
    cand = Candidate(
        name=name,
        steps=steps,
        space=nspace,
        role=role,
        label_free=lf,
        was_fitted=was_fitted,
    )
    cand.check_space()
    return cand
