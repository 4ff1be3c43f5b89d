"""Running or importing this module does work: it creates the sentinel file."""

import os
from pathlib import Path

_target = os.environ.get("FOLDWALL_SENTINEL_FILE")
if _target:
    Path(_target).write_text("evil_pkg.__main__ was imported\n")
