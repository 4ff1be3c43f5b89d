"""The allow-list looks a name up before anything is imported."""

from __future__ import annotations

import sys

import pytest

from foldwall.exceptions import SpecError
from foldwall.spec._allow import NEVER_ALLOWED, AllowList, sklearn_names


def _refused(allow: AllowList, name: str, match: str, want: str = "step") -> str:
    with pytest.raises(SpecError, match=match) as info:
        allow.resolve(name, where="candidates[0].model.use", want=want)
    msg = str(info.value)
    assert len(msg.splitlines()) == 1 and msg.startswith("candidates[0].model.use: ")
    return msg


def test_every_estimator_scikit_learn_lists_is_allowed_under_its_public_path():
    from sklearn.linear_model import LogisticRegression
    from sklearn.utils import all_estimators

    from foldwall.audit import AcquisitionEffectRemover

    names = sklearn_names()
    listed = {cls for _, cls in all_estimators()}
    allowed = {r.obj for r in names.values() if r.kind == "estimator"}
    # source: scikit-learn's own sklearn.utils.all_estimators(), plus foldwall's one step
    assert allowed == listed | {AcquisitionEffectRemover}
    assert (
        names["foldwall.audit.AcquisitionEffectRemover"].obj is AcquisitionEffectRemover
    )
    got = AllowList().resolve("sklearn.linear_model.LogisticRegression", where="k")
    assert got.obj is LogisticRegression and got.kind == "estimator"
    assert not any("._" in n for n in names)  # public paths only


def test_score_and_distance_functions_are_values_not_steps():
    from sklearn.feature_selection import f_classif
    from sklearn.metrics.pairwise import rbf_kernel

    al = AllowList()
    assert (
        al.resolve("sklearn.feature_selection.f_classif", where="k", want="value").obj
        is f_classif
    )
    assert (
        al.resolve("sklearn.metrics.pairwise.rbf_kernel", where="k", want="value").obj
        is rbf_kernel
    )
    assert al.resolve("numpy.log1p", where="k", want="value").kind == "function"
    _refused(al, "sklearn.metrics.f1_score", "is not a scikit-learn estimator class")


def test_functions_that_read_or_write_files_are_not_listed():
    al = AllowList()
    for name in [
        "sklearn.datasets.dump_svmlight_file",
        "sklearn.datasets.fetch_openml",
        "sklearn.datasets.load_svmlight_file",
        "numpy.save",
        "numpy.load",
        "numpy.savetxt",
        "numpy.fromfile",
        "sklearn.metrics.make_scorer",
    ]:
        _refused(al, name, "not on the list", want="value")


def test_standard_library_and_non_estimator_packages_are_never_allowed():
    al = AllowList()
    for name in [
        "os.system",
        "subprocess.run",
        "builtins.eval",
        "pickle.loads",
        "importlib.import_module",
        "joblib.dump",
        "runpy.run_path",
        "shutil.rmtree",
        "ctypes.CDLL",
    ]:
        _refused(al, name, "never allowed", want="value")
    for root in [
        "os",
        "subprocess",
        "json",
        "pandas",
        "joblib",
        "numpy",
        "pip",
        "__main__",
    ]:
        assert root in NEVER_ALLOWED
        with pytest.raises(SpecError, match=f"--allow: '{root}' cannot be allowed"):
            AllowList([root])
    with pytest.raises(SpecError, match="scikit-learn is always available"):
        AllowList(["sklearn"])


def test_a_name_outside_the_list_is_refused_before_its_module_is_imported(evil_pkg):
    msg = _refused(AllowList(), "evil_pkg.Model", "outside scikit-learn")
    assert msg.endswith("run again with --allow evil_pkg")
    assert "evil_pkg" not in sys.modules
    assert not evil_pkg.exists()


def test_a_declared_module_is_refused_naming_the_flag(evil_pkg):
    al = AllowList(declared=["evil_pkg"])
    with pytest.raises(
        SpecError,
        match=r"needs_modules: the study needs evil_pkg.*run again with --allow evil_pkg",
    ):
        al.check_declared()
    _refused(al, "evil_pkg.Model", r"declares it needs it")
    assert "evil_pkg" not in sys.modules and not evil_pkg.exists()


def test_main_modules_and_dunder_names_are_never_imported(evil_pkg):
    al = AllowList(["evil_pkg"])
    _refused(al, "evil_pkg.__main__.Model", "special module")
    _refused(
        al, "sklearn.linear_model.LogisticRegression.__init__.__globals__", "special"
    )
    assert "evil_pkg.__main__" not in sys.modules
    assert not evil_pkg.exists()


def test_a_module_the_user_allowed_is_imported_and_its_classes_resolve(evil_pkg):
    al = AllowList(["evil_pkg"])
    got = al.resolve("evil_pkg.Model", where="k")
    assert got.kind == "estimator" and got.obj.__name__ == "Model"
    assert evil_pkg.exists()  # documented: an allowed module's code runs
    assert al.callable_ok(sys.modules["evil_pkg"].shout)


@pytest.mark.parametrize(
    "name",
    ["sklearn", "sklearn.svm.SVC; import os", "\u0455klearn.svm.SVC", "", "a..b", 3],
)
def test_malformed_names_are_refused(name):
    _refused(AllowList(), name, "full import path")


def test_misspelt_and_private_paths_get_the_public_name():
    al = AllowList()
    _refused(
        al,
        "sklearn.linear_model._logistic.LogisticRegression",
        "did you mean 'sklearn.linear_model.LogisticRegression'",
    )
    _refused(
        al,
        "sklearn.linear_model.LogistcRegression",
        "did you mean 'sklearn.linear_model.LogisticRegression'",
    )


def test_callable_check_knows_only_listed_functions():
    import os

    import numpy as np
    from sklearn.feature_selection import f_classif

    al = AllowList()
    assert (
        al.callable_ok(f_classif)
        and al.callable_ok(np.mean)
        and al.callable_ok(np.float32)
    )
    assert (
        not al.callable_ok(os.system)
        and not al.callable_ok(print)
        and not al.callable_ok(lambda x: x)
    )
