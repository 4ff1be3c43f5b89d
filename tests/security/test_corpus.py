"""Every hostile study file of the corpus, through ``plan``, ``run`` and ``foldwall.wrap``.

A refused case must end in exit status 2 with one line on stderr that contains the
case's expected text, create no run folder, leave the sentinel folder exactly as
it was and not create the sentinel file. A harmless case must run (exit 0) and
touch nothing outside its run folder either.
"""

from __future__ import annotations

import signal
import sys
import warnings
from contextlib import contextmanager

import numpy as np
import pandas as pd
import pytest

import foldwall
from foldwall.cli import main

from .corpus.cases import PACKAGES, lay_out, load_cases, wrap_forms

CASES = load_cases()
LIMIT_SECONDS = 30


@contextmanager
def _time_limit(seconds: int):
    def stop(signum, frame):
        raise TimeoutError(f"the case took more than {seconds} s")

    old = signal.signal(signal.SIGALRM, stop)
    signal.alarm(seconds)
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, old)


@pytest.fixture
def hostile_env(monkeypatch):
    monkeypatch.syspath_prepend(str(PACKAGES))
    for name in [m for m in sys.modules if m.startswith("evil_pkg")]:
        monkeypatch.delitem(sys.modules, name)
    return monkeypatch


def _check_untouched(layout, before):
    assert layout.snapshot() == before, "the sentinel folder changed"
    assert not layout.sentinel_file.exists(), layout.sentinel_file.read_text()
    assert not any(m.startswith("evil_pkg") for m in sys.modules), (
        "evil_pkg was imported"
    )


@pytest.mark.parametrize("route", ["plan", "run"])
@pytest.mark.parametrize("case", CASES, ids=lambda c: c.name)
def test_hostile_study_file_through_the_command_line(
    case, route, tmp_path, capsys, hostile_env
):
    if route not in case.routes:
        pytest.skip(f"{case.name} does not apply to {route}")
    layout = lay_out(case, tmp_path)
    hostile_env.setenv("FOLDWALL_SENTINEL_FILE", str(layout.sentinel_file))
    before = layout.snapshot()
    argv = [route, str(layout.study), "--jobs", "1"]
    argv += (
        ["--no-estimate"] if route == "plan" else ["--out", str(layout.out), "--quiet"]
    )
    capsys.readouterr()
    with _time_limit(LIMIT_SECONDS), warnings.catch_warnings():
        warnings.simplefilter("ignore")
        rc = main(argv)
    err = capsys.readouterr().err
    assert "Traceback" not in err and "\x1b" not in err
    if case.refused:
        lines = [ln for ln in err.splitlines() if ln.strip()]
        assert rc == 2, err
        assert len(lines) == 1 and lines[0].startswith("foldwall: error: "), err
        assert case.expect in lines[0], lines[0]
        assert not layout.out.exists()
    else:
        assert rc == 0, err
    _check_untouched(layout, before)


WRAPPED = [c for c in CASES if "wrap" in c.routes]


@pytest.mark.parametrize("case", WRAPPED, ids=lambda c: c.name)
def test_hostile_settings_through_wrap(case, tmp_path, hostile_env):
    layout = lay_out(case, tmp_path)
    before = layout.snapshot()
    frame = pd.read_csv(layout.study_dir / "table.csv")
    y = frame.pop("y").to_numpy()
    X = frame if "doc" in frame else frame.to_numpy(dtype=float)
    kwargs = wrap_forms(layout.sentinel)[case.name]()
    with _time_limit(LIMIT_SECONDS), warnings.catch_warnings():
        warnings.simplefilter("ignore", foldwall.FoldwallWarning)
        if case.refused:
            with pytest.raises(foldwall.SpecError, match=case.expect) as info:
                foldwall.wrap(outer=2, inner=2, n_jobs=1, **kwargs).run(X, y)
            assert len(str(info.value).splitlines()) == 1
        else:
            result = foldwall.wrap(outer=2, inner=2, n_jobs=1, **kwargs).run(X, y)
            assert np.isfinite(result.score)
    _check_untouched(layout, before)
