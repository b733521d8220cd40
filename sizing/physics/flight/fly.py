"""Public flight entry points: `fly_vertical`, `fly_ascent`, `simulate`, `fly_many`.

Each builds the kernel's arrays (`setup.prepare_flight`), runs the compiled
loop (`kernel.run_flight`) and assembles a `FlightResult` with the
design-review flags a reviewer would raise (never raised as errors). These are
preliminary estimates only: not a flight-safety analysis or a flight
clearance. Follow local law, the applicable safety code, range and aviation
rules and licensed practice.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import TYPE_CHECKING

import numpy as np

from sizing.errors import FieldError
from sizing.physics.flight import layout as L
from sizing.physics.flight.kernel import run_flight, run_many
from sizing.physics.flight.profiles import AscentProfile
from sizing.physics.flight.results import FlightResult, assemble
from sizing.physics.flight.setup import FlightSetup, Wind, prepare_flight
from sizing.physics.vehicle import LaunchSite, Vehicle
from sizing.physics.wind import WindProfile
from sizing.units import G0_M_S2

if TYPE_CHECKING:
    from sizing.physics.airframe import Configuration

__all__ = [
    "HOBBY_MIN_LIFTOFF_TW", "DTEG_MIN_RAIL_EXIT_SPEED_M_S", "HOBBY_MIN_RAIL_EXIT_SPEED_M_S",
    "simulate", "fly_vertical", "fly_ascent", "fly_many",
]

#: Minimum liftoff thrust-to-weight, Spaceport America Cup DTEG req. 5.18.2 (also the common hobby rule of thumb).
HOBBY_MIN_LIFTOFF_TW = 5.0
#: Minimum rail-exit speed [m/s], 100 ft/s, Spaceport America Cup DTEG 10.2.1.
DTEG_MIN_RAIL_EXIT_SPEED_M_S = 30.48
#: Common hobby practice for rail-exit speed [m/s] (about 50 ft/s; from memory).
HOBBY_MIN_RAIL_EXIT_SPEED_M_S = 15.0


def _review_flags(res: FlightResult, setup: FlightSetup, *, vertical: bool, rail_length_m: float,
                  acceleration_limit_m_s2: float | None, went_below: bool) -> list[str]:
    warn = list(setup.warnings)
    tw = res.liftoff_thrust_to_weight
    if vertical and tw < HOBBY_MIN_LIFTOFF_TW:
        warn.append(f"liftoff thrust-to-weight {tw:.2f} is below {HOBBY_MIN_LIFTOFF_TW:g} "
                    "(Spaceport America Cup DTEG req. 5.18.2; also common hobby practice).")
    v = res.rail_exit_speed_m_s
    if vertical and rail_length_m > 0:
        if not math.isfinite(v):
            warn.append("the vehicle never left the rail.")
        elif v < HOBBY_MIN_RAIL_EXIT_SPEED_M_S:
            warn.append(f"rail-exit speed {v:.1f} m/s is below {HOBBY_MIN_RAIL_EXIT_SPEED_M_S:g} m/s "
                        "(common hobby practice, from memory) and below "
                        f"{DTEG_MIN_RAIL_EXIT_SPEED_M_S:g} m/s (Spaceport America Cup DTEG 10.2.1).")
        elif v < DTEG_MIN_RAIL_EXIT_SPEED_M_S:
            warn.append(f"rail-exit speed {v:.1f} m/s is below {DTEG_MIN_RAIL_EXIT_SPEED_M_S:g} m/s "
                        "(100 ft/s, Spaceport America Cup DTEG 10.2.1).")
    if not vertical and (went_below or res.terminated_by == "impact"):
        warn.append("the vehicle fell back to the ground before final burnout.")
    a = res.max_acceleration_m_s2
    if acceleration_limit_m_s2 is not None and a > acceleration_limit_m_s2:
        warn.append(f"max acceleration {a:.1f} m/s^2 ({a / G0_M_S2:.1f} g0) exceeds the stated "
                    f"limit {acceleration_limit_m_s2:.1f} m/s^2.")
    return warn


def _finish(setup: FlightSetup, kernel_out, vehicle: Vehicle, site: LaunchSite, *, profile: str,
            ascent: AscentProfile | None, acceleration_limit_m_s2: float | None) -> FlightResult:
    from dataclasses import replace

    res = assemble(frame=setup.frame, profile=profile, stage_names=[s.name for s in vehicle.stages],
                   kernel_out=kernel_out, site_altitude_m=site.altitude_m,
                   liftoff_thrust_to_weight=setup.liftoff_thrust_to_weight, ascent=ascent, warnings=[],
                   v_inertial0_m_s=setup.v_inertial0_m_s)
    went_below = bool(kernel_out[0][11])
    vertical = profile == "vertical"
    if not vertical and went_below:
        res = replace(res, terminated_by="impact")
    flags = _review_flags(res, setup, vertical=vertical, rail_length_m=site.rail_length_m,
                          acceleration_limit_m_s2=acceleration_limit_m_s2, went_below=went_below)
    return replace(res, warnings=tuple(flags))


def simulate(vehicle: Vehicle, site: LaunchSite, *, profile: str, ascent: AscentProfile | None = None,
             earth: str = "round", rotating: bool = False, with_drag: bool = True, with_gravity: bool = True,
             stop_at: str = "apogee", max_step_s: float | None = None, record_history: bool = True,
             acceleration_limit_m_s2: float | None = None, detect_impact: bool = True, rtol: float = 1e-8,
             wind: Wind | WindProfile | None = None, atmosphere: tuple | None = None,
             stability: Sequence[Configuration] | None = None) -> FlightResult:
    """Integrate one flight; `fly_vertical` and `fly_ascent` are the usual entry points.

    Parameters are those of `fly_vertical` / `fly_ascent`; `profile` is
    ``"vertical"`` or ``"ascent"``. `rtol` [-] sets the adaptive integrator's
    tolerance, `max_step_s` caps its step [s]. With `detect_impact` False an
    ascent that falls below the ground flies on to final burnout (through a
    vacuum below ground), which keeps the end state continuous in the steering
    parameters for the steering optimiser; the result then carries a warning.
    `wind` adds a horizontal wind (`Wind` or `sizing.physics.wind.WindProfile`);
    `stability` (vertical profile) flies the body axis under the aerodynamic
    moments (see `fly_vertical`). `atmosphere` replaces the US
    Standard Atmosphere 1976 by ``("exponential", rho0 [kg/m^3], scale height
    [m])``, optionally with ``mu [m^3/s^2], radius [m]`` of the central body
    (benchmark problems).
    """
    setup = prepare_flight(vehicle, site, profile=profile, ascent=ascent, earth=earth, rotating=rotating,
                           with_drag=with_drag, with_gravity=with_gravity, stop_at=stop_at, max_step_s=max_step_s,
                           record_history=record_history, detect_impact=detect_impact, rtol=rtol, wind=wind,
                           atmosphere=atmosphere, stability=stability)
    kernel_out = run_flight(*setup.kernel_args(512 if record_history else 1))
    if profile == "ascent":
        ascent = ascent or AscentProfile()
    return _finish(setup, kernel_out, vehicle, site, profile=profile, ascent=ascent if profile == "ascent" else None,
                   acceleration_limit_m_s2=acceleration_limit_m_s2)


def fly_vertical(vehicle: Vehicle, site: LaunchSite, *, earth: str = "flat", with_drag: bool = True,
                 with_gravity: bool = True, stop_at: str = "apogee", max_step_s: float | None = None,
                 record_history: bool = True, acceleration_limit_m_s2: float | None = None,
                 wind: Wind | WindProfile | None = None, rtol: float = 1e-8,
                 stability: Sequence[Configuration] | None = None) -> FlightResult:
    """Near-vertical flight from a launch rail (sounding and hobby rockets).

    The vehicle slides along the rail (length `site.rail_length_m`, tilted
    `site.rail_angle_deg` from the vertical towards `site.azimuth_deg`), held
    until thrust exceeds the weight component along the rail; after rail exit
    the thrust follows the air-relative velocity (zero lift). Earth does not
    rotate. Flat Earth: constant gravity g0 = 9.80665 m/s^2. Round Earth:
    inverse-square gravity.

    Parameters
    ----------
    vehicle : Vehicle
    site : LaunchSite
    earth : {"flat", "round"}
    with_drag, with_gravity : bool
        Switch drag or gravity off (analytic checks).
    stop_at : {"apogee", "impact", "burnout"}
        Event that ends the simulation after the last burnout.
    max_step_s : float, optional
        Largest integration step [s]; default none (error control alone). A
        cap gives a denser time history.
    record_history : bool
        Keep the time history (off saves time in optimisation loops).
    acceleration_limit_m_s2 : float, optional
        Add a warning when the sensed acceleration exceeds it.
    wind : Wind or WindProfile, optional
        Horizontal wind (the zero-lift vehicle turns into it at once: the
        weathercocking of a body that aligns instantly).
    rtol : float
        Relative tolerance of the integrator [-].
    stability : sequence of sizing.physics.airframe.Configuration, optional
        One per stage (item i: stage i the lowest attached, e.g.
        `sizing.optimize.hobby_safety.stack_configurations`). After rail exit
        the thrust acts along the body axis, which turns under the restoring
        and damping moments of the Barrowman components, and the normal force
        acts on the flight (`sizing.physics.flight.equations`, ``MODE_BODY``).
        The masses of the configurations should match the vehicle's.

    Returns
    -------
    FlightResult
        Rail-exit speed, per-stage burnouts, apogee and time to apogee (above
        mean sea level), max-q, max acceleration and the loss budget.
        `warnings` flags liftoff thrust-to-weight under 5 (Spaceport America
        Cup DTEG req. 5.18.2) and rail-exit speed under 30.48 m/s (DTEG 10.2.1)
        or 15 m/s (common practice).

    Raises
    ------
    FieldError
        If the first stage cannot lift the vehicle (peak thrust <= weight).

    References
    ----------
    .. [1] G. P. Sutton, O. Biblarz, Rocket Propulsion Elements, 9th ed., 2017, Ch. 4.
    """
    return simulate(vehicle, site, profile="vertical", earth=earth, rotating=False, with_drag=with_drag,
                    with_gravity=with_gravity, stop_at=stop_at, max_step_s=max_step_s,
                    record_history=record_history, acceleration_limit_m_s2=acceleration_limit_m_s2, wind=wind,
                    rtol=rtol, stability=stability)


def fly_ascent(vehicle: Vehicle, site: LaunchSite, profile: AscentProfile | None = None, *, rotating: bool = True,
               with_drag: bool = True, max_step_s: float | None = None, record_history: bool = True,
               acceleration_limit_m_s2: float | None = None, detect_impact: bool = True,
               rtol: float = 1e-8) -> FlightResult:
    """Ascent to orbit over a round, rotating Earth (3-D, inverse-square gravity), to final burnout.

    Vertical rise, pitch kick towards `site.azimuth_deg`, zero-lift gravity
    turn (thrust along the air-relative velocity), then the upper-stage pitch
    law of the profile. `FlightResult.orbit` holds the osculating orbit at
    final burnout. To solve the programme for a target orbit, use
    `sizing.optimize.ascent`.

    Raises
    ------
    FieldError
        If the first stage cannot lift the vehicle.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014,
       Sec. 11.2-11.3 (gravity turn, launch losses).
    .. [2] A. E. Bryson, Y.-C. Ho, Applied Optimal Control, 1975, Sec. 2.7 (linear tangent law).
    """
    return simulate(vehicle, site, profile="ascent", ascent=profile or AscentProfile(), earth="round",
                    rotating=rotating, with_drag=with_drag, stop_at="burnout", max_step_s=max_step_s,
                    record_history=record_history, acceleration_limit_m_s2=acceleration_limit_m_s2,
                    detect_impact=detect_impact, rtol=rtol)


def fly_many(vehicles: Sequence[Vehicle], site: LaunchSite | Sequence[LaunchSite], profiles=None, *,
             profile: str = "ascent", rotating: bool = True, earth: str = "round", with_drag: bool = True,
             stop_at: str = "apogee", rtol: float = 1e-8, winds=None,
             acceleration_limit_m_s2: float | None = None, max_step_s: float | None = None,
             stabilities: Sequence | None = None) -> tuple[FlightResult, ...]:
    """Fly many vehicles (each with its own stages, drag tables, thrusts, site, profile, wind) in one compiled call.

    The vehicles must have the same number of stages. No time history is kept.
    Studies and dispersion runs use this path; each result equals the one of
    `simulate` for the same inputs (`max_step_s` caps the step [s] as there). `stabilities`
    (vertical profile): one `stability` sequence per vehicle, or one for all (see `fly_vertical`).
    """
    vehicles = list(vehicles)
    if not vehicles:
        return ()
    n = len(vehicles)
    n_st = len(vehicles[0].stages)
    if any(len(v.stages) != n_st for v in vehicles):
        raise FieldError("stages", "every vehicle of a batch needs the same number of stages.",
                         sorted({len(v.stages) for v in vehicles}))
    sites = list(site) if isinstance(site, Sequence) else [site] * n
    profs = list(profiles) if isinstance(profiles, Sequence) else [profiles] * n
    wind_list = list(winds) if isinstance(winds, Sequence) else [winds] * n
    one_set = stabilities is None or (len(stabilities) > 0 and not isinstance(stabilities[0], Sequence))
    stab_list = [stabilities] * n if one_set else list(stabilities)
    setups = []
    for v, s, p, w, c in zip(vehicles, sites, profs, wind_list, stab_list):
        setups.append(prepare_flight(
            v, s, profile=profile, ascent=(p or AscentProfile()) if profile == "ascent" else None, earth=earth,
            rotating=rotating and profile == "ascent", with_drag=with_drag, stop_at=stop_at, record_history=False,
            rtol=rtol, wind=w, stability=c, max_step_s=max_step_s))
    kernel_outs = _run_packed(setups)
    return tuple(
        _finish(s, k, v, st, profile=profile, ascent=(p or AscentProfile()) if profile == "ascent" else None,
                acceleration_limit_m_s2=acceleration_limit_m_s2)
        for s, k, v, st, p in zip(setups, kernel_outs, vehicles, sites, profs))


def _run_packed(setups: list[FlightSetup]):
    phase_off = np.cumsum([0] + [s.phases.shape[0] for s in setups])
    par_off = np.cumsum([0] + [s.par.shape[0] for s in setups])
    outs, yf, yb, burns = run_many(
        np.concatenate([s.phases for s in setups]), phase_off, np.concatenate([s.par for s in setups]), par_off,
        np.stack([s.opt for s in setups]), np.stack([s.y0 for s in setups]))
    empty = np.zeros((0, L.H_SIZE))
    return [(outs[j], yf[j], yb[j], burns[j], empty) for j in range(len(setups))]
