"""Sizing a multistage vehicle to a flight target with simulated losses.

The optimal mass split (Lagrange multiplier method,
`sizing.physics.staging.optimal_mass_ratios`) needs an ideal delta-v. A flight
target (an apogee, a circular orbit) does not give one directly: the losses
depend on the vehicle. `size_to_target` closes that loop:

1. Fixed point. Start from delta-v_0 = target-equivalent speed + guessed
   losses. At iteration k: split the mass optimally for delta-v_k, build the
   vehicle (thrust from thrust-to-weight at ignition), fly it, and measure the
   achieved target-equivalent speed v_k. The effective loss is
   L_k = delta-v_k - v_k (gravity + drag + steering + pressure, minus the
   rotation bonus for an orbit), and the next ideal delta-v is
   delta-v_{k+1} = v_target + L_k. From the second iterate on, the update is
   accelerated with the secant slope d v / d delta-v of the last two
   iterates (when that slope lies in (0.2, 5)); with slope 1 it is the plain
   fixed point. Stop when the target is met within the tolerance.
2. Fallback. If the fixed point stalls (error not shrinking) or runs out of
   iterations, the target error is a scalar function of the ideal delta-v:
   a bracket is built from the iterates and closed with scipy.optimize.brentq.

Target-equivalent speeds:

* apogee: v_eq(h) = sqrt(2 g0 (h - h_site)), the launch speed that coasts to h
  in a vacuum with constant gravity g0 (a monotone re-labelling of the
  apogee; the iteration then adds speed, not altitude);
* circular orbit at altitude h: the inertial burnout speed, to be equal to the
  circular speed sqrt(GM/(R + h)). The ascent is steered so that burnout is
  at h with zero flight-path angle (`sizing.optimize.ascent.target_burnout`).

An unreachable target (beyond what the stages give at a gross-to-payload
mass ratio of `max_gross_to_payload`) raises `InfeasibleProblemError` with the
best achieved value in its message and `.best`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from types import MappingProxyType

from sizing.errors import MSG_TARGET_UNREACHABLE, FieldError, InfeasibleProblemError
from sizing.physics.gravity import circular_speed_m_s, launch_azimuth_deg
from sizing.physics.rocket import stack_masses
from sizing.physics.staging import (
    optimal_mass_ratios,
    optimal_mass_ratios_for_growth,
)
from sizing.optimize.ascent import target_burnout
from sizing.physics.flight import AscentProfile, FlightResult, fly_vertical
from sizing.physics.vehicle import FlightStageSpec, LaunchSite, Vehicle, build_vehicle
from sizing.units import G0_M_S2

__all__ = [
    "ApogeeTarget",
    "OrbitTarget",
    "SizingIteration",
    "FlightSizingResult",
    "size_to_target",
]


@dataclass(frozen=True, slots=True)
class ApogeeTarget:
    """Reach an apogee with a near-vertical flight (`fly_vertical`).

    Parameters
    ----------
    apogee_m : float
        Apogee altitude above mean sea level [m]; must exceed the site altitude.
    earth : {"round", "flat"}
        Earth model of the simulation.
    """

    apogee_m: float
    earth: str = "round"


@dataclass(frozen=True, slots=True)
class OrbitTarget:
    """Reach a circular orbit with a gravity-turn ascent (`fly_ascent`).

    Parameters
    ----------
    altitude_m : float
        Circular orbit altitude [m], > site altitude.
    inclination_deg : float, optional
        Orbit inclination [deg]; sets the launch azimuth (northbound when
        `ascending`). Default: fly the site's azimuth.
    ascending : bool
        Northbound (True) or southbound launch for the inclination.
    profile : AscentProfile, optional
        Steering programme; its target altitude is set from `altitude_m`.
    """

    altitude_m: float
    inclination_deg: float | None = None
    ascending: bool = True
    profile: AscentProfile | None = None


@dataclass(frozen=True, slots=True)
class SizingIteration:
    """One flown candidate.

    Attributes
    ----------
    ideal_delta_v_m_s : float
        Ideal delta-v the mass split was made for [m/s].
    achieved_speed_m_s : float
        Achieved target-equivalent speed [m/s] (nan if the flight failed).
    target_error : float
        Achieved minus target, in the target's unit (apogee [m]; orbit:
        burnout speed minus circular speed [m/s]).
    gross_mass_kg : float
        Gross liftoff mass of the candidate [kg].
    method : str
        ``"fixed_point"`` or ``"brentq"``.
    """

    ideal_delta_v_m_s: float
    achieved_speed_m_s: float
    target_error: float
    gross_mass_kg: float
    method: str


@dataclass(frozen=True, slots=True)
class FlightSizingResult:
    """Outcome of `size_to_target`. Read `converged` and `message` first.

    Attributes
    ----------
    converged : bool
    message : str
    method : str
        Last method used: ``"fixed_point"`` or ``"brentq"``.
    stage_names : tuple of str
    propellant_mass_kg, structural_mass_kg, stage_mass_kg : tuple of float
        Per stage, bottom first [kg].
    mass_ratios : tuple of float
        Optimal stage mass ratios m0/mf [-].
    stage_delta_v_m_s : tuple of float
        Ideal delta-v per stage [m/s].
    gross_mass_kg, payload_mass_kg : float
        [kg]
    ideal_delta_v_m_s : float
        Converged total ideal delta-v [m/s].
    target_speed_m_s : float
        Target-equivalent speed (v_eq of the apogee, or circular speed) [m/s].
    losses_m_s : Mapping[str, float]
        gravity, drag, steering, pressure of the final flight [m/s].
    rotation_bonus_m_s : float
        [m/s], see `sizing.physics.flight`.
    achieved : Mapping[str, float]
        ``apogee_m``, or ``perigee_alt_m``, ``apogee_alt_m``, ``speed_m_s``,
        ``flight_path_angle_deg``, ``inclination_deg``.
    target_error : float
        Achieved minus target (apogee [m] or speed [m/s]).
    tolerance : float
        Tolerance on `target_error` (same unit).
    n_iterations : int
        Flights flown by the outer loop.
    history : tuple of SizingIteration
    vehicle : Vehicle
    flight : FlightResult
        Final flight, with time history.
    warnings : tuple of str
        Design-review flags from the final flight and convergence notes.
    """

    converged: bool
    message: str
    method: str
    stage_names: tuple[str, ...]
    propellant_mass_kg: tuple[float, ...]
    structural_mass_kg: tuple[float, ...]
    stage_mass_kg: tuple[float, ...]
    mass_ratios: tuple[float, ...]
    stage_delta_v_m_s: tuple[float, ...]
    gross_mass_kg: float
    payload_mass_kg: float
    ideal_delta_v_m_s: float
    target_speed_m_s: float
    losses_m_s: Mapping[str, float]
    rotation_bonus_m_s: float
    achieved: Mapping[str, float]
    target_error: float
    tolerance: float
    n_iterations: int
    history: tuple[SizingIteration, ...]
    vehicle: Vehicle
    flight: FlightResult
    warnings: tuple[str, ...]


class _Candidate:
    __slots__ = ("dv", "vehicle", "flight", "speed", "error", "ratios", "masses", "ok")


def size_to_target(
    specs: Sequence[FlightStageSpec],
    payload_mass_kg: float,
    target: ApogeeTarget | OrbitTarget,
    site: LaunchSite | None = None,
    *,
    tolerance: float | None = None,
    max_iterations: int = 12,
    initial_loss_m_s: float | None = None,
    max_gross_to_payload: float = 1.0e4,
    payload_diameter_m: float | None = None,
    staging_delay_s: float = 0.0,
    acceleration_limit_m_s2: float | None = None,
) -> FlightSizingResult:
    """Size the stages so that the simulated flight meets a target.

    Parameters
    ----------
    specs : sequence of FlightStageSpec
        Stages without masses, bottom first.
    payload_mass_kg : float
        Payload [kg], > 0.
    target : ApogeeTarget or OrbitTarget
    site : LaunchSite, optional
        Default: sea level, equator, due east, no rail.
    tolerance : float, optional
        Apogee target: |apogee error| [m], default max(1 m, 1e-4 (h - h_site)).
        Orbit target: |burnout speed - circular speed| [m/s], default 0.5 m/s.
    max_iterations : int
        Fixed-point iterations before the brentq fallback; the fallback gets
        as many again.
    initial_loss_m_s : float, optional
        First loss guess [m/s]; default 1500 m/s for orbit (published typical
        1.5-2 km/s, check-values section 3) and 0.3 v_eq for an apogee.
    max_gross_to_payload : float
        Largest gross-to-payload mass ratio searched [-].
    payload_diameter_m, staging_delay_s : see `Vehicle`.
    acceleration_limit_m_s2 : float, optional
        Passed to the flight (warning when exceeded).

    Returns
    -------
    FlightSizingResult

    Raises
    ------
    FieldError
        Bad specs, a target at or below the launch site, or first-stage
        thrust-to-weight <= 1.
    InfeasibleProblemError
        When the target cannot be reached within `max_gross_to_payload`;
        ``.best`` holds the best achieved value and its ideal delta-v.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014,
       Sec. 11.6 (optimal staging), Sec. 11.2-11.3 (launch losses).
    .. [2] R. P. Brent, Algorithms for Minimization without Derivatives, 1973
       (scipy.optimize.brentq).
    """
    specs = tuple(specs)
    if not specs or not all(isinstance(s, FlightStageSpec) for s in specs):
        raise FieldError("stages", "must be one or more FlightStageSpec.", specs)
    site = site or LaunchSite()
    payload = float(payload_mass_kg)
    if not payload > 0:
        raise FieldError("payload_mass_kg", "must be > 0.", payload_mass_kg)
    c = [s.exhaust_velocity_vac_m_s for s in specs]
    eps = [s.structural_coefficient for s in specs]
    dv_cap = optimal_mass_ratios_for_growth(c, eps, math.log(max_gross_to_payload)).delta_v_m_s

    is_orbit = isinstance(target, OrbitTarget)
    profile = None
    if is_orbit:
        h_t = float(target.altitude_m)
        if not h_t > site.altitude_m + 50e3:
            raise FieldError(
                "mission.orbit_altitude",
                f"must be above the launch site by more than 50 km "
                f"(site at {site.altitude_m:g} m).",
                target.altitude_m,
            )
        v_target = circular_speed_m_s(h_t)
        if target.inclination_deg is not None:
            az = launch_azimuth_deg(
                site.latitude_deg, target.inclination_deg, orbit_speed_m_s=v_target,
                ascending=target.ascending, altitude_m=site.altitude_m,
            )
            az_plane = launch_azimuth_deg(
                site.latitude_deg, target.inclination_deg, ascending=target.ascending,
            )
            site = replace(site, azimuth_deg=az)
            profile = replace(target.profile or AscentProfile(),
                              plane_azimuth_deg=az_plane)
        else:
            profile = target.profile or AscentProfile()
        tol = 0.5 if tolerance is None else float(tolerance)
        loss0 = 1500.0 if initial_loss_m_s is None else float(initial_loss_m_s)
        from sizing.physics.gravity import site_rotation_speed_m_s

        bonus0 = site_rotation_speed_m_s(site.latitude_deg, site.altitude_m) * math.sin(
            math.radians(site.azimuth_deg)
        )
        dv0 = v_target + loss0 - bonus0
        target_label = "mission.orbit_altitude"
    elif isinstance(target, ApogeeTarget):
        h_t = float(target.apogee_m)
        if not h_t > site.altitude_m:
            raise FieldError(
                "mission.apogee",
                f"must be above the launch site altitude ({site.altitude_m:g} m).",
                target.apogee_m,
            )
        v_target = math.sqrt(2.0 * G0_M_S2 * (h_t - site.altitude_m))
        tol = max(1.0, 1e-4 * (h_t - site.altitude_m)) if tolerance is None else float(tolerance)
        loss0 = 0.3 * v_target if initial_loss_m_s is None else float(initial_loss_m_s)
        dv0 = v_target + loss0
        target_label = "mission.apogee"
    else:
        raise FieldError("mission", "target must be an ApogeeTarget or an OrbitTarget.", target)

    def v_eq(h: float) -> float:
        return math.sqrt(2.0 * G0_M_S2 * max(0.0, h - site.altitude_m))

    kick_state = {"profile": profile, "optimized": False}

    memo: dict[float, _Candidate] = {}

    def fly(dv: float, *, history: bool = False) -> _Candidate:
        if not history and dv in memo:
            return memo[dv]
        cand = _Candidate()
        if not history:
            memo[dv] = cand
        cand.dv = dv
        sol = optimal_mass_ratios(c, eps, dv)
        m = stack_masses(sol.mass_ratios, eps, payload)
        mp = [max(float(x), 1e-9 * payload) for x in m["propellant_mass_kg"]]
        ms = [max(float(x), 1e-9 * payload) for x in m["structural_mass_kg"]]
        cand.ratios = sol.mass_ratios
        cand.masses = (mp, ms)
        veh = build_vehicle(specs, mp, ms, payload, payload_diameter_m=payload_diameter_m,
                            staging_delay_s=staging_delay_s)
        cand.vehicle = veh
        if is_orbit:
            p = kick_state["profile"]
            res = target_burnout(veh, site, p, h_t, record_history=history,
                                 acceleration_limit_m_s2=acceleration_limit_m_s2, optimize_kick=True)
            ra, rg = res.targeting_residual
            cand.ok = res.terminated_by == "burnout" and abs(ra) < 10.0 and abs(rg) < 0.01
            if cand.ok:
                kick_state["profile"] = res.ascent_profile
                kick_state["optimized"] = True
            cand.speed = res.final_inertial_speed_m_s if cand.ok else math.nan
            cand.error = cand.speed - v_target if cand.ok else math.nan
        else:
            res = fly_vertical(veh, site, earth=target.earth, record_history=history,
                               acceleration_limit_m_s2=acceleration_limit_m_s2)
            cand.ok = True
            cand.speed = v_eq(res.apogee_m)
            cand.error = res.apogee_m - h_t
        cand.flight = res
        return cand

    hist: list[SizingIteration] = []
    cands: list[_Candidate] = []

    def record(cand: _Candidate, method: str) -> None:
        cands.append(cand)
        hist.append(SizingIteration(cand.dv, cand.speed, cand.error, cand.vehicle.gross_mass_kg, method))

    def met(cand: _Candidate) -> bool:
        return cand.ok and abs(cand.error) <= tol

    def best_so_far() -> _Candidate | None:
        good = [x for x in cands if x.ok]
        return max(good, key=lambda x: x.speed) if good else None

    def infeasible() -> InfeasibleProblemError:
        b = best_so_far()
        if is_orbit:
            best = {"ideal_delta_v_m_s": b.dv if b else math.nan,
                    "speed_m_s": b.speed if b else math.nan,
                    "circular_speed_m_s": v_target}
            got = f"best burnout speed {b.speed:.1f} m/s" if b else "no candidate reached the altitude"
            what = f"{h_t:g} m circular orbit (needs {v_target:.1f} m/s)"
        else:
            best = {"ideal_delta_v_m_s": b.dv if b else math.nan,
                    "apogee_m": b.flight.apogee_m if b else math.nan}
            got = f"best apogee {b.flight.apogee_m:.1f} m" if b else "no candidate flew"
            what = f"apogee {h_t:g} m"
        dv_txt = f" at ideal delta-v {b.dv:.1f} m/s" if b else ""
        return InfeasibleProblemError(
            f"{target_label}: {what} {MSG_TARGET_UNREACHABLE}; {got}{dv_txt} "
            f"(searched up to gross/payload = {max_gross_to_payload:g}). "
            "Raise Isp, lower structural coefficients, add a stage or lower the target.",
            best,
        )

    # --- fixed point ------------------------------------------------------
    method = "fixed_point"
    dv = min(dv0, dv_cap)
    done = None
    stall = 0
    prev_err = math.inf
    for _ in range(max_iterations):
        cand = fly(dv)
        record(cand, "fixed_point")
        if met(cand):
            done = cand
            break
        if not cand.ok:
            break
        err = abs(cand.error)
        stall = stall + 1 if err > 0.5 * prev_err else 0
        prev_err = err
        if stall >= 2:
            break
        dv_new = v_target + (cand.dv - cand.speed)
        if len(cands) >= 2 and cands[-2].ok:
            # secant acceleration of the same update, when the slope is sane
            a, b = cands[-2], cand
            slope = (b.speed - a.speed) / (b.dv - a.dv) if b.dv != a.dv else 0.0
            if 0.2 < slope < 5.0:
                dv_new = b.dv + (v_target - b.speed) / slope
        if dv_new >= dv_cap:
            if cand.dv >= dv_cap * (1 - 1e-9):
                raise infeasible()
            dv_new = dv_cap
        dv = max(dv_new, 1.0)

    # --- brentq fallback --------------------------------------------------
    if done is None:
        from scipy.optimize import brentq

        method = "brentq"
        lo = max((x for x in cands if x.ok and x.error < 0), key=lambda x: x.dv, default=None)
        hi = min((x for x in cands if x.ok and x.error > 0), key=lambda x: x.dv, default=None)
        # expand to a bracket
        n_extra = 0
        while (lo is None or hi is None) and n_extra < max_iterations:
            n_extra += 1
            if hi is None:
                base = lo.dv if lo is not None else dv
                step = max(200.0, 2.0 * abs(lo.error if lo is not None and is_orbit else 0.0))
                if lo is not None and not is_orbit:
                    step = max(200.0, 2.0 * (v_target - lo.speed))
                trial = min(base + step, dv_cap)
                if lo is not None and lo.dv >= dv_cap * (1 - 1e-9):
                    raise infeasible()
            else:
                trial = max(hi.dv - max(200.0, 2.0 * abs(hi.speed - v_target)), 1.0)
            cand = fly(trial)
            record(cand, "brentq")
            if met(cand):
                done = cand
                break
            if not cand.ok or cand.error < 0:
                # a failed ascent (altitude not reached) counts as short of the target
                lo = cand
            else:
                hi = cand
        if done is None:
            if lo is None or hi is None:
                raise infeasible()
            store: dict[float, _Candidate] = {}

            def f(x: float) -> float:
                cnd = fly(x)
                record(cnd, "brentq")
                store[x] = cnd
                if not cnd.ok:
                    return -1e6
                return cnd.speed - v_target if is_orbit else cnd.flight.apogee_m - h_t

            try:
                x = brentq(f, lo.dv, hi.dv, xtol=1e-3, rtol=1e-10, maxiter=max_iterations * 3)
                done = store.get(x) or fly(x)
            except (ValueError, RuntimeError):
                pass

    converged = done is not None and met(done)
    final_c = done if done is not None else (best_so_far() or cands[-1])
    final = fly(final_c.dv, history=True)
    flight = final.flight
    mp, ms = final.masses
    stage_mass = tuple(a + b for a, b in zip(mp, ms))
    stage_dv = tuple(ci * math.log(n) for ci, n in zip(c, final.ratios))
    if is_orbit:
        o = flight.orbit
        achieved = {
            "perigee_alt_m": o.perigee_alt_m, "apogee_alt_m": o.apogee_alt_m,
            "speed_m_s": o.speed_m_s, "flight_path_angle_deg": o.flight_path_angle_deg,
            "inclination_deg": o.inclination_deg,
        }
    else:
        achieved = {"apogee_m": flight.apogee_m}
    warns = list(flight.warnings)
    if converged:
        msg = (f"target met within {tol:g} {'m/s' if is_orbit else 'm'} after "
               f"{len(hist)} flights ({method}).")
    else:
        msg = (f"target not met within {tol:g} {'m/s' if is_orbit else 'm'} after "
               f"{len(hist)} flights; error {final.error:.3g}. Raise max_iterations or loosen the tolerance.")
        warns.append(msg)
    return FlightSizingResult(
        converged=converged,
        message=msg,
        method=method,
        stage_names=tuple(s.name for s in specs),
        propellant_mass_kg=tuple(mp),
        structural_mass_kg=tuple(ms),
        stage_mass_kg=stage_mass,
        mass_ratios=tuple(final.ratios),
        stage_delta_v_m_s=stage_dv,
        gross_mass_kg=final.vehicle.gross_mass_kg,
        payload_mass_kg=payload,
        ideal_delta_v_m_s=final.dv,
        target_speed_m_s=v_target,
        losses_m_s=flight.losses_m_s,
        rotation_bonus_m_s=flight.rotation_bonus_m_s,
        achieved=MappingProxyType(achieved),
        target_error=final.error,
        tolerance=tol,
        n_iterations=len(hist),
        history=tuple(hist),
        vehicle=final.vehicle,
        flight=flight,
        warnings=tuple(warns),
    )
