"""Sizing a multistage vehicle to a flight target with the losses of a simulated flight.

Two targets, one result type:

* `ApogeeTarget`: stage masses sized together with the simulated vertical
  flight (`sizing.optimize.apogee_sizing`);
* `OrbitTarget`: stage masses and the ascent steering programme optimised
  together, with a coast and insertion burn or direct insertion
  (`sizing.optimize.orbit_sizing`).

Both end with one flight of the sized design, with its time history, by the
same code `sizing fly` runs: what the result reports is what the design file
reproduces. Preliminary estimates only: not a flight-safety analysis or a
flight clearance.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from types import MappingProxyType

from sizing.errors import FieldError
from sizing.optimize.apogee_sizing import size_for_apogee
from sizing.optimize.orbit_sizing import OrbitGoal, PathLimits, size_for_orbit
from sizing.physics.flight import AscentProfile, FlightResult, fly_ascent, fly_vertical
from sizing.physics.gravity import circular_speed_m_s
from sizing.physics.vehicle import FlightStageSpec, LaunchSite, Vehicle
from sizing.units import G0_M_S2, R_EARTH_EQ_M

__all__ = ["ApogeeTarget", "OrbitTarget", "PathLimits", "FlightSizingResult", "size_to_target",
           "FLY_OPTIONS_VERTICAL", "FLY_OPTIONS_ASCENT"]

#: Options of the final flight of a sized design, shared with `sizing fly` (so fly reproduces solve).
FLY_OPTIONS_VERTICAL = {"earth": "round", "max_step_s": 0.5}
FLY_OPTIONS_ASCENT = {"max_step_s": 2.0}


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
    """Reach an orbit with an optimised ascent (`sizing.optimize.orbit_sizing`).

    Parameters
    ----------
    altitude_m : float
        Perigee altitude above the equatorial radius [m] (circular orbit when
        `apogee_altitude_m` is None).
    inclination_deg : float, optional
        Orbit inclination [deg]; sets the launch azimuth. None: fly the site's azimuth.
    ascending : bool
        Northbound (True) or southbound launch for the inclination.
    apogee_altitude_m : float, optional
        Apogee altitude [m] of an elliptical target.
    insertion : {"coast", "kick_stage", "direct"}
        How the last stage reaches the orbit (see `OrbitGoal`).
    transfer : {"lightest", "short_coast", "low_transfer"}
        Starting designs of a coasting insertion (see `OrbitGoal`).
    nodes_per_stage : int
        Pitch-programme nodes per upper-stage burn.
    vertical_rise_s, kick_duration_s : float
        First-stage vertical rise and pitch-kick duration [s].
    """

    altitude_m: float
    inclination_deg: float | None = None
    ascending: bool = True
    apogee_altitude_m: float | None = None
    insertion: str = "coast"
    transfer: str = "lightest"
    nodes_per_stage: int = 4
    vertical_rise_s: float = 10.0
    kick_duration_s: float = 10.0

    @property
    def goal(self) -> OrbitGoal:
        ap = self.altitude_m if self.apogee_altitude_m is None else self.apogee_altitude_m
        return OrbitGoal(self.altitude_m, ap, self.inclination_deg, self.ascending, self.insertion, self.transfer)


@dataclass(frozen=True, slots=True)
class FlightSizingResult:
    """Outcome of `size_to_target`. Read `converged` and `message` first.

    Attributes
    ----------
    converged : bool
    message : str
    method : str
        ``"integrated"`` (masses and flight optimised together) or ``"lagrange-line"``
        (the Lagrange split for the flown delta-v, kept when the integrated step failed).
    stage_names : tuple of str
    propellant_mass_kg, structural_mass_kg, stage_mass_kg : tuple of float
        Per stage, bottom first [kg].
    mass_ratios : tuple of float
        Stage mass ratios m0/mf [-].
    stage_delta_v_m_s : tuple of float
        Ideal delta-v per stage [m/s].
    gross_mass_kg, payload_mass_kg : float
    ideal_delta_v_m_s : float
        Total ideal delta-v of the design [m/s].
    target_speed_m_s : float
        Target-equivalent speed: sqrt(2 g0 (h - h_site)) for an apogee, the
        target orbit's speed at its perigee for an orbit [m/s].
    losses_m_s : Mapping[str, float]
        gravity, drag, steering, pressure of the final flight [m/s].
    rotation_bonus_m_s : float
    achieved : Mapping[str, float]
        Apogee: ``apogee_above_site_m``, ``apogee_above_sea_level_m``. Orbit:
        ``perigee_altitude_m``, ``apogee_altitude_m``, ``inclination_deg``,
        ``speed_m_s``, ``flight_path_angle_deg``.
    target_error : float
        Apogee: achieved minus target [m]. Orbit: largest apsis error [m].
    tolerance : float
        Tolerance on `target_error` [m].
    n_iterations : int
        Optimiser iterations.
    n_flights : int
        Flights flown by the sizing (Jacobians included).
    vehicle : Vehicle
    site : LaunchSite
        The site as flown (orbit: the optimised launch azimuth).
    profile : AscentProfile or None
        The optimised steering programme (orbit targets).
    flight : FlightResult
        Final flight, with time history.
    alternatives : tuple of (str, float)
        Shorter stacks sized for comparison: (stages, gross mass [kg]).
    warnings : tuple of str
        Design-review flags and convergence notes.
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
    n_flights: int
    vehicle: Vehicle
    site: LaunchSite
    profile: AscentProfile | None
    flight: FlightResult
    alternatives: tuple[tuple[str, float], ...] = ()
    warnings: tuple[str, ...] = field(default=())
    trade_factors: dict | None = None


def _mass_figures(vehicle: Vehicle):
    """(propellant, structural, stage masses, mass ratios, stage ideal delta-v) of a vehicle."""
    mp = tuple(s.propellant_mass_kg for s in vehicle.stages)
    ms = tuple(s.structural_mass_kg for s in vehicle.stages)
    ratios, dvs = [], []
    for i, s in enumerate(vehicle.stages):
        m0 = vehicle.ignition_mass_kg(i)
        n = m0 / (m0 - s.propellant_mass_kg)
        ratios.append(n)
        dvs.append(s.exhaust_velocity_vac_m_s * math.log(n))
    return mp, ms, tuple(a + b for a, b in zip(mp, ms)), tuple(ratios), tuple(dvs)


def size_to_target(specs: Sequence[FlightStageSpec], payload_mass_kg: float, target: ApogeeTarget | OrbitTarget,
                   site: LaunchSite | None = None, *, tolerance: float | None = None,
                   limits: PathLimits | None = None, gross_mass_kg: float | None = None,
                   max_gross_mass_kg: float | None = None, max_gross_to_payload: float = 1.0e4,
                   payload_diameter_m: float | None = None, staging_delay_s: float = 0.0,
                   acceleration_limit_m_s2: float | None = None, compare_shorter: bool = True) -> FlightSizingResult:
    """Size the stages (and, for an orbit, the steering) so that the simulated flight meets a target.

    Parameters
    ----------
    specs : sequence of FlightStageSpec
        Stages without masses, bottom first.
    payload_mass_kg : float
        Payload [kg], > 0 (the starting guess when `gross_mass_kg` is given).
    target : ApogeeTarget or OrbitTarget
    site : LaunchSite, optional
        Default: sea level, equator, due east, no rail.
    tolerance : float, optional
        Apogee error, or apsis-altitude error for an orbit [m]; default
        max(1 m, 1e-4 of the apogee above the site), 1 km for an orbit.
    limits : PathLimits, optional
        Max-q, max sensed acceleration, max pitch rate (optimisation constraints).
    gross_mass_kg : float, optional
        Maximise the payload for this gross mass [kg].
    max_gross_mass_kg : float, optional
        Gross mass cap [kg].
    max_gross_to_payload : float
        Largest gross-to-payload ratio searched for an apogee [-].
    payload_diameter_m, staging_delay_s : see `Vehicle`.
    acceleration_limit_m_s2 : float, optional
        Review flag in the final flight (and the path limit when `limits` gives none).
    compare_shorter : bool
        Apogee targets: also size each stack with one stage left out.

    Raises
    ------
    FieldError
        Bad specs or a target at or below the launch site.
    InfeasibleProblemError
        An apogee that no split reaches within `max_gross_to_payload`.
    """
    specs = tuple(specs)
    if not specs or not all(isinstance(s, FlightStageSpec) for s in specs):
        raise FieldError("stages", "must be one or more FlightStageSpec.", specs)
    site = site or LaunchSite()
    if not float(payload_mass_kg) > 0:
        raise FieldError("payload_mass_kg", "must be > 0.", payload_mass_kg)
    limits = limits or PathLimits()
    if limits.max_acceleration_m_s2 is None and acceleration_limit_m_s2 is not None:
        limits = replace(limits, max_acceleration_m_s2=acceleration_limit_m_s2)
    cap = max_gross_mass_kg
    if gross_mass_kg is None:  # the minimum gross mass meets a cap or nothing does: size, then check
        max_gross_mass_kg = None
    if isinstance(target, OrbitTarget):
        res = _orbit(specs, float(payload_mass_kg), target, site, tolerance, limits, payload_diameter_m,
                     staging_delay_s, gross_mass_kg, max_gross_mass_kg)
    elif isinstance(target, ApogeeTarget):
        res = _apogee(specs, float(payload_mass_kg), target, site, tolerance, limits, gross_mass_kg,
                      max_gross_mass_kg, max_gross_to_payload, payload_diameter_m, staging_delay_s,
                      compare_shorter)
    else:
        raise FieldError("mission", "target must be an ApogeeTarget or an OrbitTarget.", target)
    return res if gross_mass_kg is not None or cap is None else _check_gross_cap(res, float(cap))


def _check_gross_cap(res: FlightSizingResult, cap_kg: float) -> FlightSizingResult:
    """A minimum-gross-mass design above `max_gross_mass` fails with the cap named (the design stays as the
    best reachable)."""
    if not res.converged or res.gross_mass_kg <= cap_kg * (1.0 + 1e-9):
        return res
    msg = (f"mission.max_gross_mass: {cap_kg:,.0f} kg is below the lightest design that reaches the target, "
           f"{res.gross_mass_kg:,.0f} kg; raise the cap, or lower the payload or the target, or improve Isp, "
           "structure or thrust-to-weight.")
    return replace(res, converged=False, message=msg, warnings=res.warnings + (msg,), trade_factors=None)


def _apogee(specs, payload, target, site, tolerance, limits, gross, gross_cap, ratio_cap, dia, delay,
            compare) -> FlightSizingResult:
    d = size_for_apogee(specs, payload, target.apogee_m, site, earth=target.earth, tolerance_m=tolerance,
                        max_gross_to_payload=ratio_cap, max_dynamic_pressure_pa=limits.max_dynamic_pressure_pa,
                        max_acceleration_m_s2=limits.max_acceleration_m_s2, gross_mass_kg=gross,
                        max_gross_mass_kg=gross_cap, payload_diameter_m=dia, staging_delay_s=delay,
                        compare_shorter=compare)
    tol = max(1.0, 1e-4 * (target.apogee_m - site.altitude_m)) if tolerance is None else float(tolerance)
    fr = fly_vertical(d.vehicle, site, acceleration_limit_m_s2=limits.max_acceleration_m_s2,
                      **{**FLY_OPTIONS_VERTICAL, "earth": target.earth})
    err = fr.apogee_m - target.apogee_m
    over = path_limit_violations(fr, limits, ascent=False)
    ok = abs(err) <= tol and not over
    achieved = {"apogee_above_site_m": fr.apogee_m - site.altitude_m, "apogee_above_sea_level_m": fr.apogee_m}
    v_t = math.sqrt(2.0 * G0_M_S2 * (target.apogee_m - site.altitude_m))
    method = "integrated" if "kept" not in d.message else "lagrange-line"
    if ok:
        msg = f"target met within {tol:g} m after {d.n_flights} flights ({method})."
    elif abs(err) <= tol:
        msg = f"apogee reached but {'; '.join(over)} (after {d.n_flights} flights)."
    else:
        msg = f"target not met within {tol:g} m after {d.n_flights} flights; error {err:.3g} m."
        msg += "".join(f" Also {o}." for o in over)
    notes = [w for w in d.warnings if "pays" not in w and "pay for" not in w] + stage_notes(fr, d.vehicle, orbit=False)
    return _result(ok, msg, method, d.vehicle, site, None, fr, v_t, achieved, err, tol, d.n_iterations,
                   d.n_flights, d.alternatives, notes + ([] if ok else [msg]), d.trade_factors)


def _orbit(specs, payload, target, site, tolerance, limits, dia, delay, gross, gross_cap) -> FlightSizingResult:
    goal = target.goal
    d = size_for_orbit(specs, payload, goal, site, limits=limits, nodes_per_stage=target.nodes_per_stage,
                       vertical_rise_s=target.vertical_rise_s, kick_duration_s=target.kick_duration_s,
                       payload_diameter_m=dia, staging_delay_s=delay, gross_mass_kg=gross,
                       max_gross_mass_kg=gross_cap)
    fr = fly_ascent(d.vehicle, d.site, d.profile, acceleration_limit_m_s2=limits.max_acceleration_m_s2,
                    **FLY_OPTIONS_ASCENT)
    tol = 1000.0 if tolerance is None else float(tolerance)
    o = fr.orbit
    err = max(abs(o.perigee_alt_m - goal.perigee_altitude_m), abs(o.apogee_alt_m - goal.apogee_altitude_m))
    warnings = []
    if goal.inclination_deg is not None and abs(o.inclination_deg - goal.inclination_deg) > 0.05:
        warnings.append(f"inclination reached {o.inclination_deg:.3f} deg is more than 0.05 deg from the target "
                        f"{goal.inclination_deg:g} deg.")
    over = path_limit_violations(fr, limits, ascent=True)
    ok = d.success and err <= tol and fr.terminated_by == "burnout" and not warnings and not over
    achieved = {"perigee_altitude_m": o.perigee_alt_m, "apogee_altitude_m": o.apogee_alt_m,
                "inclination_deg": o.inclination_deg, "speed_m_s": o.speed_m_s,
                "flight_path_angle_deg": o.flight_path_angle_deg}
    r_p, r_a = R_EARTH_EQ_M + goal.perigee_altitude_m, R_EARTH_EQ_M + goal.apogee_altitude_m
    v_t = circular_speed_m_s(goal.perigee_altitude_m) * math.sqrt(2.0 * r_a / (r_p + r_a))  # vis-viva at perigee
    if ok:
        msg = f"orbit met within {tol:g} m after {d.n_flights} flights ({d.n_iterations} optimiser iterations)."
    elif over and err <= tol:
        msg = f"orbit reached but {'; '.join(over)} (after {d.n_flights} flights)."
    else:
        msg = (f"orbit not met within {tol:g} m (apsis error {err:,.0f} m) after {d.n_flights} flights: "
               f"{d.message}. Raise thrust-to-weight or Isp, or lower the target.")
        msg += "".join(f" Also {o}." for o in over)
    warnings += list(d.warnings) + stage_notes(fr, d.vehicle, orbit=True)
    return _result(ok, msg, "integrated", d.vehicle, d.site, d.profile, fr, v_t, achieved, err, tol,
                   d.n_iterations, d.n_flights, (), warnings + ([] if ok else [msg]), d.trade_factors)


#: Gravity loss above which an orbit review note explains where it comes from [m/s] (typical launchers lose
#: about 1.0-1.5 km/s to gravity; Griffin & French, Space Vehicle Design, loss table, from memory).
HIGH_GRAVITY_LOSS_M_S = 1500.0
#: Drag loss as a share of the flown ideal delta-v above which a review note is written [-].
HIGH_DRAG_SHARE = 0.25
#: Max-q above which a review note asks for a loads check [Pa].
HIGH_MAX_Q_PA = 100_000.0

#: Relative excess over a path limit reported as a violation [-] (the optimiser holds limits to ~1e-6).
PATH_LIMIT_SLACK = 1e-3


def path_limit_violations(fr: FlightResult, limits: PathLimits, *, ascent: bool) -> list[str]:
    """One phrase per path limit the flown design exceeds, naming the problem key and what to change."""
    out = []
    loft = ", loft the ascent (longer vertical_rise_time)" if ascent else ""
    q, q_lim = fr.max_dynamic_pressure_pa, limits.max_dynamic_pressure_pa
    if q_lim is not None and q > q_lim * (1.0 + PATH_LIMIT_SLACK):
        out.append(f"mission.max_dynamic_pressure: max-q {q:,.0f} Pa is above the limit {q_lim:,.0f} Pa and the "
                   f"optimiser could not {'steer or ' if ascent else ''}size below it; lower the first stage's "
                   f"thrust-to-weight{loft} or raise the limit")
    a, a_lim = fr.max_acceleration_m_s2, limits.max_acceleration_m_s2
    if a_lim is not None and a > a_lim * (1.0 + PATH_LIMIT_SLACK):
        out.append(f"mission.max_acceleration: {a:,.1f} m/s^2 is above the limit {a_lim:,.1f} m/s^2; lower the "
                   "upper stages' thrust-to-weight or raise the limit")
    return out


def stage_notes(fr: FlightResult, vehicle: Vehicle, *, orbit: bool) -> list[str]:
    """Review notes on each stage's share: stages that slow the vehicle, and where a high gravity loss comes from.

    A stage whose interval loses more to drag and gravity than its ideal delta-v
    (or that gives under 2 % of the ideal delta-v) does not pay for itself.
    """
    notes = []
    total = sum(b.ideal_delta_v_m_s for b in fr.burnouts) or 1.0
    for b, st in zip(fr.burnouts, vehicle.stages):
        lost = b.losses_m_s["gravity"] + b.losses_m_s["drag"]
        if lost >= b.ideal_delta_v_m_s or b.ideal_delta_v_m_s < 0.02 * total:
            notes.append(f"stage {b.stage!r} gives {b.ideal_delta_v_m_s:,.0f} m/s of ideal delta-v but its interval "
                         f"loses {lost:,.0f} m/s to gravity and drag: it does not pay for itself; size the stack "
                         "without it.")
    grav = fr.losses_m_s["gravity"]
    if orbit and grav > HIGH_GRAVITY_LOSS_M_S:
        worst = max(zip(fr.burnouts, vehicle.stages), key=lambda p: p[0].losses_m_s["gravity"])
        b, st = worst
        i = vehicle.stages.index(st)
        tw = st.thrust_vac_n / (vehicle.ignition_mass_kg(i) * st.g0_m_s2)
        when = "at ignition (vacuum thrust)"
        if i == 0 and st.isp_sl_s:  # the first stage's thrust-to-weight is stated at lift-off, sea-level thrust
            tw, when = tw * st.isp_sl_s / st.isp_vac_s, "at lift-off (sea-level thrust)"
        coast = fr.coast_gravity_loss_m_s
        on_coast = (f" ({coast:,.0f} m/s of it on the insertion coast, speed traded for height)"
                    if coast >= 0.5 else "")
        notes.append(f"gravity loss {grav:,.0f} m/s{on_coast} is above {HIGH_GRAVITY_LOSS_M_S:,.0f} m/s, the upper "
                     f"end of the 1.0-1.5 km/s typical of launchers (Griffin & French, Space Vehicle Design, from "
                     f"memory): most of it, {b.losses_m_s['gravity']:,.0f} m/s, is lost while stage {st.name!r} burns "
                     f"{st.burn_time_s:,.0f} s at thrust-to-weight {tw:.2f} {when}; more thrust on that stage "
                     "shortens its burn.")
    drag, ideal = fr.losses_m_s["drag"], fr.ideal_delta_v_m_s
    if ideal > 0 and drag > HIGH_DRAG_SHARE * ideal:
        notes.append(f"drag loss {drag:,.0f} m/s is {100 * drag / ideal:.0f} % of the ideal delta-v flown (above "
                     f"{100 * HIGH_DRAG_SHARE:.0f} %, common practice, no source): a slimmer airframe, a lower drag "
                     "coefficient or less thrust low in the atmosphere would save propellant.")
    q = fr.max_dynamic_pressure_pa
    if q > HIGH_MAX_Q_PA:
        notes.append(f"max-q {q / 1000:,.0f} kPa at {fr.max_q_altitude_m:,.0f} m above sea level (above "
                     f"{HIGH_MAX_Q_PA / 1000:.0f} kPa, common practice, no source): check fin flutter, airframe "
                     "and fairing loads at this pressure.")
    return notes


def _result(ok, msg, method, vehicle, site, profile, fr, v_t, achieved, err, tol, n_it, n_fl, alternatives,
            warnings, trade_factors=None) -> FlightSizingResult:
    mp, ms, stage, ratios, dvs = _mass_figures(vehicle)
    return FlightSizingResult(
        converged=ok, message=msg, method=method, stage_names=tuple(s.name for s in vehicle.stages),
        propellant_mass_kg=mp, structural_mass_kg=ms, stage_mass_kg=stage, mass_ratios=ratios,
        stage_delta_v_m_s=dvs, gross_mass_kg=vehicle.gross_mass_kg, payload_mass_kg=vehicle.payload_mass_kg,
        ideal_delta_v_m_s=sum(dvs), target_speed_m_s=v_t, losses_m_s=fr.losses_m_s,
        rotation_bonus_m_s=fr.rotation_bonus_m_s, achieved=MappingProxyType(dict(achieved)), target_error=err,
        tolerance=tol, n_iterations=n_it, n_flights=n_fl, vehicle=vehicle, site=site, profile=profile, flight=fr,
        alternatives=tuple(alternatives), warnings=tuple(dict.fromkeys(list(fr.warnings) + list(warnings))),
        trade_factors=trade_factors)
