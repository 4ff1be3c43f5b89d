"""From a study file on disk to a Study and its Dataset; run directories with resume."""

from __future__ import annotations

import dataclasses
import os
import shutil
import time
from collections.abc import Callable, Iterable
from pathlib import Path

import numpy as np
import pandas as pd
from threadpoolctl import threadpool_limits

from .._metrics import check_metrics
from .._version import __version__
from ..exceptions import DataError, SpecError
from ..labels import RatingTable
from ..plan import Plan, WorkEstimate, check_work, estimate_work
from ..records import StudySource
from ..report import Result
from ..runners import Progress, resolve_jobs
from ..spec import LoadedStudy, StudySpec, build_candidates, load_study
from ..store import LOCK_NAME, RunLock, RunStore, check_store_file, store_faults
from ..table import (
    DEFAULT_MAX_TABLE_BYTES,
    Dataset,
    dataset_from_table,
    read_table_file,
)
from ._holdout import HoldoutRows, read_second_table
from ._raters import consensus_column, rater_frame_of, rater_target
from ._study import Study

__all__ = [
    "study_from_file",
    "study_and_table",
    "run_study_file",
    "prepare_run_dir",
    "checked_run",
    "STORE_NAME",
]

STORE_NAME = "store.sqlite"


def study_from_file(
    loaded: LoadedStudy | str | os.PathLike[str],
    *,
    allow: Iterable[str] = (),
    n_jobs: int | None = None,
    table: str | os.PathLike[str] | None = None,
    max_table_bytes: int = DEFAULT_MAX_TABLE_BYTES,
) -> tuple[Study, Dataset]:
    """Build the study and read its table; every check that needs no fitting happens here.

    Parameters
    ----------
    loaded : LoadedStudy or path-like
    allow : iterable of str, default=()
        Packages besides scikit-learn whose estimators the study may name
        (``--allow``); a package the file declares under ``needs_modules`` must be here.
    n_jobs : int, default=None
    table : path-like, default=None
        The table, named by the person running the study (``--table``). By
        default the study file's ``data.table``, which must then lie in the study
        file's folder (links followed).
    max_table_bytes : int, default=DEFAULT_MAX_TABLE_BYTES
        Refuse a larger table file (``--max-table-mb``).

    With ``holdout:`` in the study, the returned rows are the development rows:
    the sealed rows are cut off here, before anything else sees the table.
    """
    study, data, rows = study_and_table(
        loaded,
        allow=allow,
        n_jobs=n_jobs,
        table=table,
        max_table_bytes=max_table_bytes,
    )
    return study, study.seal(data, rows)


def study_and_table(
    loaded: LoadedStudy | str | os.PathLike[str],
    *,
    allow: Iterable[str] = (),
    n_jobs: int | None = None,
    table: str | os.PathLike[str] | None = None,
    max_table_bytes: int = DEFAULT_MAX_TABLE_BYTES,
) -> tuple[Study, Dataset, HoldoutRows]:
    """The study, every row of its table(s) and where its hold-out rows are (unsealed).

    Takes the arguments of :func:`study_from_file`; ``foldwall unseal`` uses it.
    """
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
        audits=spec.audits,
        acquisition_as_features=spec.data.acquisition_as_features,
        random_state=spec.seed,
        holdout=spec.holdout,
        ledger=spec.ledger,
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
    if table is not None:
        table_path, inside, key = Path(table), None, "--table"
    else:
        table_path, inside, key = loaded.table_path(), loaded.base_dir, "data.table"
    df, table_file = read_table_file(
        table_path, key=key, max_bytes=max_table_bytes, inside=inside
    )
    sha = table_file.sha256
    table = table_path
    extra = [spec.control.blocks] if spec.control.blocks else []
    target, drop, ratings = spec.data.target, list(spec.data.drop), None
    if spec.raters is not None:
        df, target, drop, ratings = _rater_columns(df, spec, task)
    assert target is not None  # the schema asks for data.target or raters
    rows = HoldoutRows(spec.holdout)
    if spec.holdout is not None and spec.holdout.column is not None:
        rows.column = _marking_column(df, spec, target, drop)
        drop.append(spec.holdout.column)
    if spec.holdout is not None and spec.holdout.table is not None:
        if spec.raters is not None:
            raise SpecError(
                "holdout.table: with raters, keep the hold-out rows in the main table "
                "and mark them with holdout.column (or seal a holdout.fraction)"
            )
        second_path = Path(spec.holdout.table)
        if not second_path.is_absolute():
            second_path = loaded.base_dir / second_path
        second, rows.second_sha256 = read_second_table(
            second_path,
            df,
            max_bytes=max_table_bytes,
            inside=loaded.base_dir,
        )
        rows.n_second = len(second)
        df = pd.concat([df, second], ignore_index=True)
    data = dataset_from_table(
        df,
        target=target,
        groups=spec.data.groups,
        drop=drop,
        features=spec.data.features,
        task=task,
        extra_columns=extra,
        sha256=sha,
        id=spec.data.id,
        acquisition=spec.data.acquisition,
        acquisition_as_features=spec.data.acquisition_as_features,
        time=spec.data.time,
    )
    data.ratings = ratings
    if spec.control.blocks:
        data.extra["__blocks__"] = data.extra[spec.control.blocks]
    study.source = dataclasses.replace(study.source, table=str(table))
    return study, data, rows


def _marking_column(
    df: pd.DataFrame, spec: StudySpec, target: str, drop: list[str]
) -> np.ndarray:
    """The values of ``holdout.column``, checked; the column is never used otherwise."""
    assert spec.holdout is not None and spec.holdout.column is not None
    col = spec.holdout.column
    if col not in df.columns:
        raise DataError(
            f"holdout.column: column '{col}' is not in the table; add a true/false "
            "column marking the hold-out rows"
        )
    if col in (spec.data.features or []) or col in (target, spec.data.groups):
        raise DataError(
            f"holdout.column: column '{col}' is also the target, the groups or a "
            "listed feature; the marking column is never used otherwise"
        )
    if col in drop:
        drop.remove(col)
    return df[col].to_numpy()


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
    out: Path,
    *,
    study_sha: str,
    data_sha: str | None,
    fresh: bool,
    replace: bool,
    on_note: Callable[[str], None] | None = None,
) -> tuple[RunStore, str]:
    """Open or create the run's store. Returns (store, state) with state 'new' or 'resumed'.

    Nothing is ever overwritten silently: a finished run needs --replace (which
    moves it aside), a changed study or table needs --fresh (which moves the old
    run aside). The run folder is locked (``run.lock``) for as long as the
    returned store is open: a second run on the same folder is refused, naming
    the holder; a lock left by a process that has ended is replaced, and
    ``on_note`` is told so. A damaged store is refused before it is used.

    Raises
    ------
    SpecError
        Bad ``out`` or a busy folder (exit 2).
    StoreDamagedError
        A truncated or corrupt store (exit 3); ``fresh`` starts over.
    """
    store_path = out / STORE_NAME
    if out.exists() and not out.is_dir():
        raise SpecError(f"--out '{out}' is a file; give a folder")
    lock = _lock(out, on_note) if out.is_dir() else None
    try:
        store, state, lock = _open_or_create(
            out,
            store_path,
            lock,
            study_sha=study_sha,
            data_sha=data_sha,
            fresh=fresh,
            replace=replace,
            on_note=on_note,
        )
    except BaseException:
        if lock is not None:
            lock.release()
        raise
    store.hold(lock)
    return store, state


def _lock(out: Path, on_note: Callable[[str], None] | None) -> RunLock:
    lock = RunLock(out).acquire()
    if lock.note and on_note is not None:
        on_note(lock.note)
    return lock


def _open_or_create(
    out: Path,
    store_path: Path,
    lock: RunLock | None,
    *,
    study_sha: str,
    data_sha: str | None,
    fresh: bool,
    replace: bool,
    on_note: Callable[[str], None] | None,
) -> tuple[RunStore, str, RunLock]:
    finished = (out / "results.json").exists()
    contents = [p for p in out.iterdir() if p.name != LOCK_NAME] if out.is_dir() else []
    if contents and not store_path.exists() and not finished:
        raise SpecError(
            f"--out '{out}' is not empty and holds no foldwall run; choose a new folder"
        )
    if finished and not (replace or fresh):
        raise SpecError(
            f"--out '{out}' already holds a finished run; choose a new folder, or pass --replace "
            f"to move it aside and start again"
        )
    if lock is not None and store_path.exists() and not finished and not fresh:
        check_store_file(store_path)
        with store_faults(store_path):
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
        return store, "resumed", lock
    if contents:
        if lock is not None:
            lock.release()
            lock = None
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
    if lock is None:
        lock = _lock(out, on_note)
    store = RunStore.create(
        store_path,
        meta={
            "study_sha256": study_sha,
            "data_sha256": data_sha,
            "foldwall": __version__,
            "started": time.time(),
        },
    )
    return store, "new", lock


def checked_run(
    loaded: LoadedStudy,
    *,
    allow: Iterable[str] = (),
    n_jobs: int | None = None,
    table: str | os.PathLike[str] | None = None,
    max_table_bytes: int = DEFAULT_MAX_TABLE_BYTES,
    long_run: bool = False,
) -> tuple[Study, Dataset, Plan, WorkEstimate]:
    """Everything before a run touches its folder: build, plan, one timed fit per candidate, budget.

    Raises
    ------
    SpecError
        Among others, when the plan needs more fits or time than a run starts
        without confirmation and ``long_run`` is False (see :func:`foldwall.plan.check_work`).
    """
    study, data = study_from_file(
        loaded, allow=allow, n_jobs=n_jobs, table=table, max_table_bytes=max_table_bytes
    )
    plan = study.plan(data=data)
    # A plan far over the limit is refused before even one fit is timed.
    check_work(
        estimate_work(plan, fit_seconds=None, n_jobs=resolve_jobs(study.n_jobs)),
        confirmed=long_run,
    )
    with threadpool_limits(1):
        times = study.preflight(plan, data)  # every check before the folder is touched
    fit_seconds = sum(times) / len(times) if times else None
    work = estimate_work(
        plan, fit_seconds=fit_seconds, n_jobs=resolve_jobs(study.n_jobs)
    )
    check_work(work, confirmed=long_run)
    return study, data, plan, work


def run_study_file(
    path: str | os.PathLike[str],
    out: str | os.PathLike[str],
    *,
    allow: Iterable[str] = (),
    n_jobs: int | None = None,
    fresh: bool = False,
    replace: bool = False,
    on_progress: Progress | None = None,
    table: str | os.PathLike[str] | None = None,
    max_table_bytes: int = DEFAULT_MAX_TABLE_BYTES,
    long_run: bool = False,
) -> Result:
    """Run a study file into a run directory (resuming an unfinished run there).

    ``allow``, ``table``, ``max_table_bytes`` and ``long_run`` are the Python
    forms of ``--allow``, ``--table``, ``--max-table-mb`` and ``--long-run``
    (see docs/security.md).
    """
    loaded = load_study(path)
    study, data, plan, _ = checked_run(
        loaded,
        allow=allow,
        n_jobs=n_jobs,
        table=table,
        max_table_bytes=max_table_bytes,
        long_run=long_run,
    )
    out_p = Path(out)
    store, _ = prepare_run_dir(
        out_p,
        study_sha=loaded.sha256,
        data_sha=data.sha256,
        fresh=fresh,
        replace=replace,
    )
    try:
        with store_faults(store.path):
            result = study.run(
                data=data,
                store=store,
                on_progress=on_progress,
                plan=plan,
                location=str(out_p),
            )
            store.set_meta("finished", time.time())
        result.save(out_p, replace=True)
    finally:
        store.close()
    return result
