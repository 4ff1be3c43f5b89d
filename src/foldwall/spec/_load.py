"""Reading a study file: safe YAML, schema check, one-line messages."""

from __future__ import annotations

import hashlib
import os
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import yaml
from pydantic import ValidationError

from ..exceptions import SpecError
from ..settings import describe_validation_error
from ._schema import StudySpec

__all__ = [
    "LoadedStudy",
    "load_study",
    "parse_study",
    "study_json_schema",
    "describe_validation_error",
]


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


def load_study(path: str | os.PathLike[str]) -> LoadedStudy:
    """Read and validate a study file.

    Raises
    ------
    SpecError
        With a one-line message naming the offending key.
    """
    p = Path(path)
    if not p.is_file():
        raise SpecError(
            f"study file '{p}' does not exist; give the path to a .yaml study file"
        )
    try:
        text = p.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise SpecError(
            f"study file '{p}' cannot be read as UTF-8 text: {exc}"
        ) from None
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
        raise SpecError(
            f"{where} is empty; it needs at least data: and candidates: (see 'foldwall schema')"
        )
    if not isinstance(raw, dict):
        raise SpecError(
            f"{where} must be a mapping of keys (data:, candidates:, ...), got {type(raw).__name__}"
        )
    try:
        spec = StudySpec.model_validate(raw)
    except ValidationError as exc:
        raise SpecError(
            f"{where}: {describe_validation_error(exc, StudySpec)}"
        ) from None
    sha = hashlib.sha256(text.encode("utf-8")).hexdigest()
    return LoadedStudy(spec=spec, path=path, text=text, sha256=sha)
