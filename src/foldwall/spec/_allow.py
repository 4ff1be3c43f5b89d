"""The allow-list: which names a study file may use, checked before anything is imported.

A study file names estimator classes (``use: sklearn.svm.SVC``) and, as parameter
values, a few functions (``score_func: {use: sklearn.feature_selection.f_classif}``).
It must not be able to run any other code, so a name is looked up in an explicit
table *before* any import happens:

- **scikit-learn**: every estimator class that ``sklearn.utils.all_estimators()``
  lists, under each public path where scikit-learn exports it; its Gaussian-process
  kernels (values only); and its score and distance functions (``sklearn.metrics``,
  ``sklearn.metrics.pairwise``, the score functions of ``sklearn.feature_selection``).
  Building this table imports scikit-learn's own public modules and nothing else.
- **foldwall**: its own steps (``foldwall.audit.AcquisitionEffectRemover``).
- **numpy**: a short list of element-wise and summary functions
  (``numpy.log1p``, ``numpy.mean``, ...) and number types (``numpy.float32``) that
  ``FunctionTransformer`` and friends take, and that read or write nothing.
- **other packages**: only those the person running the command allowed
  (``--allow NAME``, or ``allow=`` in Python). A study file can only *declare*
  what it needs; a declared package that was not allowed is refused with a line
  naming the ``--allow`` flag to add. The standard library and packages that are
  not estimator libraries (numpy, pandas, joblib, ...) can never be allowed, and no
  ``__main__`` module or dunder name is ever imported.
"""

from __future__ import annotations

import difflib
import importlib
import inspect
import re
import sys
import warnings
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass
from functools import lru_cache
from typing import Any, Literal

import numpy as np

from ..exceptions import SpecError
from ..table import sanitise

__all__ = [
    "NEVER_ALLOWED",
    "AllowList",
    "Resolved",
    "allowed_functions",
    "sklearn_names",
]

_IDENT = r"[A-Za-z_][A-Za-z0-9_]*"
_DOTTED = re.compile(rf"^{_IDENT}(\.{_IDENT})+$")
_ROOT = re.compile(rf"^{_IDENT}$")

# Not estimator libraries: each holds functions that read or write files, start
# processes or load pickles, and none is needed to name an estimator.
_NOT_ESTIMATOR_LIBRARIES = frozenset(
    {
        "numpy",
        "scipy",
        "pandas",
        "joblib",
        "cloudpickle",
        "dill",
        "optuna",
        "foldwall",
        "pip",
        "setuptools",
        "pkg_resources",
        "distutils",
        "pytest",
        "_pytest",
        "IPython",
        "ipykernel",
        "jupyter",
        "distributed",
        "dask",
        "yaml",
        "pydantic",
        "threadpoolctl",
        "rich",
        "pyarrow",
        "fsspec",
        "requests",
        "httpx",
        "urllib3",
        "boto3",
        "botocore",
        "psutil",
        "sqlalchemy",
        "h5py",
        "tables",
        "matplotlib",
        "virtualenv",
        "venv",
        "pexpect",
        "paramiko",
        "fabric",
        "invoke",
        "sh",
        "plumbum",
        "hypothesis",
    }
)
NEVER_ALLOWED: frozenset[str] = (
    frozenset(sys.stdlib_module_names) | _NOT_ESTIMATOR_LIBRARIES | {"__main__"}
)
"""Top-level modules that ``--allow`` refuses: the standard library and packages that
are not estimator libraries."""

# numpy functions a study may pass as values: element-wise maps and summaries.
_NUMPY_FUNCTIONS = (
    "abs",
    "absolute",
    "arcsinh",
    "arctan",
    "cbrt",
    "ceil",
    "exp",
    "exp2",
    "expm1",
    "fabs",
    "floor",
    "log",
    "log10",
    "log1p",
    "log2",
    "negative",
    "reciprocal",
    "rint",
    "sign",
    "sqrt",
    "square",
    "tanh",
    "trunc",
    "amax",
    "amin",
    "average",
    "max",
    "mean",
    "median",
    "min",
    "nanmax",
    "nanmean",
    "nanmedian",
    "nanmin",
    "nanstd",
    "nansum",
    "nanvar",
    "std",
    "sum",
    "var",
)
_NUMPY_TYPES = (
    "float16",
    "float32",
    "float64",
    "int8",
    "int16",
    "int32",
    "int64",
    "uint8",
    "bool_",
)

# In sklearn.metrics.__all__, but not score or distance functions.
_NOT_SCORE_FUNCTIONS = frozenset(
    {
        "check_scoring",
        "get_scorer",
        "get_scorer_names",
        "make_scorer",
        "classification_report",
        "check_paired_arrays",
        "check_pairwise_arrays",
        "distance_metrics",
        "kernel_metrics",
        "pairwise_distances_chunked",
    }
)

Kind = Literal["estimator", "kernel", "function", "type"]


@dataclass(frozen=True)
class Resolved:
    """What a name resolved to.

    Attributes
    ----------
    obj : object
        The class or function.
    kind : {"estimator", "kernel", "function", "type"}
        An estimator class, a Gaussian-process kernel class, a function, or a
        number type (``numpy.float32``), which is passed as it is.
    name : str
        The dotted name as written.
    """

    obj: Any
    kind: Kind
    name: str


@dataclass(frozen=True)
class _Table:
    names: Mapping[str, Resolved]
    by_class_name: Mapping[str, list[str]]
    callables: frozenset[int]


def _public_paths(obj: Any, name: str) -> list[str]:
    """Every public module path under which scikit-learn exports ``obj`` as ``name``."""
    parts = obj.__module__.split(".")
    paths = []
    for i in range(2, len(parts) + 1):
        if any(p.startswith("_") for p in parts[:i]):
            break
        mod = sys.modules.get(".".join(parts[:i]))
        if mod is not None and getattr(mod, name, None) is obj:
            paths.append(".".join(parts[:i]) + "." + name)
    return paths


@lru_cache(maxsize=1)
def _table() -> _Table:
    from sklearn.utils import all_estimators

    names: dict[str, Resolved] = {}

    def add(path: str, obj: Any, kind: Kind) -> None:
        names[path] = Resolved(obj=obj, kind=kind, name=path)

    with warnings.catch_warnings():
        warnings.simplefilter(
            "ignore"
        )  # deprecation notices of modules imported on the way
        estimators = all_estimators()
    for cls_name, cls in estimators:
        for path in _public_paths(cls, cls_name):
            add(path, cls, "estimator")

    kernels = importlib.import_module("sklearn.gaussian_process.kernels")
    base_kernel = kernels.Kernel
    for kname, kcls in vars(kernels).items():
        if (
            inspect.isclass(kcls)
            and issubclass(kcls, base_kernel)
            and kcls.__module__ == kernels.__name__
            and not inspect.isabstract(kcls)
            and not kname.startswith("_")
            and kcls is not base_kernel
        ):
            add(f"sklearn.gaussian_process.kernels.{kname}", kcls, "kernel")

    metrics = importlib.import_module("sklearn.metrics")
    pairwise = importlib.import_module("sklearn.metrics.pairwise")
    selection = importlib.import_module("sklearn.feature_selection")
    for fname in metrics.__all__:
        fn = getattr(metrics, fname)
        if inspect.isfunction(fn) and fname not in _NOT_SCORE_FUNCTIONS:
            add(f"sklearn.metrics.{fname}", fn, "function")
    for fname, fn in vars(pairwise).items():
        if (
            inspect.isfunction(fn)
            and not fname.startswith("_")
            and fname not in _NOT_SCORE_FUNCTIONS
            and fn.__module__.startswith("sklearn.metrics")
        ):
            add(f"sklearn.metrics.pairwise.{fname}", fn, "function")
    for fname in selection.__all__:
        fn = getattr(selection, fname)
        if inspect.isfunction(fn):
            add(f"sklearn.feature_selection.{fname}", fn, "function")
    for fname in _NUMPY_FUNCTIONS:
        fn = getattr(np, fname, None)
        if fn is not None:
            add(f"numpy.{fname}", fn, "function")
    for tname in _NUMPY_TYPES:
        add(f"numpy.{tname}", getattr(np, tname), "type")
    # foldwall's own steps, named like scikit-learn's (the package itself is never allowed)
    from ..audit import AcquisitionEffectRemover

    add(
        "foldwall.audit.AcquisitionEffectRemover", AcquisitionEffectRemover, "estimator"
    )

    by_class: dict[str, list[str]] = {}
    for path in names:
        by_class.setdefault(path.rpartition(".")[2], []).append(path)
    callables = frozenset(id(r.obj) for r in names.values())
    return _Table(names=names, by_class_name=by_class, callables=callables)


def sklearn_names() -> Mapping[str, Resolved]:
    """The whole built-in table: dotted name -> :class:`Resolved` (scikit-learn and numpy)."""
    return _table().names


def allowed_functions() -> list[Callable[..., Any]]:
    """Functions of the built-in table (score, distance and element-wise functions)."""
    return [r.obj for r in _table().names.values() if r.kind == "function"]


def _check_root(root: str, *, key: str) -> str:
    if not _ROOT.match(root):
        raise SpecError(
            f"{key}: '{_short(root)}' is not a module name; give a top-level package such as mypackage"
        )
    if root == "sklearn":
        raise SpecError(
            f"{key}: scikit-learn is always available through its list of estimators; remove 'sklearn' here"
        )
    if root in NEVER_ALLOWED:
        raise SpecError(
            f"{key}: '{root}' cannot be allowed: it is not a library of estimators (it can read or write "
            f"files or run programs); allow only packages that define estimators"
        )
    return root


def _short(text: str) -> str:
    return sanitise(text, limit=80)


class AllowList:
    """The names a study may use: the built-in table plus packages the user allowed.

    Parameters
    ----------
    allow : iterable of str, default=()
        Top-level packages the person running the study allows (``--allow``).
        ``mypackage.models`` allows all of ``mypackage``.
    declared : iterable of str, default=()
        Packages the study file says it needs. Declaring never allows.
    key : str, default="--allow"
        How messages name ``allow``.

    Raises
    ------
    SpecError
        If an allowed name is not a module name, is ``sklearn``, or can never be
        allowed (see :data:`NEVER_ALLOWED`).
    """

    def __init__(
        self,
        allow: Iterable[str] = (),
        *,
        declared: Iterable[str] = (),
        key: str = "--allow",
    ) -> None:
        if isinstance(allow, str):
            allow = [allow]
        self.key = key
        self.modules: frozenset[str] = frozenset(
            _check_root(str(m).split(".", 1)[0], key=key) for m in allow
        )
        self.declared: tuple[str, ...] = tuple(
            dict.fromkeys(str(m).split(".", 1)[0] for m in declared)
        )

    def check_declared(self, *, key: str = "needs_modules") -> None:
        """Refuse when the study declares a package that the user has not allowed.

        Raises
        ------
        SpecError
            Naming the ``--allow`` flags to add.
        """
        for m in self.declared:
            if not _ROOT.match(m):
                raise SpecError(
                    f"{key}: '{_short(m)}' is not a module name; give a top-level package name"
                )
            if m in NEVER_ALLOWED or m == "sklearn":
                _check_root(m, key=key)
        missing = [m for m in self.declared if m not in self.modules]
        if missing:
            flags = " ".join(f"--allow {m}" for m in missing)
            raise SpecError(
                f"{key}: the study needs {', '.join(missing)}, whose code would run; only you can allow it: "
                f"if you trust it, run again with {flags}"
            )

    # -- names ----------------------------------------------------------------
    def resolve(
        self, name: object, *, where: str, want: Literal["step", "value"] = "step"
    ) -> Resolved:
        """Look ``name`` up, then (only if it is allowed) import it.

        Parameters
        ----------
        name : str
            A full dotted name, ``package.module.Name``.
        where : str
            The study-file key, for messages.
        want : {"step", "value"}
            A step needs an estimator class; a parameter value may also be a kernel
            class, an allowed function or a number type.

        Raises
        ------
        SpecError
            One line naming the key and the fix; nothing has been imported then.
        """
        if not isinstance(name, str) or not _DOTTED.match(name):
            raise SpecError(
                f"{where}: '{_short(str(name))}' must be a full import path such as "
                f"sklearn.linear_model.LogisticRegression"
            )
        parts = name.split(".")
        if any(
            p == "__main__" or (p.startswith("__") and p.endswith("__")) for p in parts
        ):
            raise SpecError(
                f"{where}: '{_short(name)}' names a special module or attribute, which is never allowed"
            )
        table = _table()
        found = table.names.get(name)
        root = parts[0]
        if found is None and root in ("sklearn", "numpy"):
            raise SpecError(f"{where}: {self._unknown(name, want)}")
        if found is None:
            found = self._third_party(name, parts, where=where)
        if want == "step" and found.kind != "estimator":
            raise SpecError(
                f"{where}: '{_short(name)}' is not a scikit-learn estimator class; a step or model "
                f"needs one, such as sklearn.preprocessing.StandardScaler"
            )
        return found

    def _unknown(self, name: str, want: str) -> str:
        table = _table()
        last = name.rpartition(".")[2]
        pool = [
            p
            for p, r in table.names.items()
            if want == "value" or r.kind == "estimator"
        ]
        same = [p for p in table.by_class_name.get(last, []) if p in pool]
        close = same[:1] or difflib.get_close_matches(name, pool, n=1, cutoff=0.85)
        if close:
            return f"'{_short(name)}' is not on the list of names a study may use; did you mean '{close[0]}'?"
        if want == "step":
            return (
                f"'{_short(name)}' is not a scikit-learn estimator class a study may use; name one such as "
                f"sklearn.linear_model.LogisticRegression"
            )
        return (
            f"'{_short(name)}' is not on the list of values a study may use (scikit-learn estimators, "
            f"kernels, score and distance functions, and numpy element-wise functions)"
        )

    def _third_party(self, name: str, parts: list[str], *, where: str) -> Resolved:
        root = parts[0]
        if root in NEVER_ALLOWED:
            raise SpecError(
                f"{where}: '{_short(name)}' is never allowed: '{root}' is not a library of estimators; "
                f"name a scikit-learn estimator instead"
            )
        if root not in self.modules:
            declared = (
                " (the study file declares it needs it)"
                if root in self.declared
                else ""
            )
            raise SpecError(
                f"{where}: '{_short(name)}' is outside scikit-learn{declared}; its code would run, so only you can "
                f"allow it: if you trust {root}, run again with --allow {root}"
            )
        mod_name, _, attr = name.rpartition(".")
        try:
            module = importlib.import_module(mod_name)
        except ImportError as exc:
            raise SpecError(
                f"{where}: cannot import module '{_short(mod_name)}' for '{_short(name)}' ({exc})"
            ) from None
        if not hasattr(module, attr):
            public = [n for n in dir(module) if not n.startswith("_")]
            close = difflib.get_close_matches(attr, public, n=1)
            hint = f"; did you mean '{mod_name}.{close[0]}'?" if close else ""
            raise SpecError(
                f"{where}: '{_short(mod_name)}' has no '{_short(attr)}'{hint}"
            )
        obj = getattr(module, attr)
        home = (getattr(obj, "__module__", "") or "").split(".", 1)[0]
        table = _table()
        if home in ("sklearn", "numpy") and id(obj) in table.callables:
            return next(r for r in table.names.values() if r.obj is obj)
        if home not in self.modules:
            raise SpecError(
                f"{where}: '{_short(name)}' is defined in '{_short(home or '?')}', which is not an allowed module"
            )
        from sklearn.base import BaseEstimator

        if inspect.isclass(obj):
            if issubclass(obj, BaseEstimator) and hasattr(obj, "fit"):
                return Resolved(obj=obj, kind="estimator", name=name)
            raise SpecError(
                f"{where}: '{_short(name)}' is a class but not a scikit-learn style estimator"
            )
        if inspect.isfunction(obj) or inspect.isbuiltin(obj):
            return Resolved(obj=obj, kind="function", name=name)
        raise SpecError(
            f"{where}: '{_short(name)}' is neither an estimator class nor a function"
        )

    # -- values reaching steps --------------------------------------------------
    def callable_ok(self, obj: Any) -> bool:
        """Whether ``obj`` (a callable found in a step's parameters) may stay there.

        Allowed: the functions and classes of the built-in table, number types,
        and anything defined in a package the user allowed.
        """
        if id(obj) in _table().callables:
            return True
        if inspect.isclass(obj) and (
            issubclass(obj, np.generic) or obj in (float, int, bool, str, complex)
        ):
            return True
        home = (getattr(obj, "__module__", "") or "").split(".", 1)[0]
        return home in self.modules
