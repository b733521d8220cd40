"""Command line: parse arguments, call the API, print. No numerics here.

Exit codes: 0 ok, 1 a well-formed problem that could not be solved, 2 bad input,
3 an internal error (a defect: reported in one line; SIZING_DEBUG=1 shows the traceback).
Errors go to stderr as one line each, never as a traceback.
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys
import warnings
from pathlib import Path
from typing import Sequence

__all__ = ["main", "EXIT_OK", "EXIT_FAILED", "EXIT_BAD_INPUT", "EXIT_INTERNAL"]

EXIT_OK = 0
EXIT_FAILED = 1
EXIT_BAD_INPUT = 2
EXIT_INTERNAL = 3

#: Modules that add sub-commands through `register(subparsers)`, imported lazily.
_PLUGINS = ("sizing.cli_flight", "sizing.cli_study", "sizing.cli_hobby", "sizing.cli_disperse")


def _console(stderr: bool = False):
    from rich.console import Console

    class _Console(Console):
        def on_broken_pipe(self) -> None:
            # output piped into e.g. `head`: stop printing, but finish the run (files still get written)
            self.quiet = True
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())

    # Piped or redirected output is not cut to 80 columns: tables keep their full width there.
    stream = sys.stderr if stderr else sys.stdout
    width = None if stream.isatty() or os.environ.get("COLUMNS") else PIPE_WIDTH
    return _Console(stderr=stderr, highlight=False, soft_wrap=True, width=width)


#: Console width when the output is not a terminal (a file or a pipe): wide enough never to cut.
PIPE_WIDTH = 10_000


def version_text() -> str:
    """``sizing (stagesizer) X.Y.Z``: the installed package version."""
    from importlib.metadata import PackageNotFoundError, version

    try:
        v = version("stagesizer")
    except PackageNotFoundError:  # pragma: no cover - running from a source tree without install
        v = "unknown (not installed)"
    return f"sizing (stagesizer) {v}"


def error_line(text: str) -> None:
    """Print an error to stderr, one line per fault."""
    for line in str(text).splitlines():
        print(f"error: {line.strip()}" if line.strip() else "", file=sys.stderr)


def error_lines(exc: Exception) -> None:
    """Print an error; a problem-file error gets one self-contained line per fault (file: fault)."""
    from .errors import ProblemDefinitionError

    if isinstance(exc, ProblemDefinitionError) and len(exc.faults) > 1:
        for source, fault in zip(exc.fault_sources, exc.faults):
            error_line(f"{source}: {fault}")
    else:
        error_line(str(exc))


def check_out_path(out: Path | None, allowed: Sequence[str] | None = None) -> None:
    """Refuse an --out path before any work: wrong extension or a folder that does not exist."""
    if out is None:
        return
    out = Path(out)
    if allowed is not None and out.suffix.lower() not in allowed:
        raise ValueError(f"--out {out}: the extension must be one of {', '.join(allowed)}. "
                         f"Got {out.suffix or 'none'!r}.")
    parent = out.parent if str(out.parent) else Path(".")
    if not parent.is_dir():
        raise ValueError(f"--out {out}: the folder {parent} does not exist; create it or choose another path.")


def print_result(result, console=None, *, caution: bool = True) -> None:
    """Human-readable stage mass table, limits, trade factors, notes and (unless `caution` is
    False, for callers that print a fuller caution of their own) the caution."""
    from rich.markup import escape
    from rich.table import Table

    from .report.tables import (
        TRADE_FACTOR_HEADER,
        TRADE_FACTOR_TITLE,
        limit_step,
        limit_text,
        limit_value_text,
        stage_columns_table,
        trade_factor_caption,
        trade_factor_rows,
    )
    from .result import CAUTION

    con = console or _console()
    style = "bold green" if result.success else "bold red"
    con.print(f"[{style}]{result.status}[/] {escape(result.problem_name)}: {escape(result.message)}")
    if result.success:
        header, rows = stage_columns_table(result)
        t = Table(title="Stage mass table (bottom stage first)", title_justify="left")
        for i, h in enumerate(header):
            t.add_column(escape(h), justify="left" if i == 0 else "right", no_wrap=True,
                         style="bold" if i == len(header) - 1 else None)
        for row in rows:
            t.add_row(*map(escape, row))
        con.print(t)
        from .report.tables import hardware_table

        hw_header, hw_rows = hardware_table(result)
        if hw_rows:
            t = Table(title="Stage hardware from the stage model (structural coefficient above is its output)",
                      title_justify="left")
            for i, h in enumerate(hw_header):
                t.add_column(escape(h), justify="left" if i == 0 else "right", no_wrap=True)
            for row in hw_rows:
                t.add_row(*map(escape, row))
            con.print(t)
    if result.constraints:
        obj = {"gross_mass": "gross mass", "payload_mass": "payload", "delta_v": "delta-v"}.get(
            result.solve_for, result.solve_for)
        t = Table(title=f"Design limits (change of the optimum's {obj} if a binding limit is relaxed "
                        "by one step)", title_justify="left")
        for h in ("limit", "allowed", "at optimum", "if relaxed"):
            t.add_column(h, no_wrap=True)
        for c in result.constraints:
            if c.binding:
                per, step = limit_step(c)
                sign = 1.0 if c.name.rsplit(".", 1)[-1].startswith("max") else -1.0
                unit = c.sensitivity_unit.split(" per ")[0].split(" ")[0]
                effect = f"{sign * per * c.sensitivity:+.4g} {unit} per {step}"
            else:
                effect = "not binding"
            t.add_row(escape(c.name), escape(limit_text(c)), escape(limit_value_text(c)), escape(effect))
        con.print(t)
    tfr = trade_factor_rows(result)
    if tfr:
        t = Table(title=TRADE_FACTOR_TITLE, title_justify="left", caption=escape(trade_factor_caption(result)),
                  caption_justify="left")
        for i, h in enumerate(TRADE_FACTOR_HEADER):
            t.add_column(escape(h), justify="right" if i >= 2 else "left", no_wrap=True)
        for r in tfr:
            t.add_row(*map(escape, r))
        con.print(t)
    if result.flight:
        print_flight(result.flight, con)
    if result.best:
        con.print(escape("best reachable: " + ", ".join(f"{k} = {v:,.6g}" for k, v in result.best.items())))
    for w in result.warnings:
        con.print(f"[yellow]review note:[/] {escape(w)}")
    if caution:
        con.print(f"[dim]{escape(CAUTION)}[/]")


def _quantity_table(title: str, header, rows, *, caption: str | None = None, right=(1,)):
    """A rich table with a left-aligned title (and caption line); columns in `right` right-aligned."""
    from rich.markup import escape
    from rich.table import Table

    t = Table(title=escape(title), title_justify="left", caption=escape(caption) if caption else None,
              caption_justify="left")
    for i, h in enumerate(header):
        t.add_column(escape(h), justify="right" if i in right else "left")
    for r in rows:
        t.add_row(*map(escape, r))
    return t


def print_flight(flight, con) -> None:
    """The flight tables `sizing solve` and `sizing fly` share: flight figures, the signed delta-v
    budget that adds up to the final speed, and the steering programme with its staging events."""
    from .report.flight_tables import (
        BUDGET_HEADER,
        STEERING_CAPTION,
        STEERING_HEADER,
        budget_title,
        delta_v_budget_rows,
        flight_quantity_values,
        loss_values,
        steering_rows,
    )
    from .report.formats import fmt

    budget = delta_v_budget_rows(flight)
    rows = flight_quantity_values(flight) + ([] if budget else loss_values(flight))
    if rows:
        con.print(_quantity_table("Flight", ("quantity", "value", "unit"),
                                  [[label, fmt(v, spec), unit] for label, v, unit, spec in rows]))
    if budget:
        from rich.markup import escape

        t = _quantity_table(budget_title(flight), BUDGET_HEADER, budget[:-1])
        t.add_section()
        t.add_row(*map(escape, budget[-1]), style="bold")
        con.print(t)
    srows = steering_rows(flight)
    if srows:
        con.print(_quantity_table("Steering programme and staging", STEERING_HEADER, srows,
                                  caption=STEERING_CAPTION, right=(0, 3)))


def _cmd_check(args) -> int:
    from .optimize.prepare import prepare
    from .problem.load import load_problem, read_toml

    if "hobby" in read_toml(args.file):  # motor / water stacks have their own file layout
        from .cli_hobby import check_hobby

        return check_hobby(args)
    problem = load_problem(args.file)
    prepare(problem)  # the checks `solve` runs before sizing: check and solve never disagree
    n = len(problem.stages)
    target = (f"delta-v {problem.delta_v_m_s:g} m/s" if problem.delta_v_m_s is not None
              else f"apogee {problem.apogee_m:g} m" if problem.apogee_m is not None
              else f"orbit altitude {problem.orbit_altitude_m:g} m" if problem.orbit_altitude_m is not None
              else "no target")
    print(f"ok: {args.file}: {problem.name}, {n} stage{'s' if n != 1 else ''} "
          f"({', '.join(problem.stage_names)}), {target}, solving for {problem.solve_for}.")
    return EXIT_OK


def _cmd_solve(args) -> int:
    from .optimize.api import solve
    from .problem.load import load_problem, read_toml
    from .report.export import result_json, write_stage_table

    if "hobby" in read_toml(args.file):  # motor / water stacks have their own file layout
        from .cli_hobby import run_hobby

        return run_hobby(args)
    if getattr(args, "sweep", None):
        from .cli_sweep import run_sweep

        check_out_path(args.out, (".csv",))
        return run_sweep(args)
    from .report.export import EXPORT_FORMATS

    check_out_path(args.out, EXPORT_FORMATS)
    problem = load_problem(args.file)
    if args.out and Path(args.out).suffix.lower() == ".toml" and not problem.is_flight_target:
        from .report.design import MSG_NO_DESIGN

        raise ValueError(f"--out {args.out}: {MSG_NO_DESIGN}.")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        if problem.dispersions is not None and problem.is_flight_target:  # sizing to a confidence
            from .dispersion.confidence import solve_with_dispersions

            result = solve_with_dispersions(problem, method=args.method)
        else:
            result = solve(problem, method=args.method)
    for w in caught:
        print(f"warning: {w.message}", file=sys.stderr)
    if args.json:
        print(result_json(result))
    else:
        print_result(result)
        if (result.flight or {}).get("confidence"):
            from .cli_disperse import print_confidence

            print_confidence(result)
    if args.out:
        if not result.success:
            error_line(f"--out {args.out}: not written, the problem has no solution.")
        else:
            path = write_stage_table(result, args.out)
            print(f"wrote {path}", file=sys.stderr if args.json else sys.stdout)
    return EXIT_OK if result.success else EXIT_FAILED


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="sizing",
        description="Size multistage rockets: optimal stage mass split, flight losses, trade studies. "
                    "Preliminary estimates only, not flight clearance.",
    )
    parser.add_argument("--version", action="version", version=version_text())
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    sub.required = True

    p = sub.add_parser("solve", help="find the optimal mass split of a problem file")
    p.add_argument("file", type=Path, help="problem file (TOML)")
    p.add_argument("--json", action="store_true", help="print one JSON object to stdout")
    p.add_argument("--out", type=Path, help="also write the table: .csv .md .json .xlsx, or the design file "
                                            "(.toml; apogee and orbit targets) that `sizing fly` flies")
    p.add_argument("--method", choices=("auto", "lagrange", "cvxpy", "slsqp"), default=None,
                   help="override [solver].method")
    p.add_argument("--sweep", metavar="KEY=START:STOP:STEP",
                   help="solve along a range of one mission value, e.g. orbit_altitude=300km:1200km:100km "
                        "(table; --out .csv)")
    p.set_defaults(func=_cmd_solve)

    p = sub.add_parser("check", help="validate a problem file without solving")
    p.add_argument("file", type=Path)
    p.set_defaults(func=_cmd_check)

    for mod_name in _PLUGINS:
        try:
            mod = importlib.import_module(mod_name)
        except ModuleNotFoundError as exc:
            if exc.name == mod_name:
                continue
            raise
        mod.register(sub)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; returns the exit code."""
    from .errors import InfeasibleProblemError, SizingError

    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse prints its own one-line usage error
        return int(exc.code or 0)
    try:
        return int(args.func(args))
    except InfeasibleProblemError as exc:
        error_line(str(exc))
        return EXIT_FAILED
    except SizingError as exc:
        error_lines(exc)
        return EXIT_BAD_INPUT
    except BrokenPipeError:  # output piped into e.g. `head`: not an error of the run
        try:
            sys.stdout = open(os.devnull, "w")
        except OSError:
            pass
        return EXIT_OK
    except OSError as exc:
        name = getattr(exc, "filename", None)
        error_line(f"{name}: {exc.strerror}." if name and exc.strerror else str(exc))
        return EXIT_BAD_INPUT
    except ValueError as exc:
        error_line(str(exc))
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        error_line("interrupted.")
        return 130
    except Exception as exc:  # a defect of ours: say so in one line, keep the exit code distinct
        error_line(f"internal error ({type(exc).__name__}: {exc}); please report it with the input file. "
                   "Set SIZING_DEBUG=1 for the traceback.")
        if os.environ.get("SIZING_DEBUG"):
            raise
        return EXIT_INTERNAL


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
