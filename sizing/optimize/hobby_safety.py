"""Flight safety of a hobby motor stack: stability, drag from geometry, recovery, ejection timing.

Turns a hobby problem's stage geometry (``[stage.geometry]``) and a choice
of motors into a `sizing.physics.airframe.Stack`, and from it:

* the least nose ballast that gives every configuration (the full stack at
  liftoff, each upper stack at its ignition) the minimum static margin
  (default 1 caliber, common practice, no source). The margin is taken with
  the motor full (the aft-most centre of gravity for a motor at the aft end)
  and the Mach 0 centre of pressure (the fin normal force grows with Mach,
  moving the CP aft), so the margin at rail exit is at least the minimum;
* the zero-lift drag C_D(Mach) of each configuration by the component
  build-up of `sizing.physics.aerodrag`;
* after the flight: the static margin at rail exit, burnouts and upper-stage
  ignitions; each motor's ejection delay against the coast to apogee; canopy
  or streamer sizes, descent times, wind drift and landing points; and the
  side-view outline for the sketch.
* with a wind: the ascent flown three times (`ascent_in_wind`): in calm air
  and in the stated wind with the body axis turning under the aerodynamic
  moments of the airframe (weathercocking of the finite static margin;
  `sizing.physics.flight.equations`, ``MODE_BODY``), and in the wind as the
  zero-lift limit (a rocket that aligns with the relative wind at once). The
  apogee loss, the shift of the apogee and the landing points come from the
  flight in the stated wind; the ejection timing too.

The motor-stack search itself flies calm air (zero lift): the stated wind is
one launch condition, not the design point.

Preliminary estimates only, not clearance to fly.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np

from ..physics.aerodrag import drag_breakdown, drag_curve_from_geometry
from ..physics.airframe import (
    Configuration,
    FinSet,
    PointMass,
    Section,
    Stack,
    StageAirframe,
    body_tube,
    configuration,
    nose_ballast_for_margin_kg,
    nose_cone,
    stage_fore_positions_m,
    transition,
)
from ..physics.atmosphere import pressure_density_sound_speed
from ..physics.motors import Motor
from ..physics.recovery import (
    Canopy,
    coast_to_apogee,
    descend,
    ejection_check,
    fall_speed_m_s,
    size_canopy,
)
from ..physics.vehicle import DragCurve, LaunchSite, Vehicle
from ..physics.wind import WindProfile, calm
from ..problem.hobby import HobbyProblem

__all__ = [
    "OVERSTABLE_MARGIN_CAL",
    "BLUNT_FACE_CD",
    "build_stack",
    "stack_configurations",
    "geometry_drag_curves",
    "stability_ballast",
    "ASCENT_FLIGHTS",
    "ascent_in_wind",
    "rail_exit_angle_of_attack_deg",
    "safety_report",
]

#: Above this margin a rocket turns noticeably into a crosswind [calibers] (common practice, no source).
OVERSTABLE_MARGIN_CAL = 2.0
#: Flights of the ascent-in-wind comparison (`ascent_in_wind`), in table order.
ASCENT_FLIGHTS: tuple[str, ...] = ("calm air", "stated wind", "stated wind, zero-lift limit")
#: Drag coefficient of a flat face on its area, for a separated stage's open fore end [-]
#: (Hoerner, Fluid-Dynamic Drag, 1965, ch. 3, flat-faced cylinder about 0.8; from memory).
BLUNT_FACE_CD = 0.8


# ---------------------------------------------------------------- the stack
def _sections(problem: HobbyProblem, i: int) -> tuple[Section, ...]:
    st = problem.motor_stages[i]
    g = st.geometry
    d = st.diameter_m
    out: list[Section] = []
    if g.nose_length_m is not None:
        out.append(nose_cone(g.nose_shape, g.nose_length_m, d))
    elif g.transition_length_m is not None:
        out.append(transition(g.transition_length_m, problem.motor_stages[i + 1].diameter_m, d))
    out.append(body_tube(g.body_length_m, d))
    if g.boattail_length_m is not None:
        out.append(transition(g.boattail_length_m, d, g.boattail_diameter_m))
    return tuple(out)


def _fins(g) -> FinSet | None:
    if g.fin_count is None:
        return None
    return FinSet(g.fin_count, g.fin_root_chord_m, g.fin_tip_chord_m, g.fin_span_m, g.fin_sweep_m,
                  g.fin_thickness_m, g.fin_offset_m)


def _nose_length_m(problem: HobbyProblem) -> float:
    return problem.motor_stages[-1].geometry.nose_length_m


def build_stack(problem: HobbyProblem, motors: Sequence[Motor] | None = None, *, ballast_kg: float = 0.0) -> Stack:
    """The airframe stack of a hobby problem with geometry, with these motors and nose ballast.

    Masses: the airframe mass of each stage is its listed parts plus the rest
    at ``airframe_cg`` (default: mid-length, spread over the stage); each motor
    sits with its aft end at the stage's aft end, case and propellant at the
    motor's middle; payload at ``payload_position`` (default the nose base)
    and ballast at ``ballast_position`` (default half the nose length), both
    from the nose tip. `motors` None: no motor masses (drag only).
    """
    stages = []
    for i, st in enumerate(problem.motor_stages):
        g = st.geometry
        secs = _sections(problem, i)
        length = sum(s.length_m for s in secs)
        rest = st.airframe_mass_kg - sum(p.mass_kg for p in g.parts)
        masses = [PointMass(p.name, p.mass_kg, p.position_m) for p in g.parts]
        if g.airframe_cg_m is None:
            masses.append(PointMass("airframe", max(rest, 0.0), 0.5 * length, length))
        else:
            masses.append(PointMass("airframe", max(rest, 0.0), g.airframe_cg_m))
        mp = xp = lp = 0.0
        if motors is not None:
            mo = motors[i]
            lp = mo.length_m or 0.0
            xp = length - 0.5 * lp
            mp = mo.propellant_mass_kg
            masses.append(PointMass("motor case", mo.burnout_mass_kg, xp, lp))
        stages.append(StageAirframe(st.name, secs, _fins(g), tuple(masses), mp, xp, lp))
    ln = _nose_length_m(problem)
    nose = [PointMass("payload", problem.payload_mass_kg,
                      ln if problem.payload_position_m is None else problem.payload_position_m)]
    if ballast_kg > 0:
        nose.append(PointMass("ballast", ballast_kg, _ballast_x_m(problem)))
    return Stack(tuple(stages), tuple(nose))


def _ballast_x_m(problem: HobbyProblem) -> float:
    return 0.5 * _nose_length_m(problem) if problem.ballast_position_m is None else problem.ballast_position_m


def stack_configurations(problem: HobbyProblem, motors: Sequence[Motor], *, ballast_kg: float = 0.0,
                         mach_grid: Sequence[float] | None = None) -> tuple[Configuration, ...]:
    """One `Configuration` per stage: the stack from that stage up (index 0: liftoff)."""
    stack = build_stack(problem, motors, ballast_kg=ballast_kg)
    kw = {} if mach_grid is None else {"mach_grid": mach_grid}
    return tuple(configuration(stack, i, **kw) for i in range(len(stack.stages)))


def _reference_diameter_m(problem: HobbyProblem, i: int) -> float:
    d = max(s.diameter_m for s in problem.motor_stages[i:])
    return max(d, problem.payload_diameter_m or 0.0)


def geometry_drag_curves(problem: HobbyProblem) -> tuple[DragCurve, ...]:
    """C_D(Mach) of each configuration from the geometry, on the vehicle's reference area."""
    stack = build_stack(problem)
    return tuple(drag_curve_from_geometry(stack, i, site_altitude_m=problem.site.altitude_m,
                                          reference_diameter_m=_reference_diameter_m(problem, i))
                 for i in range(len(stack.stages)))


def stability_ballast(problem: HobbyProblem, combo: Sequence[Motor]) -> float:
    """Least nose ballast [kg] giving every configuration the minimum margin at its ignition.

    0 when the stack is stable as it is; inf when ballast at the ballast
    position cannot reach the margin, or when ``stability_fix = "none"`` and a
    margin falls short. Each configuration's need follows from the lever rule
    (`nose_ballast_for_margin_kg`); nose ballast raises every margin, so the
    largest need meets them all.
    """
    configs = stack_configurations(problem, combo, mach_grid=(0.0,))
    x_b = _ballast_x_m(problem)
    need = max(nose_ballast_for_margin_kg(c, min_margin_cal=problem.min_static_margin_cal, ballast_x_m=x_b)
               for c in configs)
    if need > 0 and problem.stability_fix == "none":
        return math.inf
    return need


# ---------------------------------------------------------------- after the flight
def _history(fr) -> dict[str, np.ndarray] | None:
    h = getattr(fr, "history", None)
    if h is None or len(getattr(h, "t_s", ())) < 2:
        return None
    return {k: np.asarray(getattr(h, k)) for k in ("t_s", "altitude_m", "downrange_m", "speed_m_s", "mach",
                                                  "mass_kg", "stage_index")}


def _at(hist, key: str, t: float) -> float:
    return float(np.interp(t, hist["t_s"], hist[key]))


def _phases(configs, fr, hist, site: LaunchSite) -> list[dict[str, Any]]:
    """Static margin at rail exit, each ignition and each burnout."""
    rows = []
    burnouts = list(getattr(fr, "burnouts", ()) or ())
    for i, c in enumerate(configs):
        events = []
        if i == 0:
            t_rail = float(getattr(fr, "rail_exit_time_s", math.nan))
            events.append(("rail exit" if site.rail_length_m > 0 and math.isfinite(t_rail) else "liftoff",
                           t_rail if math.isfinite(t_rail) else 0.0))
        elif hist is not None:
            idx = np.nonzero(hist["stage_index"] >= i)[0]
            events.append(("ignition", float(hist["t_s"][idx[0]]) if idx.size else math.nan))
        else:
            events.append(("ignition", math.nan))
        t_bo = burnouts[i].time_s if i < len(burnouts) else math.nan
        events.append(("burnout", t_bo))
        for name, t in events:
            if hist is not None and math.isfinite(t):
                mass, mach = _at(hist, "mass_kg", t), _at(hist, "mach", t)
                mass = min(max(mass, c.burnout_mass_kg), c.full_mass_kg)
            else:
                mass, mach = (c.full_mass_kg if name != "burnout" else c.burnout_mass_kg), 0.0
            rows.append({
                "configuration": " + ".join(reversed(c.stages)), "lowest_stage": c.stages[0], "event": name,
                "time_s": t, "mach": mach, "mass_kg": mass, "cg_m": c.x_cg_m(mass), "cp_m": c.x_cp_m(mach),
                "cn_alpha_per_rad": c.cn_alpha_per_rad(mach), "reference_diameter_m": c.reference_diameter_m,
                "static_margin_cal": c.static_margin_cal(mach, mass), "mach_beyond_method": mach > 0.8,
            })
    return rows


def _canopies(mass_kg: float, rec, site_alt: float) -> tuple[list[Canopy], list[tuple[str, float, float]]]:
    """Sized canopies and the descent legs (role, C_D S, top height above the site) below apogee."""
    if rec.device == "dual":
        main = size_canopy(mass_kg, rec.descent_rate_m_s, role="main", cd=rec.canopy_cd, altitude_m=site_alt)
        drogue = size_canopy(mass_kg, rec.drogue_descent_rate_m_s, role="drogue", cd=rec.drogue_cd,
                             altitude_m=site_alt + rec.main_deploy_height_m)
        return [drogue, main], [("drogue", drogue.drag_area_m2, math.inf), ("main", main.drag_area_m2,
                                                                            rec.main_deploy_height_m)]
    c = size_canopy(mass_kg, rec.descent_rate_m_s, kind=rec.device, cd=rec.canopy_cd, altitude_m=site_alt)
    return [c], [(rec.device, c.drag_area_m2, math.inf)]


def _canopy_dict(c: Canopy) -> dict[str, Any]:
    return {"kind": c.kind, "role": c.role, "cd": c.cd, "area_m2": c.area_m2, "diameter_m": c.diameter_m,
            "length_m": c.length_m, "width_m": c.width_m, "target_rate_m_s": c.target_rate_m_s,
            "sizing_altitude_m": c.sizing_altitude_m}


def _separated_drag_area_m2(stack: Stack, i: int, site_alt: float) -> float:
    """C_D A of a lower stage coasting alone: build-up of its parts plus a blunt open fore end."""
    alone = Stack((stack.stages[i], _nose_stub(stack.stages[i])))
    d = stack.stages[i].max_diameter_m
    a_ref = 0.25 * math.pi * d * d
    b = drag_breakdown(alone, 0, 0.3, site_altitude_m=site_alt, reference_diameter_m=d)
    fore = 0.25 * math.pi * stack.stages[i].fore_diameter_m ** 2
    return (b.body_friction + b.fin_friction + b.interference + b.base) * a_ref + BLUNT_FACE_CD * fore


def _nose_stub(st: StageAirframe) -> StageAirframe:
    """A vanishing nose on top of a lone stage, so the stage can be handled as a stack."""
    d = st.fore_diameter_m
    return StageAirframe("stub", (nose_cone("conical", 1e-6, d),))


def safety_report(problem: HobbyProblem, vehicle: Vehicle, motors: Sequence[Motor], ballast_kg: float,
                  fr) -> tuple[dict[str, Any], list[str]]:
    """Stability through the flight, ejection timing, recovery and landing points of the chosen stack.

    Returns
    -------
    (dict, list of str)
        The ``stability``/``ejection``/``recovery``/``wind`` parts of the
        result's ``flight["hobby"]`` and the review notes.
    """
    site = problem.site
    wind = problem.wind or calm()
    stack = build_stack(problem, motors, ballast_kg=ballast_kg)
    configs = tuple(configuration(stack, i) for i in range(len(stack.stages)))
    hist = _history(fr)
    phases = _phases(configs, fr, hist, site)
    wind_part: dict[str, Any] = {"description": wind.describe(), "calm": wind.is_calm}
    fr_after = fr  # the flight the ejection, recovery and landing points follow
    if not wind.is_calm:
        wind_part, flights = ascent_in_wind(problem, vehicle, configs, wind)
        fr_after = flights["stated wind"]
    notes: list[str] = []
    m_min = problem.min_static_margin_cal
    for row in phases:
        where = f"{row['configuration']} at {row['event']}"
        if row["static_margin_cal"] < m_min and row["event"] != "burnout":
            notes.append(f"static margin {row['static_margin_cal']:.2f} cal {where} is below the minimum "
                         f"{m_min:g} cal (common practice, no source): not stable enough to fly.")
        if row["mach_beyond_method"]:
            notes.append(f"Mach {row['mach']:.2f} {where} is beyond the subsonic Barrowman method (0.8); "
                         "the Mach 0.8 centre of pressure is shown.")
    for first in (p for p in phases if p["event"] != "burnout"):
        if first["static_margin_cal"] > OVERSTABLE_MARGIN_CAL and not wind.is_calm:
            notes.append(f"static margin {first['static_margin_cal']:.1f} cal of {first['configuration']} at "
                         f"{first['event']} is above {OVERSTABLE_MARGIN_CAL:g} cal: expect it to turn into the "
                         "wind (weathercocking; common practice, no source).")
    if not wind.is_calm:
        notes += _wind_notes(wind_part, problem.target_apogee_m)
    ejection, recovery = _recovery_and_ejection(problem, vehicle, motors, stack, configs, fr_after,
                                                _history(fr_after), wind, notes)
    stability = {
        "min_static_margin_cal": m_min,
        "rule": "static margin >= min_static_margin at rail exit and at each upper-stage ignition "
                "(common practice, no source); Barrowman 1967 centre of pressure",
        "stability_fix": problem.stability_fix,
        "ballast_position_m": _ballast_x_m(problem),
        "phases": phases,
        "configurations": [_config_dict(c) for c in configs],
        "sketch": _sketch(stack, configs, phases),
    }
    return {"stability": stability, "ejection": ejection, "recovery": recovery, "wind": wind_part}, notes


# ---------------------------------------------------------------- ascent in wind
def rail_exit_angle_of_attack_deg(site: LaunchSite, rail_exit_speed_m_s: float, wind: WindProfile) -> float:
    """Angle between the rail and the air-relative velocity at rail exit [deg].

    The rocket leaves the rail at speed V along the rail direction r (tilted
    `site.rail_angle_deg` from the vertical towards `site.azimuth_deg`) with
    the wind w at the rail's top height L cos(tilt) blowing across it; its
    air-relative velocity is V r - w and the angle of attack
    alpha = acos(r . (V r - w) / |V r - w|) (vector addition of velocities; for
    a vertical rail and a horizontal wind, alpha = atan(w / V)).

    Examples
    --------
    >>> from sizing.physics.vehicle import LaunchSite
    >>> w = WindProfile("constant", speed_m_s=5.0, direction_from_deg=270.0)
    >>> round(rail_exit_angle_of_attack_deg(LaunchSite(rail_length_m=1.0), 20.0, w), 3)  # atan(5/20)
    14.036
    """
    a, az = math.radians(site.rail_angle_deg), math.radians(site.azimuth_deg)
    rail = (math.sin(a) * math.sin(az), math.sin(a) * math.cos(az), math.cos(a))
    we, wn = wind.velocity_m_s(site.rail_length_m * math.cos(a))
    v = (rail_exit_speed_m_s * rail[0] - we, rail_exit_speed_m_s * rail[1] - wn, rail_exit_speed_m_s * rail[2])
    vn = math.sqrt(sum(c * c for c in v))
    if not vn > 0:
        return math.nan
    return math.degrees(math.acos(max(-1.0, min(1.0, sum(r * c for r, c in zip(rail, v)) / vn))))


def _flight_row(label: str, fr, site: LaunchSite, body: bool) -> dict[str, Any]:
    """Apogee, its ground point, the tilt at first burnout and the angle of attack of one ascent."""
    h = fr.history
    powered = (h.t_s > fr.rail_exit_time_s) & (h.thrust_n > 0) if math.isfinite(fr.rail_exit_time_s) else \
        (h.thrust_n > 0)
    e, n = fr.end_east_m, fr.end_north_m
    b0 = fr.burnouts[0] if fr.burnouts else None
    return {
        "flight": label, "body_axis": body, "apogee_m": fr.apogee_m - site.altitude_m,
        "time_to_apogee_s": fr.time_to_apogee_s, "apogee_east_m": e, "apogee_north_m": n,
        "apogee_distance_m": math.hypot(e, n), "apogee_bearing_deg": math.degrees(math.atan2(e, n)) % 360.0,
        "burnout_tilt_deg": 90.0 - b0.flight_path_angle_deg if b0 is not None else math.nan,
        "burnout_heading_deg": (math.degrees(math.atan2(b0.east_speed_m_s, b0.north_speed_m_s)) % 360.0
                                if b0 is not None else math.nan),
        "max_angle_of_attack_deg": (float(np.max(h.angle_of_attack_deg[powered]))
                                    if body and np.any(powered) else math.nan),
    }


def ascent_in_wind(problem: HobbyProblem, vehicle: Vehicle, configs: Sequence[Configuration],
                   wind: WindProfile) -> tuple[dict[str, Any], dict[str, Any]]:
    """Fly the chosen stack in calm air and in the stated wind; compare apogee and its ground point.

    The body-axis flights (`sizing.physics.flight.fly_vertical` with
    ``stability=configs``) turn the rocket under the restoring and damping
    moments of its Barrowman components (weathercocking that grows with the
    static margin); the zero-lift flight is the limit of a rocket that aligns
    with the relative wind at once. All three on the flat Earth, to apogee.

    Returns
    -------
    (dict, dict)
        The ``hobby.wind`` part of the result (description, the three flights
        of `ASCENT_FLIGHTS`, the rail-exit angle of attack, the apogee loss
        [m] = calm - wind, and the shift of the apogee's ground point [m], in
        total and towards the wind's source) and the flights by label.
    """
    from ..physics.flight import fly_vertical  # compiled; loaded when flying

    site = problem.site
    flights = {
        ASCENT_FLIGHTS[0]: fly_vertical(vehicle, site, stability=configs),
        ASCENT_FLIGHTS[1]: fly_vertical(vehicle, site, wind=wind, stability=configs),
        ASCENT_FLIGHTS[2]: fly_vertical(vehicle, site, wind=wind),
    }
    rows = [_flight_row(k, f, site, body=k != ASCENT_FLIGHTS[2]) for k, f in flights.items()]
    calm_row, wind_row, limit_row = rows
    a = math.radians(site.rail_angle_deg)
    we, wn = wind.velocity_m_s(site.rail_length_m * math.cos(a))
    ws = math.hypot(we, wn)
    to_source = (-we / ws, -wn / ws) if ws > 0 else (0.0, 0.0)

    for row in rows:
        de, dn = row["apogee_east_m"] - calm_row["apogee_east_m"], row["apogee_north_m"] - calm_row["apogee_north_m"]
        row["apogee_change_m"] = row["apogee_m"] - calm_row["apogee_m"] + 0.0
        row["apogee_shift_m"] = math.hypot(de, dn)
        row["apogee_shift_upwind_m"] = de * to_source[0] + dn * to_source[1] + 0.0  # no -0
    d_w, up_w = wind_row["apogee_shift_m"], wind_row["apogee_shift_upwind_m"]
    d_l, up_l = limit_row["apogee_shift_m"], limit_row["apogee_shift_upwind_m"]
    part = {
        "description": wind.describe(), "calm": False,
        "ascent_model": "body axis turned by the Barrowman components' restoring and damping moments, normal "
                        "force on the flight, thrust along the axis (sizing.physics.flight.equations, MODE_BODY)",
        "flights": rows,
        "surface_from_deg": math.degrees(math.atan2(-we, -wn)) % 360.0 if ws > 0 else None,
        "rail_exit_angle_of_attack_deg": rail_exit_angle_of_attack_deg(
            site, flights[ASCENT_FLIGHTS[1]].rail_exit_speed_m_s, wind),
        "apogee_loss_m": calm_row["apogee_m"] - wind_row["apogee_m"],
        "apogee_shift_m": d_w, "apogee_shift_upwind_m": up_w,
        "zero_lift_apogee_shift_m": d_l, "zero_lift_apogee_shift_upwind_m": up_l,
    }
    return part, flights


def _wind_notes(part: dict[str, Any], target_m: float | None) -> list[str]:
    calm_row, wind_row, _ = part["flights"]
    up = part["apogee_shift_upwind_m"]
    up_l = part["zero_lift_apogee_shift_upwind_m"]
    out = [f"in the stated wind the rocket turns into the wind (weathercocking, flown with its static margin): "
           f"the apogee lies {abs(up):,.0f} m {'upwind' if up >= 0 else 'downwind'} of the calm-air apogee "
           f"({part['apogee_shift_m']:,.0f} m away; {abs(up_l):,.0f} m {'upwind' if up_l >= 0 else 'downwind'} "
           f"in the zero-lift limit) and is {abs(part['apogee_loss_m']):,.0f} m "
           f"{'lower' if part['apogee_loss_m'] >= 0 else 'higher'}; rail-exit angle of attack "
           f"{part['rail_exit_angle_of_attack_deg']:.1f} deg."]
    if target_m is not None and wind_row["apogee_m"] < target_m:
        out.append(f"in the stated wind the apogee ({wind_row['apogee_m']:,.0f} m) falls short of the target "
                   f"{target_m:,.0f} m: the motor search flies calm air; raise the target apogee to allow for "
                   "this wind.")
    return out


def _config_dict(c: Configuration) -> dict[str, Any]:
    return {
        "stages": list(c.stages), "reference_diameter_m": c.reference_diameter_m, "length_m": c.length_m,
        "full_mass_kg": c.full_mass_kg, "burnout_mass_kg": c.burnout_mass_kg,
        "cg_full_m": c.x_cg_m(c.full_mass_kg), "cg_burnout_m": c.x_cg_m(c.burnout_mass_kg),
        "mach": list(c.mach_grid), "cn_alpha_per_rad": list(c.cn_alpha_table), "cp_m": list(c.x_cp_table_m),
        "components": [{"stage": p.stage, "component": p.name, "cn_alpha_per_rad": p.cn_alpha_per_rad,
                        "cp_m": p.x_cp_m} for p in c.components],
    }


def _recovery_and_ejection(problem, vehicle, motors, stack, configs, fr, hist, wind: WindProfile, notes):
    site = problem.site
    burnouts = list(getattr(fr, "burnouts", ()) or ())
    t_apo = float(getattr(fr, "time_to_apogee_s", math.nan))
    apo_h = float(getattr(fr, "apogee_m", math.nan)) - site.altitude_m
    az = math.radians(site.azimuth_deg)
    ejection, recovery = [], []
    n = len(stack.stages)
    for i, st in enumerate(problem.motor_stages):
        top = i == n - 1
        mass = configs[i].burnout_mass_kg if top else vehicle.stages[i].structural_mass_kg
        bo = burnouts[i] if i < len(burnouts) else None
        if top:
            apex_t, apex_h = t_apo, apo_h
            ground = _apex_ground_point(fr, hist, t_apo, az)
            cda = configs[i].reference_area_m2 * drag_curve_from_geometry(
                stack, i, site_altitude_m=site.altitude_m, mach_grid=(0.0,)).cd[0]
            speed_before = (lambda t: _at(hist, "speed_m_s", t)) if hist is not None else (lambda t: math.nan)
        elif bo is not None:
            cda = _separated_drag_area_m2(stack, i, site.altitude_m)
            rho = pressure_density_sound_speed(bo.altitude_m)[1]
            coast = coast_to_apogee(bo.speed_m_s, mass, cda, rho)
            apex_t, apex_h = bo.time_s + coast.time_to_apogee_s, bo.altitude_m - site.altitude_m + coast.height_gain_m
            ground = _separated_apex_ground_point(bo, coast.height_gain_m, az)
            speed_before = (lambda t, c=coast, b=bo: c.speed_m_s(t - b.time_s, b.speed_m_s))
        else:
            continue
        rho_apex = pressure_density_sound_speed(site.altitude_m + max(apex_h, 0.0))[1]
        motor = motors[i]
        if bo is not None and math.isfinite(apex_t):
            chk = ejection_check(st.name, motor.delay_s, burnout_time_s=bo.time_s, apogee_time_s=apex_t,
                                 speed_before_apogee=speed_before,
                                 fall_speed=lambda tau, m=mass, a=cda, r=rho_apex: fall_speed_m_s(tau, m, a, r))
            ejection.append({
                "stage": st.name, "motor": motor.name, "delay_s": chk.delay_s, "burnout_time_s": chk.burnout_time_s,
                "apogee_time_s": chk.apogee_time_s, "coast_to_apogee_s": chk.coast_to_apogee_s,
                "deploy_offset_s": chk.deploy_offset_s, "speed_at_deploy_m_s": chk.speed_at_deploy_m_s,
                "verdict": chk.verdict, "recommended_delay_s": chk.recommended_delay_s,
                "separated": not top,
            })
            if chk.verdict in ("early", "late"):
                notes.append(f"{st.name}: the {motor.name} delay of {chk.delay_s:g} s fires "
                             f"{abs(chk.deploy_offset_s):.1f} s {'before' if chk.verdict == 'early' else 'after'} "
                             f"apogee at {chk.speed_at_deploy_m_s:.0f} m/s; a delay of about "
                             f"{chk.recommended_delay_s:g} s deploys near apogee (or deploy electronically).")
        if not apex_h > 0:
            continue
        canopies, legs = _canopies(mass, st.recovery, site.altitude_m)
        legs = [(r, c, apex_h if math.isinf(h) else h) for r, c, h in legs]
        if st.recovery.device == "dual" and st.recovery.main_deploy_height_m >= apex_h:
            notes.append(f"{st.name}: main deployment height {st.recovery.main_deploy_height_m:g} m is above the "
                         f"apogee ({apex_h:,.0f} m): the main opens at apogee.")
            legs = legs[1:]
        d = descend(mass, legs, site_altitude_m=site.altitude_m, wind=wind)
        x_e = ground[0] + d.drift_east_m
        x_n = ground[1] + d.drift_north_m
        recovery.append({
            "stage": st.name, "device": st.recovery.device, "described": st.recovery.given, "mass_kg": mass,
            "deploy_height_m": apex_h, "canopies": [_canopy_dict(c) for c in canopies],
            "legs": [{"role": l.role, "top_height_m": l.top_height_m, "bottom_height_m": l.bottom_height_m,
                      "time_s": l.time_s, "rate_top_m_s": l.rate_top_m_s, "rate_bottom_m_s": l.rate_bottom_m_s,
                      "drift_east_m": l.drift_east_m, "drift_north_m": l.drift_north_m} for l in d.legs],
            "apex_east_m": ground[0], "apex_north_m": ground[1],
            "descent_time_s": d.time_s, "drift_m": d.drift_m, "landing_rate_m_s": d.landing_rate_m_s,
            "landing_east_m": x_e, "landing_north_m": x_n, "landing_distance_m": math.hypot(x_e, x_n),
            "landing_bearing_deg": math.degrees(math.atan2(x_e, x_n)) % 360.0,
        })
        if not st.recovery.given:
            notes.append(f"{st.name}: no [stage.recovery] given; a single parachute for "
                         f"{st.recovery.descent_rate_m_s:g} m/s (C_D {canopies[0].cd:g}) is assumed.")
    return ejection, recovery


def _apex_ground_point(fr, hist, t_apo: float, az: float) -> tuple[float, float]:
    """(east, north) [m] of the flown apogee: the flight's end point, or its downrange along the azimuth."""
    e, n = float(getattr(fr, "end_east_m", math.nan)), float(getattr(fr, "end_north_m", math.nan))
    if math.isfinite(e) and math.isfinite(n) and getattr(fr, "terminated_by", "") == "apogee":
        return e, n
    down = _at(hist, "downrange_m", t_apo) if hist is not None and math.isfinite(t_apo) else 0.0
    return down * math.sin(az), down * math.cos(az)


def _separated_apex_ground_point(bo, height_gain_m: float, az: float) -> tuple[float, float]:
    """(east, north) [m] of a separated stage's apex: its burnout point, then straight on along its velocity.

    The coast from burnout to the apex height is taken along the burnout
    direction (horizontal travel = height gain x v_horizontal / v_vertical): the
    gravity turn and the wind on the coast are not counted.
    """
    e, n = float(getattr(bo, "east_m", math.nan)), float(getattr(bo, "north_m", math.nan))
    ve, vn = float(getattr(bo, "east_speed_m_s", math.nan)), float(getattr(bo, "north_speed_m_s", math.nan))
    if not (math.isfinite(e) and math.isfinite(n)):
        return bo.downrange_m * math.sin(az), bo.downrange_m * math.cos(az)
    vz = bo.speed_m_s * math.sin(math.radians(bo.flight_path_angle_deg))
    if math.isfinite(ve) and math.isfinite(vn) and vz > 0:
        e, n = e + height_gain_m * ve / vz, n + height_gain_m * vn / vz
    return e, n


def _sketch(stack: Stack, configs, phases) -> dict[str, Any]:
    """Side-view outline (x from the nose tip, r) of every stage, fins, and CG/CP marks."""
    fore = stage_fore_positions_m(stack)
    stages = []
    for st, x0 in zip(stack.stages, fore):
        pts, x = [], x0
        for sec in st.sections:
            xs = np.linspace(0.0, sec.length_m, 24 if sec.kind == "nose" else 2)
            pts += [[x + float(a), float(sec.radius_m(a))] for a in xs]
            x += sec.length_m
        fins = None
        if st.fins is not None:
            f = st.fins
            x_le = x0 + st.length_m - f.offset_m - f.root_chord_m
            r = st.radius_at_m(x_le - x0 + 0.5 * f.root_chord_m)
            fins = [[x_le, r], [x_le + f.sweep_m, r + f.span_m], [x_le + f.sweep_m + f.tip_chord_m, r + f.span_m],
                    [x_le + f.root_chord_m, r]]
        stages.append({"stage": st.name, "x_fore_m": x0, "length_m": st.length_m, "outline": pts, "fins": fins})
    marks = []
    for c in configs:
        row = next(p for p in phases if p["lowest_stage"] == c.stages[0])
        marks.append({"configuration": row["configuration"], "event": row["event"], "cg_m": row["cg_m"],
                      "cp_m": row["cp_m"], "static_margin_cal": row["static_margin_cal"],
                      "reference_diameter_m": c.reference_diameter_m})
    return {"length_m": stack.length_m, "stages": stages, "marks": marks}
