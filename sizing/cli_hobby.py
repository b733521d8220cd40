"""`sizing hobby FILE`: motor stacks and water rockets from a hobby problem file.

`sizing solve FILE` hands any file with a top-level [hobby] table to `run_hobby`.
Exit codes: 0 ok, 1 no stack / design reaches the target, 2 bad input.
Errors go to stderr, one line each, never a traceback. No numerics here.
"""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path
from typing import Any, Mapping

from .report.flight_safety import has_safety, safety_sheet_names, safety_tables, transposed, write_sketch

#: Extra --out formats of `sizing hobby`: the side-view sketch (needs stage geometry).
SKETCH_FORMATS = (".html", ".svg")
MSG_SKETCH_NEEDS_GEOMETRY = "a sketch (.html, .svg) needs a motor stack with [stage.geometry] on every stage"

__all__ = ["register", "run_hobby", "check_hobby", "hobby_rows", "limit_rows", "caution_text",
           "hobby_export_table"]


def register(subparsers) -> None:
    """Add the ``hobby`` sub-command to the `sizing` parser."""
    p = subparsers.add_parser(
        "hobby", help="choose motors or water-rocket settings to reach an apogee (hobby problem file)",
        description="Solve a hobby problem file ([hobby] table): the lightest or cheapest motor stack "
                    "reaching a target apogee, or the water fill, pressure and nozzle for the highest "
                    "apogee. Preliminary estimates only, not clearance to fly.")
    p.add_argument("file", type=Path, help="hobby problem file (TOML)")
    p.add_argument("--json", action="store_true", help="print one JSON object to stdout")
    p.add_argument("--out", type=Path, help="also write the stage table: .csv .md .json .xlsx; or, with stage "
                                            "geometry, the side-view sketch: .html (with the tables) or .svg")
    p.set_defaults(func=run_hobby)


def _f(value: Any, spec: str) -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "n/a"
    return format(value, spec)


def hobby_rows(result) -> tuple[str, list[str], list[list[str]]]:
    """(title, header, rows) of the chosen motors or water settings and the stage masses in grams.

    One row per quantity (unit in brackets), one column per stage, so that a
    terminal of 80 columns holds up to three stages.
    """
    f = result.flight or {}
    h = f.get("hobby") or {}
    stages = h.get("stages") or []
    if not stages:
        return "", [], []
    header = ["quantity [unit]"] + [s["stage"] for s in stages]
    if h.get("kind") == "water":
        def tube(s):
            if not s["launch_tube_length_m"]:
                return "none"
            return f"{s['launch_tube_length_m'] * 1e3:.0f} x {s['launch_tube_diameter_m'] * 1e3:.1f}"

        spec = [
            ("fill fraction [-]", lambda s: _f(s["fill_fraction"], ".3f")),
            ("  as given [-]", lambda s: _f(s["given"]["fill_fraction"], ".3f")),
            ("water [g]", lambda s: _f(s["water_mass_kg"] * 1e3, ",.0f")),
            ("pressure [bar gauge]", lambda s: _f(s["pressure_pa"] / 1e5, ".2f")),
            ("  as given [bar gauge]", lambda s: _f(s["given"]["pressure_pa"] / 1e5, ".2f")),
            ("allowed = rated / factor [bar]", lambda s: f"{s['allowed_pressure_pa'] / 1e5:.2f} = "
             f"{s['rated_pressure_pa'] / 1e5:g} / {s['safety_factor']:g}"),
            ("nozzle diameter [mm]", lambda s: _f(s["nozzle_diameter_m"] * 1e3, ".1f")),
            ("  as given [mm]", lambda s: _f(s["given"]["nozzle_diameter_m"] * 1e3, ".1f")),
            ("launch tube length x dia. [mm]", tube),
        ]
        title = "Water settings (bottom stage first; pressures are gauge)"
    else:
        spec = [
            ("motor", lambda s: s["motor"]),
            ("impulse class", lambda s: s["impulse_class"]),
            ("designation", lambda s: s["designation"]),
            ("total impulse [N s]", lambda s: _f(s["total_impulse_n_s"], ",.1f")),
            ("average thrust [N]", lambda s: _f(s["average_thrust_n"], ",.1f")),
            ("burn time [s]", lambda s: _f(s["burn_time_s"], ".2f")),
            ("motor loaded mass [g]", lambda s: _f(s["motor_loaded_mass_kg"] * 1e3, ",.1f")),
            ("effective Isp [s]", lambda s: _f(s["effective_isp_s"], ".1f")),
            ("cost [list currency]", lambda s: "" if s["cost"] is None else f"{s['cost']:g}"),
        ]
        title = "Chosen motors (bottom stage first)"
    rows = [[label] + [fn(s) for s in stages] for label, fn in spec]
    # stage masses in grams: the core table rounds to 0.1 kg, too coarse for hobby rockets
    for label, key in (("ignition mass [g]", "ignition_mass_kg"), ("propellant mass [g]", "propellant_mass_kg"),
                       ("structural (dry) mass [g]", "structural_mass_kg"), ("burnout mass [g]", "burnout_mass_kg")):
        rows.append([label] + [_f(getattr(st, key) * 1e3, ",.1f") for st in result.stages])
    blank = [""] * (len(stages) - 1)
    rows.append(["payload mass [g]"] + blank + [_f(result.payload_mass_kg * 1e3, ",.1f")])
    rows.append(["liftoff (gross) mass [g]"] + blank + [_f(result.gross_mass_kg * 1e3, ",.1f")])
    return title, header, rows


#: Where the hobby limits come from, as the limits tables print it (second-hand: edition not checked).
_DTEG = "Spaceport America Cup Design, Test & Evaluation Guide"


def _limit_sources(lim: Mapping[str, Any]) -> tuple[str, str]:
    """(thrust-to-weight, rail-exit speed) source labels of the hobby limits."""
    tw = f" ({_DTEG} 5.18.2)" if lim["min_thrust_to_weight"] == 5 else ""
    rail = {"hobby": " (hobby practice)", "dteg": f" ({_DTEG} 10.2.1)"}.get(lim.get("rail_rule"), "")
    return tw, rail


def limit_rows(result) -> list[list[str]]:
    """(check, value with unit, limit with unit) rows of the hobby limits; empty when nothing flew."""
    f = result.flight or {}
    lim = (f.get("hobby") or {}).get("limits") or {}
    if f.get("apogee_m") is None or not lim:
        return []
    tw_src, rule = _limit_sources(lim)
    rows = []
    if f.get("target_apogee_m") is not None:
        rows.append(["apogee above site", f"{_f(f['apogee_m'], ',.1f')} m", f">= {f['target_apogee_m']:,.1f} m"])
        windy = _wind_apogee_m(result)
        if windy is not None:
            rows.append(["apogee above site, stated wind", f"{_f(windy, ',.1f')} m",
                         "shown, not enforced (the search flies calm air)"])
    rows.append(["liftoff thrust-to-weight (mean thrust)", _f(f.get("liftoff_thrust_to_weight"), ".1f"),
                 f">= {lim['min_thrust_to_weight']:g}{tw_src}"])
    rail_len = f"{lim['rail_length_m']:g} m rail" + (" assumed" if lim.get("rail_length_assumed") else "")
    rows.append([f"rail-exit speed, {rail_len}", f"{_f(f.get('rail_exit_speed_m_s'), '.1f')} m/s",
                 f">= {lim['min_rail_exit_speed_m_s']:g} m/s{rule}"])
    amax = lim.get("max_acceleration_m_s2")
    rows.append(["max acceleration", f"{_f(f.get('max_acceleration_m_s2'), ',.1f')} m/s^2",
                 "no limit" if amax is None else f"<= {amax:g} m/s^2"])
    return rows


def _wind_apogee_m(result) -> float | None:
    """Apogee above the site flown in the stated wind (body axis), or None without a wind."""
    flights = (((result.flight or {}).get("hobby") or {}).get("wind") or {}).get("flights")
    return flights[1]["apogee_m"] if flights else None


def _search_line(result) -> str | None:
    h = (result.flight or {}).get("hobby") or {}
    if h.get("kind") == "motors":
        rej = ", ".join(f"{k.replace('_', ' ')} {v}" for k, v in (h.get("rejected") or {}).items() if v)
        line = (f"search: {h.get('search_method')}; {h.get('n_combinations')} combinations, "
                f"{h.get('n_simulated')} flights; rejected: {rej or 'none'}")
        if h.get("ballast_mass_kg"):
            line += f"; nose ballast {h['ballast_mass_kg'] * 1e3:,.0f} g"
        return line
    if h.get("kind") == "water" and h.get("varied"):
        init = h.get("initial_apogee_m")
        return (f"optimiser: varied {', '.join(h['varied'])}; {h.get('n_evaluations')} flights; apogee of the "
                f"design as given {_f(init, ',.1f')} m")
    return None


def caution_text(result) -> str:
    """The one caution of a hobby output: the hobby or water caution of the result.

    Both contain every element of the general caution (preliminary estimates only, not
    clearance to fly; follow the applicable safety code, local law, range and aviation rules
    and licensed practice) plus the hobby-specific advice.
    """
    from .optimize.hobby import HOBBY_CAUTION

    return ((result.flight or {}).get("hobby") or {}).get("caution") or HOBBY_CAUTION


def _print_hobby(result) -> None:
    from rich.markup import escape
    from rich.table import Table

    from .cli import _console, print_result

    con = _console()
    hobby_caution = caution_text(result)
    shown = dataclasses.replace(result, warnings=tuple(w for w in result.warnings if w != hobby_caution))
    print_result(shown, console=con, caution=False)
    title, header, rows = hobby_rows(result)
    if rows:
        t = Table(title=title, title_justify="left")
        for i, hd in enumerate(header):
            t.add_column(escape(hd), justify="left" if i == 0 else "right", no_wrap=True)
        for r in rows:
            t.add_row(*map(escape, r))
        con.print(t)
    lr = limit_rows(result)
    if lr:
        t = Table(title="Hobby limits", title_justify="left")
        for i, hd in enumerate(("check", "value", "limit")):
            t.add_column(hd, no_wrap=True, justify="right" if i == 1 else "left")
        for r in lr:
            t.add_row(*map(escape, r))
        con.print(t)
    for table in safety_tables(result):
        title, header, rows = transposed(table, key_columns=2 if table[1][:2] == ["configuration", "event"] else 1)
        t = Table(title=title, title_justify="left")
        for i, hd in enumerate(header):
            t.add_column(escape(hd), justify="left" if i == 0 else "right")
        for r in rows:
            t.add_row(*map(escape, r))
        con.print(t)
    line = _search_line(result)
    if line:
        con.print(escape(line))
    con.print(f"[bold yellow]caution:[/] {escape(hobby_caution)}")


def _markdown_section(result) -> str:
    title, header, rows = hobby_rows(result)
    out = []
    if rows:
        out += [f"### {title}", "", "| " + " | ".join(header) + " |", "|:---|" + "---:|" * (len(header) - 1)]
        out += ["| " + " | ".join(r) + " |" for r in rows]
        out.append("")
    lr = limit_rows(result)
    if lr:
        out += ["### Hobby limits", "", "| check | value | limit |", "|:---|---:|:---|"]
        out += ["| " + " | ".join(r) + " |" for r in lr]
        out.append("")
    for stitle, sheader, srows in safety_tables(result):
        out += [f"### {stitle}", "", "| " + " | ".join(sheader) + " |", "|:---|:---|" + "---:|" * (len(sheader) - 2)]
        out += ["| " + " | ".join(r) + " |" for r in srows]
        out.append("")
    line = _search_line(result)
    if line:
        out += [line, ""]
    return "\n".join(out)


#: Per-stage export columns, SI units in brackets: (header, key in the hobby stage dict).
_MOTOR_EXPORT = (
    ("stage [name]", "stage"), ("motor [name]", "motor"), ("impulse class [letter]", "impulse_class"),
    ("designation [text]", "designation"), ("total impulse [N s]", "total_impulse_n_s"),
    ("average thrust [N]", "average_thrust_n"), ("burn time [s]", "burn_time_s"),
    ("motor loaded mass [kg]", "motor_loaded_mass_kg"), ("motor propellant mass [kg]", "propellant_mass_kg"),
    ("effective Isp [s]", "effective_isp_s"), ("motor diameter [m]", "diameter_m"),
    ("airframe mass [kg]", "airframe_mass_kg"), ("cost [list currency]", "cost"), ("maker [name]", "maker"),
)
_WATER_EXPORT = (
    ("stage [name]", "stage"), ("bottle volume [m^3]", "bottle_volume_m3"), ("fill fraction [-]", "fill_fraction"),
    ("water mass [kg]", "water_mass_kg"), ("launch pressure [Pa gauge]", "pressure_pa"),
    ("allowed pressure = rated / safety factor [Pa gauge]", "allowed_pressure_pa"),
    ("rated pressure [Pa gauge]", "rated_pressure_pa"), ("safety factor [-]", "safety_factor"),
    ("nozzle diameter [m]", "nozzle_diameter_m"), ("launch tube length [m]", "launch_tube_length_m"),
    ("launch tube diameter [m]", "launch_tube_diameter_m"), ("dry mass [kg]", "dry_mass_kg"),
    ("fill fraction as given [-]", ("given", "fill_fraction")),
    ("launch pressure as given [Pa gauge]", ("given", "pressure_pa")),
    ("nozzle diameter as given [m]", ("given", "nozzle_diameter_m")),
)


def hobby_export_table(result) -> tuple[str, list[str], list[list[Any]]]:
    """(title, header, rows) of the chosen motors or water settings for --out .csv / .xlsx.

    One row per stage, bottom first; SI values as plain numbers (None when not given); every
    header carries its unit in brackets. Empty when nothing was chosen (failed solve).
    """
    h = (result.flight or {}).get("hobby") or {}
    stages = h.get("stages") or []
    if not stages:
        return "", [], []
    water = h.get("kind") == "water"
    spec = _WATER_EXPORT if water else _MOTOR_EXPORT

    def get(s, key):
        return s.get(key[0], {}).get(key[1]) if isinstance(key, tuple) else s.get(key)

    rows = [[get(s, key) for _hd, key in spec] for s in stages]
    if water:
        title = "water settings (bottom stage first; pressures are gauge)"
    else:
        title = "chosen motors (bottom stage first)"
    return title, [hd for hd, _k in spec], rows


#: Header of the rows below the stage table in the exports.
_EXTRAS_HEADER = ["item [-]", "value [unit column]", "unit [-]", "limit [unit column]"]


def _export_extras(result) -> list[list[Any]]:
    """(item, value, unit, limit) rows below the stage table: ballast, limits, search and caution."""
    f = result.flight or {}
    h = f.get("hobby") or {}
    lim = h.get("limits") or {}
    out: list[list[Any]] = []

    def num(x):
        return None if x is None or (isinstance(x, float) and not math.isfinite(x)) else x

    if h.get("kind") == "motors":
        out.append(["nose ballast", h.get("ballast_mass_kg") or 0.0, "kg", ""])
        if h.get("cost") is not None:
            out.append(["motor cost", h["cost"], "list currency", ""])
    elif h.get("kind") == "water":
        out.append(["ambient pressure at the site", num(h.get("ambient_pressure_pa")), "Pa", ""])
        if h.get("max_pressure_pa") is not None:
            out.append(["user pressure cap", h["max_pressure_pa"], "Pa gauge", ""])
    if f.get("apogee_m") is not None and lim:
        if f.get("target_apogee_m") is not None:
            out.append(["apogee above site", num(f["apogee_m"]), "m", f">= {f['target_apogee_m']:g}"])
            if _wind_apogee_m(result) is not None:
                out.append(["apogee above site, stated wind", num(_wind_apogee_m(result)), "m",
                            "shown, not enforced"])
        else:
            out.append(["apogee above site", num(f["apogee_m"]), "m", "maximised"])
        tw_src, rule = _limit_sources(lim)
        out.append(["liftoff thrust-to-weight (mean thrust)", num(f.get("liftoff_thrust_to_weight")), "-",
                    f">= {lim['min_thrust_to_weight']:g}{tw_src}"])
        out.append([f"rail-exit speed, {lim['rail_length_m']:g} m rail", num(f.get("rail_exit_speed_m_s")), "m/s",
                    f">= {lim['min_rail_exit_speed_m_s']:g}{rule}"])
        amax = lim.get("max_acceleration_m_s2")
        out.append(["max acceleration", num(f.get("max_acceleration_m_s2")), "m/s^2",
                    "no limit" if amax is None else f"<= {amax:g}"])
    line = _search_line(result)
    if line:
        out.append(["search", line, "-", ""])
    out.append(["caution", caution_text(result), "-", ""])
    return out


def _append_csv_section(result, path: Path) -> None:
    """Append the hobby section (chosen motors or water settings, extras, caution) to a CSV."""
    import csv

    from .report.export import write_csv_section

    title, header, rows = hobby_export_table(result)
    with path.open("a", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        write_csv_section(w, title, header, rows)
        for stitle, sheader, srows in safety_tables(result, numeric=True):
            write_csv_section(w, stitle, sheader, srows)
        write_csv_section(w, None, _EXTRAS_HEADER, _export_extras(result))


def _add_xlsx_sheets(result, path: Path) -> None:
    """Add a sheet of the chosen motors or water settings, with the hobby checks (limits,
    search, caution) below, to an XLSX, laid out like the others (frozen header, number formats)."""
    from openpyxl import load_workbook

    from .report.xlsx import column_format, format_sheet

    title, header, rows = hobby_export_table(result)
    wb = load_workbook(path)
    ws = wb.create_sheet("hobby motors" if title.startswith("chosen") else "hobby water settings")
    ws.append(header)
    for r in rows:
        ws.append(r)
    format_sheet(ws, last_row=1 + len(rows))
    ws.append([])
    ws.append(_EXTRAS_HEADER)
    for r in _export_extras(result):
        ws.append(r)
        cell = ws.cell(row=ws.max_row, column=2)
        fmt = column_format([cell.value])
        if fmt is not None:  # one quantity per row: each value its own format
            cell.number_format = fmt
    tables = safety_tables(result, numeric=True)
    for name, (stitle, sheader, srows) in zip(safety_sheet_names(result), tables):
        ws2 = wb.create_sheet(name)
        ws2.append(sheader)
        for r in srows:
            ws2.append(r)
        format_sheet(ws2, last_row=1 + len(srows))
    wb.save(path)


def run_hobby(args) -> int:
    """Load, solve and print a hobby problem; used by `sizing hobby` and `sizing solve`.

    Parameters
    ----------
    args : argparse.Namespace
        ``file`` (Path), ``json`` (bool), ``out`` (Path or None); other
        attributes (e.g. ``method`` of `sizing solve`) are ignored.

    Returns
    -------
    int
        0 ok, 1 no stack or design reaches the target, 2 bad input.
    """
    import sys

    from .cli import EXIT_BAD_INPUT, EXIT_FAILED, EXIT_OK, error_line
    from .errors import SizingError
    from .optimize.hobby_problem import solve_hobby
    from .problem.hobby import load_hobby_problem
    from .report.export import EXPORT_FORMATS, result_json, write_stage_table

    from .cli import check_out_path

    out = getattr(args, "out", None)
    try:
        check_out_path(out, EXPORT_FORMATS + SKETCH_FORMATS)
    except ValueError as exc:
        error_line(str(exc))
        return EXIT_BAD_INPUT
    try:
        problem = load_hobby_problem(args.file)
    except SizingError as exc:
        error_line(str(exc))
        return EXIT_BAD_INPUT
    if out is not None and out.suffix.lower() in SKETCH_FORMATS and not getattr(problem, "has_geometry", False):
        error_line(f"{problem.source}: --out {out}: {MSG_SKETCH_NEEDS_GEOMETRY}. Got no [stage.geometry].")
        return EXIT_BAD_INPUT
    try:
        result = solve_hobby(problem)
    except SizingError as exc:  # a limit the search itself refuses, named by field
        error_line(f"{problem.source}: {exc}")
        return EXIT_BAD_INPUT
    if getattr(args, "json", False):
        print(result_json(result))
    else:
        _print_hobby(result)
    if out is not None:
        if not result.success:
            error_line(f"--out {out}: not written, no stack or design reaches the target.")
        elif out.suffix.lower() in SKETCH_FORMATS and has_safety(result):
            title, header, rows = hobby_rows(result)
            tables = ([(title, header, rows)] if rows else []) + safety_tables(result)
            path = write_sketch(result, out, caution=caution_text(result), tables=tables)
            print(f"wrote {path}", file=sys.stderr if args.json else sys.stdout)
        else:
            ext = out.suffix.lower()
            if ext == ".md":  # one caution, last: the hobby one holds every element of the general one
                from .report.tables import result_markdown

                out.write_text(result_markdown(result, caution=caution_text(result),
                                               extra=_markdown_section(result)), encoding="utf-8")
                path = out
            else:
                path = write_stage_table(result, out)
            if ext == ".csv":
                _append_csv_section(result, path)
            elif ext == ".xlsx":
                _add_xlsx_sheets(result, path)
            print(f"wrote {path}", file=sys.stderr if args.json else sys.stdout)
    return EXIT_OK if result.success else EXIT_FAILED


def check_hobby(args) -> int:
    """Validate a hobby problem file without solving (for `sizing check`); 0 ok, 2 bad input."""
    from .cli import EXIT_BAD_INPUT, EXIT_OK, error_line
    from .errors import SizingError
    from .problem.hobby import load_hobby_problem

    try:
        p = load_hobby_problem(args.file)
    except SizingError as exc:
        error_line(str(exc))
        return EXIT_BAD_INPUT
    n = len(p.stage_names)
    what = (f"{len(p.motors)} motors, target apogee {p.target_apogee_m:g} m" if p.kind == "motors" else
            "water stages" + (f", target apogee {p.target_apogee_m:g} m" if p.target_apogee_m else ", maximum apogee"))
    print(f"ok: {args.file}: {p.name}, hobby {p.kind} stack, {n} stage{'s' if n != 1 else ''} "
          f"({', '.join(p.stage_names)}), {what}.")
    return EXIT_OK
