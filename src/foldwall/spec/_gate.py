"""One gate for every parameter that reaches a step, whatever route it took.

A parameter can reach a step under ``with:``, through a candidate's search space,
through a nested ``a__b__c`` key, or inside the children of a ``Pipeline``,
``FeatureUnion`` or ``ColumnTransformer``. The gate does not care which: it walks
the *built* estimator (and, for the search space, the estimator with each value
of the space set on it) and checks every parameter it finds, at every depth.

Refused, in every study:

- ``memory`` (not ``None``): scikit-learn caches fitted steps in that folder and
  loads them back with pickle, so a planted file would run code;
- ``input`` other than ``content``: text vectorizers would read the files named
  in the data;
- any parameter whose name ends in a file word (``..._path``, ``..._file``,
  ``..._dir``, ``..._folder``, ``..._url``, ...) or starts with ``save_``/``dump_``
  when its value is text or a path: third-party estimators use such names.

Refused in study files (not in Python code, which is trusted anyway):

- a function or class that is not on the allow-list (see ``_allow.py``);
- ``n_jobs`` other than ``None`` or 1: steps do not start their own worker
  processes; foldwall's pool (``--jobs``) does the parallel work;
- ``param_grid`` / ``param_distributions`` (a search inside a step): foldwall runs
  the search itself, from the candidate's ``space:``, where the gate sees it.
"""

from __future__ import annotations

import inspect
import os
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, Literal

from ..exceptions import SpecError
from ..table import sanitise
from ._allow import AllowList

__all__ = [
    "FILE_PARAMETERS",
    "PYTHON_CODE",
    "STUDY_FILE",
    "GatePolicy",
    "check_estimator",
    "check_pipeline",
    "refusal",
]

FILE_PARAMETERS: Mapping[str, str] = {
    "memory": "caches fitted steps in a folder on disk and loads them back with pickle",
    "input": "reads the files named in the data instead of the data itself",
}
"""scikit-learn's own parameters that read or write files, and what they do."""

_FILE_WORDS = frozenset(
    {
        "path",
        "paths",
        "filepath",
        "file",
        "files",
        "filename",
        "filenames",
        "dir",
        "dirs",
        "directory",
        "folder",
        "cachedir",
        "logdir",
        "location",
        "url",
        "uri",
        "checkpoint",
        "checkpoints",
    }
)
_FILE_VERBS = frozenset({"save", "dump", "load", "export", "write", "log"})
_MAX_OBJECTS = 10_000


@dataclass(frozen=True)
class GatePolicy:
    """What the gate lets through besides plain values.

    Parameters
    ----------
    callables : {"listed", "any"}
        "listed": only functions and classes of the allow-list (study files);
        "any": whatever Python code passed (it could run anything anyway).
    own_processes : bool
        Whether a step may set ``n_jobs`` to start its own worker processes.
    inner_search : bool
        Whether a step may carry its own ``param_grid``/``param_distributions``.
    """

    callables: Literal["listed", "any"] = "listed"
    own_processes: bool = False
    inner_search: bool = False


STUDY_FILE = GatePolicy()
PYTHON_CODE = GatePolicy(callables="any", own_processes=True, inner_search=True)


def _is_texty(value: Any) -> bool:
    return isinstance(value, (str, bytes, os.PathLike))


def refusal(name: str, value: Any, *, policy: GatePolicy = STUDY_FILE) -> str | None:
    """Why parameter ``name`` may not take ``value`` (None when it may).

    Parameters
    ----------
    name : str
        The parameter's own name (the last part of ``a__b__name``).
    value : object
        Its value.
    policy : GatePolicy
    """
    if name == "memory" and value is not None:
        return f"'memory' {FILE_PARAMETERS['memory']}"
    if name == "input" and value not in (None, "content"):
        return f"'input: {_shown(value)}' {FILE_PARAMETERS['input']}; only 'content' is allowed"
    if name == "n_jobs" and not policy.own_processes and value not in (None, 1):
        return (
            f"'n_jobs: {_shown(value)}' starts worker processes inside a step; foldwall's pool (--jobs) does the "
            f"parallel work, so leave n_jobs out"
        )
    if name in ("param_grid", "param_distributions") and not policy.inner_search:
        return (
            f"'{name}' runs a search the gate cannot see inside a step; foldwall runs the search itself: "
            f"put the values in the candidate's space"
        )
    tokens = name.lower().split("_")
    if _is_texty(value) and (
        tokens[-1] in _FILE_WORDS or (len(tokens) > 1 and tokens[0] in _FILE_VERBS)
    ):
        return f"'{name}' names a file or folder ({_shown(value)}); a step may not read or write files"
    return None


def _shown(value: Any) -> str:
    return sanitise(repr(value) if not isinstance(value, str) else value, limit=40)


def _has_params(obj: Any) -> bool:
    return not inspect.isclass(obj) and callable(getattr(obj, "get_params", None))


def check_estimator(
    estimator: Any,
    *,
    where: str,
    allow: AllowList | None = None,
    policy: GatePolicy = STUDY_FILE,
) -> None:
    """Check every parameter of ``estimator`` and of everything nested in it.

    Parameters
    ----------
    estimator : estimator
        A built (unfitted) step.
    where : str
        The study-file key or Python argument that built it (for messages).
    allow : AllowList, default=None
        Decides which callables may stay (with ``policy.callables == "listed"``);
        None means the built-in list only.
    policy : GatePolicy, default=STUDY_FILE

    Raises
    ------
    SpecError
        One line: where, which nested parameter (named as scikit-learn's
        ``set_params`` would), what it would do, the fix.
    """
    allow = allow if allow is not None else AllowList()
    seen: set[int] = set()
    # (prefix of the owning estimator, label of this value, the value, owner's class name)
    stack: list[tuple[str, str, Any, str]] = [("", "", estimator, "")]
    n = 0
    while stack:
        base, label, obj, owner = stack.pop()
        n += 1
        if n > _MAX_OBJECTS:
            raise SpecError(
                f"{where}: the step nests more than {_MAX_OBJECTS} values; simplify it"
            )
        if _has_params(obj):
            if id(obj) in seen:
                continue
            seen.add(id(obj))
            inner = f"{base}{label}__" if label else base
            try:
                params = obj.get_params(deep=False)
            except Exception as exc:  # noqa: BLE001 - third-party code may raise anything
                raise SpecError(
                    f"{where}: the parameters of {type(obj).__name__} cannot be listed "
                    f"({type(exc).__name__}), so they cannot be checked; use another step"
                ) from None
            cls = type(obj).__name__
            for name, value in params.items():
                why = refusal(name, value, policy=policy)
                if why is not None:
                    raise SpecError(
                        f"{where}: parameter '{inner}{name}' of {cls}: {why}; remove it"
                    )
                stack.append((inner, name, value, cls))
        elif isinstance(obj, (str, bytes, int, float, bool, type(None))):
            continue
        elif isinstance(obj, Mapping):
            for k, v in obj.items():
                stack.append((base, f"{label}[{_shown(k)}]", v, owner))
        elif isinstance(obj, (list, tuple)):
            for i, item in enumerate(obj):
                if (
                    isinstance(item, (tuple, list))
                    and len(item) in (2, 3)
                    and isinstance(item[0], str)
                ):
                    # (name, step) of Pipeline, FeatureUnion, Voting*, Stacking*;
                    # (name, step, columns) of ColumnTransformer: named as set_params names them
                    stack.append((base, item[0], item[1], owner))
                    for extra in item[2:]:
                        stack.append((base, f"{item[0]}[columns]", extra, owner))
                else:
                    stack.append((base, f"{label}[{i}]", item, owner))
        elif (
            callable(obj)
            and policy.callables == "listed"
            and not allow.callable_ok(obj)
        ):
            shown = getattr(obj, "__qualname__", None) or type(obj).__name__
            home = getattr(obj, "__module__", None) or "?"
            raise SpecError(
                f"{where}: parameter '{base}{label}' of {owner} is {_shown(home)}.{_shown(shown)}, a callable "
                f"that is not on the allow-list; a study may pass only scikit-learn's score and distance "
                f"functions, numpy element-wise functions, and what --allow admits"
            )


def _dimension_values(dim: Any) -> list[Any]:
    """The values a search-space dimension can give (both ends of a range)."""
    for attr in ("values", "choices"):
        vals = getattr(dim, attr, None)
        if isinstance(vals, (list, tuple)):
            return list(vals)
    if hasattr(dim, "low") and hasattr(dim, "high"):
        return [dim.low, dim.high]
    if isinstance(dim, (list, tuple)):
        return list(dim)
    return [dim]


def _with_value(est: Any, key: str, value: Any) -> Any:
    """``est`` with ``key`` set to ``value``, or None when scikit-learn refuses the key."""
    try:
        est.set_params(**{key: value})
    except (ValueError, TypeError, AttributeError):
        return None
    return est


def check_pipeline(
    steps: Sequence[tuple[str, Any]],
    space: Mapping[str, Any],
    *,
    where: str,
    allow: AllowList | None = None,
    policy: GatePolicy = STUDY_FILE,
) -> None:
    """Gate a candidate: every step as built, and every step with each space value set on it.

    Parameters
    ----------
    steps : sequence of (name, estimator)
    space : mapping
        ``STEP__param`` (or ``STEP__a__b__param``) -> list of values, a range or an
        optuna distribution.
    where : str
        The candidate's key, e.g. ``candidates[0]``.
    allow, policy
        As for :func:`check_estimator`.

    Raises
    ------
    SpecError
        One line naming the step or space key.
    """
    from sklearn.base import clone

    by_name = dict(steps)
    for name, est in steps:
        check_estimator(
            est, where=f"{where}: step '{name}'", allow=allow, policy=policy
        )
    for key, dim in space.items():
        step, _, rest = str(key).partition("__")
        here = f"{where}.space.{key}"
        values = _dimension_values(dim)
        last = str(key).rsplit("__", 1)[-1]
        for value in values:
            why = refusal(last, value, policy=policy)
            if why is not None:
                raise SpecError(f"{here}: {why}; remove it")
        est = by_name.get(step)
        if est is None or not rest:
            continue  # an unknown step or key: the space check reports it
        for value in values:
            trial = _with_value(clone(est), rest, value)
            if trial is None:
                continue  # an unknown parameter: the space check reports it
            check_estimator(trial, where=here, allow=allow, policy=policy)
