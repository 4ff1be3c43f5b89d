"""From a study file on disk to a Study and its Dataset; run directories with resume."""

from __future__ import annotations

import dataclasses
import os
import shutil
import time
from collections.abc import Iterable
from pathlib import Path

import pandas as pd

from .._metrics import check_metrics
from .._version import __version__
from ..exceptions import SpecError
from ..labels import RatingTable
from ..records import StudySource
from ..report import Result
from ..runners import Progress
from ..spec import LoadedStudy, StudySpec, build_candidates, load_study
from ..store import RunStore
from ..table import Dataset, dataset_from_table, file_sha256, read_table
from ._raters import consensus_column, rater_frame_of, rater_target
from ._study import Study

__all__ = ["study_from_file", "run_study_file", "prepare_run_dir", "STORE_NAME"]

STORE_NAME = "store.sqlite"


def study_from_file(
    loaded: LoadedStudy | str | os.PathLike[str],
    *,
    allow: Iterable[str] = (),
    n_jobs: int | None = None,
) -> tuple[Study, Dataset]:
    """Build the study and read its table; every check that needs no fitting happens here."""
    if not isinstance(loaded, LoadedStudy):
        loaded = load_study(loaded)
    spec = loaded.spec
    cands = build_candidates(spec, allow=allow)
    metrics = check_metrics(spec.metrics, key="metrics")
    study = Study(
        candidates=cands,
        metrics=metrics,
        outer=spec.outer,
        inner=spec.inner,
        search=spec.search,
        control=spec.control,
        compare=spec.compare,
        random_state=spec.seed,
        n_jobs=n_jobs,
        clinical=spec.clinical,
        task=spec.data.task,
        positive_class=spec.data.positive_class,
        raters=spec.raters,
        source=StudySource(
            name=spec.name,
            file=str(loaded.path) if loaded.path else None,
            sha256=loaded.sha256,
            text=loaded.text,
        ),
    )
    task = study._task()
    table = loaded.table_path()
    df = read_table(table)
    sha = file_sha256(table)
    extra = [spec.control.blocks] if spec.control.blocks else []
    target, drop, ratings = spec.data.target, list(spec.data.drop), None
    if spec.raters is not None:
        df, target, drop, ratings = _rater_columns(df, spec, task)
    assert target is not None  # the schema asks for data.target or raters
    data = dataset_from_table(
        df,
        target=target,
        groups=spec.data.groups,
        drop=drop,
        features=spec.data.features,
        task=task,
        extra_columns=extra,
        sha256=sha,
    )
    data.ratings = ratings
    if spec.control.blocks:
        data.extra["__blocks__"] = data.extra[spec.control.blocks]
    study.source = dataclasses.replace(study.source, table=str(table))
    return study, data


def _rater_columns(
    df: pd.DataFrame, spec: StudySpec, task: str
) -> tuple[pd.DataFrame, str, list[str], RatingTable]:
    """The table with the rater columns replaced by their per-case consensus."""
    assert spec.raters is not None and spec.raters.columns is not None
    cols = list(spec.raters.columns)
    used = (
        ("data.features", spec.data.features or []),
        ("data.groups", [spec.data.groups] if spec.data.groups else []),
        ("control.blocks", [spec.control.blocks] if spec.control.blocks else []),
    )
    for key, listed in used:
        clash = [c for c in listed if c in cols]
        if clash:
            raise SpecError(
                f"{key}: column '{clash[0]}' is a rater column (raters.columns); "
                f"ratings are the labels, never features, groups or blocks"
            )
    frame = rater_frame_of(df, cols)
    y, table = rater_target(
        frame, spec.raters, task=task, key="raters.columns", random_state=spec.seed
    )
    target = consensus_column(df.columns)
    out = df.drop(columns=cols).assign(**{target: y})
    drop = [c for c in spec.data.drop if c not in cols]
    return out, target, drop, table


def prepare_run_dir(
    out: Path, *, study_sha: str, data_sha: str | None, fresh: bool, replace: bool
) -> tuple[RunStore, str]:
    """Open or create the run's store. Returns (store, state) with state 'new' or 'resumed'.

    Nothing is ever overwritten silently: a finished run needs --replace (which
    moves it aside), a changed study or table needs --fresh (which moves the old
    run aside).
    """
    store_path = out / STORE_NAME
    finished = (out / "results.json").exists()
    if out.exists() and not out.is_dir():
        raise SpecError(f"--out '{out}' is a file; give a folder")
    if out.exists() and any(out.iterdir()) and not store_path.exists() and not finished:
        raise SpecError(
            f"--out '{out}' is not empty and holds no foldwall run; choose a new folder"
        )
    if finished and not (replace or fresh):
        raise SpecError(
            f"--out '{out}' already holds a finished run; choose a new folder, or pass --replace "
            f"to move it aside and start again"
        )
    if store_path.exists() and not finished and not fresh:
        store = RunStore.open(store_path)
        meta = store.meta()
        changed = []
        if meta.get("study_sha256") != study_sha:
            changed.append("the study file")
        if meta.get("data_sha256") != data_sha:
            changed.append("the data table")
        if changed:
            store.close()
            raise SpecError(
                f"--out '{out}' holds an unfinished run, but {' and '.join(changed)} changed since it "
                f"began; pass --fresh to move the old run aside and start over"
            )
        return store, "resumed"
    if out.exists() and any(out.iterdir()):
        aside = out.with_name(f"{out.name}.old-{time.strftime('%Y%m%d-%H%M%S')}")
        n = 1
        while aside.exists():
            aside = out.with_name(
                f"{out.name}.old-{time.strftime('%Y%m%d-%H%M%S')}-{n}"
            )
            n += 1
        shutil.move(str(out), str(aside))
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise SpecError(
            f"--out '{out}': cannot create the folder ({exc.strerror}); choose a writable path"
        ) from None
    store = RunStore.create(
        store_path,
        meta={
            "study_sha256": study_sha,
            "data_sha256": data_sha,
            "foldwall": __version__,
            "started": time.time(),
        },
    )
    return store, "new"


def run_study_file(
    path: str | os.PathLike[str],
    out: str | os.PathLike[str],
    *,
    allow: Iterable[str] = (),
    n_jobs: int | None = None,
    fresh: bool = False,
    replace: bool = False,
    on_progress: Progress | None = None,
) -> Result:
    """Run a study file into a run directory (resuming an unfinished run there)."""
    loaded = load_study(path)
    study, data = study_from_file(loaded, allow=allow, n_jobs=n_jobs)
    plan = study.plan(data=data)
    study.preflight(plan, data)  # every check before the folder is touched
    out_p = Path(out)
    store, _ = prepare_run_dir(
        out_p,
        study_sha=loaded.sha256,
        data_sha=data.sha256,
        fresh=fresh,
        replace=replace,
    )
    try:
        result = study.run(data=data, store=store, on_progress=on_progress, plan=plan)
        store.set_meta("finished", time.time())
    finally:
        store.close()
    result.save(out_p, replace=True)
    return result
