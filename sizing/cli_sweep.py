"""`sizing solve FILE --sweep KEY=START:STOP:STEP`: one problem solved along a range of one mission value.

For the curves design reviews ask for, e.g. payload or gross mass against
orbit altitude. Each point is a full solve of the file with the key replaced
(SI or a unit string: ``orbit_altitude=300km:1200km:100km``); a point that
fails stays in the table with its status. No numerics here: the sweep calls
`sizing.solve` and prints.
"""

from __future__ import annotations

import copy
import csv
import json
import math
import sys
from pathlib import Path

from .result import CAUTION

__all__ = ["SWEEP_KEYS", "local_optimum_notes", "parse_sweep", "run_sweep"]

#: Mission keys a sweep may vary, with the kind of quantity each holds.
SWEEP_KEYS = {"orbit_altitude": "length", "orbit_apogee": "length", "apogee": "length", "inclination": "angle",
              "payload_mass": "mass", "gross_mass": "mass", "delta_v": "velocity", "max_gross_mass": "mass",
              "max_acceleration": "acceleration", "max_dynamic_pressure": "pressure"}
#: The SI unit each kind is printed in.
_UNITS = {"length": "m", "angle": "deg", "mass": "kg", "velocity": "m/s", "acceleration": "m/s^2", "pressure": "Pa"}
_MAX_POINTS = 200


def parse_sweep(text: str) -> tuple[str, list[float]]:
    """'orbit_altitude=300km:1200km:100km' -> ('orbit_altitude', [300000.0, ..., 1200000.0]) (SI)."""
    from .units import to_si

    key, sep, rng = text.partition("=")
    key = key.strip().removeprefix("mission.")
    if not sep or key not in SWEEP_KEYS:
        raise ValueError(f"--sweep {text!r}: must be KEY=START:STOP:STEP with KEY one of "
                         f"{', '.join(sorted(SWEEP_KEYS))}.")
    parts = rng.split(":")
    if len(parts) != 3:
        raise ValueError(f"--sweep {text!r}: the range must be START:STOP:STEP (e.g. 300km:1200km:100km).")
    try:
        start, stop, step = (to_si(_bare_number(p.strip()), SWEEP_KEYS[key]) for p in parts)
    except ValueError as exc:
        raise ValueError(f"--sweep {text!r}: {exc}") from None
    if not (step > 0 and stop >= start):
        raise ValueError(f"--sweep {text!r}: needs STEP > 0 and STOP >= START.")
    n = int(math.floor((stop - start) / step + 1e-9)) + 1
    if n > _MAX_POINTS:
        raise ValueError(f"--sweep {text!r}: {n} points; at most {_MAX_POINTS} (use a study for more).")
    return key, [start + k * step for k in range(n)]


def _bare_number(text: str) -> float | str:
    """A bare number on the command line is SI, like a plain number in a file ("20000" -> 20000.0);
    anything else stays text for `to_si` (which refuses a unit-less string)."""
    try:
        return float(text)
    except ValueError:
        return text


def _row(key: str, value: float, result) -> dict:
    f = result.flight or {}
    row = {f"{key} [{_UNITS[SWEEP_KEYS[key]]}]": value, "status": str(result.status),
           "gross mass [kg]": result.gross_mass_kg, "payload mass [kg]": result.payload_mass_kg,
           "ideal delta-v [m/s]": result.delta_v_m_s}
    if f.get("losses_m_s"):
        row["losses [m/s]"] = sum(f["losses_m_s"].values())
    if f.get("flights") is not None:
        row["flights [-]"] = f["flights"]
    return row


def run_sweep(args) -> int:
    """Solve the file at each sweep point; print a table (or JSON), write --out .csv. Exit 0 if any point solves."""
    from .cli import EXIT_FAILED, EXIT_OK, error_line
    from .optimize.api import solve
    from .problem.load import load_problem, problem_from_dict

    key, values = parse_sweep(args.sweep)
    if args.out is not None and Path(args.out).suffix.lower() != ".csv":
        raise ValueError(f"--out {args.out}: a sweep writes .csv only.")
    base = load_problem(args.file)
    rows = []
    for v in values:
        data = copy.deepcopy(dict(base.raw))
        data["mission"] = dict(data["mission"], **{key: v})
        try:
            result = solve(problem_from_dict(data, source=f"{args.file} ({key} = {v:g})"), method=args.method)
        except ValueError as exc:
            error_line(str(exc))
            continue
        rows.append(_row(key, v, result))
    notes = local_optimum_notes(key, rows)
    if args.json:
        print(json.dumps({"sweep": key, "points": rows, "notes": notes, "caution": CAUTION}, indent=2))
    else:
        _print_table(key, rows)
        for n in notes:
            print(f"review note: {n}")
    if args.out is not None and rows:
        with Path(args.out).open("w", newline="", encoding="utf-8") as fh:
            w = csv.DictWriter(fh, fieldnames=list(rows[0]))
            w.writeheader()
            w.writerows(rows)
            fh.write(f"\ncaution,{CAUTION}\n")
        print(f"wrote {args.out}", file=sys.stderr if args.json else sys.stdout)
    return EXIT_OK if any(r["status"] == "optimal" for r in rows) else EXIT_FAILED


#: Sweep keys along which a harder target can only cost gross mass (a design for the harder target,
#: re-steered, reaches the easier one): a lighter point above a heavier one marks a local optimum.
_HARDER_WITH = ("orbit_altitude", "orbit_apogee", "apogee", "delta_v", "payload_mass")


def local_optimum_notes(key: str, rows: list[dict]) -> list[str]:
    """Review notes where the minimum gross mass falls along a sweep that only makes the target harder.

    The optimiser finds a local optimum per point (docs/physics-flight.md §8); a
    heavier point below a lighter one was not the global optimum.
    """
    if key not in _HARDER_WITH:
        return []
    col = f"{key} [{_UNITS[SWEEP_KEYS[key]]}]"
    ok = [r for r in rows if r["status"] == "optimal" and math.isfinite(r.get("gross mass [kg]", math.nan))]
    notes = []
    for i, r in enumerate(ok):
        later = [q for q in ok[i + 1:] if q["gross mass [kg]"] < r["gross mass [kg]"] * (1 - 1e-4)]
        if later:
            q = min(later, key=lambda x: x["gross mass [kg]"])
            notes.append(f"{key} = {r[col]:,.6g} {_UNITS[SWEEP_KEYS[key]]} needs {r['gross mass [kg]']:,.1f} kg "
                         f"but the harder {q[col]:,.6g} {_UNITS[SWEEP_KEYS[key]]} only {q['gross mass [kg]']:,.1f} "
                         "kg: that point is a local optimum (the harder design, re-steered, would do); read it as "
                         "an upper bound.")
    return notes


def _print_table(key: str, rows: list[dict]) -> None:
    from rich.markup import escape
    from rich.table import Table

    from .report.formats import fmt, unit_format

    from .cli import _console

    con = _console()
    t = Table(title=f"Sweep of mission.{key}", title_justify="left")
    cols = list(rows[0]) if rows else []
    for c in cols:
        t.add_column(escape(c), justify="left" if c == "status" else "right")
    specs = {c: unit_format(c, [r.get(c) for r in rows]) for c in cols}
    for r in rows:
        t.add_row(*(escape(r[c] if isinstance(r[c], str) else fmt(r[c], specs[c])) for c in cols))
    con.print(t)
    con.print(f"[dim]{escape(CAUTION)}[/]")
