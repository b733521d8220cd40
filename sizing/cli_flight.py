"""`sizing fly`: simulate a design whose stage masses are given (a design under review)."""

from __future__ import annotations

import json
import sys
from pathlib import Path

__all__ = ["register", "run_fly", "write_trajectory_csv"]


def register(sub) -> None:
    p = sub.add_parser("fly", help="simulate a design whose stage masses are given")
    p.add_argument("file", type=Path, help="problem file with propellant_mass and structural_mass per stage")
    p.add_argument("--json", action="store_true", help="print one JSON object to stdout")
    p.add_argument("--out", type=Path, help="write the time history (.csv)")
    p.set_defaults(func=run_fly)


#: CSV header for each history column: what it is and its unit.
TRAJECTORY_HEADERS = {
    "t_s": "time [s]",
    "altitude_m": "altitude above sea level [m]",
    "downrange_m": "downrange [m]",
    "speed_m_s": "speed relative to Earth [m/s]",
    "inertial_speed_m_s": "inertial speed [m/s]",
    "flight_path_angle_deg": "flight-path angle [deg]",
    "mach": "Mach number [-]",
    "dynamic_pressure_pa": "dynamic pressure [Pa]",
    "acceleration_m_s2": "sensed acceleration [m/s^2]",
    "mass_kg": "mass [kg]",
    "thrust_n": "thrust [N]",
    "drag_n": "drag [N]",
    "stage_index": "burning stage (0 = bottom) [-]",
    "east_m": "east of the launch site [m]",
    "north_m": "north of the launch site [m]",
    "angle_of_attack_deg": "angle of attack (body-axis flights) [deg]",
}


def write_trajectory_csv(history, path: Path, *, site_altitude_m: float = 0.0) -> Path:
    """Write the flight's time history; every header names the quantity and its unit.

    An "altitude above the launch site" column follows the sea-level altitude.
    """
    import csv

    cols = dict(history.as_columns())
    names = list(cols)
    if "altitude_m" in cols:
        i = names.index("altitude_m") + 1
        names.insert(i, "_above_site")
        cols["_above_site"] = [a - site_altitude_m for a in cols["altitude_m"]]
    headers = [TRAJECTORY_HEADERS.get(c, "altitude above launch site [m]" if c == "_above_site" else c)
               for c in names]
    n = len(cols[names[0]]) if names else 0
    with Path(path).open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(headers)
        for k in range(n):
            w.writerow([_cell(cols[c][k]) for c in names])
    _write_caution_beside(Path(path))
    return Path(path)


def _write_caution_beside(path: Path) -> Path:
    """The caution beside a data table (kept out of the table so it loads as numbers), as study folders do."""
    from .result import CAUTION
    from .study.results import CAUTION_TXT

    note = path.parent / CAUTION_TXT
    note.write_text(f"Time histories and data tables in this folder (e.g. {path.name}) are simulation output.\n\n"
                    f"{CAUTION}\n", encoding="utf-8")
    return note


def _cell(v):
    try:
        f = float(v)
    except (TypeError, ValueError):
        return v
    if f != f:  # NaN (e.g. Mach in vacuum): an empty cell
        return ""
    if f.is_integer() and abs(f) < 1e15:
        return int(f)
    return f"{f:.9g}"


def run_fly(args) -> int:
    from rich.markup import escape

    from .cli import EXIT_BAD_INPUT, EXIT_FAILED, EXIT_OK, _console, error_line
    from .optimize.flight_problem import flight_summary, fly_problem
    from .problem.load import load_problem
    from .result import CAUTION, finite_json

    if args.out is not None and Path(args.out).suffix.lower() != ".csv":
        error_line(f"--out {args.out}: the time history is written as .csv. Got {Path(args.out).suffix or 'none'!r}.")
        return EXIT_BAD_INPUT
    from .cli import check_out_path

    check_out_path(args.out)
    problem = load_problem(args.file)
    vehicle, fr = fly_problem(problem)
    summary = flight_summary(fr, problem.launch.altitude_m)
    summary["problem"] = problem.name
    summary["gross_mass_kg"] = vehicle.gross_mass_kg
    summary["payload_mass_kg"] = vehicle.payload_mass_kg
    summary["warnings"] = list(fr.warnings)
    summary["caution"] = CAUTION
    if args.json:
        print(json.dumps(finite_json(summary), indent=2))
    else:
        con = _console()
        con.print(f"[bold]flight[/] {escape(problem.name)}: {fr.profile} profile, ended at {fr.terminated_by}, "
                  f"gross mass {vehicle.gross_mass_kg:,.6g} kg")
        from .cli import _quantity_table, print_flight
        from .report.flight_tables import BURNOUT_HEADER, burnout_rows

        con.print(_quantity_table("Burnout states (bottom stage first; losses = gravity + drag + steering + pressure)",
                                  BURNOUT_HEADER, burnout_rows(summary, problem.launch.altitude_m),
                                  right=range(1, len(BURNOUT_HEADER))))
        print_flight(summary, con)
        for w in fr.warnings:
            con.print(f"[yellow]review note:[/] {escape(w)}")
        con.print(f"[dim]{escape(CAUTION)}[/]")
    if args.out is not None:
        path = write_trajectory_csv(fr.history, args.out, site_altitude_m=problem.launch.altitude_m)
        print(f"wrote {path} (the caution is in {path.parent / 'CAUTION.txt'})", file=sys.stderr if args.json else sys.stdout)
    failed = fr.terminated_by == "impact" and len(fr.burnouts) < len(vehicle.stages)
    return EXIT_FAILED if failed else EXIT_OK

