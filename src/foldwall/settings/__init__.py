"""Typed settings shared by the study file and ``foldwall.wrap``, validated by one path."""

from ._errors import (
    WRAP_NAMES,
    ArgumentSettings,
    describe_validation_error,
    settings_from_arguments,
)
from ._models import (
    CORRECTIONS,
    SCHEMES,
    AuditSettings,
    CompareSettings,
    ControlSettings,
    HoldoutSettings,
    LedgerSetting,
    LoopSettings,
    SearchSettings,
    Strict,
)
from ._raters import RATER_SCALES, RaterSettings

__all__ = [
    "SearchSettings",
    "LoopSettings",
    "ControlSettings",
    "CompareSettings",
    "RaterSettings",
    "RATER_SCALES",
    "AuditSettings",
    "HoldoutSettings",
    "LedgerSetting",
    "ArgumentSettings",
    "Strict",
    "SCHEMES",
    "CORRECTIONS",
    "describe_validation_error",
    "settings_from_arguments",
    "WRAP_NAMES",
]
