"""The study file: schema, bounded loading, the allow-list and the parameter gate."""

from ._allow import NEVER_ALLOWED, AllowList, Resolved
from ._gate import (
    FILE_PARAMETERS,
    PYTHON_CODE,
    STUDY_FILE,
    GatePolicy,
    check_estimator,
    check_pipeline,
)
from ._load import LoadedStudy, load_study, parse_study, study_json_schema
from ._resolve import allow_list_for, build_candidates
from ._schema import StudySpec
from ._yaml import DEFAULT_LIMITS, YamlLimits, load_yaml, read_study_text

__all__ = [
    "StudySpec",
    "LoadedStudy",
    "load_study",
    "parse_study",
    "study_json_schema",
    "build_candidates",
    # reading study files from someone else (docs/security.md)
    "YamlLimits",
    "DEFAULT_LIMITS",
    "load_yaml",
    "read_study_text",
    "AllowList",
    "Resolved",
    "NEVER_ALLOWED",
    "allow_list_for",
    "GatePolicy",
    "STUDY_FILE",
    "PYTHON_CODE",
    "FILE_PARAMETERS",
    "check_estimator",
    "check_pipeline",
]
