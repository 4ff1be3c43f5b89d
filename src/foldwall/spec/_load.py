"""Reading a study file: safe YAML, schema check, one-line messages."""

from __future__ import annotations

import hashlib
import os
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from pydantic import ValidationError

from ..exceptions import SpecError
from ..settings import describe_validation_error
from ..table import sanitise
from ._schema import StudySpec
from ._yaml import DEFAULT_LIMITS, YamlLimits, load_yaml, read_study_text

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


def study_json_schema() -> dict[str, Any]:
    """JSON Schema of the study file (for editors and validators)."""
    schema = StudySpec.model_json_schema(by_alias=True)
    schema["$schema"] = "https://json-schema.org/draft/2020-12/schema"
    schema["title"] = "foldwall study file"
    return schema


def load_study(
    path: str | os.PathLike[str], *, limits: YamlLimits = DEFAULT_LIMITS
) -> LoadedStudy:
    """Read and validate a study file.

    The file must be a regular file of at most ``limits.max_bytes`` (1 MB), and
    its YAML is read under depth and alias-expansion limits (see
    :mod:`foldwall.spec._yaml`), so a hostile file fails quickly and in one line.

    Raises
    ------
    SpecError
        With a one-line message naming the offending key.
    """
    p = Path(path)
    text = read_study_text(p, limits=limits)
    return parse_study(text, path=p, limits=limits)


def parse_study(
    text: str, *, path: Path | None = None, limits: YamlLimits = DEFAULT_LIMITS
) -> LoadedStudy:
    """Validate study text (YAML). See :func:`load_study`."""
    where = f"study file '{sanitise(str(path), limit=100)}'" if path else "study"
    raw = load_yaml(text, where=where, limits=limits)
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
    except RecursionError:  # pragma: no cover - the loader's depth limit comes first
        raise SpecError(f"{where} nests too deeply to be checked") from None
    sha = hashlib.sha256(text.encode("utf-8")).hexdigest()
    return LoadedStudy(spec=spec, path=path, text=text, sha256=sha)
