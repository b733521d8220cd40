"""Stage mass tables: the rows and columns a design review reads (results in, text out)."""

from __future__ import annotations

import math

from ..result import CAUTION, SizingResult
from .flight_tables import (
    FLIGHT_QUANTITIES,
    STEERING_HEADER,
    flight_quantity_values,
    loss_values,
    steering_rows,
)
from .formats import fmt as _fmt
from .formats import fmt_mass as _fmt_mass  # noqa: F401  (kept importable from here)
from .formats import md_table as _md_table

__all__ = ["HARDWARE_QUANTITIES", "hardware_records", "hardware_table", "TRADE_FACTOR_HEADER", "limit_text", "limit_value_text", "limit_step", "STAGE_COLUMNS", "FLIGHT_QUANTITIES", "flight_summary_rows", "flight_summary_values", "trade_factor_values", "stage_rows", "stage_columns_table", "total_row", "trade_factor_rows",
           "stage_table_markdown", "result_markdown", "steering_rows", "STEERING_HEADER",
           "TRADE_FACTOR_TITLE", "trade_factor_caption", "METHOD_WORDS", "SOLVE_FOR_WORDS", "method_text",
           "flight_markdown"]

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


#: Title of the trade-factor table; `trade_factor_caption` says what is held fixed.
TRADE_FACTOR_TITLE = "Trade factors: change per step of each item"


def trade_factor_caption(result: SizingResult) -> str:
    """The line under the trade-factor table: what each column holds fixed and how it was found."""
    basis = (result.trade_factors or {}).get("basis") or "change in gross mass at fixed payload"
    return (f"Gross mass column: {basis}. "
            "Payload column: change in payload at fixed gross mass, from the same factors.")


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


def stage_table_markdown(result: SizingResult) -> str:
    """The stage mass table (with totals) as a Markdown table."""
    header = [h for _f, h, _s in STAGE_COLUMNS]
    return _md_table(header, stage_rows(result) + [total_row(result)])


#: What each `SizingResult.method` does, in words (methods not listed are printed as they are).
METHOD_WORDS = {
    "lagrange": "Lagrange multipliers (the closed-form optimal staging of the rocket equation)",
    "cvxpy": "convex optimisation (cvxpy) of the staging problem with its design limits",
    "slsqp": "sequential quadratic programming (SciPy SLSQP) of the staging problem",
    "stage-model slsqp": "sequential quadratic programming (SciPy SLSQP) over the stage mass models",
    "flight-integrated": "optimising the masses (and the steering) with the simulated flight "
                         "(direct shooting, SciPy SLSQP)",
}
#: What was solved for (`SizingResult.solve_for`), in words.
SOLVE_FOR_WORDS = {
    "gross_mass": "the minimum gross mass for the given payload",
    "payload_mass": "the maximum payload for the given gross mass",
    "delta_v": "the maximum delta-v for the given masses",
}


def method_text(result: SizingResult) -> str:
    """'Solved for the minimum gross mass for the given payload, by Lagrange multipliers (...).'"""
    goal = SOLVE_FOR_WORDS.get(result.solve_for, result.solve_for.replace("_", " "))
    return f"Solved for {goal}, by {METHOD_WORDS.get(result.method, result.method)}."


def flight_markdown(flight) -> list[str]:
    """Markdown lines of the flight figures, the delta-v budget and the steering programme ([] without a flight)."""
    from .flight_tables import (
        BUDGET_HEADER,
        STEERING_CAPTION,
        budget_title,
        delta_v_budget_rows,
        delta_v_budget_values,
    )

    if not flight:
        return []
    parts = []
    fl = flight_quantity_values(flight) + ([] if delta_v_budget_values(flight) else loss_values(flight))
    if fl:
        parts += ["### Flight", "", _md_table(["quantity", "value", "unit"],
                                              [[label, _fmt(v, spec), unit] for label, v, unit, spec in fl],
                                              right=(1,)), ""]
    budget = delta_v_budget_rows(flight)
    if budget:
        parts += [f"### {budget_title(flight)}", "", _md_table(list(BUDGET_HEADER), budget), ""]
    steering = steering_rows(flight)
    if steering:
        parts += ["### Steering programme and staging", "", STEERING_CAPTION, "",
                  _md_table(list(STEERING_HEADER), steering, right=(0, 3)), ""]
    return parts


def result_markdown(result: SizingResult, *, title: str | None = None, caution: str | None = CAUTION,
                    extra: str = "") -> str:
    """A design-review section: summary, stage table, limits, trade factors, flight, `extra`, caution.

    The caution is printed once, last; pass ``caution=None`` when the document
    carries it elsewhere, or another text (e.g. the hobby caution, which holds
    every element of the general one).
    """
    parts = [f"## {title or result.problem_name}: stage mass table", "",
             f"Status: **{result.status}** -- {result.message}", "",
             method_text(result), ""]
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
        parts += ["### Trade factors", "", trade_factor_caption(result), "",
                  _md_table(list(TRADE_FACTOR_HEADER), tfr), ""]
    parts += flight_markdown(result.flight)
    notes = [w for w in result.warnings if w != caution]
    if notes:
        parts += ["### Review notes", ""] + [f"- {w}" for w in notes] + [""]
    if extra:
        parts += [extra.rstrip("\n"), ""]
    if caution:
        parts += [f"> {caution}", ""]
    return "\n".join(parts)


def flight_summary_values(result: SizingResult) -> list[tuple[str, float, str, str]]:
    """(quantity, value, unit, format) rows of the flight part of a result, with each loss (positive)."""
    return flight_quantity_values(result.flight) + loss_values(result.flight)


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
    ("thrust_to_weight", "thrust-to-weight at ignition, vacuum thrust [-]", ".3f"),
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
