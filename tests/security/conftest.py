"""Fixtures of the security tests: a package whose import leaves a trace."""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

PACKAGES = Path(__file__).parent / "corpus" / "pkg"


@pytest.fixture
def evil_pkg(tmp_path, monkeypatch):
    """Put ``evil_pkg`` on the path; return the file its import (or call) would create."""
    sentinel = tmp_path / "sentinel" / "created-by-attack"
    sentinel.parent.mkdir()
    monkeypatch.setenv("FOLDWALL_SENTINEL_FILE", str(sentinel))
    monkeypatch.syspath_prepend(str(PACKAGES))
    for name in [
        m for m in sys.modules if m == "evil_pkg" or m.startswith("evil_pkg.")
    ]:
        monkeypatch.delitem(sys.modules, name)
    yield sentinel
    for name in [
        m for m in sys.modules if m == "evil_pkg" or m.startswith("evil_pkg.")
    ]:
        del sys.modules[name]
