"""Design files: the sized vehicle and its steering programme as a problem file `sizing fly` flies.

`write_design(result, path)` writes TOML from ``result.flight["design"]``
(filled by `sizing.optimize.flight_problem.design_record`): every stage with
its propellant and structural mass and its vacuum thrust in newtons, the
launch site with the optimised azimuth, and the ``[steering]`` programme.
Numbers are written with Python's shortest round-trip representation, so the
file reads back to the same floats and `sizing fly design.toml` flies the very
flight `sizing solve` reported.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

from ..result import CAUTION, SizingResult

__all__ = ["write_design", "design_toml", "MSG_NO_DESIGN"]

#: Error text when a result has no flight design to write.
MSG_NO_DESIGN = ("a design file (.toml) is written for apogee and orbit targets only (a sized, flown vehicle); "
                 "use .csv, .md, .json or .xlsx for this problem")


def _value(v: Any) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, (int, float)):
        f = float(v)
        if not math.isfinite(f):
            raise ValueError(f"cannot write {v!r} to a design file")
        return repr(f)
    if isinstance(v, str):
        return '"' + v.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    raise TypeError(f"cannot write {type(v).__name__} to a design file")


def _table(lines: list[str], header: str, items: list[tuple[str, Any]]) -> None:
    lines.append(header)
    for k, v in items:
        if v is not None:
            lines.append(f"{k} = {_value(v)}")
    lines.append("")


def design_toml(result: SizingResult) -> str:
    """The design file of a flight-target result as TOML text (see the module notes)."""
    d = (result.flight or {}).get("design")
    if not d:
        raise ValueError(MSG_NO_DESIGN)
    lines = ["# Design file written by `sizing solve`: the sized vehicle and its steering programme.",
             "# Fly it with `sizing fly` (it reproduces the solve's flight).",
             "# " + CAUTION, ""]
    t = d["target"]
    mission = [("name", d["name"] + " (sized design)"), ("payload_mass", d["payload_mass_kg"])]
    if t.get("apogee_above_site_m") is not None:
        mission.append(("apogee", t["apogee_above_site_m"]))
    if t.get("orbit_altitude_m") is not None:
        mission += [("orbit_altitude", t["orbit_altitude_m"]), ("orbit_apogee", t.get("orbit_apogee_m")),
                    ("inclination", t.get("inclination_deg"))]
    mission.append(("max_acceleration", d.get("max_acceleration_m_s2")))
    _table(lines, "[mission]", mission)
    L = d["launch"]
    _table(lines, "[launch]", [("altitude", L["altitude_m"]), ("latitude", L["latitude_deg"]),
                               ("azimuth", L["azimuth_deg"]), ("rail_length", L["rail_length_m"]),
                               ("rail_angle", L["rail_angle_deg"]), ("staging_delay", L["staging_delay_s"]),
                               ("payload_diameter", L["payload_diameter_m"]), ("profile", L["profile"])])
    s = d.get("steering")
    if s:
        items = [("vertical_rise_time", s["vertical_rise_time_s"]), ("pitch_kick", s["pitch_kick_deg"]),
                 ("kick_duration", s["kick_duration_s"]), ("steer_from_stage", s["steer_from_stage"]),
                 ("hold_inclination", s["hold_inclination_deg"]), ("ascending", s["ascending"]),
                 ("yaw_bias", s["yaw_bias_deg"])]
        if s["pitch_table"]:
            items.append(("pitch_table", [[r["time_s"], r["pitch_deg"]] for r in s["pitch_table"]]))
        ins = s.get("insertion")
        if ins:
            items += [("insertion_coast", ins["coast_s"]), ("insertion_pitch", ins["pitch_deg"]),
                      ("insertion_propellant", ins.get("propellant_kg"))]
        _table(lines, "[steering]", items)
    for st in d["stages"]:
        _table(lines, "[[stage]]", [
            ("name", st["name"]), ("isp", st["isp_s"]), ("isp_sea_level", st["isp_sea_level_s"]),
            ("structural_coefficient", st["structural_coefficient"]), ("propellant_mass", st["propellant_mass_kg"]),
            ("structural_mass", st["structural_mass_kg"]), ("thrust", st["thrust_n"]), ("diameter", st["diameter_m"]),
            ("nozzle_exit_area", st["nozzle_exit_area_m2"]), ("drag_mach", st["drag_mach"]),
            ("drag_cd", st["drag_cd"]), ("coast_before_ignition", st["coast_before_ignition_s"] or None)])
    if d.get("dispersions"):
        lines += _dispersion_lines(d["dispersions"])
    return "\n".join(lines)


def _dispersion_lines(raw: dict[str, Any]) -> list[str]:
    """The [dispersions] table of the problem file, written back as read (whole numbers stay whole)."""
    def val(v: Any) -> str:
        return str(v) if isinstance(v, int) and not isinstance(v, bool) else _value(v)

    lines = ["[dispersions]"] + [f"{k} = {val(v)}" for k, v in raw.items() if not isinstance(v, list) or
                                 not all(isinstance(x, dict) for x in v)] + [""]
    for k, v in raw.items():
        if isinstance(v, list) and v and all(isinstance(x, dict) for x in v):
            for item in v:
                lines += [f"[[dispersions.{k}]]"] + [f"{a} = {val(b)}" for a, b in item.items()] + [""]
    return lines


def write_design(result: SizingResult, path: str | Path) -> Path:
    """Write the design file of a flight-target result; ValueError (MSG_NO_DESIGN) when it has none."""
    p = Path(path)
    p.write_text(design_toml(result), encoding="utf-8")
    return p
