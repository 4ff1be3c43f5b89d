"""One-line messages for validation errors of settings and study files.

The same function words the errors of a study file (``key 'control.alpha': ...``)
and of ``foldwall.wrap`` arguments (``argument 'alpha': ...``), so both entry
points say the same thing about the same bad value.
"""

from __future__ import annotations

import difflib
import json
from collections.abc import Callable, Mapping
from typing import Any

from pydantic import BaseModel, ValidationError

from ..exceptions import SpecError
from ._models import (
    AuditSettings,
    CompareSettings,
    ControlSettings,
    HoldoutSettings,
    LedgerSetting,
    LoopSettings,
    SearchSettings,
    Strict,
)
from ._raters import RaterSettings

__all__ = [
    "describe_validation_error",
    "settings_from_arguments",
    "ArgumentSettings",
    "WRAP_NAMES",
]


def _model_names(model: type[BaseModel], seen: set[str] | None = None) -> set[str]:
    """Names of every model reachable from ``model`` (pydantic puts them in union locations)."""
    seen = set() if seen is None else seen
    if model.__name__ in seen:
        return seen
    seen.add(model.__name__)
    for f in model.model_fields.values():
        stack: list[Any] = [f.annotation]
        while stack:
            t = stack.pop()
            if isinstance(t, type) and issubclass(t, BaseModel):
                _model_names(t, seen)
            stack.extend(getattr(t, "__args__", ()) or ())
    return seen


def _is_union_tag(part: Any, names: set[str]) -> bool:
    """pydantic puts the union member it tried into the location (``list[any]``, ``function-after[...]``)."""
    return isinstance(part, str) and (
        (part.endswith("]") and "[" in part) or part in names
    )


def _model_at(model: type[BaseModel], loc: tuple[Any, ...]) -> type[BaseModel] | None:
    """Follow a pydantic error location to the sub-model that holds its last key."""
    current: Any = model
    for part in loc[:-1]:
        if isinstance(part, int):
            continue
        if not (isinstance(current, type) and issubclass(current, BaseModel)):
            return None
        field = _field_by_alias(current, str(part))
        if field is None:
            continue  # a mapping key (space: {model__C: ...}) or a union tag
        current = _inner_model(field.annotation)
    if isinstance(current, type) and issubclass(current, BaseModel):
        return current
    return None


def _field_by_alias(model: type[BaseModel], key: str) -> Any:
    for name, field in model.model_fields.items():
        if key in (name, field.alias):
            return field
    return None


def _inner_model(annotation: Any) -> Any:
    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        return annotation
    for arg in getattr(annotation, "__args__", ()) or ():
        found = _inner_model(arg)
        if found is not None:
            return found
    return None


def _keys_of(model: type[BaseModel]) -> list[str]:
    return [f.alias or n for n, f in model.model_fields.items()]


def _dotted(loc: tuple[Any, ...]) -> str:
    return ".".join(
        str(p) if not isinstance(p, int) else f"[{p}]" for p in loc
    ).replace(".[", "[")


def _union_site(loc: tuple[Any, ...], names: set[str]) -> tuple[Any, ...]:
    """The location of one problem: alternatives of a union (a range or a list) count once."""
    for i, part in enumerate(loc):
        if _is_union_tag(part, names):
            return loc[:i]
    return loc


def describe_validation_error(
    exc: ValidationError,
    model: type[BaseModel],
    *,
    label: str = "key",
    rename: Callable[[str], str] | None = None,
) -> str:
    """Turn the most useful pydantic error into one line: where, what, how to fix.

    ``label`` and ``rename`` say how a location is named to the user: ``key
    'control.alpha'`` for a study file, ``argument 'alpha'`` for ``wrap``.
    """
    names = _model_names(model)
    errors = exc.errors()
    name_of = rename or (lambda k: k)

    # pydantic lists a misspelt key twice (the unknown key and the missing one) and
    # every alternative of a union; report the unknown key first (it has a suggestion),
    # and a union alternative that is a mere type mismatch last.
    def rank(e: Any) -> int:
        if e["type"] == "extra_forbidden":
            return 0
        tagged = any(_is_union_tag(p, names) for p in e["loc"])
        return 2 if tagged and e["type"].endswith("_type") else 1

    err = sorted(errors, key=rank)[0]
    loc = tuple(err["loc"])
    clean = tuple(p for p in loc if not _is_union_tag(p, names))
    key = name_of(_dotted(clean))
    kind = err["type"]
    site = _union_site(loc, names)
    hint = ""
    owner = _model_at(model, loc) if kind == "extra_forbidden" else None
    if owner is not None:
        suggestion = _suggest(model, loc)
        hint = (
            f"; did you mean '{suggestion}'?"
            if suggestion
            else f"; known keys here: {', '.join(_keys_of(owner))}"
        )
    # problems left once this one is fixed; a misspelt key counts once, not also as a missing one
    supplied = {
        tuple(e["loc"][:-1]) + (_suggest(model, tuple(e["loc"])),)
        for e in errors
        if e["type"] == "extra_forbidden"
    }
    # counted by the name the user sees: one wrap() argument may set two keys
    others = {
        name_of(_dotted(_union_site(tuple(e["loc"]), names)))
        for e in errors
        if not (e["type"] == "missing" and tuple(e["loc"]) in supplied)
    } - {name_of(_dotted(site))}
    extra = f" ({len(others)} more problem(s) after fixing this)" if others else ""
    if kind == "extra_forbidden":
        return f"unknown {label} '{key}'{hint}{extra}"
    if kind == "missing":
        if clean and isinstance(clean[-1], int):
            return (
                f"{label} '{name_of(_dotted(clean[:-1]))}' has too few values "
                f"(item [{clean[-1]}] is missing){extra}"
            )
        return f"missing required {label} '{key}'{extra}"
    if site != loc and rank(err) == 2:
        return (
            f"{label} '{name_of(_dotted(site))}' must be a list of values (a choice) or a range "
            f"such as {{between: [0.01, 10], scale: log}} (got {_shown(err.get('input'))}){extra}"
        )
    msg = err["msg"]
    if msg.startswith("Value error, "):
        msg = msg[len("Value error, ") :]
    got = err.get("input")
    if not clean:  # a check across the whole study
        return f"{msg}{extra}"
    shown = "" if isinstance(got, dict) else f" (got {_shown(got)})"
    return f"{label} '{key}': {msg}{shown}{extra}"


def _suggest(model: type[BaseModel], loc: tuple[Any, ...]) -> str | None:
    """The known key closest to an unknown one, if any is close."""
    owner = _model_at(model, loc)
    if owner is None:
        return None
    close = difflib.get_close_matches(str(loc[-1]), _keys_of(owner), n=1, cutoff=0.6)
    return close[0] if close else None


def _shown(got: Any) -> str:
    shown = json.dumps(got, default=str) if not isinstance(got, dict) else "a mapping"
    if len(shown) > 60:
        shown = shown[:57] + "..."
    return shown


class ArgumentSettings(Strict):
    """The settings ``foldwall.wrap`` builds from its arguments (the study file's sections)."""

    search: SearchSettings = SearchSettings()
    outer: LoopSettings = LoopSettings()
    inner: LoopSettings = LoopSettings()
    control: ControlSettings = ControlSettings()
    compare: CompareSettings = CompareSettings()
    raters: RaterSettings | None = None
    audits: AuditSettings = AuditSettings()
    holdout: HoldoutSettings | None = None
    ledger: LedgerSetting | None = None


# study-file key -> the wrap() argument that sets it
WRAP_NAMES: dict[str, str] = {
    "search.method": "sampler",
    "search.trials": "trials",
    "search.allow_failed_trials": "allow_failed_trials",
    "outer.folds": "outer",
    "outer.repeats": "repeats",
    "inner.folds": "inner",
    "outer.forward": "forward",
    "inner.forward": "forward",
    "control.permutations": "n_permutations",
    "control.scheme": "permutation_scheme",
    "control.stop_early": "stop_early",
    "control.stop_after_exceedances": "stop_after_exceedances",
    "control.alpha": "alpha",
    "control.blocks": "blocks",
    "compare.correction": "correction",
    "compare.alpha": "alpha",
    "compare.between_candidates": "between_candidates",
    "compare.smallest_difference": "smallest_difference",
    "holdout": "holdout",
    "holdout.fraction": 'holdout["fraction"]',
    "holdout.column": 'holdout["column"]',
    "holdout.table": 'holdout["table"]',
    "ledger": "ledger",
}


def settings_from_arguments(raw: Mapping[str, Any]) -> ArgumentSettings:
    """Validate ``wrap`` arguments arranged as study-file sections.

    Raises
    ------
    SpecError
        One line naming the argument, worded as the study file's message for the
        same value.
    """
    try:
        return ArgumentSettings.model_validate(raw)
    except ValidationError as exc:
        raise SpecError(
            describe_validation_error(
                exc,
                ArgumentSettings,
                label="argument",
                rename=lambda k: WRAP_NAMES.get(k, k),
            )
        ) from None
