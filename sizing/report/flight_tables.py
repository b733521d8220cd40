"""Flight tables of `sizing solve` and `sizing fly`: flight figures, the delta-v budget, the steering
programme with its staging events, and the burnout states (results in, rows out).

Every function reads the flight part of a result (``SizingResult.flight``, or
the summary `sizing fly` prints, which has the same keys), so both commands
print the same rows from one definition. Each has a numeric form (for the CSV
and XLSX exports) and a text form (terminal and Markdown) made from it.
"""

from __future__ import annotations

import math
from typing import Any, Mapping

from .formats import fmt, unit_format

__all__ = ["FLIGHT_QUANTITIES", "BUDGET_HEADER", "STEERING_HEADER", "STEERING_CAPTION", "BURNOUT_HEADER",
           "is_flown", "budget_title", "delta_v_budget_values", "delta_v_budget_rows", "flight_quantity_values",
           "loss_values", "steering_values", "steering_rows", "burnout_values", "burnout_rows"]

#: (key in result.flight, label, unit, format) for the flight summary.
FLIGHT_QUANTITIES: tuple[tuple[str, str, str, str], ...] = (
    ("apogee_m", "apogee above launch site", "m", ",.0f"),
    ("time_to_apogee_s", "time to apogee", "s", ".1f"),
    ("rail_exit_speed_m_s", "rail-exit speed", "m/s", ".1f"),
    ("max_dynamic_pressure_pa", "max dynamic pressure (max-q)", "Pa", ",.0f"),
    ("max_acceleration_m_s2", "max acceleration", "m/s^2", ".1f"),
    ("liftoff_thrust_to_weight", "lift-off thrust-to-weight (thrust at site pressure; a curve: its mean)", "-", ".2f"),
    ("perigee_altitude_m", "perigee altitude above sea level", "m", ",.0f"),
    ("apogee_altitude_m", "apogee altitude above sea level", "m", ",.0f"),
    ("inclination_deg", "inclination", "deg", ".3f"),
    ("orbit_speed_m_s", "inertial speed at insertion", "m/s", ",.1f"),
    ("flight_path_angle_deg", "flight-path angle at insertion", "deg", ".3f"),
    ("iterations", "sizing iterations", "-", ",d"),
    ("flights", "flights flown by the sizing", "-", ",d"),
)


def _number(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool)


def flight_quantity_values(flight: Mapping[str, Any] | None) -> list[tuple[str, float, str, str]]:
    """(label, value, unit, format) of the flight figures present (`FLIGHT_QUANTITIES`; non-finite left out)."""
    f = flight or {}
    return [(label, f[key], unit, spec) for key, label, unit, spec in FLIGHT_QUANTITIES
            if _number(f.get(key)) and math.isfinite(f[key])]


#: Words for loss keys that are not already words (``losses_m_s`` of a stage-model estimate).
_LOSS_LABELS = {"gravity_estimate": "estimated gravity loss"}


def loss_values(flight: Mapping[str, Any] | None) -> list[tuple[str, float, str, str]]:
    """(label, loss, unit, format) of each loss in ``losses_m_s``, as positive numbers."""
    return [(_LOSS_LABELS.get(k, f"{k.replace('_', ' ')} loss"), float(v), "m/s", ",.1f")
            for k, v in ((flight or {}).get("losses_m_s") or {}).items() if _number(v)]


# ---------------------------------------------------------------------------------------------
# Delta-v budget

#: Header of the delta-v budget table.
BUDGET_HEADER = ("term", "delta-v [m/s]")
#: Words for budget keys that are not self-explanatory; the others are printed as they are.
_BUDGET_LABELS = {"gravity loss (estimate)": "estimated gravity loss", "net (target)": "net delta-v (the target)"}
#: Label of the row added when the terms do not add up to the last row (integration error).
BUDGET_RESIDUAL_LABEL = "not closed (integration residual)"
#: Smallest residual shown [m/s]: half the 0.1 m/s the budget is printed to.
_SHOWN_RESIDUAL_M_S = 0.05


def is_flown(flight: Mapping[str, Any] | None) -> bool:
    """True when the figures come from a simulated flight (a stage-model estimate has no profile)."""
    return bool(flight) and flight.get("profile") is not None


def budget_title(flight: Mapping[str, Any] | None) -> str:
    """Title of the budget table: says whether it was flown or estimated, and how it closes."""
    if not is_flown(flight):
        return "Delta-v budget (estimate; no flight simulated)"
    return "Delta-v budget (signed terms; they add up to the last row)"


def delta_v_budget_values(flight: Mapping[str, Any] | None) -> list[tuple[str, float, bool]]:
    """(label, signed delta-v [m/s], is_total) rows of ``delta_v_budget_m_s``; [] without one.

    The last entry of the budget is the result (the inertial speed at final
    burnout of an ascent, the speed at final burnout of a vertical flight, the
    net delta-v of an estimate) and the others are signed terms (ideal delta-v
    positive, losses negative, Earth rotation with its sign) that add up to it:
    sum(ideal, -losses, rotation) = final speed (docs/physics-flight.md, sec. 5).
    Where they do not add up to within 0.05 m/s, a row with the difference is
    added before the total, so the printed rows always close.
    """
    budget = (flight or {}).get("delta_v_budget_m_s") or {}
    items = [(k, float(v)) for k, v in budget.items() if _number(v)]
    if len(items) < 2:
        return []
    terms, (total_key, total) = items[:-1], items[-1]
    rows = [(_BUDGET_LABELS.get(k, k), v + 0.0, False) for k, v in terms]
    residual = total - sum(v for _k, v in terms)
    if abs(residual) >= _SHOWN_RESIDUAL_M_S:
        rows.append((BUDGET_RESIDUAL_LABEL, residual, False))
    rows.append((_BUDGET_LABELS.get(total_key, total_key), total, True))
    return rows


def delta_v_budget_rows(flight: Mapping[str, Any] | None) -> list[list[str]]:
    """Text rows (term, delta-v to 0.1 m/s) of `delta_v_budget_values`; the total's label starts with '= '."""
    spec = unit_format(BUDGET_HEADER[1])
    return [[("= " if total else "") + label, fmt(v, spec)] for label, v, total in delta_v_budget_values(flight)]


# ---------------------------------------------------------------------------------------------
# Steering programme and staging events

#: Header of `steering_rows` / `steering_values`.
STEERING_HEADER = ("time from liftoff [s]", "stage", "event", "pitch above horizontal [deg]", "note")
#: The line printed under the steering table.
STEERING_CAPTION = ("Pitch (the thrust direction) is interpolated linearly in time between programme nodes; "
                    "a coast belongs to the stage that ignites after it. Fly it with the design file "
                    "(--out design.toml).")

# order of rows at one time within one stage
_COAST, _IGNITION, _RISE, _KICK, _NODE, _CUTOFF, _RESTART, _BURNOUT = range(8)
_TIME_EPS_S = 1e-6


def _stage_timeline(flight: Mapping[str, Any]) -> list[dict[str, Any]]:
    """Per stage flown: name, ignition, burnout [s], the coast before ignition and, for an insertion
    restart, the cut-off and restart times [s].

    Burnout times are the flown ones (``burnouts``); cut-off, restart and a kick
    stage's ignition are the insertion times of the design record. Any other
    stage ignites at the previous burnout plus the staging delay plus its
    ``coast_before_ignition`` (the schedule the flight layer flies; an ascent's
    first stage ignites at liftoff).
    """
    design = flight.get("design") or {}
    coasts = {s["name"]: float(s.get("coast_before_ignition_s") or 0.0) for s in design.get("stages") or []}
    delay = float((design.get("launch") or {}).get("staging_delay_s") or 0.0)
    ins = (flight.get("steering") or {}).get("insertion") or {}
    burnouts = flight.get("burnouts") or []
    n_stages = len(design.get("stages") or []) or len(burnouts)
    out, prev = [], 0.0
    for i, b in enumerate(burnouts):
        name, last = b["stage"], i == n_stages - 1 and bool(ins)
        parts: list[str] = []
        if i == 0:
            ignition = coasts.get(name, 0.0) if flight.get("profile") == "vertical" else 0.0
        elif last and ins.get("kind") != "restart" and ins.get("ignition_time_s") is not None:
            ignition = float(ins["ignition_time_s"])
            parts.append(f"insertion coast {ins['coast_s']:,.1f} s")
        else:
            ignition = prev + delay + coasts.get(name, 0.0)
            if coasts.get(name):
                parts.append(f"coast_before_ignition {coasts[name]:g} s")
        if i > 0 and delay:
            parts.append(f"staging delay {delay:g} s")
        restart = last and ins.get("kind") == "restart" and ins.get("cutoff_time_s") is not None
        out.append({"stage": name, "coast_from_s": prev if i > 0 and ignition - prev > _TIME_EPS_S else None,
                    "coast_parts": parts, "ignition_s": ignition, "burnout_s": float(b["time_s"]), "burnout": b,
                    "cutoff_s": ins["cutoff_time_s"] if restart else None,
                    "restart_s": ins["ignition_time_s"] if restart else None})
        prev = float(b["time_s"])
    return out


def _stage_at(timeline: list[dict[str, Any]], t: float) -> int:
    """Index of the stage a programme time belongs to: the last one ignited by then (a node shared
    across a staging without coast goes to the stage that ignites there)."""
    k = 0
    for i, s in enumerate(timeline):
        if s["ignition_s"] <= t + _TIME_EPS_S or (s["coast_from_s"] is not None and s["coast_from_s"] < t - _TIME_EPS_S):
            k = i
    return k


def _staging_rows(timeline: list[dict[str, Any]]) -> list[tuple[int, float, int, str, float | None, str]]:
    """(stage index, time, order, event, pitch, note) of each coast, ignition and burnout."""
    rows = []
    for i, s in enumerate(timeline):
        if s["coast_from_s"] is not None:
            gap = s["ignition_s"] - s["coast_from_s"]
            note = f"{gap:.1f} s without thrust" + (f" ({', '.join(s['coast_parts'])})" if s["coast_parts"] else "")
            rows.append((i, s["coast_from_s"], _COAST, "coast before ignition", None, note))
        if i > 0:
            rows.append((i, s["ignition_s"], _IGNITION, "ignition", None, ""))
        b = s["burnout"]
        note = (f"{b['altitude_m'] / 1000.0:,.1f} km above sea level, flight-path angle "
                f"{round(b['flight_path_angle_deg'], 2) + 0.0:.2f} deg") if _number(b.get("altitude_m")) else ""
        if i == len(timeline) - 1:
            note = "end of powered flight" + (f"; {note}" if note else "")
        rows.append((i, s["burnout_s"], _BURNOUT, "burnout", None, note))
    return rows


def _programme_rows(st: Mapping[str, Any], timeline: list[dict[str, Any]]) -> list[tuple]:
    """(stage index, time, order, event, pitch, note) of the lift-off, kick, nodes and insertion burn."""
    rise, kick = float(st["vertical_rise_time_s"]), float(st["pitch_kick_deg"])
    where = lambda t: _stage_at(timeline, t) if timeline else 0  # noqa: E731
    rows = [(0, 0.0, _IGNITION, "liftoff (ignition)", 90.0, f"launch azimuth {st['launch_azimuth_deg']:.3f} deg from north"),
            (where(rise), rise, _RISE, "vertical rise ends", 90.0, ""),
            (where(rise), rise, _KICK, "pitch kick", 90.0 - kick,
             f"kick {kick:.3f} deg over {st['kick_duration_s']:.1f} s, then zero-lift gravity turn")]
    plane = (f"plane of inclination {st['hold_inclination_deg']:g} deg" if st.get("hold_inclination_deg") is not None
             else "plane of the velocity")
    for k, node in enumerate(st.get("pitch_table") or []):
        t = float(node["time_s"])
        note = f"steered in the {plane}" if k == 0 else ""
        rows.append((where(t), t, _NODE, f"programme node {k + 1}", float(node["pitch_deg"]), note))
    ins = st.get("insertion") or {}
    last = len(timeline) - 1 if timeline else 0
    if ins.get("kind") == "restart" and ins.get("cutoff_time_s") is not None:
        rows.append((last, float(ins["cutoff_time_s"]), _CUTOFF, "cut-off, coast begins", None,
                     f"coast {ins['coast_s']:,.1f} s"))
        rows.append((last, float(ins["ignition_time_s"]), _RESTART, "insertion burn (restart)", float(ins["pitch_deg"]),
                     f"{ins['propellant_kg']:,.1f} kg of propellant"))
    elif ins.get("ignition_time_s") is not None:  # a kick stage: its ignition is the insertion burn
        rows.append((last, float(ins["ignition_time_s"]), _RESTART, "insertion burn", float(ins["pitch_deg"]),
                     "kick stage ignites"))
    elif ins:
        rows.append((last, math.inf, _RESTART, "insertion burn", float(ins["pitch_deg"]),
                     f"after a {ins['coast_s']:,.1f} s coast"))
    return rows


def steering_values(result_or_flight: Any) -> list[tuple[float | None, str, str, float | None, str]]:
    """The steering programme with the staging events, in flight order; [] without a programme.

    Rows are (time from liftoff [s], stage, event, pitch above horizontal [deg]
    or None, note): lift-off, the vertical rise and kick, each programme node,
    each stage's coast before ignition, ignition and burnout, and the insertion
    cut-off, coast and burn. The stage column says which stage each row belongs
    to, so two nodes with one pitch 20 s apart read as a coast.
    """
    flight = getattr(result_or_flight, "flight", result_or_flight) or {}
    st = flight.get("steering")
    if not st:
        return []
    timeline = _stage_timeline(flight)
    rows = _programme_rows(st, timeline) + _staging_rows(timeline)
    rows.sort(key=lambda r: (r[0], round(r[1], 6), r[2]))
    names = [s["stage"] for s in timeline] or [st.get("steer_from_stage") or ""]
    return [(None if t == math.inf else t, names[min(i, len(names) - 1)], event, pitch, note)
            for i, t, _order, event, pitch, note in rows]


def steering_rows(result_or_flight: Any) -> list[list[str]]:
    """Text rows of `steering_values` (times to 0.1 s, pitch to 0.01 deg); [] without a programme."""
    t_spec, p_spec = unit_format(STEERING_HEADER[0]), unit_format(STEERING_HEADER[3])
    return [[fmt(t, t_spec), stage, event, fmt(pitch, p_spec), note]
            for t, stage, event, pitch, note in steering_values(result_or_flight)]


# ---------------------------------------------------------------------------------------------
# Burnout states (`sizing fly`)

#: Header of the burnout table; every altitude says its datum.
BURNOUT_HEADER = ("stage", "time from liftoff [s]", "altitude above site [m]", "speed relative to Earth [m/s]",
                  "flight-path angle [deg]", "mass [kg]", "ideal delta-v [m/s]", "losses [m/s]")


def burnout_values(flight: Mapping[str, Any], site_altitude_m: float) -> list[list[Any]]:
    """Burnout states as numbers, one row per stage, columns as `BURNOUT_HEADER` (losses summed)."""
    return [[b["stage"], b["time_s"], b["altitude_m"] - site_altitude_m, b["speed_m_s"], b["flight_path_angle_deg"],
             b["mass_kg"], b["ideal_delta_v_m_s"], sum(b["losses_m_s"].values())]
            for b in flight.get("burnouts") or []]


def burnout_rows(flight: Mapping[str, Any], site_altitude_m: float) -> list[list[str]]:
    """Text rows of `burnout_values`: one fixed number of decimals per column, chosen by its unit."""
    values = burnout_values(flight, site_altitude_m)
    specs = [unit_format(h, [r[k] for r in values]) for k, h in enumerate(BURNOUT_HEADER)]
    return [[row[0]] + [fmt(v, s) for v, s in zip(row[1:], specs[1:])] for row in values]
