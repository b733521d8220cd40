"""Problems with flight targets (apogee, orbit) and flights of given designs.

Turns a validated `Problem` into the flight layer's objects (stage specs,
vehicle, launch site, ascent profile), runs the simulator or the
size-to-target iteration, and returns the same `SizingResult` as every other
problem, with the flight figures in `result.flight`.
"""

from __future__ import annotations

import math
from dataclasses import replace
from typing import Any

from ..errors import FieldError, InfeasibleProblemError, ProblemDefinitionError
from ..physics.flight import AscentProfile, FlightResult, fly_ascent, fly_vertical
from ..physics.flight.profiles import InsertionBurn
from ..physics.vehicle import (
    DragCurve,
    FlightStage,
    FlightStageSpec,
    LaunchSite,
    Vehicle,
)
from ..problem.model import Problem, StageDef
from ..result import SizingResult, Status
from ._common import build_result, failed_result

__all__ = [
    "flight_specs",
    "launch_site",
    "ascent_profile",
    "design_vehicle",
    "fly_problem",
    "flight_summary",
    "solve_flight_problem",
    "check_flight_problem",
    "profile_of",
    "steering_record",
    "design_record",
]


def _stage_key(problem: Problem, i: int, key: str) -> str:
    return f"stage[{i + 1}] ({problem.stages[i].name}).{key}"


def _diameters(problem: Problem) -> list[float]:
    """Each stage's diameter; an upper stage without one takes the stage below's."""
    out: list[float] = []
    faults = []
    for i, s in enumerate(problem.stages):
        if s.diameter_m is not None:
            out.append(s.diameter_m)
        elif out:
            out.append(out[-1])
        else:
            faults.append(f"{_stage_key(problem, i, 'diameter')}: required for flight (reference area for drag) "
                          "on the first stage; upper stages default to the stage below.")
            out.append(math.nan)
    if faults:
        raise ProblemDefinitionError(problem.source, faults)
    return out


def _drag(s: StageDef) -> DragCurve:
    if s.drag_mach is not None and s.drag_cd is not None:
        if len(s.drag_mach) == 1:
            return DragCurve.constant(s.drag_cd[0])
        return DragCurve(tuple(s.drag_mach), tuple(s.drag_cd))
    return DragCurve.default_slender_body()


#: Starting structural coefficient of a stage-model stage before the model is evaluated [-]
#: (common practice, no source: a mid-range value for small liquid and solid stages).
NOMINAL_MODEL_COEFFICIENT = 0.12


def flight_specs(problem: Problem) -> list[FlightStageSpec]:
    """Stage specs (no masses) for sizing to a flight target.

    Raises
    ------
    ProblemDefinitionError
        A stage without thrust_to_weight, or a first stage without diameter.
    """
    faults = []
    for i, s in enumerate(problem.stages):
        if s.thrust_to_weight is None:
            why = ("thrust in N cannot be used while the masses are being sized" if s.thrust_n is not None
                   else "required for apogee and orbit targets")
            faults.append(f"{_stage_key(problem, i, 'thrust_to_weight')}: {why}; give the thrust-to-weight "
                          "ratio at ignition (> 1 for the first stage).")
    if faults:
        raise ProblemDefinitionError(problem.source, faults)
    dia = _diameters(problem)
    try:
        return [
            FlightStageSpec(
                s.name, s.isp_s,
                # a mass-model stage starts from a nominal coefficient; the sizers refresh it from the model
                NOMINAL_MODEL_COEFFICIENT if s.has_mass_model else s.structural_coefficient,
                s.thrust_to_weight, diameter_m=d, isp_sl_s=s.isp_sea_level_s, drag=_drag(s),
                coast_before_ignition_s=s.coast_before_ignition_s or 0.0, g0_m_s2=problem.g0_m_s2,
                mass_model=s.mass_model,
            )
            for s, d in zip(problem.stages, dia)
        ]
    except FieldError as exc:
        raise ProblemDefinitionError(problem.source, [str(exc)]) from None


def profile_of(problem: Problem) -> str:
    """"vertical" or "gravity_turn": stated in [launch] or implied by the target."""
    if problem.launch.profile:
        return problem.launch.profile
    return "gravity_turn" if problem.orbit_altitude_m is not None else "vertical"


def launch_site(problem: Problem) -> LaunchSite:
    """The launch site of the problem; azimuth from inclination and latitude when not given."""
    L = problem.launch
    az = L.azimuth_deg
    if az is None:
        az = 90.0
        if problem.inclination_deg is not None:
            from ..physics.gravity import launch_azimuth_deg

            try:
                az = launch_azimuth_deg(L.latitude_deg, problem.inclination_deg)
            except FieldError as exc:
                raise ProblemDefinitionError(problem.source, [f"mission.inclination: {exc.message} "
                                                              f"Got {problem.inclination_deg!r}."]) from None
    try:
        return LaunchSite(altitude_m=L.altitude_m, latitude_deg=L.latitude_deg, azimuth_deg=az % 360.0,
                          rail_length_m=L.rail_length_m, rail_angle_deg=L.rail_angle_deg)
    except FieldError as exc:
        raise ProblemDefinitionError(problem.source, [str(exc)]) from None


def ascent_profile(problem: Problem) -> AscentProfile:
    """The steering programme of the file: the [steering] programme of a design file, else the
    [launch]/[steering] defaults (a gravity turn after the kick, linear tangent upper stages)."""
    L, st = problem.launch, problem.steering
    kw: dict[str, Any] = {}
    rise = st.vertical_rise_time_s if st.vertical_rise_time_s is not None else L.vertical_rise_time_s
    kick = st.pitch_kick_deg if st.pitch_kick_deg is not None else L.pitch_kick_deg
    if rise is not None:
        kw["vertical_rise_s"] = rise
    if kick is not None:
        kw["pitch_kick_deg"] = kick
    if st.kick_duration_s is not None:
        kw["kick_duration_s"] = st.kick_duration_s
    if st.is_programme:
        kw.update(steering="table", pitch_table=st.pitch_table, steer_from_stage=st.steer_from_stage)
        if st.hold_inclination_deg is not None:
            kw.update(hold_inclination_deg=st.hold_inclination_deg,
                      ascending=True if st.ascending is None else st.ascending)
        if st.yaw_bias_deg is not None:
            kw["yaw_bias_deg"] = st.yaw_bias_deg
    if st.insertion_coast_s is not None:
        kw["insertion"] = InsertionBurn(st.insertion_coast_s, st.insertion_pitch_deg or 0.0,
                                        st.insertion_propellant_kg)
    try:
        return AscentProfile(**kw)
    except FieldError as exc:
        raise ProblemDefinitionError(problem.source, [str(exc)]) from None


def design_vehicle(problem: Problem) -> Vehicle:
    """The vehicle of a design under review: every stage gives propellant and structural mass."""
    faults = []
    for i, s in enumerate(problem.stages):
        for key, v in (("propellant_mass", s.propellant_mass_kg), ("structural_mass", s.structural_mass_kg)):
            if v is None:
                faults.append(f"{_stage_key(problem, i, key)}: required to fly a given design (kg).")
        if s.thrust_to_weight is None and s.thrust_n is None:
            faults.append(f"{_stage_key(problem, i, 'thrust')}: give thrust (N, vacuum) or thrust_to_weight.")
    if problem.payload_mass_kg is None:
        faults.append("mission.payload_mass: required to fly a given design (kg).")
    if faults:
        raise ProblemDefinitionError(problem.source, faults)
    dia = _diameters(problem)
    above = problem.payload_mass_kg
    ign = [0.0] * len(problem.stages)
    for i in range(len(problem.stages) - 1, -1, -1):
        s = problem.stages[i]
        above += s.propellant_mass_kg + s.structural_mass_kg
        ign[i] = above
    stages = []
    try:
        for i, (s, d) in enumerate(zip(problem.stages, dia)):
            if s.thrust_n is not None:
                f_vac = s.thrust_n
            else:
                f_vac = s.thrust_to_weight * ign[i] * problem.g0_m_s2
                if i == 0 and s.isp_sea_level_s:
                    f_vac *= s.isp_s / s.isp_sea_level_s  # thrust-to-weight is at sea level at liftoff
            stages.append(FlightStage(
                s.name, s.propellant_mass_kg, s.structural_mass_kg, s.isp_s, thrust_vac_n=f_vac,
                isp_sl_s=s.isp_sea_level_s, nozzle_exit_area_m2=s.nozzle_exit_area_m2, diameter_m=d,
                drag=_drag(s), coast_before_ignition_s=s.coast_before_ignition_s or 0.0,
                g0_m_s2=problem.g0_m_s2))
        return Vehicle(tuple(stages), problem.payload_mass_kg,
                       payload_diameter_m=problem.launch.payload_diameter_m,
                       staging_delay_s=problem.launch.staging_delay_s)
    except FieldError as exc:
        raise ProblemDefinitionError(problem.source, [str(exc)]) from None


def _fly(vehicle: Vehicle, problem: Problem, *, record_history: bool = True) -> FlightResult:
    """Fly a design with the options `sizing solve` flies its final design with (so fly reproduces solve)."""
    from .flight import FLY_OPTIONS_ASCENT, FLY_OPTIONS_VERTICAL

    site = launch_site(problem)
    if profile_of(problem) == "vertical":
        return fly_vertical(vehicle, site, record_history=record_history,
                            acceleration_limit_m_s2=problem.max_acceleration_m_s2, **FLY_OPTIONS_VERTICAL)
    return fly_ascent(vehicle, site, ascent_profile(problem), record_history=record_history,
                      acceleration_limit_m_s2=problem.max_acceleration_m_s2, **FLY_OPTIONS_ASCENT)


#: Review note when the flight ends on the ground before every stage has burnt out.
#: Budget terms of a flight with an insertion coast: its gravity loss split into the powered part and the
#: part accrued on the coast (without a coast the term is "gravity loss").
POWERED_GRAVITY_KEY = "gravity loss (powered flight)"
COAST_BUDGET_KEY = "gravity on the insertion coast (speed traded for height)"
IMPACT_UNDER_POWER_NOTE = ("the vehicle came back to the ground at {t:.1f} s before {stage!r} burnt out: "
                           "it cannot climb with this thrust (raise thrust-to-weight); the figures "
                           "above describe a failed flight.")
#: The same for a vehicle that had reached space (above 100 km, the conventional edge): the programme,
#: not the thrust, brought it down; the loss and max-q figures are those of its re-entry.
REENTRY_UNDER_POWER_NOTE = ("the vehicle reached {h:,.0f} km and came back to the ground at {t:.1f} s before "
                            "{stage!r} burnt out: its fixed steering programme does not suit this vehicle (a "
                            "programme optimised for other masses or thrust; `sizing solve` re-optimises it); "
                            "the figures above describe a failed flight and its re-entry, so no other review "
                            "notes are given.")


def fly_problem(problem: Problem) -> tuple[Vehicle, FlightResult]:
    """Fly the design given in the problem file (`sizing fly`)."""
    vehicle = design_vehicle(problem)
    try:
        fr = _fly(vehicle, problem)
    except FieldError as exc:
        raise ProblemDefinitionError(problem.source, [str(exc)]) from None
    if fr.terminated_by == "impact" and len(fr.burnouts) < len(vehicle.stages):
        stage = vehicle.stages[len(fr.burnouts)].name
        top = float(fr.history.altitude_m.max()) if fr.history.t_s.size else 0.0
        if top > 100e3:
            note = REENTRY_UNDER_POWER_NOTE.format(h=top / 1e3, t=fr.impact_time_s, stage=stage)
            return vehicle, replace(fr, warnings=tuple(fr.warnings) + (note,))
        note = IMPACT_UNDER_POWER_NOTE.format(t=fr.impact_time_s, stage=stage)
        fr = replace(fr, warnings=tuple(fr.warnings) + (note,))
    from .flight import stage_notes  # the notes `solve` writes for the same flight

    notes = stage_notes(fr, vehicle, orbit=fr.orbit is not None)
    return vehicle, replace(fr, warnings=tuple(dict.fromkeys(tuple(fr.warnings) + tuple(notes))))


def flight_summary(fr: FlightResult, site_altitude_m: float = 0.0) -> dict[str, Any]:
    """JSON-ready flight figures with SI-suffixed keys.

    Datum: every ``..._altitude_m`` and burnout ``altitude_m`` is above sea level
    (the spherical Earth of radius 6 378 137 m); the apogee of a vertical
    flight says its datum in its key (``apogee_above_site_m``,
    ``apogee_above_sea_level_m``; ``apogee_m`` is kept as the name of the
    above-site value).
    """

    def f(x):
        return None if x is None or (isinstance(x, float) and not math.isfinite(x)) else float(x)

    # round-off (1e-14 m/s of steering loss in a vertical flight) is reported as zero
    losses = {k: (0.0 if abs(v) < 1e-9 else float(v)) for k, v in fr.losses_m_s.items()}
    out: dict[str, Any] = {
        "profile": fr.profile,
        "terminated_by": fr.terminated_by,
        "rail_exit_speed_m_s": f(fr.rail_exit_speed_m_s),
        "max_dynamic_pressure_pa": f(fr.max_dynamic_pressure_pa),
        "max_q_altitude_m": f(fr.max_q_altitude_m),
        "max_acceleration_m_s2": f(fr.max_acceleration_m_s2),
        "liftoff_thrust_to_weight": f(fr.liftoff_thrust_to_weight),
        "losses_m_s": losses,
        "ideal_delta_v_flown_m_s": f(fr.ideal_delta_v_m_s),
        "rotation_bonus_m_s": f(fr.rotation_bonus_m_s),
        "budget_residual_m_s": f(fr.budget_residual_m_s),
        "burnouts": [
            {"stage": b.stage, "time_s": b.time_s, "altitude_m": b.altitude_m, "downrange_m": b.downrange_m,
             "speed_m_s": b.speed_m_s, "inertial_speed_m_s": b.inertial_speed_m_s,
             "flight_path_angle_deg": b.flight_path_angle_deg, "mass_kg": b.mass_kg,
             "ideal_delta_v_m_s": b.ideal_delta_v_m_s, "losses_m_s": dict(b.losses_m_s)}
            for b in fr.burnouts
        ],
    }
    if fr.profile == "vertical":
        out["apogee_m"] = f(fr.apogee_m - site_altitude_m)  # kept name; same datum as apogee_above_site_m
        out["apogee_above_site_m"] = f(fr.apogee_m - site_altitude_m)
        out["apogee_above_sea_level_m"] = f(fr.apogee_m)
        out["time_to_apogee_s"] = f(fr.time_to_apogee_s)
    if fr.orbit is not None:
        o = fr.orbit
        out.update({
            "perigee_altitude_m": f(o.perigee_alt_m),
            "apogee_altitude_m": f(o.apogee_alt_m),
            "orbit_speed_m_s": f(o.speed_m_s),
            "flight_path_angle_deg": f(o.flight_path_angle_deg),
            "insertion_altitude_m": f(o.altitude_m),
            "eccentricity": f(o.eccentricity),
            "inclination_deg": f(o.inclination_deg),
        })
    budget = {"ideal": float(fr.ideal_delta_v_m_s)}
    budget.update({f"{k} loss": 0.0 - v for k, v in losses.items()})
    coast = float(fr.coast_gravity_loss_m_s)
    out["coast_gravity_loss_m_s"] = f(coast)
    if coast:  # the gravity loss split: powered flight, and the speed traded for height on the insertion coast
        rest = {k: v for k, v in budget.items() if k not in ("ideal", "gravity loss")}
        budget = {"ideal": budget["ideal"], POWERED_GRAVITY_KEY: coast - losses["gravity"], COAST_BUDGET_KEY: -coast,
                  **rest}
    if fr.rotation_bonus_m_s:
        budget["Earth rotation"] = float(fr.rotation_bonus_m_s)
    budget["final inertial speed" if fr.profile != "vertical" else "speed at final burnout"] = (
        float(fr.final_inertial_speed_m_s) if fr.profile != "vertical"
        else float(fr.burnouts[-1].speed_m_s) if fr.burnouts else math.nan)
    out["delta_v_budget_m_s"] = budget
    return out


def _target(problem: Problem, site: LaunchSite):
    """(target object, goal text) of a flight-target problem."""
    from .flight import ApogeeTarget, OrbitTarget

    if problem.apogee_m is not None:
        return (ApogeeTarget(apogee_m=problem.apogee_m + site.altitude_m, earth="round"),
                f"apogee {problem.apogee_m:,.0f} m above the site")
    st, L = problem.steering, problem.launch
    incl = problem.inclination_deg if L.azimuth_deg is None else None
    kw: dict[str, Any] = {}
    rise = st.vertical_rise_time_s if st.vertical_rise_time_s is not None else L.vertical_rise_time_s
    if rise is not None:
        kw["vertical_rise_s"] = rise
    if st.kick_duration_s is not None:
        kw["kick_duration_s"] = st.kick_duration_s
    if st.nodes_per_stage is not None:
        kw["nodes_per_stage"] = st.nodes_per_stage
    target = OrbitTarget(altitude_m=problem.orbit_altitude_m, inclination_deg=incl,
                         apogee_altitude_m=problem.orbit_apogee_m, insertion=problem.insertion or "coast",
                         transfer=problem.transfer or "lightest", **kw)
    if problem.orbit_apogee_m is None or problem.orbit_apogee_m == problem.orbit_altitude_m:
        goal = f"{problem.orbit_altitude_m / 1000:,.0f} km circular orbit"
    else:
        goal = f"{problem.orbit_altitude_m / 1000:,.0f} x {problem.orbit_apogee_m / 1000:,.0f} km orbit"
    return target, goal


def solve_flight_problem(problem: Problem, *, method: str = "auto") -> SizingResult:
    """Size the vehicle for an apogee or orbit target with the losses of its simulated flight.

    Stage masses (and for an orbit the steering programme) are optimised together
    through the compiled flight (`sizing.optimize.flight.size_to_target`): minimum
    gross mass for the payload, or maximum payload for a given gross mass, with the
    path limits of the file (max-q, max acceleration, max pitch rate). `method` is
    accepted for a uniform interface (`sizing.optimize.prepare` refuses the ideal
    methods for flight targets).
    """
    from .flight import PathLimits, size_to_target

    check_flight_problem(problem)
    specs = flight_specs(problem)
    site = launch_site(problem)
    target, goal = _target(problem, site)
    limits = PathLimits(problem.max_dynamic_pressure_pa, problem.max_acceleration_m_s2, problem.max_pitch_rate_deg_s,
                        problem.min_transfer_perigee_m)
    payload_free = problem.solve_for.value == "payload_mass"
    payload0 = problem.payload_mass_kg if not payload_free else 0.01 * problem.gross_mass_kg
    try:
        fs = size_to_target(specs, payload0, target, site, tolerance=problem.target_tolerance_m, limits=limits,
                            gross_mass_kg=problem.gross_mass_kg if payload_free else None,
                            max_gross_mass_kg=problem.max_gross_mass_kg,
                            payload_diameter_m=problem.launch.payload_diameter_m,
                            staging_delay_s=problem.launch.staging_delay_s)
    except InfeasibleProblemError as exc:
        best = dict(exc.best)
        message = str(exc)
        if problem.apogee_m is not None and "apogee_m" in best:
            best["apogee_above_site_m"] = best.pop("apogee_m") - site.altitude_m  # as the target is stated
            best["apogee_m"] = best["apogee_above_site_m"]
            dv_txt = (f" at ideal delta-v {best['ideal_delta_v_m_s']:,.0f} m/s"
                      if "ideal_delta_v_m_s" in best else "")
            message = (f"mission.apogee: {problem.apogee_m:,.0f} m above the site is beyond what these stages "
                       f"can reach; the best is {best['apogee_m']:,.0f} m{dv_txt}. Raise Isp, lower structural "
                       "coefficients, add a stage or lower the target.")
        return failed_result(problem, status=Status.INFEASIBLE, method="flight-integrated",
                             message=message, best=best)
    except FieldError as exc:
        raise ProblemDefinitionError(problem.source, [str(exc)]) from None
    return _flight_result(problem, fs, goal, payload_free)


def _flight_result(problem: Problem, fs, goal: str, payload_free: bool) -> SizingResult:
    status = Status.OPTIMAL if fs.converged else Status.INFEASIBLE
    loss = sum(fs.losses_m_s.values())
    what = (f"maximum payload {fs.payload_mass_kg:,.6g} kg for {fs.gross_mass_kg:,.6g} kg gross mass" if payload_free
            else f"minimum gross mass {fs.gross_mass_kg:,.6g} kg for {fs.payload_mass_kg:,.6g} kg payload")
    message = (f"{what} to {goal}: ideal delta-v {fs.ideal_delta_v_m_s:,.0f} m/s including {loss:,.0f} m/s of "
               "simulated losses" if fs.converged else f"no design meets the problem: {fs.message}")
    result = _result_from_masses(problem, fs.propellant_mass_kg, fs.structural_mass_kg, fs.payload_mass_kg,
                                 method="flight-integrated", iterations=fs.n_iterations, status=status,
                                 message=message)
    if fs.converged and fs.trade_factors:
        result = replace(result, trade_factors=fs.trade_factors)
    result = _with_flown_hardware(problem, result, fs.vehicle)
    if problem.apogee_m is not None:
        target = {"apogee_above_site_m": problem.apogee_m, "apogee_m": problem.apogee_m}
    else:
        target = {"orbit_perigee_altitude_m": problem.orbit_altitude_m,
                  "orbit_apogee_altitude_m": problem.orbit_apogee_m or problem.orbit_altitude_m,
                  "orbit_altitude_m": problem.orbit_altitude_m, "inclination_deg": problem.inclination_deg,
                  "insertion": problem.insertion or "coast"}
    extra = {
        "target": target, "achieved": dict(fs.achieved), "target_error": fs.target_error,
        "target_tolerance": fs.tolerance, "iterations": fs.n_iterations, "flights": fs.n_flights,
        "sizing_method": fs.method, "ideal_delta_v_m_s": fs.ideal_delta_v_m_s,
        "target_speed_m_s": fs.target_speed_m_s,
        "shorter_stacks": [{"stages": names, "gross_mass_kg": g} for names, g in fs.alternatives],
        "design": design_record(problem, fs.vehicle, fs.site, fs.profile),
    }
    if fs.profile is not None:
        extra["steering"] = steering_record(fs.profile, fs.site, fs.vehicle)
    out = _with_flight(result, fs.flight, problem, extra)
    return replace(out, warnings=tuple(dict.fromkeys(tuple(out.warnings) + tuple(fs.warnings))))


def steering_record(profile: AscentProfile, site: LaunchSite, vehicle: Vehicle | None = None) -> dict[str, Any]:
    """The steering programme as JSON-ready data (what the design file carries)."""
    out: dict[str, Any] = {
        "launch_azimuth_deg": site.azimuth_deg, "vertical_rise_time_s": profile.vertical_rise_s,
        "pitch_kick_deg": profile.pitch_kick_deg, "kick_duration_s": profile.kick_duration_s,
        "law": profile.steering, "steer_from_stage": profile.steer_from_stage,
        "pitch_table": [{"time_s": t, "pitch_deg": p} for t, p in (profile.pitch_table or ())],
        "hold_inclination_deg": profile.hold_inclination_deg, "ascending": profile.ascending,
        "yaw_bias_deg": profile.yaw_bias_deg,
    }
    ins = profile.insertion
    if ins is not None:
        out["insertion"] = {"coast_s": ins.coast_s, "pitch_deg": ins.pitch_deg,
                            "propellant_kg": ins.propellant_kg, "kind": "restart" if ins.propellant_kg else "kick_stage"}
        if vehicle is not None:
            from ..physics.flight.setup import burn_schedule

            sched = burn_schedule(vehicle, ignore_first_coast=True, insertion=ins)
            out["insertion"].update(cutoff_time_s=sched.cutoff_s, ignition_time_s=sched.insertion_s,
                                    burnout_time_s=sched.windows[-1][1])
    return out


def design_record(problem: Problem, vehicle: Vehicle, site: LaunchSite, profile: AscentProfile | None) -> dict:
    """Everything a design file needs to fly the sized vehicle again (`sizing.report.design`)."""
    stages = []
    for sd, st in zip(problem.stages, vehicle.stages):
        stages.append({
            "name": st.name, "isp_s": st.isp_vac_s, "isp_sea_level_s": st.isp_sl_s,
            "structural_coefficient": st.structural_coefficient, "propellant_mass_kg": st.propellant_mass_kg,
            "structural_mass_kg": st.structural_mass_kg, "thrust_n": st.thrust_vac_n, "diameter_m": st.diameter_m,
            "nozzle_exit_area_m2": sd.nozzle_exit_area_m2, "drag_mach": list(st.drag.mach), "drag_cd": list(st.drag.cd),
            "coast_before_ignition_s": st.coast_before_ignition_s,
        })
    L = problem.launch
    rec: dict[str, Any] = {
        "name": problem.name, "payload_mass_kg": vehicle.payload_mass_kg,
        "target": {"apogee_above_site_m": problem.apogee_m, "orbit_altitude_m": problem.orbit_altitude_m,
                   "orbit_apogee_m": problem.orbit_apogee_m, "inclination_deg": problem.inclination_deg},
        "launch": {"altitude_m": site.altitude_m, "latitude_deg": site.latitude_deg, "azimuth_deg": site.azimuth_deg,
                   "rail_length_m": site.rail_length_m, "rail_angle_deg": site.rail_angle_deg,
                   "staging_delay_s": vehicle.staging_delay_s, "payload_diameter_m": vehicle.payload_diameter_m,
                   "profile": profile_of(problem) if L.profile is None else L.profile},
        "stages": stages,
        "max_acceleration_m_s2": problem.max_acceleration_m_s2,
    }
    if profile is not None:
        rec["steering"] = steering_record(profile, site)
    return rec


def check_flight_problem(problem: Problem) -> None:
    """Every check of a flight-target problem made before sizing (`sizing.optimize.prepare`).

    Raises
    ------
    ProblemDefinitionError
        Limits with a flight target; a stage without thrust-to-weight or a first
        stage without diameter; a launch site or inclination the flight layer refuses.
    """
    if any(s.has_constraints for s in problem.stages):
        raise ProblemDefinitionError(problem.source, [
            "stage: per-stage design limits (mass ratio, delta-v share, ignition-mass cap) are not supported with "
            "apogee or orbit targets; size for delta_v with limits, or drop them (mission.max_gross_mass, "
            "max_acceleration, max_dynamic_pressure and max_pitch_rate do apply)."])
    flight_specs(problem)
    launch_site(problem)
    ascent_profile(problem)


def _with_flight(result: SizingResult, fr: FlightResult, problem: Problem, extra: dict[str, Any]) -> SizingResult:
    flight = flight_summary(fr, problem.launch.altitude_m)
    flight.update(extra)
    return replace(result, flight=flight, warnings=tuple(result.warnings) + tuple(fr.warnings))


def _with_flown_hardware(problem: Problem, result: SizingResult, vehicle: Vehicle) -> SizingResult:
    """Propellant split, tanks and engines (`_stage_nlp.stage_hardware_fields`) at the flown vacuum thrust,
    and the stage models' review notes."""
    from ._stage_nlp import stage_hardware_fields

    stages, notes = [], []
    for sd, sr, st in zip(problem.stages, result.stages, vehicle.stages):
        hw = stage_hardware_fields(sd, sr.propellant_mass_kg, st.thrust_vac_n, sr.ignition_mass_kg, problem.g0_m_s2)
        stages.append(replace(sr, **hw) if hw else sr)
        if sd.mass_model is not None:
            notes += [f"stage {sd.name!r}: {t}" for t in sd.mass_model.review_notes(sr.propellant_mass_kg,
                                                                                 st.thrust_vac_n)]
    return replace(result, stages=tuple(stages), warnings=tuple(result.warnings) + tuple(notes))


def _result_from_masses(problem: Problem, propellant_kg, structural_kg, payload_kg: float,
                        *, method: str, iterations: int, status: Status = Status.OPTIMAL,
                        message: str = "") -> SizingResult:
    """A SizingResult for given stage masses (mass ratios from the masses)."""
    above = payload_kg
    n = [1.0] * len(problem.stages)
    for i in range(len(problem.stages) - 1, -1, -1):
        m0 = above + propellant_kg[i] + structural_kg[i]
        n[i] = m0 / (m0 - propellant_kg[i])
        above = m0
    eff = [replace(s, structural_coefficient=ms / (ms + mp) if ms + mp > 0 else s.structural_coefficient)
           for s, mp, ms in zip(problem.stages, propellant_kg, structural_kg)]
    p2 = replace(problem, stages=tuple(eff))
    return build_result(p2, n, payload_kg, method=method, n_iterations=iterations, status=status,
                        message=message, violations={})

