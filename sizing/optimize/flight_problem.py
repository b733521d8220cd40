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
                s.name, s.isp_s, s.structural_coefficient, s.thrust_to_weight,
                diameter_m=d, isp_sl_s=s.isp_sea_level_s, drag=_drag(s),
                coast_before_ignition_s=s.coast_before_ignition_s or 0.0, g0_m_s2=problem.g0_m_s2,
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
    """Gravity-turn steering programme from [launch]; the kick is solved when a target orbit is set."""
    L = problem.launch
    kw: dict[str, Any] = {}
    if L.vertical_rise_time_s is not None:
        kw["vertical_rise_s"] = L.vertical_rise_time_s
    if L.pitch_kick_deg is not None:
        kw["pitch_kick_deg"] = L.pitch_kick_deg
    return AscentProfile(**kw)


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
    # a step cap keeps the recorded history dense enough to plot (the adaptive
    # integrator would otherwise take very long steps in coasts)
    site = launch_site(problem)
    if profile_of(problem) == "vertical":
        return fly_vertical(vehicle, site, earth="round", record_history=record_history,
                            acceleration_limit_m_s2=problem.max_acceleration_m_s2, max_step_s=0.5)
    return fly_ascent(vehicle, site, ascent_profile(problem), record_history=record_history,
                      acceleration_limit_m_s2=problem.max_acceleration_m_s2, max_step_s=2.0)


#: Review note when the flight ends on the ground before every stage has burnt out.
IMPACT_UNDER_POWER_NOTE = ("the vehicle came back to the ground at {t:.1f} s before {stage!r} burnt out: "
                           "it cannot climb with this thrust (raise thrust-to-weight); the figures "
                           "above describe a failed flight.")


def fly_problem(problem: Problem) -> tuple[Vehicle, FlightResult]:
    """Fly the design given in the problem file (`sizing fly`)."""
    vehicle = design_vehicle(problem)
    try:
        fr = _fly(vehicle, problem)
    except FieldError as exc:
        raise ProblemDefinitionError(problem.source, [str(exc)]) from None
    if fr.terminated_by == "impact" and len(fr.burnouts) < len(vehicle.stages):
        stage = vehicle.stages[len(fr.burnouts)].name
        note = IMPACT_UNDER_POWER_NOTE.format(t=fr.impact_time_s, stage=stage)
        fr = replace(fr, warnings=tuple(fr.warnings) + (note,))
    return vehicle, fr


def flight_summary(fr: FlightResult, site_altitude_m: float = 0.0) -> dict[str, Any]:
    """JSON-ready flight figures with SI-suffixed keys (apogee above the launch site)."""

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
        out["apogee_m"] = f(fr.apogee_m - site_altitude_m)
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
    if fr.rotation_bonus_m_s:
        budget["Earth rotation"] = float(fr.rotation_bonus_m_s)
    budget["final inertial speed" if fr.profile != "vertical" else "speed at final burnout"] = (
        float(fr.final_inertial_speed_m_s) if fr.profile != "vertical"
        else float(fr.burnouts[-1].speed_m_s) if fr.burnouts else math.nan)
    out["delta_v_budget_m_s"] = budget
    return out


def solve_flight_problem(problem: Problem, *, method: str = "auto") -> SizingResult:
    """Size the vehicle for an apogee or orbit target with simulated losses.

    The mass split is the Lagrange optimum (Curtis Sec. 11.6) for the ideal
    delta-v that, flown through the trajectory simulation, meets the target
    (`sizing.optimize.flight.size_to_target`). `method` is accepted for a
    uniform interface; limits are not supported with flight targets.
    """
    from ..physics.staging import optimal_mass_ratios
    from ._common import analytic_trade_factors
    from .flight import ApogeeTarget, OrbitTarget, size_to_target

    check_flight_problem(problem)
    specs = flight_specs(problem)
    site = launch_site(problem)
    if problem.apogee_m is not None:
        target = ApogeeTarget(apogee_m=problem.apogee_m + site.altitude_m, earth="round")
        goal = f"apogee {problem.apogee_m:,.0f} m above the site"
    else:
        incl = problem.inclination_deg if problem.launch.azimuth_deg is None else None
        target = OrbitTarget(altitude_m=problem.orbit_altitude_m, inclination_deg=incl,
                             profile=ascent_profile(problem))
        goal = f"{problem.orbit_altitude_m / 1000:,.0f} km circular orbit"
    tolerance = problem.target_tolerance_m
    if tolerance is not None and problem.orbit_altitude_m is not None:
        tolerance = orbit_speed_tolerance_m_s(problem.orbit_altitude_m, tolerance)
    try:
        fs = size_to_target(
            specs, problem.payload_mass_kg, target, site,
            tolerance=tolerance, max_iterations=problem.max_iterations or 12,
            payload_diameter_m=problem.launch.payload_diameter_m,
            staging_delay_s=problem.launch.staging_delay_s,
            acceleration_limit_m_s2=problem.max_acceleration_m_s2,
        )
    except InfeasibleProblemError as exc:
        best = dict(exc.best)
        message = str(exc)
        if problem.apogee_m is not None and "apogee_m" in best:
            best["apogee_m"] = best["apogee_m"] - site.altitude_m  # report above the site, as stated
            dv_txt = (f" at ideal delta-v {best['ideal_delta_v_m_s']:,.0f} m/s"
                      if "ideal_delta_v_m_s" in best else "")
            message = (f"mission.apogee: {problem.apogee_m:,.0f} m above the site is beyond what these stages "
                       f"can reach; the best is {best['apogee_m']:,.0f} m{dv_txt}. Raise Isp, lower structural "
                       "coefficients, add a stage or lower the target.")
        return failed_result(problem, status=Status.INFEASIBLE, method="lagrange+flight",
                             message=message, best=best)
    except FieldError as exc:
        raise ProblemDefinitionError(problem.source, [str(exc)]) from None
    status = Status.OPTIMAL if fs.converged else Status.MAX_ITERATIONS
    loss = sum(fs.losses_m_s.values())
    message = (f"minimum gross mass {fs.gross_mass_kg:,.6g} kg for {fs.payload_mass_kg:,.6g} kg payload to {goal}: "
               f"ideal delta-v {fs.ideal_delta_v_m_s:,.0f} m/s including {loss:,.0f} m/s of simulated losses"
               if fs.converged else f"sizing loop did not converge: {fs.message}")
    result = _result_from_masses(problem, fs.propellant_mass_kg, fs.structural_mass_kg, fs.payload_mass_kg,
                                 method="lagrange+flight", iterations=fs.n_iterations, status=status,
                                 message=message)
    if fs.converged:
        c = [s.exhaust_velocity_m_s for s in problem.stages]
        eps = [s.structural_coefficient for s in problem.stages]
        sol = optimal_mass_ratios(c, eps, fs.ideal_delta_v_m_s)
        tf = analytic_trade_factors(problem, result, sol.u_m_s)
        tf["basis"] = ("change in gross mass at fixed payload and ideal delta-v "
                       "(Lagrange multiplier, simulated losses held at their converged values)")
        result = replace(result, trade_factors=tf)
    extra = {
        "target": {"apogee_m": problem.apogee_m} if problem.apogee_m is not None
        else {"orbit_altitude_m": problem.orbit_altitude_m, "inclination_deg": problem.inclination_deg},
        "achieved": dict(fs.achieved),
        "target_error": fs.target_error,
        "target_tolerance": fs.tolerance,
        "iterations": fs.n_iterations,
        "sizing_method": fs.method,
        "ideal_delta_v_m_s": fs.ideal_delta_v_m_s,
        "target_speed_m_s": fs.target_speed_m_s,
        "sizing_history": [
            {"ideal_delta_v_m_s": h.ideal_delta_v_m_s, "achieved_speed_m_s": h.achieved_speed_m_s,
             "target_error": h.target_error, "gross_mass_kg": h.gross_mass_kg, "method": h.method}
            for h in fs.history],
    }
    out = _with_flight(result, fs.flight, problem, extra)
    return replace(out, warnings=tuple(dict.fromkeys(tuple(out.warnings) + tuple(fs.warnings))))


def check_flight_problem(problem: Problem) -> None:
    """Every check of a flight-target problem made before sizing (`sizing.optimize.prepare`).

    Raises
    ------
    ProblemDefinitionError
        Limits with a flight target; a stage without thrust-to-weight or a first
        stage without diameter; a launch site or inclination the flight layer refuses.
    """
    if problem.has_constraints:
        raise ProblemDefinitionError(problem.source, [
            "mission: design limits (mass-ratio, delta-v share, mass caps) are not supported with "
            "apogee or orbit targets yet; size for delta_v with limits, or drop the limits."])
    flight_specs(problem)
    launch_site(problem)
    ascent_profile(problem)


def orbit_speed_tolerance_m_s(orbit_altitude_m: float, altitude_tolerance_m: float) -> float:
    """Burnout-speed tolerance equivalent to an apsis-altitude tolerance on a circular orbit.

    A speed error dv at insertion (flight-path angle 0, radius r) moves the
    opposite apsis by about 4 r dv / v_c (vis-viva, first order), so
    dv = v_c dh / (4 r).

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014,
       eq. 2.71 (vis-viva energy equation); first-order expansion here.
    """
    from ..physics.gravity import circular_speed_m_s
    from ..units import R_EARTH_EQ_M

    r = R_EARTH_EQ_M + orbit_altitude_m
    return circular_speed_m_s(orbit_altitude_m) * altitude_tolerance_m / (4.0 * r)


def _with_flight(result: SizingResult, fr: FlightResult, problem: Problem, extra: dict[str, Any]) -> SizingResult:
    flight = flight_summary(fr, problem.launch.altitude_m)
    flight.update(extra)
    return replace(result, flight=flight, warnings=tuple(result.warnings) + tuple(fr.warnings))


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

