"""From names in a study file to scikit-learn objects, under the allow-list and the gate.

A study file from a colleague must not run arbitrary code, read files or write
them. Every ``use:`` is looked up in the allow-list (``_allow.py``) before anything
is imported; packages besides scikit-learn are usable only when the person
running the study allows them (``--allow``, or ``allow=`` in Python), whatever the
file declares under ``needs_modules``. Every built pipeline, and every value of
its search space set on it, then passes the parameter gate (``_gate.py``).
"""

from __future__ import annotations

import inspect
from collections.abc import Iterable
from typing import Any

from sklearn.base import clone

from .._candidate import Candidate, is_label_free
from ..exceptions import SpecError, first_line
from ..search import Choice, Range, normalise_space
from ._allow import AllowList
from ._gate import STUDY_FILE, check_estimator, check_pipeline
from ._schema import CandidateSpec, StepSpec, StudySpec

__all__ = ["build_candidates", "allow_list_for"]


def allow_list_for(spec: StudySpec, allow: Iterable[str] = ()) -> AllowList:
    """The allow-list of a study: what the user allowed, checked against what the file declares.

    Raises
    ------
    SpecError
        When the file declares a package that ``allow`` does not hold (naming the
        ``--allow`` flag to add), or ``allow`` holds a package that can never be allowed.
    """
    declared = [*spec.needs_modules, *spec.allow_modules]
    key = (
        "needs_modules"
        if spec.needs_modules or not spec.allow_modules
        else "allow_modules"
    )
    al = AllowList(allow, declared=declared, key="--allow")
    al.check_declared(key=key)
    return al


def _resolve_value(value: Any, *, allow: AllowList, where: str) -> Any:
    """Parameter values may nest estimators ``{use: ..., with: ...}`` or name functions ``{use: ...}``."""
    if isinstance(value, dict) and "use" in value:
        unknown = set(value) - {"use", "with"}
        if unknown:
            raise SpecError(
                f"{where}: unknown key(s) {', '.join(sorted(map(str, unknown)))} beside 'use' "
                f"(only 'with' may go there)"
            )
        found = allow.resolve(value["use"], where=where, want="value")
        if found.kind in ("estimator", "kernel"):
            with_ = value.get("with") or {}
            if not isinstance(with_, dict):
                raise SpecError(
                    f"{where}.with: must be a mapping of parameter names to values"
                )
            kwargs = {
                str(k): _resolve_value(v, allow=allow, where=f"{where}.with.{k}")
                for k, v in with_.items()
            }
            return _construct(found.obj, kwargs, where=where)
        if value.get("with"):
            raise SpecError(
                f"{where}: '{found.name}' is a {found.kind}; it takes no 'with'"
            )
        return found.obj
    if isinstance(value, list):
        items = [_resolve_value(v, allow=allow, where=where) for v in value]
        if (
            2 <= len(items) <= 3
            and isinstance(items[0], str)
            and hasattr(items[1], "get_params")
        ):
            return tuple(
                items
            )  # (name, step) or (name, step, columns), as scikit-learn writes them
        return items
    if isinstance(value, dict):
        return {
            k: _resolve_value(v, allow=allow, where=f"{where}.{k}")
            for k, v in value.items()
        }
    return value


def _construct(cls: type, kwargs: dict[str, Any], *, where: str) -> Any:
    valid = set(inspect.signature(cls).parameters)
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
    if callable(check) and hasattr(est, "_parameter_constraints"):
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
    step: StepSpec, *, allow: AllowList, where: str
) -> tuple[str, Any, bool]:
    cls = allow.resolve(step.use, where=f"{where}.use", want="step").obj
    kwargs = {
        k: _resolve_value(v, allow=allow, where=f"{where}.with.{k}")
        for k, v in step.with_.items()
    }
    est = _construct(cls, kwargs, where=where)
    check_estimator(est, where=where, allow=allow, policy=STUDY_FILE)
    lf = step.label_free if step.label_free is not None else is_label_free(est)
    return step.name, est, lf


def _build_one(
    spec: StudySpec, cand: CandidateSpec, *, allow: AllowList, role: str, where: str
) -> Candidate:
    built = []
    for i, s in enumerate(spec.steps):
        built.append(_build_step(s, allow=allow, where=f"steps[{i}]"))
    for i, s in enumerate(cand.steps):
        built.append(_build_step(s, allow=allow, where=f"{where}.steps[{i}]"))
    name, model, _ = _build_step(cand.model, allow=allow, where=f"{where}.model")
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
                _resolve_value(v, allow=allow, where=f"{where}.space.{key}")
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
    check_pipeline(c.steps, c.space, where=where, allow=allow, policy=STUDY_FILE)
    try:
        c.check_space()
        _check_space_values(c, grid=spec.search.method == "grid")
    except SpecError as exc:
        raise SpecError(f"{where}.space: {exc}") from None
    return c


def build_candidates(
    spec: StudySpec, *, allow: Iterable[str] | AllowList = ()
) -> list[Candidate]:
    """Candidates and baselines of a study, as unfitted objects.

    Parameters
    ----------
    spec : StudySpec
    allow : iterable of str or AllowList, default=()
        Packages besides scikit-learn that the person running the study allows.
    """
    al = allow if isinstance(allow, AllowList) else allow_list_for(spec, allow)
    out = [
        _build_one(spec, c, allow=al, role="candidate", where=f"candidates[{i}]")
        for i, c in enumerate(spec.candidates)
    ]
    out += [
        _build_one(spec, b, allow=al, role="baseline", where=f"baselines[{i}]")
        for i, b in enumerate(spec.baselines)
    ]
    return out
