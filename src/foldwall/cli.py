"""Command line: ``foldwall run | plan | audit | report | schema | unseal | ledger``.

Bad input gets one line on stderr naming the key or column and how to fix it,
and exit status 2; ``--debug`` shows the traceback instead.
"""

from __future__ import annotations

import argparse
import json
import sys
import time
import warnings
from pathlib import Path
from typing import TYPE_CHECKING, Any

from ._version import __version__
from .exceptions import FoldwallError, FoldwallWarning, LeakageError, RunError
from .store import StoreDamagedError
from .table import DEFAULT_MAX_TABLE_BYTES, sanitise

if TYPE_CHECKING:
    from .plan import Plan
    from .report import Result
    from .study import Study
    from .table import Dataset

__all__ = ["main"]

EXIT_AUDIT_FOUND = 1  # foldwall audit --fail-on: a check reached that severity
EXIT_BAD_INPUT = 2
EXIT_RUN_FAILED = 3
EXIT_INTERRUPTED = 130


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="foldwall", description="Honest nested evaluation of models on small data."
    )
    p.add_argument("--version", action="version", version=f"foldwall {__version__}")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")

    def common(sp: argparse.ArgumentParser) -> None:
        sp.add_argument("study", help="the study file (YAML)")
        sp.add_argument(
            "--allow",
            action="append",
            default=[],
            metavar="MODULE",
            help="also allow estimators from this top-level module (repeatable)",
        )
        sp.add_argument(
            "--jobs",
            type=int,
            default=None,
            metavar="N",
            help="workers of the flat pool (default 1, as wrap(n_jobs=None): this process; "
            "-1: all cores; more than the cores only with --oversubscribe; results never "
            "depend on it)",
        )
        sp.add_argument(
            "--oversubscribe",
            action="store_true",
            help="let --jobs exceed the number of cores (otherwise capped, with a note)",
        )
        sp.add_argument(
            "--table",
            metavar="PATH",
            default=None,
            help="read this table instead of the study's data.table (needed for a table "
            "outside the study file's folder)",
        )
        sp.add_argument(
            "--max-table-mb",
            type=float,
            default=None,
            metavar="MB",
            help=f"refuse a larger table file (default: {DEFAULT_MAX_TABLE_BYTES // 2**20} MiB)",
        )
        sp.add_argument("--debug", action="store_true", help="show tracebacks")

    run = sub.add_parser(
        "run", help="run a study into an output folder (resumes an unfinished one)"
    )
    common(run)
    run.add_argument(
        "--out", required=True, metavar="DIR", help="output folder of the run"
    )
    run.add_argument(
        "--fresh",
        action="store_true",
        help="start over: move an earlier run in DIR aside (never deleted)",
    )
    run.add_argument(
        "--replace",
        action="store_true",
        help="move a finished run in DIR aside and run again",
    )
    run.add_argument(
        "--long-run",
        action="store_true",
        help="start a plan above the fit or time limit that otherwise needs confirmation",
    )
    run.add_argument(
        "--quiet",
        action="store_true",
        help="print only the final line (for scripts and CI)",
    )
    run.add_argument(
        "--backend",
        choices=["local", "dask"],
        default="local",
        help="local: a joblib pool on this machine; dask: an existing dask.distributed cluster",
    )
    run.add_argument(
        "--scheduler",
        metavar="ADDRESS",
        default=None,
        help="address of the dask scheduler, e.g. tcp://10.0.0.5:8786 (with --backend dask)",
    )

    plan = sub.add_parser(
        "plan",
        help="print the plan without fitting (folds, class counts, fits, run time)",
    )
    common(plan)
    plan.add_argument(
        "--json", action="store_true", help="print the whole plan as JSON"
    )
    plan.add_argument("--no-estimate", action="store_true", help="skip timing one fit")

    audit = sub.add_parser(
        "audit",
        help="run the table audits of a study (duplicates, hidden groups, leaky columns, "
        "confounds, time order) without any model search",
    )
    audit.add_argument("study", help="the study file (YAML)")
    audit.add_argument(
        "--fail-on",
        choices=("problem", "warning"),
        default=None,
        help="exit with status 1 when a check reaches this severity (for scripts and "
        "CI); by default the audit reports and exits 0",
    )
    audit.add_argument(
        "--allow",
        action="append",
        default=[],
        metavar="MODULE",
        help="also allow estimators from this top-level module (repeatable)",
    )
    audit.add_argument(
        "--table",
        metavar="PATH",
        default=None,
        help="read this table instead of the study's data.table (needed for a table "
        "outside the study file's folder)",
    )
    audit.add_argument(
        "--max-table-mb",
        type=float,
        default=None,
        metavar="MB",
        help=f"refuse a larger table file (default: {DEFAULT_MAX_TABLE_BYTES // 2**20} MiB)",
    )
    audit.add_argument(
        "--json",
        action="store_true",
        help="print the audits as JSON (results.json's form)",
    )
    audit.add_argument("--debug", action="store_true", help="show tracebacks")

    sub.add_parser("schema", help="print the JSON Schema of the study file")

    rep = sub.add_parser(
        "report",
        help="rebuild report.html and report.md of a finished run (nothing is fitted) "
        "and print its summary again",
    )
    rep.add_argument("run_dir", metavar="RUN_DIR", help="the folder of a finished run")
    rep.add_argument("--debug", action="store_true", help="show tracebacks")

    unseal = sub.add_parser(
        "unseal",
        help="open the sealed hold-out once: fit on all development rows, score on the hold-out",
    )
    common(unseal)
    unseal.add_argument(
        "--out", required=True, metavar="DIR", help="new folder for opening.json"
    )
    unseal.add_argument(
        "--yes",
        action="store_true",
        help="do not ask for confirmation (for scripts; the opening is still recorded)",
    )
    unseal.add_argument(
        "--permutations",
        type=int,
        default=999,
        metavar="M",
        help="permutations of the test of the fixed model on the hold-out (default 999)",
    )

    ledger = sub.add_parser(
        "ledger",
        help="list every study run on a table and every opening of its hold-out",
    )
    ledger.add_argument("table", help="the table file (CSV or Parquet)")
    ledger.add_argument(
        "--ledger",
        metavar="FILE",
        default=None,
        help="the ledger file (default: beside the table, TABLE.ledger.sqlite)",
    )
    ledger.add_argument("--json", action="store_true", help="print the listing as JSON")
    ledger.add_argument("--debug", action="store_true", help="show tracebacks")
    return p


def _cmd_report(args: argparse.Namespace) -> int:
    from .report import Result, print_summary, rebuild_report

    result = Result.load(args.run_dir)  # checks the folder and the schema version
    files = rebuild_report(args.run_dir)
    print_summary(result)
    print(f"report: {files.html} (and {files.markdown.name}, plots in report_files/)")
    return 0


def _jobs(n: int | None, *, oversubscribe: bool = False, backend: str = "local") -> int:
    """Workers for ``--jobs``: one by default (as ``wrap``); more than the cores only when asked.

    A number above the cores of this machine is capped at the cores, with a note on
    stderr, unless ``--oversubscribe`` is given (or the work goes to dask, whose
    workers are elsewhere).
    """
    import os

    if n is not None and (n == 0 or n < -1):
        from .exceptions import SpecError

        raise SpecError(
            f"--jobs must be a number of workers >= 1, or -1 for all cores; got {n}"
        )
    cores = os.cpu_count() or 1
    # The same default as wrap(n_jobs=None): one worker; -1 uses every core.
    if n is None:
        return 1
    if n == -1:
        return cores
    if n > cores and not oversubscribe and backend == "local":
        print(
            f"foldwall: note: --jobs {n} is more than the {cores} cores of this machine; using {cores} "
            f"(more workers than cores only add memory; pass --oversubscribe to use {n})",
            file=sys.stderr,
        )
        return cores
    return n


def _table_args(args: argparse.Namespace) -> dict[str, Any]:
    """The table options of plan and run, as study_from_file's keyword arguments."""
    out: dict[str, Any] = {"table": args.table}
    if args.max_table_mb is not None:
        if not args.max_table_mb > 0:
            from .exceptions import SpecError

            raise SpecError(
                f"--max-table-mb must be a positive size in MiB; got {args.max_table_mb}"
            )
        out["max_table_bytes"] = int(args.max_table_mb * 2**20)
    return out


def _estimate(
    study: Study, plan: Plan, data: Dataset, n_jobs: int, *, timed: int = 3
) -> dict[str, Any]:
    """Time fits of every candidate on the first outer-training part; nothing is kept.

    One warm-up fit per candidate (imports, caches) is not counted; then ``timed``
    fits each. The estimate uses each candidate's median time, the range its
    fastest and slowest: a single timing on a busy machine was off by 10x (issue 13).
    """
    import statistics

    from threadpoolctl import threadpool_limits

    with threadpool_limits(1):
        study.preflight(plan, data)  # warm-up, not counted
        runs = [study.preflight(plan, data) for _ in range(timed)]
    per_cand = list(zip(*runs, strict=True))
    folds, m = len(plan.folds), plan.permutations

    def total(times: list[float]) -> float:
        secs = 0.0
        for ci, c in enumerate(plan.candidates):
            units = folds * (1 + (m if c.role == "candidate" else 0))
            secs += times[ci] * plan.fits_of(ci) * units
        return secs / max(1, n_jobs)

    median = [statistics.median(t) for t in per_cand]
    return {
        "seconds": total(median),
        "low": total([min(t) for t in per_cand]),
        "high": total([max(t) for t in per_cand]),
        "fit_seconds": statistics.mean(median),
        "timed": timed,
        "n_jobs": n_jobs,
    }


def _cmd_run(args: argparse.Namespace) -> int:
    from .report import ConsoleProgress, print_summary
    from .spec import load_study
    from .store import store_faults
    from .study import checked_run, prepare_run_dir

    if args.backend == "dask" and not args.scheduler:
        from .exceptions import SpecError

        raise SpecError(
            "--backend dask needs --scheduler ADDRESS (e.g. tcp://127.0.0.1:8786)"
        )
    loaded = load_study(args.study)
    n_jobs = _jobs(args.jobs, oversubscribe=args.oversubscribe, backend=args.backend)
    study, data, plan, _ = checked_run(
        loaded,
        allow=args.allow,
        n_jobs=n_jobs,
        long_run=args.long_run,
        **_table_args(args),
    )
    study.backend, study.scheduler = args.backend, args.scheduler
    out = Path(args.out)
    store, state = prepare_run_dir(
        out,
        study_sha=loaded.sha256,
        data_sha=data.sha256,
        fresh=args.fresh,
        replace=args.replace,
        on_note=lambda note: print(f"foldwall: note: {note}", file=sys.stderr),
    )
    if state == "resumed" and not args.quiet:
        print(
            f"foldwall: resuming the unfinished run in '{out}' ({store.count()} units already done)",
            file=sys.stderr,
        )
    progress = ConsoleProgress(quiet=args.quiet, live=sys.stderr.isatty())

    def early(partial: Result) -> None:
        # the estimate, the folds and the comparisons, before the permutations start
        if not args.quiet and plan.permutations > 0:
            print_summary(partial, console=progress.console, part="real")

    try:
        with store_faults(store.path):
            result = study.run(
                data=data,
                store=store,
                on_progress=progress,
                on_estimate=early,
                progress=False,
                plan=plan,
                location=str(out),
            )
            store.set_meta("finished", time.time())
    except KeyboardInterrupt:
        progress.stop()
        n = store.count()
        store.close()
        print(
            f"foldwall: interrupted; {n} finished units are kept in '{out}'. Run the same command again to resume.",
            file=sys.stderr,
        )
        return EXIT_INTERRUPTED
    except (RunError, LeakageError) as exc:
        progress.stop()
        if isinstance(exc, StoreDamagedError):
            store.close()
            raise
        store.record_failure(
            f"run-{int(time.time())}", kind=type(exc).__name__, error=str(exc)
        )
        n = store.count()
        store.close()
        raise type(exc)(f"{exc} ({n} finished units are kept in '{out}')") from None
    except BaseException:
        store.close()  # gives back the run folder's lock
        raise
    finally:
        progress.stop()
    try:
        result.save(out, replace=True)
    finally:
        store.close()  # gives back the run folder's lock
    if args.quiet:
        print(f"{result.metric} {result.score:.4f} ({out}/results.json)")
    elif plan.permutations > 0:
        print_summary(result, out_dir=str(out), part="control")
    else:
        print_summary(result, out_dir=str(out))
    return 0


def _cmd_plan(args: argparse.Namespace) -> int:
    from .report import print_plan
    from .study import study_from_file

    n_jobs = _jobs(args.jobs, oversubscribe=args.oversubscribe)
    study, data = study_from_file(
        args.study, allow=args.allow, n_jobs=n_jobs, **_table_args(args)
    )
    plan = study.plan(data=data)
    if args.json:
        print(json.dumps(plan.to_dict()))
        return 0
    est = None if args.no_estimate else _estimate(study, plan, data, n_jobs)
    print_plan(plan, data, estimate=est)
    from .plan import estimate_work, over_limit

    work = estimate_work(
        plan, fit_seconds=None if est is None else est["fit_seconds"], n_jobs=n_jobs
    )
    if over_limit(work):
        print(
            f"note: {work.fits:,} model fits: above the limit a run starts without confirmation; "
            f"'foldwall run' needs --long-run for this plan (or make it smaller; control.stop_early: "
            f"true stops the random-label control once its answer is clear)"
        )
    return 0


def _cmd_audit(args: argparse.Namespace) -> int:
    from threadpoolctl import threadpool_limits

    from .report import print_audits
    from .study import audit_study_file

    with threadpool_limits(1):
        audits = audit_study_file(
            args.study, allow=args.allow, **_table_args(args)
        ).to_json()
    if args.json:
        print(json.dumps(audits))
    else:
        print_audits(audits)
    if args.fail_on is not None:
        levels = ("problem",) if args.fail_on == "problem" else ("problem", "warning")
        found = [c["check"] for c in audits["checks"] if c["severity"] in levels]
        if found:
            print(
                f"foldwall: {len(found)} check(s) at or above '{args.fail_on}' "
                f"({', '.join(found[:6])}); exit status 1 (--fail-on {args.fail_on})",
                file=sys.stderr,
            )
            return EXIT_AUDIT_FOUND
    return 0


def _confirm(prior: dict[str, Any], name: str) -> bool:
    """Ask on a terminal before a hold-out is opened; refuse without a terminal."""
    from .exceptions import SpecError

    before = (
        f"it was opened {prior['times']} time(s) before, first by '{prior['first_by']}'; "
        "only the first opening is an unbiased estimate"
        if prior["times"]
        else "it has not been opened before"
    )
    if not sys.stdin.isatty():
        raise SpecError(
            "unseal asks for confirmation on a terminal; pass --yes to open the "
            "hold-out from a script"
        )
    print(
        f"foldwall: open the hold-out ({prior['rows']} rows) for study '{name}'? {before}. "
        "The opening is recorded in the table's ledger.",
        file=sys.stderr,
    )
    answer = input("open it now? [y/N] ").strip().lower()
    return answer in ("y", "yes")


def _cmd_unseal(args: argparse.Namespace) -> int:
    from .exceptions import SpecError
    from .report import print_opening
    from .spec import load_study
    from .study import (
        check_out_dir,
        open_holdout,
        prior_openings,
        study_and_table,
        write_opening,
    )

    if args.permutations < 1:
        raise SpecError(
            f"--permutations must be at least 1 (e.g. 999), got {args.permutations}"
        )
    loaded = load_study(args.study)
    study, data, rows = study_and_table(
        loaded,
        allow=args.allow,
        n_jobs=_jobs(args.jobs, oversubscribe=args.oversubscribe),
        **_table_args(args),
    )
    out = Path(args.out)
    check_out_dir(out)
    prior = prior_openings(study, data, rows)
    name = study.source.name or Path(args.study).stem
    if not args.yes and not _confirm(prior, name):
        print("foldwall: the hold-out stays sealed", file=sys.stderr)
        return 0
    opening = open_holdout(
        study, data, rows, n_permutations=args.permutations, location=str(out)
    )
    target = write_opening(out, opening)
    print_opening(opening)
    print(f"opening: {target}")
    return 0


def _cmd_ledger(args: argparse.Namespace) -> int:
    from .report import print_ledger
    from .study import ledger_listing

    listing = ledger_listing(
        Path(args.table), None if args.ledger is None else Path(args.ledger)
    )
    if args.json:
        print(json.dumps(listing, indent=2))
    else:
        print_ledger(listing)
    return 0


def main(argv: list[str] | None = None) -> int:
    try:
        return _main(argv)
    except BrokenPipeError:  # e.g. `foldwall schema | head`
        import os

        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0


def _main(argv: list[str] | None = None) -> int:
    parser = _parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return EXIT_BAD_INPUT
    if args.command == "schema":
        from .spec import study_json_schema

        print(json.dumps(study_json_schema(), indent=2))
        return 0
    debug = getattr(args, "debug", False)
    warnings.simplefilter("default", FoldwallWarning)
    try:
        commands = {
            "run": _cmd_run,
            "plan": _cmd_plan,
            "report": _cmd_report,
            "audit": _cmd_audit,
            "unseal": _cmd_unseal,
            "ledger": _cmd_ledger,
        }
        return commands[args.command](args)
    except (LeakageError, RunError) as exc:
        if debug:
            raise
        print(
            f"foldwall: run failed: {sanitise(str(exc), limit=2000)}", file=sys.stderr
        )
        return EXIT_RUN_FAILED
    except FoldwallError as exc:
        if debug:
            raise
        print(f"foldwall: error: {sanitise(str(exc), limit=2000)}", file=sys.stderr)
        return EXIT_BAD_INPUT


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
