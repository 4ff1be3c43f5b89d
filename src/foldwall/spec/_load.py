"""Reading a study file: safe YAML, schema check, one-line messages."""

from __future__ import annotations

import difflib
import hashlib
import json
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import yaml
from pydantic import BaseModel, ValidationError

from ..exceptions import SpecError
from . import _schema
from ._schema import StudySpec

__all__ = ["LoadedStudy", "load_study", "parse_study", "study_json_schema"]

_MODEL_NAMES = {n for n, v in vars(_schema).items() if isinstance(v, type) and issubclass(v, BaseModel)}


@dataclass(frozen=True)
class LoadedStudy:
    """A validated study together with where it came from."""

    spec: StudySpec
    path: Path | None
    text: str
    sha256: str

    @property
    def base_dir(self) -> Path:
        return self.path.parent if self.path is not None else Path.cwd()

    def table_path(self) -> Path:
        p = Path(self.spec.data.table)
        return p if p.is_absolute() else (self.base_dir / p)


class _StudyLoader(yaml.SafeLoader):
    """Safe loading, with YAML 1.2 numbers: ``1e-3`` is a float (YAML 1.1 reads it as text)."""


_StudyLoader.add_implicit_resolver(
    "tag:yaml.org,2002:float",
    __import__("re").compile(
        r"""^(?:[-+]?(?:[0-9][0-9_]*)\.[0-9_]*(?:[eE][-+]?[0-9]+)?
        |[-+]?(?:[0-9][0-9_]*)(?:[eE][-+]?[0-9]+)
        |\.[0-9_]+(?:[eE][-+][0-9]+)?
        |[-+]?\.(?:inf|Inf|INF)
        |\.(?:nan|NaN|NAN))$""",
        __import__("re").X,
    ),
    list("-+0123456789."),
)


def study_json_schema() -> dict[str, Any]:
    """JSON Schema of the study file (for editors and validators)."""
    schema = StudySpec.model_json_schema(by_alias=True)
    schema["$schema"] = "https://json-schema.org/draft/2020-12/schema"
    schema["title"] = "foldwall study file"
    return schema


def load_study(path: str | Path) -> LoadedStudy:
    """Read and validate a study file.

    Raises
    ------
    SpecError
        With a one-line message naming the offending key.
    """
    p = Path(path)
    if not p.is_file():
        raise SpecError(f"study file '{p}' does not exist; give the path to a .yaml study file")
    try:
        text = p.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise SpecError(f"study file '{p}' cannot be read as UTF-8 text: {exc}") from None
    return parse_study(text, path=p)


def parse_study(text: str, *, path: Path | None = None) -> LoadedStudy:
    """Validate study text (YAML). See :func:`load_study`."""
    where = f"study file '{path}'" if path else "study"
    try:
        raw = yaml.load(text, Loader=_StudyLoader)  # noqa: S506 - a SafeLoader subclass
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        line = f" at line {mark.line + 1}" if mark is not None else ""
        problem = getattr(exc, "problem", None) or "malformed YAML"
        raise SpecError(f"{where} is not valid YAML{line}: {problem}") from None
    if raw is None:
        raise SpecError(f"{where} is empty; it needs at least data: and candidates: (see 'foldwall schema')")
    if not isinstance(raw, dict):
        raise SpecError(
            f"{where} must be a mapping of keys (data:, candidates:, ...), got {type(raw).__name__}"
        )
    try:
        spec = StudySpec.model_validate(raw)
    except ValidationError as exc:
        raise SpecError(f"{where}: {describe_validation_error(exc, StudySpec)}") from None
    sha = hashlib.sha256(text.encode("utf-8")).hexdigest()
    return LoadedStudy(spec=spec, path=path, text=text, sha256=sha)


def _is_union_tag(part: Any) -> bool:
    """pydantic puts the union member it tried into the location (``list[any]``, ``function-after[...]``)."""
    return isinstance(part, str) and ((part.endswith("]") and "[" in part) or part in _MODEL_NAMES)


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
    return ".".join(str(p) if not isinstance(p, int) else f"[{p}]" for p in loc).replace(".[", "[")


def _union_site(loc: tuple[Any, ...]) -> tuple[Any, ...]:
    """The location of one problem: alternatives of a union (a range or a list) count once."""
    for i, part in enumerate(loc):
        if _is_union_tag(part):
            return loc[:i]
    return loc


def describe_validation_error(exc: ValidationError, model: type[BaseModel]) -> str:
    """Turn the most useful pydantic error into one line: where, what, how to fix."""
    errors = exc.errors()
    # pydantic lists a misspelt key twice (the unknown key and the missing one) and
    # every alternative of a union; report the unknown key first (it has a suggestion),
    # and a union alternative that is a mere type mismatch last.
    def rank(e: Any) -> int:
        if e["type"] == "extra_forbidden":
            return 0
        tagged = any(_is_union_tag(p) for p in e["loc"])
        return 2 if tagged and e["type"].endswith("_type") else 1

    err = sorted(errors, key=rank)[0]
    loc = tuple(err["loc"])
    clean = tuple(p for p in loc if not _is_union_tag(p))
    key = _dotted(clean)
    kind = err["type"]
    site = _union_site(loc)
    hint = ""
    owner = _model_at(model, loc) if kind == "extra_forbidden" else None
    if owner is not None:
        suggestion = _suggest(model, loc)
        hint = f"; did you mean '{suggestion}'?" if suggestion else f"; known keys here: {', '.join(_keys_of(owner))}"
    # problems left once this one is fixed; a misspelt key counts once, not also as a missing one
    supplied = {tuple(e["loc"][:-1]) + (_suggest(model, tuple(e["loc"])),)
                for e in errors if e["type"] == "extra_forbidden"}
    others = {_union_site(tuple(e["loc"])) for e in errors
              if not (e["type"] == "missing" and tuple(e["loc"]) in supplied)} - {site}
    extra = f" ({len(others)} more problem(s) after fixing this)" if others else ""
    if kind == "extra_forbidden":
        return f"unknown key '{key}'{hint}{extra}"
    if kind == "missing":
        if clean and isinstance(clean[-1], int):
            return f"key '{_dotted(clean[:-1])}' has too few values (item [{clean[-1]}] is missing){extra}"
        return f"missing required key '{key}'{extra}"
    if site != loc and rank(err) == 2:
        return (f"key '{_dotted(site)}' must be a list of values (a choice) or a range such as "
                f"{{between: [0.01, 10], scale: log}} (got {_shown(err.get('input'))}){extra}")
    msg = err["msg"]
    if msg.startswith("Value error, "):
        msg = msg[len("Value error, ") :]
    got = err.get("input")
    if not clean:  # a check across the whole study
        return f"{msg}{extra}"
    shown = "" if isinstance(got, dict) else f" (got {_shown(got)})"
    return f"key '{key}': {msg}{shown}{extra}"


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
