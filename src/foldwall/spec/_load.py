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
from ._schema import StudySpec

__all__ = ["LoadedStudy", "load_study", "parse_study", "study_json_schema"]


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
        raw = yaml.safe_load(text)
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        line = f" at line {mark.line + 1}" if mark is not None else ""
        problem = getattr(exc, "problem", None) or "malformed YAML"
        raise SpecError(f"{where} is not valid YAML{line}: {problem}") from None
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
            return None
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


def describe_validation_error(exc: ValidationError, model: type[BaseModel]) -> str:
    """Turn the first pydantic error into one line: where, what, how to fix."""
    errors = exc.errors()
    # Report the most specific error; pydantic lists union branches too, prefer
    # the ones that are not about a union alternative.
    err = errors[0]
    loc = tuple(err["loc"])
    key = ".".join(str(p) if not isinstance(p, int) else f"[{p}]" for p in loc).replace(".[", "[")
    kind = err["type"]
    extra = f" ({len(errors) - 1} more problem(s) after fixing this)" if len(errors) > 1 else ""
    if kind == "extra_forbidden":
        owner = _model_at(model, loc)
        bad = str(loc[-1])
        hint = ""
        if owner is not None:
            known = _keys_of(owner)
            close = difflib.get_close_matches(bad, known, n=1, cutoff=0.6)
            hint = f"; did you mean '{close[0]}'?" if close else f"; known keys here: {', '.join(known)}"
        return f"unknown key '{key}'{hint}{extra}"
    if kind == "missing":
        return f"missing required key '{key}'{extra}"
    msg = err["msg"]
    if msg.startswith("Value error, "):
        msg = msg[len("Value error, ") :]
    got = err.get("input")
    shown = json.dumps(got, default=str) if not isinstance(got, dict) else "a mapping"
    if len(shown) > 60:
        shown = shown[:57] + "..."
    return f"key '{key}': {msg} (got {shown}){extra}"
