"""From names in a study file to scikit-learn objects, under an import allow-list.

A study file from a colleague must not run arbitrary code. It may only name
classes (and, as parameter values, functions such as ``f_classif``) from
scikit-learn, or from top-level modules the user allows explicitly (``--allow``
on the command line, or ``allow_modules`` in the file). Anything resolved must be
a scikit-learn style estimator class; modules that reach the operating system
are refused even when listed.
"""

from __future__ import annotations

import importlib
import inspect
from collections.abc import Iterable
from typing import Any

from sklearn.base import BaseEstimator, clone

from .._candidate import Candidate, is_label_free
from ..exceptions import SpecError, first_line
from ..search import Choice, Range, normalise_space
from ._schema import CandidateSpec, StepSpec, StudySpec

__all__ = ["resolve_object", "build_candidates", "allowed_roots"]

_NEVER = {
    "os",
    "sys",
    "subprocess",
    "shutil",
    "builtins",
    "importlib",
    "socket",
    "pickle",
    "ctypes",
    "multiprocessing",
    "runpy",
    "code",
    "pty",
    "signal",
    "tempfile",
    "pathlib",
    "io",
    "http",
    "urllib",
    "requests",
    "eval",
    "exec",
    "marshal",
    "shelve",
    "joblib",
}


# Modules of scikit-learn whose functions may be passed as parameter values.
_VALUE_FUNCTION_MODULES = ("sklearn.feature_selection", "sklearn.metrics")
# Constructor arguments that make an estimator write files.
_WRITING_PARAMS = {"memory"}


def allowed_roots(extra: Iterable[str] = (), *, key: str = "allow_modules") -> set[str]:
    roots = {"sklearn"}
    for m in extra:
        root = m.split(".", 1)[0]
        if root in _NEVER:
            raise SpecError(
                f"{key}: '{m}' cannot be allowed, it reaches the operating system; "
                f"allow only modules that define estimators"
            )
        roots.add(root)
    return roots


def resolve_object(
    path: str, *, roots: set[str], where: str, want: str = "class"
) -> Any:
    """Import ``pkg.module.Name`` if its top-level package is allowed."""
    if not isinstance(path, str) or "." not in path:
        raise SpecError(
            f"{where}: '{path}' must be a full import path such as sklearn.linear_model.LogisticRegression"
        )
    root = path.split(".", 1)[0]
    if root in _NEVER:
        raise SpecError(
            f"{where}: '{path}' is never allowed: '{root}' reaches the operating system; "
            f"name a scikit-learn estimator class instead"
        )
    if root not in roots:
        raise SpecError(
            f"{where}: '{path}' is outside the allowed modules ({', '.join(sorted(roots))}); "
            f"if you trust it, allow it with --allow {root} or 'allow_modules: [{root}]'"
        )
    mod_name, _, attr = path.rpartition(".")
    try:
        module = importlib.import_module(mod_name)
    except ImportError as exc:
        import difflib
        import pkgutil

        parent, _, last = mod_name.rpartition(".")
        try:
            siblings = (
                [
                    m.name
                    for m in pkgutil.iter_modules(
                        importlib.import_module(parent).__path__
                    )
                ]
                if parent
                else []
            )
        except (ImportError, AttributeError):
            siblings = []
        close = difflib.get_close_matches(
            last, [m for m in siblings if not m.startswith("_")], n=1
        )
        hint = f"; did you mean '{parent}.{close[0]}.{attr}'?" if close else ""
        raise SpecError(
            f"{where}: cannot import module '{mod_name}' for '{path}' ({exc}){hint}"
        ) from None
    if not hasattr(module, attr):
        import difflib

        public = [n for n in dir(module) if not n.startswith("_")]
        close = difflib.get_close_matches(attr, public, n=1)
        hint = f"; did you mean '{mod_name}.{close[0]}'?" if close else ""
        raise SpecError(f"{where}: '{mod_name}' has no '{attr}'{hint}")
    obj = getattr(module, attr)
    obj_root = (getattr(obj, "__module__", "") or "").split(".", 1)[0]
    if obj_root and obj_root not in roots:
        raise SpecError(
            f"{where}: '{path}' is defined in '{obj_root}', which is not an allowed module"
        )
    if want == "class":
        if not (
            inspect.isclass(obj)
            and issubclass(obj, BaseEstimator)
            and hasattr(obj, "fit")
        ):
            raise SpecError(f"{where}: '{path}' is not a scikit-learn estimator class")
    elif want == "value":
        if not (inspect.isclass(obj) or inspect.isfunction(obj) or callable(obj)):
            raise SpecError(f"{where}: '{path}' is neither a class nor a function")
        if inspect.isclass(obj) and not issubclass(obj, BaseEstimator):
            raise SpecError(
                f"{where}: '{path}' is a class but not a scikit-learn estimator"
            )
        if not inspect.isclass(obj) and root == "sklearn":
            # A function handed to an estimator gets called by it: from scikit-learn,
            # only score and distance functions, which compute and never write.
            home = getattr(obj, "__module__", "") or ""
            if not any(
                home == m or home.startswith(m + ".") for m in _VALUE_FUNCTION_MODULES
            ):
                raise SpecError(
                    f"{where}: '{path}' cannot be passed as a value; functions from scikit-learn are limited to "
                    f"{', '.join(_VALUE_FUNCTION_MODULES)} (score and distance functions)"
                )
    return obj


def _resolve_value(value: Any, *, roots: set[str], where: str) -> Any:
    """Parameter values may nest estimators ``{use: ..., with: ...}`` or name functions ``{use: ...}``."""
    if isinstance(value, dict) and "use" in value:
        unknown = set(value) - {"use", "with"}
        if unknown:
            raise SpecError(
                f"{where}: unknown key(s) {', '.join(sorted(unknown))} beside 'use' (only 'with' may go there)"
            )
        obj = resolve_object(value["use"], roots=roots, where=where, want="value")
        if inspect.isclass(obj):
            kwargs = {
                k: _resolve_value(v, roots=roots, where=f"{where}.with.{k}")
                for k, v in (value.get("with") or {}).items()
            }
            return _construct(obj, kwargs, where=where)
        if value.get("with"):
            raise SpecError(
                f"{where}: '{value['use']}' is a function; it takes no 'with'"
            )
        return obj
    if isinstance(value, list):
        return [_resolve_value(v, roots=roots, where=where) for v in value]
    return value


def _construct(cls: type, kwargs: dict[str, Any], *, where: str) -> Any:
    valid = set(inspect.signature(cls).parameters)
    for k in _WRITING_PARAMS & set(kwargs):
        if kwargs[k] is not None:
            raise SpecError(
                f"{where}.with.{k}: a study file may not set '{k}' (it makes {cls.__name__} write files); "
                f"remove it"
            )
    for k in kwargs:
        if k not in valid:
            import difflib

            close = difflib.get_close_matches(k, sorted(valid), n=1)
            hint = f"; did you mean '{close[0]}'?" if close else ""
            raise SpecError(
                f"{where}.with: {cls.__name__} has no parameter '{k}'{hint}"
            )
    try:
        est = cls(**kwargs)
        _validate(est)
    except (TypeError, ValueError) as exc:
        raise SpecError(
            f"{where}.with: {cls.__name__} rejected its arguments: {first_line(exc)}"
        ) from None
    return est


def _validate(est: Any) -> None:
    """scikit-learn checks constructor arguments only in fit; check them now (before any fitting)."""
    check = getattr(est, "_validate_params", None)
    if callable(check):
        check()


def _check_space_values(c: Candidate, *, grid: bool) -> None:
    """Every listed value (and both ends of every range) must be accepted by its step."""
    steps = dict(c.steps)
    for key, dim in c.space.items():
        if grid and isinstance(dim, Range):
            dim.grid(key)  # a range on a grid needs grid_points
        if isinstance(dim, Choice):
            values = list(dim.values)
        elif isinstance(dim, Range):
            values = (
                [int(dim.low), int(dim.high)] if dim.integer else [dim.low, dim.high]
            )
        else:
            continue
        step, param = key.split("__", 1)
        for v in values:
            est = clone(steps[step])
            try:
                est.set_params(**{param: v})
                _validate(est)
            except (TypeError, ValueError) as exc:
                hint = ""
                if isinstance(dim, Range) and not dim.integer and float(v).is_integer():
                    try:
                        est.set_params(**{param: int(v)})
                        _validate(est)
                        hint = "; add 'integer: true' to the range"
                    except (TypeError, ValueError):
                        pass
                raise SpecError(
                    f"search space '{key}': the value {v!r} is not accepted: {first_line(exc)}{hint}"
                ) from None


def _build_step(
    step: StepSpec, *, roots: set[str], where: str
) -> tuple[str, Any, bool]:
    cls = resolve_object(step.use, roots=roots, where=f"{where}.use")
    kwargs = {
        k: _resolve_value(v, roots=roots, where=f"{where}.with.{k}")
        for k, v in step.with_.items()
    }
    est = _construct(cls, kwargs, where=where)
    lf = step.label_free if step.label_free is not None else is_label_free(est)
    return step.name, est, lf


def _build_one(
    spec: StudySpec, cand: CandidateSpec, *, roots: set[str], role: str, where: str
) -> Candidate:
    built = []
    for i, s in enumerate(spec.steps):
        built.append(_build_step(s, roots=roots, where=f"steps[{i}]"))
    for i, s in enumerate(cand.steps):
        built.append(_build_step(s, roots=roots, where=f"{where}.steps[{i}]"))
    name, model, _ = _build_step(cand.model, roots=roots, where=f"{where}.model")
    built.append((name, model, False))
    names = [b[0] for b in built]
    dup = sorted({n for n in names if names.count(n) > 1})
    if dup:
        raise SpecError(
            f"{where}: step name(s) {', '.join(dup)} used twice in one pipeline; give each step its own name"
        )
    for n, est, _ in built[:-1]:
        if not hasattr(est, "transform"):
            raise SpecError(
                f"{where}: step '{n}' ({type(est).__name__}) has no transform(); only the last step may be a model"
            )
    space = {}
    for key, dim in cand.space.items():
        if isinstance(dim, list):
            dim = [
                _resolve_value(v, roots=roots, where=f"{where}.space.{key}")
                for v in dim
            ]
        space[key] = dim
    try:
        nspace = normalise_space(space)
    except SpecError as exc:
        raise SpecError(f"{where}.space: {exc}") from None
    c = Candidate(
        name=cand.name,
        steps=tuple((n, e) for n, e, _ in built),
        space=nspace,
        role=role,
        label_free=tuple(lf for _, _, lf in built),
    )
    try:
        c.check_space()
        _check_space_values(c, grid=spec.search.method == "grid")
    except SpecError as exc:
        raise SpecError(f"{where}.space: {exc}") from None
    return c


def build_candidates(spec: StudySpec, *, allow: Iterable[str] = ()) -> list[Candidate]:
    """Candidates and baselines of a study, as unfitted objects."""
    roots = allowed_roots(allow, key="--allow") | allowed_roots(spec.allow_modules)
    out = [
        _build_one(spec, c, roots=roots, role="candidate", where=f"candidates[{i}]")
        for i, c in enumerate(spec.candidates)
    ]
    out += [
        _build_one(spec, b, roots=roots, role="baseline", where=f"baselines[{i}]")
        for i, b in enumerate(spec.baselines)
    ]
    return out
