"""Stage mass tables: the rows and columns a design review reads (results in, text out)."""

from __future__ import annotations

import math
from typing import Any, Sequence

from ..result import CAUTION, SizingResult

__all__ = ["HARDWARE_QUANTITIES", "hardware_records", "hardware_table", "TRADE_FACTOR_HEADER", "limit_text", "limit_value_text", "limit_step", "STAGE_COLUMNS", "FLIGHT_QUANTITIES", "flight_summary_rows", "flight_summary_values", "trade_factor_values", "stage_rows", "stage_columns_table", "total_row", "trade_factor_rows",
           "stage_table_markdown", "result_markdown", "steering_rows", "STEERING_HEADER"]

#: (field, header with unit, format) for each column of the stage mass table.
STAGE_COLUMNS: tuple[tuple[str, str, str], ...] = (
    ("name", "stage", "s"),
    ("isp_s", "Isp [s]", ".1f"),
    ("structural_coefficient", "structural coeff. [-]", ".4f"),
    ("ignition_mass_kg", "ignition mass [kg]", "mass"),
    ("propellant_mass_kg", "propellant mass [kg]", "mass"),
    ("structural_mass_kg", "structural mass [kg]", "mass"),
    ("burnout_mass_kg", "burnout mass [kg]", "mass"),
    ("mass_ratio", "mass ratio [-]", ".4f"),
    ("payload_ratio", "payload ratio [-]", ".4f"),
    ("delta_v_m_s", "delta-v [m/s]", ",.1f"),
    ("delta_v_share", "delta-v share [%]", ".1%"),
)


def _fmt(value: Any, spec: str) -> str:
    if value is None:
        return ""
    if isinstance(value, float) and not math.isfinite(value):
        return "n/a"
    if spec.endswith("%"):
        return format(value, spec).replace("%", "")
    if spec == "mass":
        return _fmt_mass(float(value))
    return format(value, spec)


def _fmt_mass(kg: float) -> str:
    """Masses keep four significant figures down to grams: 8,108.2 / 40.12 / 0.1234 kg."""
    a = abs(kg)
    if a >= 1000 or a == 0:
        return format(kg, ",.1f")
    if a >= 100:
        return format(kg, ".1f")
    if a >= 10:
        return format(kg, ".2f")
    if a >= 1:
        return format(kg, ".3f")
    return format(kg, ".4f")


def stage_rows(result: SizingResult) -> list[list[str]]:
    """Formatted cells, one row per stage (bottom first)."""
    rows = []
    for s in result.stages:
        rows.append([_fmt(getattr(s, f), spec) for f, _h, spec in STAGE_COLUMNS])
    return rows


def total_row(result: SizingResult) -> list[str]:
    """The totals row: gross mass, total propellant and structure, total delta-v."""
    tot_p = sum(s.propellant_mass_kg for s in result.stages)
    tot_s = sum(s.structural_mass_kg for s in result.stages)
    cells = {
        "name": "total (payload " + _fmt(result.payload_mass_kg, "mass") + " kg)",
        "ignition_mass_kg": _fmt(result.gross_mass_kg, "mass"),
        "propellant_mass_kg": _fmt(tot_p, "mass"),
        "structural_mass_kg": _fmt(tot_s, "mass"),
        "payload_ratio": _fmt(result.payload_fraction, ".4f"),
        "delta_v_m_s": _fmt(result.delta_v_m_s, ",.1f"),
        "delta_v_share": "100.0" if result.success else "",
    }
    return [cells.get(f, "") for f, _h, _s in STAGE_COLUMNS]


def stage_columns_table(result: SizingResult) -> tuple[list[str], list[list[str]]]:
    """The stage mass table turned on its side: one row per quantity, one column per stage.

    Fits a terminal of 80 columns for up to four stages. Returns (header, rows).
    """
    header = ["quantity [unit]"] + [s.name for s in result.stages] + ["total"]
    totals = dict(zip((f for f, _h, _s in STAGE_COLUMNS), total_row(result)))
    totals["name"] = ""
    rows = []
    for (f, h, spec), cells in zip(STAGE_COLUMNS[1:], zip(*[r[1:] for r in stage_rows(result)])):
        rows.append([h] + list(cells) + [totals.get(f, "")])
    rows.append(["payload mass [kg]"] + [""] * len(result.stages) + [_fmt(result.payload_mass_kg, "mass")])
    return header, rows


#: Header of the trade-factor table: each row is the change per step of one item,
#: in gross mass at fixed payload, or in payload at fixed gross mass.
TRADE_FACTOR_HEADER = ("item", "step", "gross mass [kg]", "payload [kg]")


def trade_factor_values(result: SizingResult) -> list[tuple[str, str, float, float | None, str]]:
    """Trade factors as numbers: (item, step, gross mass change [kg], payload change [kg], format).

    The gross-mass change holds payload and ideal delta-v fixed; the payload
    change holds gross mass fixed instead: by the implicit function theorem,
    d m_PL / d p = -(d m0/d p) / (d m0/d m_PL). The payload row has no payload
    change (None); `format` is the display format of the row.
    """
    tf = result.trade_factors
    if not tf:
        return []
    growth = tf["gross_mass_per_payload_kg"]

    def row(item, step, dm0, spec):
        return (item, step, dm0, -dm0 / growth if growth else math.nan, spec)

    rows = [("payload", "+1 kg", growth, None, ",.3f")]
    if tf.get("gross_mass_per_delta_v_kg_per_m_s") is not None:  # not for flight targets
        rows.append(row("ideal delta-v", "+1 m/s", tf["gross_mass_per_delta_v_kg_per_m_s"], ",.4f"))
    for name, d in tf["stages"].items():
        rows.append(row(f"{name}: structural mass", "+1 kg", d["per_structural_kg"], ",.3f"))
        rows.append(row(f"{name}: Isp", "+1 s", d["per_isp_s"], ",.3f"))
        rows.append(row(f"{name}: struct. coeff.", "+0.01", d["per_0_01_structural_coefficient"], ",.2f"))
    return rows


def trade_factor_rows(result: SizingResult) -> list[list[str]]:
    """Trade factors as text rows: (item, step, gross mass change, payload change); see
    `trade_factor_values`."""
    return [[item, step, _fmt(dm0, spec), "" if dpl is None else _fmt(dpl, spec)]
            for item, step, dm0, dpl, spec in trade_factor_values(result)]


def _limit_value(c, value: float) -> str:
    if c.name.endswith("delta_v_share"):
        return f"{100.0 * value:.2f} %"
    unit = "" if c.unit in ("-", "") else f" {c.unit}"
    return f"{value:,.6g}{unit}"


def limit_text(c) -> str:
    """'<= 3.2', '>= 12.00 %', '<= 1,700 kg' for a design limit (shares in per cent)."""
    op = ">=" if c.name.rsplit(".", 1)[-1].startswith("min") else "<="
    return f"{op} {_limit_value(c, c.limit)}"


def limit_value_text(c) -> str:
    """The design's value of a limited quantity, in the limit's unit."""
    return _limit_value(c, c.value)


def limit_step(c) -> tuple[float, str]:
    """The step a reviewer thinks in for a limit: (size in the limit's unit, label).

    1 percentage point of a delta-v share, 0.1 of a mass ratio, 1 kg of a mass.
    """
    if c.name.endswith("delta_v_share"):
        return 0.01, "1 pt"
    if c.name.endswith("mass_ratio"):
        return 0.1, "0.1"
    return 1.0, "1" + ("" if c.unit in ("-", "") else f" {c.unit}")


def _md_table(header: Sequence[str], rows: Sequence[Sequence[str]], align_right_from: int = 1) -> str:
    esc = lambda t: str(t).replace("|", "\\|")  # noqa: E731
    out = ["| " + " | ".join(esc(h) for h in header) + " |"]
    out.append("|" + "|".join(":---" if i < align_right_from else "---:" for i in range(len(header))) + "|")
    for r in rows:
        out.append("| " + " | ".join(esc(c) for c in r) + " |")
    return "\n".join(out)


def stage_table_markdown(result: SizingResult) -> str:
    """The stage mass table (with totals) as a Markdown table."""
    header = [h for _f, h, _s in STAGE_COLUMNS]
    return _md_table(header, stage_rows(result) + [total_row(result)])


def result_markdown(result: SizingResult, *, title: str | None = None, caution: str | None = CAUTION,
                    extra: str = "") -> str:
    """A design-review section: summary, stage table, limits, trade factors, `extra`, caution.

    The caution is printed once, last; pass ``caution=None`` when the document
    carries it elsewhere, or another text (e.g. the hobby caution, which holds
    every element of the general one).
    """
    parts = [f"## {title or result.problem_name}: stage mass table", "",
             f"Status: **{result.status}** -- {result.message}", "",
             f"Method: {result.method}; solving for {result.solve_for}.", ""]
    if result.success:
        parts += [stage_table_markdown(result), ""]
        hw_header, hw_rows = hardware_table(result)
        if hw_rows:
            parts += ["### Stage hardware (stage model)", "", _md_table(hw_header, hw_rows), ""]
    if result.constraints:
        parts += ["### Design limits", "",
                  _md_table(["limit", "allowed", "at optimum", "binding", "sensitivity", "unit"],
                            [[c.name, limit_text(c), f"{c.value:.6g}", "yes" if c.binding else "no",
                              f"{c.sensitivity:.6g}", c.sensitivity_unit] for c in result.constraints]), ""]
    tfr = trade_factor_rows(result)
    if tfr:
        parts += ["### Trade factors", "", result.trade_factors.get("basis", ""), "",
                  _md_table(list(TRADE_FACTOR_HEADER), tfr), ""]
    if result.flight:
        budget = result.flight.get("delta_v_budget_m_s")
        if budget:
            parts += ["### Delta-v budget", "",
                      _md_table(["term", "m/s"], [[k, f"{v:,.1f}"] for k, v in budget.items()]), ""]
    notes = [w for w in result.warnings if w != caution]
    if notes:
        parts += ["### Review notes", ""] + [f"- {w}" for w in notes] + [""]
    if extra:
        parts += [extra.rstrip("\n"), ""]
    if caution:
        parts += [f"> {caution}", ""]
    return "\n".join(parts)


#: (key in result.flight, label, unit, format) for the flight summary.
FLIGHT_QUANTITIES: tuple[tuple[str, str, str, str], ...] = (
    ("apogee_m", "apogee above launch site", "m", ",.0f"),
    ("time_to_apogee_s", "time to apogee", "s", ".1f"),
    ("rail_exit_speed_m_s", "rail-exit speed", "m/s", ".1f"),
    ("max_dynamic_pressure_pa", "max dynamic pressure (max-q)", "Pa", ",.0f"),
    ("max_acceleration_m_s2", "max acceleration", "m/s^2", ".1f"),
    ("liftoff_thrust_to_weight", "lift-off thrust-to-weight", "-", ".2f"),
    ("perigee_altitude_m", "perigee altitude above sea level", "m", ",.0f"),
    ("apogee_altitude_m", "apogee altitude above sea level", "m", ",.0f"),
    ("inclination_deg", "inclination", "deg", ".3f"),
    ("orbit_speed_m_s", "speed at insertion", "m/s", ",.1f"),
    ("flight_path_angle_deg", "flight-path angle at insertion", "deg", ".3f"),
    ("iterations", "sizing iterations", "-", "d"),
    ("flights", "flights flown by the sizing", "-", "d"),
)


#: Header of `steering_rows`.
STEERING_HEADER = ("event", "time from liftoff [s]", "pitch above horizontal [deg]", "note")


def steering_rows(result: SizingResult) -> list[list[str]]:
    """The optimised steering programme as (event, time [s], pitch [deg], note) text rows; [] without one."""
    st = (result.flight or {}).get("steering")
    if not st:
        return []
    rows = [["launch azimuth", "0.0", "", f"{st['launch_azimuth_deg']:.3f} deg from north"],
            ["vertical rise ends", f"{st['vertical_rise_time_s']:.1f}", "90.0", ""],
            ["pitch kick", f"{st['vertical_rise_time_s']:.1f}", f"{90.0 - st['pitch_kick_deg']:.2f}",
             f"kick {st['pitch_kick_deg']:.3f} deg for {st['kick_duration_s']:.1f} s, then zero lift"]]
    plane = (f"plane of inclination {st['hold_inclination_deg']:g} deg" if st.get("hold_inclination_deg") is not None
             else "plane of the velocity")
    for k, row in enumerate(st.get("pitch_table") or []):
        note = f"from {st['steer_from_stage']}, {plane}" if k == 0 else ""
        rows.append([f"programme node {k + 1}", f"{row['time_s']:.1f}", f"{row['pitch_deg']:.2f}", note])
    ins = st.get("insertion")
    if ins:
        what = (f"restart, {ins['propellant_kg']:,.1f} kg" if ins.get("propellant_kg") else "kick stage ignites")
        if ins.get("cutoff_time_s") is not None:
            rows.append(["cut-off, coast begins", f"{ins['cutoff_time_s']:.1f}", "", f"coast {ins['coast_s']:.1f} s"])
            rows.append(["insertion burn", f"{ins['ignition_time_s']:.1f}", f"{ins['pitch_deg']:.2f}",
                         f"{what}; ends at {ins['burnout_time_s']:.1f} s"])
        else:
            rows.append(["insertion burn", f"after {ins['coast_s']:.1f} s coast", f"{ins['pitch_deg']:.2f}", what])
    return rows


def flight_summary_values(result: SizingResult) -> list[tuple[str, float, str, str]]:
    """(quantity, value, unit, format) rows of the flight part of a result, including losses."""
    f = result.flight or {}
    rows = []
    for key, label, unit, spec in FLIGHT_QUANTITIES:
        v = f.get(key)
        if isinstance(v, (int, float)) and not isinstance(v, bool):
            rows.append((label, v, unit, spec))
    for k, v in (f.get("losses_m_s") or {}).items():
        if isinstance(v, (int, float)):
            rows.append((f"{k} loss", float(v), "m/s", ",.1f"))
    return rows


#: (StageResult field, label with unit, format) of the stage hardware table (stage model results).
HARDWARE_QUANTITIES: tuple[tuple[str, str, str], ...] = (
    ("propellant", "propellant", "s"),
    ("fuel_mass_kg", "fuel mass [kg]", "mass"),
    ("oxidiser_mass_kg", "oxidiser mass [kg]", "mass"),
    ("fuel_volume_m3", "fuel tank volume [m^3]", ".3f"),
    ("oxidiser_volume_m3", "oxidiser tank volume [m^3]", ".3f"),
    ("fuel_tank_length_m", "fuel tank length [m]", ".3f"),
    ("oxidiser_tank_length_m", "oxidiser tank length [m]", ".3f"),
    ("diameter_m", "diameter [m]", ".3f"),
    ("stage_length_m", "stage length [m]", ".3f"),
    ("length_to_diameter", "length / diameter [-]", ".2f"),
    ("engine_count", "engine count [-]", "d"),
    ("engine_mass_kg", "engine mass, all engines [kg]", "mass"),
    ("thrust_vac_n", "vacuum thrust [N]", ",.0f"),
    ("thrust_to_weight", "thrust-to-weight at ignition [-]", ".3f"),
    ("burn_time_s", "burn time [s]", ".1f"),
    ("gravity_loss_m_s", "estimated gravity loss [m/s]", ",.1f"),
)


def hardware_records(result: SizingResult) -> list[tuple[str, list]]:
    """(label with unit, value per stage) of the stage-model quantities and mass breakdown (numbers unformatted).

    Empty rows are left out; [] when no stage names a propellant.
    """
    stages = result.stages
    if not any(getattr(s, "propellant", None) for s in stages):
        return []
    out = []
    for f, label, _spec in HARDWARE_QUANTITIES:
        values = [getattr(s, f) for s in stages]
        if any(v is not None for v in values):
            out.append((label, values))
    items: list[str] = []
    for s in stages:
        items += [k for k in (s.mass_breakdown_kg or {}) if k not in items]
    for k in items:
        values = [(s.mass_breakdown_kg or {}).get(k) for s in stages]
        if any(values):
            out.append((f"mass: {k.replace('_', ' ')} [kg]", values))
    return out


def hardware_table(result: SizingResult) -> tuple[list[str], list[list[str]]]:
    """Propellant split, tanks, lengths, engines and mass breakdown, one column per stage (text).

    Returns ([], []) when no stage names a propellant. Header and rows as in `stage_columns_table`.
    """
    records = hardware_records(result)
    if not records:
        return [], []
    spec = {label: sp for _f, label, sp in HARDWARE_QUANTITIES}
    header = ["quantity [unit]"] + [s.name for s in result.stages]
    return header, [[label] + [_fmt(v, spec.get(label, "mass")) for v in values] for label, values in records]


def flight_summary_rows(result: SizingResult) -> list[list[str]]:
    """(quantity, value, unit) text rows of `flight_summary_values`."""
    return [[label, _fmt(v, spec), unit] for label, v, unit, spec in flight_summary_values(result)]
