"""Every key of the study file is documented in docs/study-file.md."""

from __future__ import annotations

from pathlib import Path

from pydantic import BaseModel

from foldwall.spec import StudySpec

DOC = Path(__file__).resolve().parents[2] / "docs" / "study-file.md"


def _keys(model: type[BaseModel], seen: set) -> set[str]:
    out = set()
    if model in seen:
        return out
    seen.add(model)
    for name, field in model.model_fields.items():
        out.add(field.alias or name)
        stack = [field.annotation]
        while stack:
            t = stack.pop()
            if isinstance(t, type) and issubclass(t, BaseModel):
                out |= _keys(t, seen)
            stack.extend(getattr(t, "__args__", ()) or ())
    return out


def test_every_study_key_is_documented():
    text = DOC.read_text(encoding="utf-8")
    import re

    missing = sorted(
        k for k in _keys(StudySpec, set()) if not re.search(rf"`{k}(`|:)", text)
    )
    assert not missing, f"keys missing from docs/study-file.md: {missing}"
