"""Solve a loaded hobby problem: motor stack search or water-stage optimisation.

Both paths return a `sizing.result.SizingResult`, the same object (and so
the same table and JSON) as every other problem:

* one `StageResult` per stage, bottom first, from the flown vehicle: ignition
  mass (stage and everything above), propellant mass (motor propellant; water
  and air expelled), structural (dry) mass (airframe + spent motor case;
  bottle, fins and the air left at ambient pressure), burnout mass, mass
  ratio, payload ratio, ideal delta-v from the effective exhaust velocity
  c = I / m_p (Tsiolkovsky rocket equation, dv = c ln(m0/mf)) and delta-v
  share;
* `flight` with apogee above the site, time to apogee, rail-exit speed, max
  acceleration, max-q, liftoff thrust-to-weight, the loss budget and a
  ``hobby`` sub-dict (chosen motors or water settings, limits, rejection
  counts);
* `warnings` with the hobby caution (`HOBBY_CAUTION` or `WATER_CAUTION`)
  and any review notes.

A motor problem with no stack reaching the target returns success False and
``best["apogee_m"]``: the highest apogee of any stack meeting the liftoff
thrust-to-weight and rail-exit limits, found exactly by flying stacks in
decreasing order of their energy bound (`apogee_energy_bound`, an upper bound
of the apogee) until the bound falls below the best apogee flown.

Results are preliminary estimates, not clearance to fly.
"""

from __future__ import annotations

import itertools
import math
import warnings
from collections.abc import Callable
from typing import Any

from ..errors import FieldError, SizingConvergenceWarning
from ..physics.atmosphere import pressure_density_sound_speed
from ..physics.liftoff import fly_hobby
from ..physics.vehicle import LaunchSite, Vehicle
from ..physics.water import WATER_CAUTION, water_vehicle
from .water import optimise_water_stage
from ..problem.hobby import HobbyProblem
from ..result import SizingResult, StageResult, Status
from ..units import G0_M_S2, R_EARTH_EQ_M
from .hobby_safety import geometry_drag_curves, safety_report, stability_ballast
from .hobby import (
    DTEG_RAIL_EXIT_SPEED_M_S,
    HOBBY_CAUTION,
    HOBBY_MIN_THRUST_TO_WEIGHT,
    HOBBY_RAIL_EXIT_SPEED_M_S,
    StackStage,
    apogee_energy_bound,
    build_motor_vehicle,
    search_hobby_stack,
)

__all__ = ["solve_hobby", "stage_results_from_vehicle", "rail_exit_minimum_m_s", "RAIL_RULES_M_S",
           "MSG_NO_STACK", "MSG_NO_STACK_YET", "MSG_WATER_SHORT", "MSG_CANNOT_FLY", "MSG_WIND_NEEDS_GEOMETRY"]

#: Minimum rail-exit speed of each rail rule [m/s]: "hobby" 15 m/s (~50 ft/s, common practice,
#: from memory); "dteg" 30.48 m/s (100 ft/s, Spaceport America Cup DTEG 10.2.1).
RAIL_RULES_M_S = {"hobby": HOBBY_RAIL_EXIT_SPEED_M_S, "dteg": DTEG_RAIL_EXIT_SPEED_M_S}

MSG_NO_STACK = "no stack reaches the target apogee within the limits"
MSG_NO_STACK_YET = "no stack found within the simulation cap"
MSG_WATER_SHORT = "the best water design found falls short of the target apogee"
MSG_CANNOT_FLY = "the design as given cannot fly"
MSG_WIND_NEEDS_GEOMETRY = "the wind keys of [launch] need [stage.geometry]"

FlightFn = Callable[[Vehicle, LaunchSite], Any]


def _fly(vehicle: Vehicle, site: LaunchSite):
    """Default flight of motor and water candidates: `sizing.physics.liftoff.fly_hobby`.

    Vertical flight with adaptive steps; a candidate that cannot lift off (peak
    thrust-to-weight <= 1, or stalls on the rail or launch tube) raises
    `CannotLiftOffError` and one whose flight-time bound exceeds
    `HOBBY_MAX_FLIGHT_TIME_S` raises `FlightTimeCapError`, both at once.
    """
    return fly_hobby(vehicle, site)


_fly_water = _fly


def rail_exit_minimum_m_s(problem: HobbyProblem) -> float:
    """The rail-exit speed minimum of a problem [m/s]: its own value or its rail rule's."""
    if problem.min_rail_exit_speed_m_s is not None:
        return problem.min_rail_exit_speed_m_s
    return RAIL_RULES_M_S[problem.rail_rule or "hobby"]


def stage_results_from_vehicle(vehicle: Vehicle) -> tuple[tuple[StageResult, ...], float]:
    """Stage mass table rows of a flown vehicle, bottom first, and the total ideal delta-v.

    Ideal delta-v per stage by the Tsiolkovsky rocket equation,
    dv = c ln(m0 / mf), with the stage's effective exhaust velocity c = I / m_p
    (Sutton & Biblarz, Rocket Propulsion Elements, 9th ed., eqs. 2-5 and 4-6).

    Returns
    -------
    (tuple of StageResult, float)
        Stage rows and the sum of their ideal delta-v [m/s].
    """
    rows = []
    for i, s in enumerate(vehicle.stages):
        m0 = vehicle.ignition_mass_kg(i)
        mp = s.propellant_mass_kg
        ms = s.structural_mass_kg
        mf = m0 - mp
        c = s.exhaust_velocity_vac_m_s
        rows.append(dict(
            name=s.name, isp_s=c / G0_M_S2, exhaust_velocity_m_s=c, structural_coefficient=ms / (ms + mp),
            ignition_mass_kg=m0, stage_mass_kg=ms + mp, propellant_mass_kg=mp, structural_mass_kg=ms,
            burnout_mass_kg=mf, mass_ratio=m0 / mf, payload_ratio=(m0 - ms - mp) / m0,
            delta_v_m_s=c * math.log(m0 / mf),
        ))
    total = sum(r["delta_v_m_s"] for r in rows)
    out = tuple(StageResult(**r, delta_v_share=r["delta_v_m_s"] / total if total > 0 else math.nan,
                            contributes=r["delta_v_m_s"] > 0) for r in rows)
    return out, total


def _flight_dict(fr, site: LaunchSite, *, target: float | None, tw: float) -> dict[str, Any]:
    def get(name: str) -> float:  # a stand-in flight function may not give every quantity
        return float(getattr(fr, name, math.nan))

    rail = get("rail_exit_speed_m_s") if site.rail_length_m > 0 else math.nan
    return {
        "apogee_m": get("apogee_m") - site.altitude_m,
        "target_apogee_m": target,
        "time_to_apogee_s": get("time_to_apogee_s"),
        "rail_exit_speed_m_s": rail,
        "max_acceleration_m_s2": get("max_acceleration_m_s2"),
        "max_dynamic_pressure_pa": get("max_dynamic_pressure_pa"),
        "liftoff_thrust_to_weight": float(tw),
        "losses_m_s": {k: float(v) for k, v in (getattr(fr, "losses_m_s", None) or {}).items()},
    }


def _limits(problem: HobbyProblem) -> dict[str, Any]:
    return {
        "min_thrust_to_weight": problem.min_thrust_to_weight or HOBBY_MIN_THRUST_TO_WEIGHT,
        "min_rail_exit_speed_m_s": rail_exit_minimum_m_s(problem),
        "rail_rule": (None if problem.min_rail_exit_speed_m_s is not None else problem.rail_rule or "hobby"),
        "max_acceleration_m_s2": problem.max_acceleration_m_s2,
        "rail_length_m": problem.site.rail_length_m,
        "rail_length_assumed": not problem.rail_length_given,
        "min_static_margin_cal": problem.min_static_margin_cal if problem.has_geometry else None,
    }


def _site_notes(problem: HobbyProblem) -> list[str]:
    if problem.rail_length_given:
        return []
    if problem.kind == "motors":
        return [f"no [launch].rail_length given: {problem.site.rail_length_m:g} m assumed; give your "
                "launcher's rail length for a real rail-exit check."]
    return [f"no [launch].rail_length given: the launch tube length ({problem.site.rail_length_m:g} m) "
            "is taken as the guided length."]


def solve_hobby(problem: HobbyProblem, *, flight: FlightFn | None = None) -> SizingResult:
    """Solve a hobby problem (motor stack search or water optimisation).

    Parameters
    ----------
    problem : HobbyProblem
        From `sizing.problem.hobby.load_hobby_problem`.
    flight : callable or None
        ``flight(vehicle, site)`` returning a flight result with ``apogee_m``
        (above sea level), ``time_to_apogee_s``, ``rail_exit_speed_m_s``,
        ``max_acceleration_m_s2``, ``max_dynamic_pressure_pa``,
        ``liftoff_thrust_to_weight`` and ``losses_m_s``; None uses
        `sizing.physics.flight.fly_vertical` (flat Earth, drag on).

    Returns
    -------
    SizingResult
        ``success`` False (status ``infeasible``) when the target is out of
        reach; ``best`` then holds the best reachable apogee.
    """
    if problem.kind == "motors":
        return _solve_motors(problem, _fly if flight is None else flight)
    return _solve_water(problem, _fly_water if flight is None else flight)


# ---------------------------------------------------------------- motors
def _stack_stages(problem: HobbyProblem) -> tuple[StackStage, ...]:
    """Search stages; with [stage.geometry], C_D(Mach) from the component build-up where no table is given."""
    built = geometry_drag_curves(problem) if problem.has_geometry else (None,) * len(problem.motor_stages)
    return tuple(
        StackStage(s.name, s.airframe_mass_kg, s.diameter_m, s.motor_diameter_m, s.drag or g, s.allowed_motors,
                   s.coast_before_ignition_s)
        for s, g in zip(problem.motor_stages, built)
    )


def _drag_source(problem: HobbyProblem) -> list[str]:
    """Where each stage's C_D(Mach) comes from: "table", "geometry" or "default"."""
    return ["table" if s.drag is not None else "geometry" if s.geometry is not None else "default"
            for s in problem.motor_stages]


def _solve_motors(problem: HobbyProblem, fly: FlightFn) -> SizingResult:
    stages = _stack_stages(problem)
    limits = _limits(problem)
    opts: dict[str, Any] = {}
    if problem.max_simulations is not None:
        opts["max_simulations"] = problem.max_simulations
    if problem.max_combinations is not None:
        opts["max_combinations"] = problem.max_combinations
    res = search_hobby_stack(
        problem.motors, stages, payload_mass_kg=problem.payload_mass_kg,
        target_apogee_m=problem.target_apogee_m, site=problem.site, objective=problem.objective,
        min_thrust_to_weight=limits["min_thrust_to_weight"],
        min_rail_exit_speed_m_s=limits["min_rail_exit_speed_m_s"],
        max_acceleration_m_s2=problem.max_acceleration_m_s2, match_target=problem.match_target,
        payload_diameter_m=problem.payload_diameter_m, flight=fly,
        stability=(lambda combo: stability_ballast(problem, combo)) if problem.has_geometry else None, **opts,
    )
    hobby: dict[str, Any] = {
        "kind": "motors",
        "objective": res.objective,
        "search_method": res.method,
        "search_status": res.status,
        "n_combinations": res.n_combinations,
        "n_simulated": res.n_simulated,
        "rejected": dict(res.rejected),
        "limits": limits,
        "motors_file": problem.motors_file,
        "drag_source": _drag_source(problem),
        "caution": HOBBY_CAUTION,
    }
    notes = _site_notes(problem)
    if not res.success:
        best = _best_reachable(problem, stages, fly, limits)
        hobby["best_reachable"] = best
        rej = ", ".join(f"{k.replace('_', ' ')} {v}" for k, v in res.rejected.items() if v)
        n = len(stages)
        if res.status == "max_simulations":
            msg = (f"{MSG_NO_STACK_YET}: the search stopped after {res.n_simulated} flights before any "
                   f"{n}-stage stack reaching {problem.target_apogee_m:,.0f} m above the site was found "
                   f"(combinations rejected: {rej}); raise hobby.max_simulations.")
        else:
            msg = (f"{MSG_NO_STACK}: no {n}-stage stack from {len(problem.motors)} motors reaches "
                   f"{problem.target_apogee_m:,.0f} m above the site (combinations rejected: {rej}).")
        best_d: dict[str, float] = {}
        if best.get("apogee_m") is not None:
            best_d["apogee_m"] = best["apogee_m"]
            msg += (f" Best reachable apogee within the thrust-to-weight and rail-exit limits: "
                    f"{best['apogee_m']:,.0f} m ({' + '.join(best['motors'])}). Lower the target, lighten "
                    "the airframe or add bigger motors to the list.")
        else:
            msg += " No stack meets the liftoff thrust-to-weight and rail-exit limits at all."
        best_d["target_apogee_m"] = float(problem.target_apogee_m)
        return SizingResult(
            status=Status.MAX_ITERATIONS if res.status == "max_simulations" else Status.INFEASIBLE,
            success=False, message=msg, problem_name=problem.name, solve_for="motor stack",
            method=res.method, n_iterations=res.n_simulated, gross_mass_kg=math.nan,
            payload_mass_kg=problem.payload_mass_kg, delta_v_m_s=math.nan, stages=(),
            warnings=(HOBBY_CAUTION, *notes), best=best_d,
            flight={"target_apogee_m": problem.target_apogee_m, "hobby": hobby},
        )
    by_name = {m.name: m for m in problem.motors}
    chosen = [by_name[c.motor] for c in res.stages]
    vehicle = build_motor_vehicle(chosen, stages, payload_mass_kg=problem.payload_mass_kg,
                                  ballast_mass_kg=res.ballast_mass_kg, payload_diameter_m=problem.payload_diameter_m)
    fr = fly_hobby(vehicle, problem.site, record_history=True) if fly is _fly else fly(vehicle, problem.site)
    rows, dv = stage_results_from_vehicle(vehicle)
    if problem.has_geometry:
        parts, safety_notes = safety_report(problem, vehicle, chosen, res.ballast_mass_kg, fr)
        hobby.update(parts)
        notes += safety_notes
    elif problem.wind is not None and not problem.wind.is_calm:
        notes.append(f"{MSG_WIND_NEEDS_GEOMETRY}: the stated wind is not flown; give [stage.geometry] on every "
                     "stage for the ascent in wind (weathercocking), the recovery drift and the landing points.")
    hobby.update({
        "ballast_mass_kg": res.ballast_mass_kg,
        "cost": res.cost,
        "margins": dict(res.margins),
        "stages": [
            {"stage": c.name, "motor": m.name, "designation": m.designation, "impulse_class": m.impulse_class,
             "total_impulse_n_s": m.total_impulse_n_s, "average_thrust_n": m.average_thrust_n,
             "burn_time_s": m.burn_time_s, "motor_loaded_mass_kg": m.loaded_mass_kg,
             "propellant_mass_kg": m.propellant_mass_kg, "effective_isp_s": m.effective_isp_s,
             "diameter_m": m.diameter_m, "cost": m.cost, "maker": m.maker,
             "airframe_mass_kg": c.airframe_mass_kg}
            for c, m in zip(res.stages, chosen)
        ],
    })
    flight = _flight_dict(fr, problem.site, target=problem.target_apogee_m, tw=res.liftoff_thrust_to_weight)
    flight["hobby"] = hobby
    if res.ballast_mass_kg > 0:
        notes.append(f"gross mass includes {res.ballast_mass_kg * 1000:,.0f} g of nose ballast (carried above "
                     "the top stage with the payload).")
    status = Status.OPTIMAL if res.status == "optimal" else Status.MAX_ITERATIONS
    msg = (f"{res.message}: {' + '.join(res.motors)} reaches {res.apogee_m:,.0f} m above the site "
           f"(target {problem.target_apogee_m:,.0f} m), lightest by {res.objective}" if res.objective == "mass"
           else f"{res.message}: {' + '.join(res.motors)} reaches {res.apogee_m:,.0f} m above the site "
                f"(target {problem.target_apogee_m:,.0f} m), cheapest ({res.cost:g} in motor cost)")
    return SizingResult(
        status=status, success=True, message=msg, problem_name=problem.name, solve_for="motor stack",
        method=res.method, n_iterations=res.n_simulated, gross_mass_kg=vehicle.gross_mass_kg,
        payload_mass_kg=problem.payload_mass_kg, delta_v_m_s=dv, stages=rows,
        warnings=(HOBBY_CAUTION, *notes), flight=flight,
    )


def _best_reachable(problem: HobbyProblem, stages, fly: FlightFn, limits) -> dict[str, Any]:
    """Highest apogee of any stack meeting the liftoff T/W and rail-exit limits (no ballast).

    Flies stacks in decreasing order of the energy bound and stops once the
    bound is below the best apogee flown (exact), or at the flight cap.
    """
    per_stage = [[m for m in problem.motors if s.fits(m)] for s in stages]
    n = math.prod(len(p) for p in per_stage)
    cap_comb = problem.max_combinations or 200_000
    if n > cap_comb:
        return {"apogee_m": None, "note": f"{n} combinations: too many to search for the best apogee"}
    r0 = R_EARTH_EQ_M + problem.site.altitude_m
    payload = problem.payload_mass_kg
    cands = []
    for combo in itertools.product(*per_stage):
        m0 = payload + sum(s.airframe_mass_kg + m.loaded_mass_kg for m, s in zip(combo, stages))
        if combo[0].average_thrust_n / (m0 * G0_M_S2) < limits["min_thrust_to_weight"]:
            continue
        above, dv = payload, 0.0
        for m, s in zip(reversed(combo), reversed(stages)):  # Tsiolkovsky, c = I / m_p
            mi = above + s.airframe_mass_kg + m.loaded_mass_kg
            dv += m.total_impulse_n_s / m.propellant_mass_kg * math.log(mi / (mi - m.propellant_mass_kg))
            above = mi
        cands.append((apogee_energy_bound(dv, launch_radius_m=r0), combo))
    cands.sort(key=lambda c: -c[0])
    best = None
    cap = problem.max_simulations or 2_000
    flown = 0
    for bound, combo in cands:
        if best is not None and bound <= best[0]:
            break
        if flown >= cap:
            break
        flown += 1
        try:
            veh = build_motor_vehicle(combo, stages, payload_mass_kg=payload,
                                      payload_diameter_m=problem.payload_diameter_m)
            fr = fly(veh, problem.site)
        except (FieldError, ValueError, FloatingPointError):
            continue
        if problem.site.rail_length_m > 0 and not fr.rail_exit_speed_m_s >= limits["min_rail_exit_speed_m_s"]:
            continue
        apo = float(fr.apogee_m) - problem.site.altitude_m
        if best is None or apo > best[0]:
            best = (apo, combo)
    if best is None:
        return {"apogee_m": None, "n_flown": flown}
    return {"apogee_m": best[0], "motors": [m.name for m in best[1]], "n_flown": flown,
            "exact": flown < cap}


# ---------------------------------------------------------------- water
def _solve_water(problem: HobbyProblem, fly: FlightFn) -> SizingResult:
    site = problem.site
    p_amb = pressure_density_sound_speed(site.altitude_m)[0]
    limits = _limits(problem)
    notes = _site_notes(problem)
    design = problem.water_stages
    initial_apogee = None
    n_eval = 1
    method = "flown as given (nothing varied)"
    opt_ok, opt_msg = True, ""
    opt_rejected: dict[str, int] = {}
    if problem.vary:
        kw: dict[str, Any] = {}
        if problem.fill_bounds is not None:
            kw["fill_bounds"] = problem.fill_bounds
        if problem.nozzle_diameter_bounds_m is not None:
            kw["nozzle_diameter_bounds_m"] = problem.nozzle_diameter_bounds_m
        if problem.max_evaluations is not None:
            kw["max_evaluations"] = problem.max_evaluations
        if problem.n_grid is not None:
            kw["n_grid"] = problem.n_grid

        def apogee(vehicle, s):
            return float(fly(vehicle, s).apogee_m)

        with warnings.catch_warnings():
            warnings.simplefilter("ignore", SizingConvergenceWarning)
            opt = optimise_water_stage(
                design, payload_mass_kg=problem.payload_mass_kg, site=site, vary=problem.vary,
                max_gauge_pressure_pa=problem.max_gauge_pressure_pa, ambient_pressure_pa=p_amb,
                apogee=apogee, **kw,
            )
        design = opt.stages
        n_eval = opt.n_evaluations
        initial_apogee = opt.initial_apogee_m - site.altitude_m if math.isfinite(opt.initial_apogee_m) else None
        method = f"fill grid + bounded Powell (scipy) over {', '.join(opt.varied)}"
        opt_ok, opt_msg = opt.success, opt.message
        opt_rejected = dict(opt.rejected)
        if not math.isfinite(opt.apogee_m):
            pressures = ", ".join(f"{s.name} {_bar(s.initial_gauge_pressure_pa)}" for s in problem.water_stages)
            msg = _sentence(opt.message) + " " + _sentence(f"Launch pressure as given: {pressures}")
            return _water_fail(problem, msg, method, n_eval, limits, notes, opt.rejected)
    try:
        vehicle = water_vehicle(design, problem.payload_mass_kg, ambient_pressure_pa=p_amb,
                                payload_diameter_m=problem.payload_diameter_m)
        fr = fly(vehicle, site)
    except FieldError as exc:
        return _water_fail(problem, f"{MSG_CANNOT_FLY}: " + _sentence(str(exc)), method, n_eval, limits, notes)
    rows, dv = stage_results_from_vehicle(vehicle)
    flight = _flight_dict(fr, site, target=problem.target_apogee_m, tw=fr.liftoff_thrust_to_weight)
    apo = flight["apogee_m"]
    settings = []
    for s, given in zip(design, problem.water_stages):
        settings.append({
            "stage": s.name, "bottle_volume_m3": s.bottle_volume_m3, "fill_fraction": s.water_fill_fraction,
            "water_mass_kg": s.water_mass_kg, "pressure_pa": s.initial_gauge_pressure_pa,
            "allowed_pressure_pa": s.max_gauge_pressure_pa, "rated_pressure_pa": s.rated_pressure_pa,
            "safety_factor": s.safety_factor, "nozzle_diameter_m": s.nozzle_throat_diameter_m,
            "launch_tube_length_m": s.launch_tube_length_m, "launch_tube_diameter_m": s.launch_tube_diameter_m,
            "dry_mass_kg": s.dry_mass_kg,
            "given": {"fill_fraction": given.water_fill_fraction, "pressure_pa": given.initial_gauge_pressure_pa,
                      "nozzle_diameter_m": given.nozzle_throat_diameter_m},
        })
    flight["hobby"] = {
        "kind": "water", "varied": list(problem.vary), "n_evaluations": n_eval,
        "initial_apogee_m": initial_apogee, "max_pressure_pa": problem.max_gauge_pressure_pa,
        "ambient_pressure_pa": p_amb, "stages": settings, "limits": limits, "caution": WATER_CAUTION,
        "rejected": opt_rejected,
    }
    tw_min, rail_min = limits["min_thrust_to_weight"], limits["min_rail_exit_speed_m_s"]
    if fr.liftoff_thrust_to_weight < tw_min:
        notes.append(f"liftoff thrust-to-weight {fr.liftoff_thrust_to_weight:.1f} is below the minimum {tw_min:g}.")
    if site.rail_length_m > 0 and fr.rail_exit_speed_m_s < rail_min:
        notes.append(f"rail-exit speed {fr.rail_exit_speed_m_s:.1f} m/s is below the minimum {rail_min:g} m/s; "
                     "the water optimiser does not enforce it: use a longer launch tube or rail.")
    target = problem.target_apogee_m
    reached = target is None or apo >= target
    success = reached and opt_ok
    if not reached:
        msg = (f"{MSG_WATER_SHORT}: {apo:,.1f} m above the site against a target of {target:,.1f} m. Use a "
               "bigger or higher-rated bottle, a lighter airframe or another stage.")
        status = Status.INFEASIBLE
    elif not opt_ok:
        msg = f"{opt_msg}; best design found reaches {apo:,.1f} m. Raise hobby.optimise.max_evaluations."
        status = Status.MAX_ITERATIONS
    else:
        msg = (f"{'best settings found' if problem.vary else 'design as given'}: apogee {apo:,.1f} m above the site"
               + (f" (target {target:,.1f} m)" if target is not None else ""))
        status = Status.OPTIMAL
    return SizingResult(
        status=status, success=success, message=msg, problem_name=problem.name, solve_for="water settings",
        method=method, n_iterations=n_eval, gross_mass_kg=vehicle.gross_mass_kg,
        payload_mass_kg=problem.payload_mass_kg, delta_v_m_s=dv, stages=rows,
        warnings=(WATER_CAUTION, *notes), best={} if success else {"apogee_m": apo}, flight=flight,
    )


def _bar(pressure_pa: float) -> str:
    """A gauge pressure in bar, rounded for messages ("0.34 bar gauge")."""
    return f"{pressure_pa / 1e5:.3g} bar gauge"


def _sentence(text: str) -> str:
    """`text` ending in exactly one period (messages are joined from parts that may end in one)."""
    return text.strip().rstrip(".").rstrip() + "."


def _water_fail(problem, msg, method, n_eval, limits, notes, rejected=None) -> SizingResult:
    hobby: dict[str, Any] = {"kind": "water", "limits": limits, "caution": WATER_CAUTION}
    if rejected:
        hobby["rejected"] = dict(rejected)
    return SizingResult(
        status=Status.INFEASIBLE, success=False, message=msg, problem_name=problem.name,
        solve_for="water settings", method=method, n_iterations=n_eval, gross_mass_kg=math.nan,
        payload_mass_kg=problem.payload_mass_kg, delta_v_m_s=math.nan, stages=(),
        warnings=(WATER_CAUTION, *notes),
        flight={"target_apogee_m": problem.target_apogee_m, "hobby": hobby},
    )
