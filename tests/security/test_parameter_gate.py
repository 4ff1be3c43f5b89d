"""One gate for every parameter of every step, whatever route it took."""

from __future__ import annotations

import inspect
import os

import numpy as np
import pytest
from sklearn.base import clone
from sklearn.cluster import FeatureAgglomeration
from sklearn.compose import ColumnTransformer
from sklearn.feature_extraction.text import CountVectorizer
from sklearn.linear_model import LogisticRegression
from sklearn.pipeline import FeatureUnion, Pipeline
from sklearn.preprocessing import FunctionTransformer, StandardScaler

from foldwall.exceptions import SpecError
from foldwall.spec._allow import AllowList
from foldwall.spec._gate import (
    FILE_PARAMETERS,
    PYTHON_CODE,
    check_estimator,
    check_pipeline,
    refusal,
)


def _estimators():
    import warnings

    from sklearn.utils import all_estimators

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return all_estimators()


def _file_parameters_from_scikit_learn() -> dict[tuple[str, str], object]:
    """(estimator, parameter) -> a value that makes it touch files, read off scikit-learn's own
    parameter constraints: a joblib-Memory-like object (HasMethods 'cache') or a string
    option naming files ('filename' / 'file')."""
    found = {}
    for name, cls in _estimators():
        for param, rules in getattr(cls, "_parameter_constraints", {}).items():
            for rule in rules:
                if type(rule).__name__ == "HasMethods" and "cache" in getattr(
                    rule, "methods", ()
                ):
                    found[(name, param)] = "/somewhere/cache"
                options = getattr(rule, "options", None)
                if (
                    type(rule).__name__ == "StrOptions"
                    and options
                    and {"filename", "file"} & set(options)
                ):
                    found[(name, param)] = "filename"
    return found


def _minimal(cls):
    """An instance with the required arguments filled in with plain scikit-learn objects."""
    sig = inspect.signature(cls.__init__).parameters
    kw = {}
    fill = {
        "estimator": LogisticRegression(),
        "base_estimator": LogisticRegression(),
        "estimators": [("a", LogisticRegression())],
        "steps": [("s", StandardScaler()), ("m", LogisticRegression())],
        "transformer_list": [("s", StandardScaler())],
        "transformers": [("s", StandardScaler(), [0])],
        "dictionary": np.eye(2),
        "param_grid": {"C": [1.0]},
        "param_distributions": {"C": [1.0]},
    }
    for k, v in fill.items():
        if k in sig and sig[k].default is inspect.Parameter.empty:
            kw[k] = v
    return cls(**kw)


FILE_PARAMS = _file_parameters_from_scikit_learn()


def test_scikit_learns_file_parameters_are_the_ones_the_gate_knows():
    # source: scikit-learn's own parameter constraints (every estimator of all_estimators())
    assert {p for _, p in FILE_PARAMS} == set(FILE_PARAMETERS)
    assert (
        len(FILE_PARAMS) >= 7
    )  # Pipeline, 3 clustering classes, 3 text vectorizers at least


@pytest.mark.parametrize("est_name,param", sorted(FILE_PARAMS), ids=lambda x: str(x))
def test_every_file_parameter_is_refused_through_every_route(est_name, param):
    cls = dict(_estimators())[est_name]
    value = FILE_PARAMS[(est_name, param)]
    allow = AllowList()
    # 1. under with:
    est = _minimal(cls).set_params(**{param: value})
    with pytest.raises(SpecError, match=f"parameter '{param}' of {est_name}"):
        check_estimator(est, where="steps[0]", allow=allow)
    # 2. through the search space
    steps = [("s", _minimal(cls))]
    with pytest.raises(SpecError, match=f"space.s__{param}: '{param}"):
        check_pipeline(
            steps, {f"s__{param}": [value]}, where="candidates[0]", allow=allow
        )
    # 3. through a nested key, two levels down inside a FeatureUnion and a Pipeline
    union = FeatureUnion([("p", Pipeline([("inner", _minimal(cls))]))])
    with pytest.raises(SpecError, match=param):
        check_pipeline(
            [("u", union)],
            {f"u__p__inner__{param}": [value]},
            where="candidates[0]",
            allow=allow,
        )
    # 4. set under with: inside a ColumnTransformer child
    child = ColumnTransformer([("c", Pipeline([("inner", clone(est))]), [0])])
    with pytest.raises(SpecError, match=f"parameter 'c__inner__{param}'"):
        check_estimator(child, where="steps[0]", allow=allow)
    # and the same refusal for Python code (wrap)
    with pytest.raises(SpecError, match=param):
        check_estimator(est, where="pipeline", allow=allow, policy=PYTHON_CODE)


@pytest.mark.filterwarnings("ignore::FutureWarning")
def test_no_estimator_scikit_learn_ships_is_refused_with_its_defaults():
    allow = AllowList()
    checked = 0
    for name, cls in _estimators():
        if "param_grid" in inspect.signature(cls.__init__).parameters:
            continue  # a search inside a step: refused on purpose (see below)
        if "param_distributions" in inspect.signature(cls.__init__).parameters:
            continue
        check_estimator(_minimal(cls), where=name, allow=allow)
        checked += 1
    assert checked > 190


def test_searches_inside_a_step_are_refused_in_study_files_only():
    from sklearn.model_selection import GridSearchCV

    est = GridSearchCV(
        Pipeline([("a", FeatureAgglomeration())]), {"memory": ["/tmp/x"]}
    )
    with pytest.raises(SpecError, match="'param_grid' runs a search"):
        check_estimator(est, where="steps[0]")
    check_estimator(est, where="pipeline", policy=PYTHON_CODE)


def test_callables_must_be_on_the_list_in_study_files():
    with pytest.raises(
        SpecError,
        match=r"parameter 'func' of FunctionTransformer is posix\.system|os\.system",
    ):
        check_estimator(FunctionTransformer(func=os.system), where="steps[0]")
    nested = Pipeline([("f", FunctionTransformer(inverse_func=print))])
    with pytest.raises(SpecError, match=r"parameter 'f__inverse_func'"):
        check_estimator(nested, where="steps[0]")
    cols = ColumnTransformer([("s", StandardScaler(), os.listdir)])
    with pytest.raises(SpecError, match=r"s\[columns\]"):
        check_estimator(cols, where="steps[0]")
    check_estimator(FunctionTransformer(func=np.log1p), where="steps[0]")
    check_estimator(
        FunctionTransformer(func=os.system), where="pipeline", policy=PYTHON_CODE
    )


def test_callables_in_the_space_are_checked_too():
    steps = [("f", FunctionTransformer())]
    with pytest.raises(SpecError, match=r"candidates\[0\]\.space\.f__func"):
        check_pipeline(steps, {"f__func": [np.log1p, os.system]}, where="candidates[0]")


def test_file_words_in_third_party_parameter_names_are_refused_for_text_values():
    assert refusal("cache_dir", "/tmp/x") is not None
    assert refusal("checkpoint_path", "/tmp/x") is not None
    assert refusal("save_model", "m.pkl") is not None
    assert refusal("train_dir", "catboost_info") is not None
    assert refusal("fit_path", True) is None  # a flag, not a path (Lars)
    assert refusal("path_method", "auto") is None  # Isomap
    assert refusal("output_distribution", "normal") is None  # QuantileTransformer


def test_steps_may_not_start_their_own_worker_processes_in_study_files():
    from sklearn.ensemble import RandomForestClassifier

    with pytest.raises(SpecError, match="n_jobs: 1000"):
        check_estimator(
            RandomForestClassifier(n_jobs=1000), where="candidates[0].model"
        )
    check_estimator(RandomForestClassifier(n_jobs=1), where="candidates[0].model")
    check_estimator(
        RandomForestClassifier(n_jobs=-1), where="model", policy=PYTHON_CODE
    )


def test_vectorizer_reading_its_column_as_text_passes():
    check_estimator(CountVectorizer(input="content"), where="steps[0]")
    with pytest.raises(SpecError, match="'input: file'"):
        check_estimator(CountVectorizer(input="file"), where="steps[0]")
