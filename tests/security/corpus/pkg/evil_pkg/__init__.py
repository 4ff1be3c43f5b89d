"""A package whose import does work: it creates the sentinel file named in the environment.

Part of the hostile corpus: a study file must never be able to make foldwall import it.
"""

import os
from pathlib import Path

from sklearn.linear_model import LogisticRegression

_target = os.environ.get("FOLDWALL_SENTINEL_FILE")
if _target:
    Path(_target).write_text("evil_pkg was imported\n")


class Model(LogisticRegression):
    """An ordinary classifier, so that only the import itself is the attack."""


def shout(X):
    if _target:
        Path(_target).write_text("evil_pkg.shout was called\n")
    return X
