"""`sizing disperse`: Monte Carlo flights of a design with dispersed inputs, and their statistics.

Exit codes:

- 0: every sample is stored (and, when a probability is required, it is
  demonstrated at the confidence level);
- 1: the run finished but the required probability is not demonstrated;
- 2: bad input (file, [dispersions] table, options, an output folder holding
  another run's samples without --restart);
- 130: interrupted (Ctrl-C); run the same command again to resume.

Only argparse is imported at module level.
"""

from __future__ import annotations

import argparse
import json
import math
import sys
from pathlib import Path

__all__ = ["register", "cmd_disperse", "print_statistics", "print_confidence"]


def register(subparsers) -> None:
    """Add the ``disperse`` sub-command to the `sizing` parser."""
    p = subparsers.add_parser(
        "disperse", help="Monte Carlo flights of a design with dispersed inputs ([dispersions] table)",
        description="Fly a design (or the design a problem file sizes, or the motor stack a hobby file picks) "
                    "many times with the inputs of its [dispersions] table drawn at random, and report the "
                    "probability of meeting the target, percentiles, reserves and sensitivities. Samples are "
                    "stored in OUT/study.sqlite as they finish: running the same command again resumes. "
                    "Preliminary estimates only.")
    p.add_argument("file", type=Path, help="design, problem or hobby file (TOML) with a [dispersions] table")
    p.add_argument("--samples", type=int, default=None, help="number of samples (default [dispersions].samples)")
    p.add_argument("--out", type=Path, default=None, help="output folder (default: runs/<file name>-dispersion)")
    p.add_argument("--dispersions", type=Path, default=None,
                   help="take the [dispersions] table from this TOML file instead")
    p.add_argument("--probability", type=float, default=None,
                   help="required probability of meeting the target (overrides the file)")
    p.add_argument("--confidence", type=float, default=None, help="confidence level (overrides the file)")
    p.add_argument("--engine", choices=("local", "dask", "serial"), default=None,
                   help="local worker processes (default), a Dask cluster, or this process only")
    p.add_argument("--workers", type=int, default=None, help="worker processes (default: all cores)")
    p.add_argument("--scheduler", default=None, help="Dask scheduler address (implies --engine dask)")
    p.add_argument("--restart", action="store_true", help="discard samples already in the output folder")
    p.add_argument("--json", action="store_true", help="print the statistics as one JSON object")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.set_defaults(func=cmd_disperse)


def _err(text: str) -> None:
    for line in str(text).splitlines():
        if line.strip():
            print(f"error: {line.strip()}", file=sys.stderr)


def _check_args(args) -> str | None:
    for name in ("samples", "workers"):
        v = getattr(args, name)
        if v is not None and v < 1:
            return f"--{name}: must be >= 1. Got {v}."
    for name in ("probability", "confidence"):
        v = getattr(args, name)
        if v is not None and not 0.0 < v < 1.0:
            return f"--{name}: must be in (0, 1). Got {v}."
    if args.scheduler and args.engine not in (None, "dask"):
        return f"--scheduler: only used with --engine dask. Got --engine {args.engine}."
    return None


def cmd_disperse(args: argparse.Namespace) -> int:
    """Run `sizing disperse`; returns the exit code (see the module docstring)."""
    from .cli import _console
    from .dispersion.case import case_from_file
    from .dispersion.run import run_dispersion

    bad = _check_args(args)
    if bad:
        _err(bad)
        return 2
    engine = "dask" if args.scheduler else (args.engine or "local")
    out = args.out or Path("runs") / f"{args.file.stem}-dispersion"
    con = _console(stderr=True)
    if not args.quiet:
        con.print(f"reading {args.file}")
    case = case_from_file(args.file, dispersions=args.dispersions)
    n = args.samples or case.spec.samples
    if not args.quiet:
        con.print(f"[bold]dispersing[/] {case.name}: {n:,} samples of {len(case.spec.inputs)} inputs into {out}")
    prog = None
    update = None
    if not args.quiet:
        from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

        prog = Progress(TextColumn("[bold]flights"), BarColumn(), MofNCompleteColumn(),
                        TextColumn("{task.fields[rate]} /s"), TextColumn("ETA"), TimeRemainingColumn(),
                        console=con, transient=False, refresh_per_second=5)
        task = prog.add_task("flights", total=n, rate="-")

        def update(p) -> None:
            prog.update(task, completed=p.done, rate=f"{p.rate_per_s:,.0f}" if p.rate_per_s else "-")
    if prog is not None:
        prog.start()
    try:
        summary = run_dispersion(case, out, samples=n, engine=engine, workers=args.workers,
                                 scheduler=args.scheduler, restart=args.restart, on_progress=update,
                                 on_message=None if args.quiet else (lambda m: con.print(m)),
                                 probability=args.probability, confidence=args.confidence)
    finally:
        if prog is not None:
            prog.stop()
    if summary.interrupted or not summary.complete:
        _err(f"interrupted: {sum(summary.counts.values()):,} of {n:,} samples are stored in {out}; run the same "
             "command again to resume.")
        return 130
    st = summary.statistics
    if args.json:
        from .result import finite_json

        print(json.dumps(finite_json(st), indent=2))
    else:
        print_statistics(st, summary)
    for k in ("report", "samples_csv", "statistics_csv", "statistics_json"):
        if k in summary.outputs:
            print(f"wrote {summary.outputs[k]}", file=sys.stderr if args.json else sys.stdout)
    demonstrated = st.get("requirement_demonstrated")
    return 1 if demonstrated is False else 0


def _fmt(v, spec: str | None = None) -> str:
    """A number for a table: four significant digits, whole numbers with thousands separators from 10^4."""
    if isinstance(v, float) and math.isinf(v):
        return "inf (failed flights)" if v > 0 else "-inf"
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "-"
    if spec is None:
        spec = ",.0f" if abs(v) >= 1e4 else ",.4g"
    return format(v, spec)


def print_statistics(st: dict, summary=None, console=None) -> None:
    """The run's statistics as tables: probability, reserves, percentiles, sensitivities, landing ellipse."""
    from rich.markup import escape
    from rich.table import Table

    from .cli import _console
    from .result import CAUTION

    con = console or _console()
    s = st["samples"]
    head = f"[bold]dispersion[/] {escape(st['name'])}: {s['n']:,} samples (flown {s['ok']:,}, failed {s['failed']:,}"
    head += f", no vehicle {s['invalid']:,})"
    if summary is not None:
        head += f" in {summary.elapsed_s:.1f} s ({summary.ran:,} flown now, {summary.done_before:,} resumed)"
    con.print(head)
    if s["failed"] or s["invalid"]:
        con.print("  failed: the flight did not lift off, or came back to the ground before final burnout; no "
                  "vehicle: the sampled values make none (e.g. a negative mass); both count as missing the target")
    con.print(f"requirement: {escape(st['requirement'])}")
    pm = st.get("probability_of_meeting")
    c = st["confidence"]
    if pm:
        con.print(f"probability of meeting it: {pm['estimate']:.2%} ({pm['met']:,} of {pm['n']:,}); at least "
                  f"{pm['lower']:.2%} at {c:.0%} confidence (Clopper-Pearson)")
        req = st.get("probability_required")
        if req is not None:
            ok = st["requirement_demonstrated"]
            word = "[bold green]demonstrated[/]" if ok else "[bold red]not demonstrated[/]"
            con.print(f"required {100 * req:.6g} %: {word} at {c:.0%} confidence")
    shape = st.get("orbit_shape")
    if shape:
        con.print(f"orbit shape with the fixed steering programme (no guidance): "
                  f"{shape['perigee_short_by_10_km_share']:.1%} of flights end with the perigee more than 10 km "
                  f"below the target's, {shape['perigee_below_surface_share']:.1%} below the surface; a guided "
                  "vehicle trades such shape errors with the reserve, this model does not")
        perf = st.get("performance") or {}
        if abs(perf.get("nominal_margin", 1.0)) < 1.0:
            con.print("the nominal flight meets the target with no margin (no reserve carried), so about half of "
                      "the dispersed flights miss even with guidance; size with `probability` in \\[dispersions] to "
                      "carry a reserve")
    if st.get("reserves"):
        u = st["target_unit"]
        t = Table(title=escape(f"Flight performance reserve [{u}]: {st['performance']['what']} that a fraction p of "
                               f"flights stays within at {c:.0%} confidence (order statistics, Hanson & Beard "
                               f"2012); nominal margin {st['performance']['nominal_margin']:,.4g} {u}"),
                  title_justify="left")
        cols = ["p [-]", f"order statistic [{u}]", "rank / n", "n needed", f"normal fit [{u}]",
                f"root-sum-square [{u}]", "covered"]
        if st["target_kind"] == "orbit":
            cols.append("propellant [kg]")
        for h in cols:
            t.add_column(escape(h), justify="right")
        for r in st["reserves"]:
            row = [f"{r['probability']:.5g}", _fmt(r["reserve_order_statistic"]),
                   f"{r['rank']:,}/{r['n']:,}" if r["rank"] else "too few", f"{r['samples_needed_no_failure']:,}",
                   _fmt(r["reserve_normal_fit"]), _fmt(r["reserve_rss"]),
                   "yes" if r["covered_by_nominal_margin"] else "no"]
            if st["target_kind"] == "orbit":
                row.append(_fmt(r.get("reserve_propellant_kg")))
            t.add_row(*row)
        con.print(t)
    t = Table(title="Percentiles of the flown samples", title_justify="left")
    for h in ("figure", "unit", "mean", "std", "1 %", "5 %", "50 %", "95 %", "99 %"):
        t.add_column(h, justify="left" if h == "figure" else "right")
    for r in st["percentiles"]:
        t.add_row(escape(r["label"]), escape(r["unit"]), _fmt(r["mean"]), _fmt(r["std"]), _fmt(r["p1"]),
                  _fmt(r["p5"]), _fmt(r["p50"]), _fmt(r["p95"]), _fmt(r["p99"]))
    con.print(t)
    for key, rows in st["sensitivities"].items():
        top = ", ".join(f"{r['input']} {r['rank_correlation']:+.2f}" for r in rows[:5])
        con.print(f"rank correlation with {escape(key)}: {escape(top)}")
    for e in st.get("landing_ellipses", []):
        if e:
            con.print(f"landing: {e['probability']:.0%} ellipse {e['semi_major_m']:,.0f} x {e['semi_minor_m']:,.0f} m "
                      f"(semi-axes), centre {e['mean_east_m']:,.0f} m east, {e['mean_north_m']:,.0f} m north, "
                      f"major axis {e['major_axis_bearing_deg']:.0f} deg; {e['sample_share_inside']:.1%} of "
                      "samples inside")
    con.print(f"[dim]{escape(CAUTION)}[/]")


def print_confidence(result, console=None) -> None:
    """The rounds of sizing to a confidence (`sizing solve` with [dispersions].probability)."""
    from rich.markup import escape
    from rich.table import Table

    from .cli import _console

    info = (result.flight or {}).get("confidence")
    if not info:
        return
    con = console or _console()
    u = info["deficit_unit"]
    t = Table(title=escape(f"Sizing to probability {info['probability_required']:g} at {info['confidence']:.0%} "
                           f"confidence ({info['samples']:,} dispersed flights per round, seed {info['seed']})"),
              title_justify="left")
    first = "sizing apogee [m]" if u == "m" else "reserve propellant [kg]"
    for h in ("round", first, "gross mass [kg]", f"deficit bound [{u}]", "flights meeting it"):
        t.add_column(escape(h), justify="right")
    for k, r in enumerate(info["rounds"], start=1):
        t.add_row(str(k), _fmt(r["sizing_target"], ",.6g"), _fmt(r["gross_mass_kg"], ",.6g"), _fmt(r["bound"]),
                  f"{r['met']:,} of {r['n']:,}")
    con.print(t)
