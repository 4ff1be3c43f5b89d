"""The study file: schema, loading, and resolution of names under an allow-list."""

from ._load import LoadedStudy, load_study, parse_study, study_json_schema
from ._resolve import build_candidates
from ._schema import StudySpec

__all__ = [
    "StudySpec",
    "LoadedStudy",
    "load_study",
    "parse_study",
    "study_json_schema",
    "build_candidates",
]
