"""Lift-off and flight-time checks for hobby candidates (motor stacks, water stages).

The hobby optimisers fly hundreds of candidate rockets. Two kinds of candidate
must not reach the simulator's open-ended coast:

* one whose thrust cannot lift it at release (peak thrust-to-weight <= 1), or
  that rises a little on the rail or launch tube and then stalls there: it
  would sit on the rail until the simulator's own flight-time limit;
* one whose flight could last longer than `HOBBY_MAX_FLIGHT_TIME_S`.

`fly_hobby` checks both, flies the rest with
`sizing.physics.flight.fly_vertical` (adaptive Dormand-Prince steps, no
step cap) and rejects a flight that never left the rail or never rose above
the site. Rejections raise `CannotLiftOffError` or `FlightTimeCapError`
(both `FieldError`), so the optimisers count them and move on.

Flight-time bound (vertical flight, flat Earth, constant g0): while the rocket
rises, gravity and drag both slow it, so its upward speed never exceeds the
ideal (Tsiolkovsky) velocity increment delivered so far, and after the last
burnout it decelerates by at least g0. Hence

    time to apogee <= t_last_burnout + sum_i c_i ln(m0_i / mf_i) / g0,

with t_last_burnout the sum of burn times, coasts and staging delays and
c_i = I_i / m_p,i the effective exhaust velocity of stage i (Tsiolkovsky
rocket equation; Sutton & Biblarz, Rocket Propulsion Elements, 9th ed., 2017,
ch. 4). A candidate whose bound exceeds the cap is rejected before flying.
The cap of 300 s (5 minutes of simulated flight) is a project choice, not a
published value: it admits every water rocket (a few seconds) and any hobby
motor stack with ideal delta-v up to about 2.9 km/s, far above the few
hundred m/s of typical hobby stacks (common practice, no source).
"""

from __future__ import annotations

import math

from sizing.errors import CannotLiftOffError, FlightTimeCapError
from sizing.physics.atmosphere import pressure_density_sound_speed
from sizing.physics.vehicle import LaunchSite, Vehicle
from sizing.units import G0_M_S2

__all__ = [
    "HOBBY_MAX_FLIGHT_TIME_S",
    "MSG_CANNOT_LIFT_OFF",
    "MSG_NO_RISE",
    "MSG_FLIGHT_TIME_CAP",
    "liftoff_thrust_to_weight",
    "flight_time_bound_s",
    "fly_hobby",
]

#: Cap on the simulated flight time of a hobby candidate [s] (project choice, see module notes).
HOBBY_MAX_FLIGHT_TIME_S = 300.0

MSG_CANNOT_LIFT_OFF = "cannot lift off: peak thrust at release does not exceed the weight"
MSG_NO_RISE = "cannot lift off: the rocket stalls on the rail or launch tube and never rises clear of it"
MSG_FLIGHT_TIME_CAP = "the flight could last longer than the simulated-time cap"


def liftoff_thrust_to_weight(vehicle: Vehicle, site: LaunchSite) -> float:
    """Peak thrust of the first stage along the rail over the liftoff weight [-].

    Peak delivered thrust at the site pressure (US Standard Atmosphere 1976),
    F_vac - p_a A_e, times cos(rail angle), over m0 g0. The rocket can leave
    the pad only if this exceeds 1 (the same test as
    `sizing.physics.flight.simulate`).

    Parameters
    ----------
    vehicle : Vehicle
    site : LaunchSite

    Returns
    -------
    float
        Peak thrust-to-weight [-].
    """
    st0 = vehicle.stages[0]
    p_site = pressure_density_sound_speed(site.altitude_m)[0]
    if st0.thrust_curve is None:
        f_peak = st0.thrust_at(0.0, p_site)
    else:
        f_peak = max(st0.thrust_at(t, p_site) for t in st0.thrust_curve[0])
    return f_peak * math.cos(math.radians(site.rail_angle_deg)) / (vehicle.gross_mass_kg * G0_M_S2)


def flight_time_bound_s(vehicle: Vehicle) -> float:
    """Upper bound of the time to apogee of a vertical flight [s].

    t_last_burnout + (sum of the stages' ideal delta-v) / g0; see the module
    notes (Tsiolkovsky rocket equation with c = I / m_p).

    Parameters
    ----------
    vehicle : Vehicle

    Returns
    -------
    float
        Bound [s], > 0.

    Examples
    --------
    >>> from sizing.physics.vehicle import FlightStage
    >>> st = FlightStage("s", 1.0, 1.0, 100.0, diameter_m=0.1, thrust_vac_n=98.0665)
    >>> v = Vehicle((st,), 0.0)
    >>> round(flight_time_bound_s(v), 3)  # 10 s burn + 100 ln 2 s
    79.315
    """
    t_bo = 0.0
    dv = 0.0
    for i, st in enumerate(vehicle.stages):
        t_bo += st.coast_before_ignition_s + st.burn_time_s + (vehicle.staging_delay_s if i > 0 else 0.0)
        m0 = vehicle.ignition_mass_kg(i)
        dv += st.exhaust_velocity_vac_m_s * math.log(m0 / (m0 - st.propellant_mass_kg))
    return t_bo + dv / G0_M_S2


def fly_hobby(
    vehicle: Vehicle,
    site: LaunchSite,
    *,
    max_flight_time_s: float = HOBBY_MAX_FLIGHT_TIME_S,
    record_history: bool = False,
):
    """Fly a hobby candidate vertically, rejecting one that cannot lift off or would fly too long.

    Parameters
    ----------
    vehicle : Vehicle
    site : LaunchSite
    max_flight_time_s : float
        Cap on the flight-time bound [s] (`flight_time_bound_s`).
    record_history : bool
        Passed to `fly_vertical`.

    Returns
    -------
    sizing.physics.flight.FlightResult

    Raises
    ------
    CannotLiftOffError
        Peak thrust-to-weight at release <= 1 (message `MSG_CANNOT_LIFT_OFF`),
        or the flight never left the rail, never rose above the site or ran
        into the simulator's time limit (message `MSG_NO_RISE`).
    FlightTimeCapError
        The flight-time bound exceeds `max_flight_time_s`.
    """
    from sizing.physics.flight import fly_vertical  # compiled; imported when flying

    st0 = vehicle.stages[0]
    tw = liftoff_thrust_to_weight(vehicle, site)
    if not tw > 1.0:
        raise CannotLiftOffError(
            f"stages.{st0.name}.thrust",
            f"{MSG_CANNOT_LIFT_OFF} (peak thrust-to-weight {tw:.2f}, must be > 1). Raise the thrust "
            "(pressure, nozzle or motor) or lighten the rocket.",
        )
    bound = flight_time_bound_s(vehicle)
    if bound > max_flight_time_s:
        raise FlightTimeCapError(
            "flight_time",
            f"{MSG_FLIGHT_TIME_CAP} ({bound:,.0f} s bound > {max_flight_time_s:g} s); this candidate is "
            "beyond a hobby flight.",
        )
    fr = fly_vertical(vehicle, site, record_history=record_history)
    never_left = site.rail_length_m > 0 and not math.isfinite(fr.rail_exit_speed_m_s)
    if fr.terminated_by == "time_limit" or never_left or not fr.apogee_m > site.altitude_m:
        where = f"{site.rail_length_m:g} m rail" if site.rail_length_m > 0 else "pad"
        raise CannotLiftOffError(
            f"stages.{st0.name}.thrust",
            f"{MSG_NO_RISE} ({where}; peak thrust-to-weight {tw:.2f}). Raise the thrust or lighten the rocket.",
        )
    return fr
