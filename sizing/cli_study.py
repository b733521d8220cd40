"""`sizing study` and `sizing report`: run trade studies and rebuild their reports.

Exit codes of ``sizing study``:

- 0: every case is stored and at least one design is feasible; infeasible or
  constraint-rejected cases are a normal outcome of a trade study and are
  only counted in the summary;
- 1: the study finished but no design is feasible, or some cases ended in an
  error (e.g. an axis value the problem rejects) or crashed a worker twice;
- 2: bad input (study file, base problem, options, an output folder holding
  another study's results without --restart);
- 130: interrupted (Ctrl-C); run the same command again to resume.

Only argparse is imported at module level; the study machinery loads when a
command runs.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

__all__ = ["register", "cmd_study", "cmd_report", "progress_text"]


def register(subparsers) -> None:
    """Add the ``study`` and ``report`` sub-commands to the `sizing` parser."""
    p = subparsers.add_parser(
        "study", help="run (or resume) a trade study into an output folder",
        description="Run a trade study. Running the same command again resumes: finished cases "
                    "are kept in OUT/study.sqlite and skipped. Preliminary estimates only.")
    p.add_argument("file", type=Path, help="study file (TOML)")
    p.add_argument("--out", type=Path, default=None,
                   help="output folder (default: runs/<study file name>)")
    p.add_argument("--engine", choices=("local", "dask", "serial"), default=None,
                   help="local worker processes (default), a Dask cluster (with --scheduler, or a "
                        "local one started for the run), or this process only")
    p.add_argument("--workers", type=int, default=None,
                   help="worker processes of the local engine or of a local Dask cluster "
                        "(default: all cores)")
    p.add_argument("--scheduler", default=None,
                   help="Dask scheduler address, e.g. tcp://host:8786 (implies --engine dask)")
    p.add_argument("--restart", action="store_true",
                   help="discard results already in the output folder and start over")
    p.add_argument("--no-report", action="store_true", help="do not write report.html at the end")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.set_defaults(func=cmd_study)

    p = subparsers.add_parser(
        "report", help="(re)build a study's report.html and Pareto exports from stored results",
        description="Rebuild report.html, pareto.csv, pareto.xlsx and cases.csv of a study folder; "
                    "with --case, write the design-review pack of one case.")
    p.add_argument("folder", type=Path, help="study output folder (holds study.sqlite)")
    p.add_argument("--case", type=int, default=None,
                   help="write the design-review pack of this case id (see cases.csv)")
    p.add_argument("--pack-dir", type=Path, default=None,
                   help="folder for the review pack (default: FOLDER/review/case-ID)")
    p.set_defaults(func=cmd_report)


def _err(text: str) -> None:
    for line in str(text).splitlines():
        if line.strip():
            print(f"error: {line.strip()}", file=sys.stderr)


def _note(text: str) -> None:
    print(text, file=sys.stderr)


def progress_text(counts: dict[str, int]) -> str:
    """Outcome counts for the progress bar, one per kind.

    Infeasible and constraint-rejected cases are normal results of a trade
    study, so they are counted apart from errors (invalid case or code fault,
    including worker crashes)."""
    errors = counts.get("error", 0) + counts.get("crashed", 0)
    return (f"feasible {counts.get('ok', 0):,}  infeasible {counts.get('infeasible', 0):,}  "
            f"rejected {counts.get('rejected', 0):,}  errors {errors:,}")


def _progress_bar(quiet: bool):
    """A rich progress bar (cases done, outcomes per kind, rate, ETA) and its update callback."""
    if quiet:
        return None, None
    from .cli import _console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

    prog = Progress(
        TextColumn("[bold]cases"), BarColumn(), MofNCompleteColumn(),
        TextColumn("{task.fields[outcomes]}"), TextColumn("{task.fields[rate]} /s"),
        TextColumn("ETA"), TimeRemainingColumn(),
        console=_console(stderr=True), transient=False, refresh_per_second=5)
    task = prog.add_task("cases", total=None, outcomes=progress_text({}), rate="-")

    def update(p) -> None:
        prog.update(task, total=p.total, completed=p.done, outcomes=progress_text(p.counts),
                    rate=f"{p.rate_per_s:,.0f}" if p.rate_per_s else "-")

    return prog, update


def cmd_study(args: argparse.Namespace) -> int:
    """Run `sizing study`; returns the exit code (see the module docstring)."""
    from rich.markup import escape

    from .cli import _console
    from rich.table import Table

    from .errors import SizingError
    from .result import CAUTION
    from .study.runner import run_study
    from .study.spec import load_study

    if args.workers is not None and args.workers < 1:
        _err(f"--workers: must be >= 1. Got {args.workers}.")
        return 2
    if args.scheduler and args.engine not in (None, "dask"):
        _err(f"--scheduler: only used with --engine dask. Got --engine {args.engine}.")
        return 2
    engine = args.engine or ("dask" if args.scheduler else "local")
    out = args.out or Path("runs") / args.file.stem
    try:
        study = load_study(args.file)
    except SizingError as exc:
        _err(str(exc))
        return 2
    prog, update = _progress_bar(args.quiet)
    try:
        if prog is not None:
            prog.start()
        try:
            summary = run_study(study, out, engine=engine, workers=args.workers,
                                scheduler=args.scheduler, restart=args.restart,
                                on_progress=update, write_outputs=not args.no_report,
                                on_message=_note if prog is None else (lambda t: prog.console.print(escape(t))))
        finally:
            if prog is not None:
                prog.stop()
    except SizingError as exc:
        _err(str(exc))
        return 2
    except (OSError, ValueError, RuntimeError) as exc:
        _err(f"{type(exc).__name__}: {exc}" if isinstance(exc, RuntimeError) else str(exc))
        return 2
    con = _console()
    if summary.interrupted:
        _err(f"interrupted after {summary.ran} new cases; {sum(summary.counts.values())} of "
             f"{summary.total} are stored in {out}. Run the same command again to resume.")
        return 130
    t = Table(title=f"Study {escape(study.name)}: summary", title_justify="left")
    t.add_column("item")
    t.add_column("value", justify="right")
    t.add_row("cases in study", f"{summary.total:,}")
    t.add_row("already stored (resumed)", f"{summary.done_before:,}")
    t.add_row("run now", f"{summary.ran:,}")
    for k in ("ok", "infeasible", "rejected", "error", "crashed"):
        if summary.counts.get(k):
            t.add_row(f"status {k}", f"{summary.counts[k]:,}")
    rate = summary.ran / summary.elapsed_s if summary.elapsed_s > 0 else 0.0
    t.add_row(escape("wall time [s]"), f"{summary.elapsed_s:,.2f}")
    t.add_row("cases per second", f"{rate:,.0f}")
    t.add_row("engine (workers)", f"{summary.engine} ({summary.workers})")
    con.print(t)
    if summary.n_ok and not args.no_report:
        from .study.results import load_results

        res = load_results(out)
        con.print(f"Pareto front: {len(res.pareto)} designs -> {escape(str(out / 'pareto.csv'))}, "
                  f"{escape(str(out / 'report.html'))}")
    con.print(f"[italic]{escape(CAUTION)}[/]")
    bad = summary.counts.get("error", 0) + summary.counts.get("crashed", 0)
    if summary.n_ok == 0:
        _err(f"{out}: no feasible design among {summary.total} cases; see cases.csv for the reasons.")
        return 1
    if bad:
        _err(f"{out}: {bad} cases ended in an error or crashed a worker; see cases.csv (status, message).")
        return 1
    return 0


def cmd_report(args: argparse.Namespace) -> int:
    """Run `sizing report`; returns the exit code."""
    from rich.markup import escape

    from .cli import _console

    from .errors import SizingError
    from .result import CAUTION
    from .study.results import write_outputs, write_review_pack

    con = _console()
    try:
        if args.case is not None:
            path = write_review_pack(args.folder, args.case, args.pack_dir)
            con.print(f"design-review pack of case {args.case}: {escape(str(path))}")
        else:
            from .dispersion.run import is_dispersion_folder, rebuild_outputs

            files = rebuild_outputs(args.folder) if is_dispersion_folder(args.folder) else write_outputs(args.folder)
            for p in files.values():
                con.print(escape(str(p)))
    except SizingError as exc:
        _err(str(exc))
        return 2
    except (OSError, ValueError) as exc:
        _err(str(exc))
        return 2
    con.print(f"[italic]{escape(CAUTION)}[/]")
    return 0
