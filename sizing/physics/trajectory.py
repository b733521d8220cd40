"""Point-mass trajectory simulation with changing mass, events and a loss budget.

Equations of motion
-------------------
In an inertial frame (Earth-centred for a round Earth, a local frame for the
flat-Earth option) the vehicle is a point of mass m(t):

    dr/dt = V,
    m dV/dt = F u_T - D v_hat_rel + m g(r),
    dm/dt = -mdot(t),

where F is the delivered thrust (momentum flux of the exhaust plus the
pressure thrust, F = F_vac - p_a A_e), u_T the thrust direction, D = q C_D(M) S
the drag along the Earth-relative velocity v_rel = V - omega x r, and g the
gravity (inverse-square GM r / r^3, or a constant g0 on the flat Earth). The
exhaust carries its momentum away: there is no "v dm/dt" term (Tsiolkovsky
rocket equation; Sutton & Biblarz, Rocket Propulsion Elements, 9th ed., 2017,
Sec. 4.1 and eq. 4-6; Curtis, Orbital Mechanics for Engineering Students, 3rd
ed., 2014, Sec. 11.3). In free space this integrates to dv = c ln(m0/mf).

Integration (default ``integrator="dopri5"``) is the embedded Dormand-Prince
5(4) Runge-Kutta pair with local extrapolation, FSAL and step-size control
(J. R. Dormand, P. J. Prince, J. Comput. Appl. Math. 6, 1980, 19-26; Hairer,
Norsett & Wanner, Solving Ordinary Differential Equations I, 2nd ed., 1993,
Sec. II.4-II.6), on plain Python floats. The error norm is the larger of the
position error over ``rtol * 1e5 m`` and the velocity error over
``rtol * (10 m/s + |V|)``; the mass is integrated exactly (its rate is linear
in time) and the loss integrals are quadratures that follow the state. The
flight is cut into phases at every time where the right-hand side is not smooth
(ignition, burnout, staging, thrust-curve knots, end of vertical rise and pitch
kick). Kinks that depend on the state -- the atmosphere's layer boundaries and
the drag table's Mach knots -- are handled like events: their crossing is
predicted from the last samples, and a step that still straddles one is cut at
the crossing located on the step's continuous extension (unless drag and
pressure thrust are too small over the step to matter at the tolerance). So
steps are long in vacuum and short only where the right-hand side changes
fast. Events that depend on the state (rail exit, apogee, impact) are located
on the continuous extension by regula falsi (Illinois) and the step to them is
then integrated and polished by secant steps. Max-q is refined between samples
by Brent's bounded search on the continuous extension. The former fixed-step
classical RK4 (``integrator="rk4"``, step `max_step_s`, 8x longer above 100 km
for an ascent) is kept for comparison.

Loss budget
-----------
The speed equation in the Earth-fixed (rotating) frame, projected on
v_hat = v_rel / |v_rel|, is (Coriolis does no work)

    d|v_rel|/dt = F_vac/m - (F_vac - F)/m - F/m (1 - u_T . v_hat)
                  - D/m + g . v_hat + a_cf . v_hat,

with the centrifugal acceleration a_cf = omega^2 (x, y, 0). Integrating each
term over a stage's interval (from the previous burnout, or liftoff, to its
burnout; coasts before ignition belong to the stage that follows) gives

    ideal delta-v (int F_vac/m dt, = c ln(m0/mf) for constant c)
      = gain in |v_rel| + gravity + drag + steering + pressure - centrifugal,

with gravity = int -g . v_hat dt, drag = int D/m dt, steering =
int F/m (1 - cos(angle between thrust and v_rel)) dt, pressure =
int p_a A_e / m dt. The rotation bonus is defined so that the budget closes in
the inertial speed at the final event:

    sum(ideal) = |V_final (inertial)| - rotation_bonus + sum(losses),
    rotation_bonus = (|V_final| - |v_rel,final|) + int a_cf . v_hat dt.

On a non-rotating Earth the bonus is 0. While the vehicle sits held on the pad
or rail (thrust below weight) the thrust acceleration is booked as gravity
loss. `FlightResult.budget_residual_m_s` reports how well the identity closes
(integration error only).

Every result carries `warnings` (strings) that a design reviewer would flag;
they are never raised. These are preliminary estimates only: they are not a
flight-safety analysis or a flight clearance. Follow local law, the applicable
safety code, range and aviation rules and licensed practice.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from types import MappingProxyType

import numpy as np

from sizing.errors import FieldError
from sizing.physics.atmosphere import (
    _GMR, _H_BASE, _LAPSE, _P_BASE, _R_AIR, _T_BASE, _UP_LNP, _UP_LNRHO, _UP_Z_M, _Z86_M, GAMMA_AIR, M0_KG_MOL,
    R0_GEOPOTENTIAL_M, R_STAR_J_MOL_K, pressure_density_sound_speed,
)
from sizing.physics.gravity import OrbitElements, orbit_elements
from sizing.physics.vehicle import LaunchSite, Vehicle
from sizing.units import G0_M_S2, GM_EARTH_M3_S2, OMEGA_EARTH_RAD_S, R_EARTH_EQ_M

__all__ = [
    "LOSS_KEYS",
    "HOBBY_MIN_LIFTOFF_TW",
    "DTEG_MIN_RAIL_EXIT_SPEED_M_S",
    "HOBBY_MIN_RAIL_EXIT_SPEED_M_S",
    "AscentProfile",
    "StageBurnout",
    "FlightHistory",
    "FlightResult",
    "fly_vertical",
    "fly_ascent",
    "fly_ascent_batch",
    "simulate",
]

#: Names of the loss terms in every ``losses_m_s`` mapping.
LOSS_KEYS = ("gravity", "drag", "steering", "pressure")
#: Minimum liftoff thrust-to-weight, Spaceport America Cup DTEG req. 5.18.2
#: (also the common hobby rule of thumb).
HOBBY_MIN_LIFTOFF_TW = 5.0
#: Minimum rail-exit speed [m/s], 100 ft/s, Spaceport America Cup DTEG 10.2.1.
DTEG_MIN_RAIL_EXIT_SPEED_M_S = 30.48
#: Common hobby practice for rail-exit speed [m/s] (about 50 ft/s; from memory).
HOBBY_MIN_RAIL_EXIT_SPEED_M_S = 15.0

_ATMOSPHERE_TOP_M = 300e3
_ALT_KINKS_M: tuple[float, ...] = ()  # filled below, after the helper is defined
_VACUUM_ALT_M = 100e3  # ascent steps lengthen above this altitude
_MAX_FLIGHT_TIME_S = 2.0e5

# steering modes
_RAIL, _UP, _KICK, _PRO, _LTG, _PRATE = range(6)

# Dormand-Prince 5(4) embedded Runge-Kutta pair with FSAL (J. R. Dormand, P. J.
# Prince, "A family of embedded Runge-Kutta formulae", J. Comput. Appl. Math.
# 6(1), 1980, 19-26, Table 2; Hairer, Norsett & Wanner, Solving Ordinary
# Differential Equations I, 2nd ed., 1993, Sec. II.5, Table 5.2).
_DP_A21 = 1.0 / 5.0
_DP_A31, _DP_A32 = 3.0 / 40.0, 9.0 / 40.0
_DP_A41, _DP_A42, _DP_A43 = 44.0 / 45.0, -56.0 / 15.0, 32.0 / 9.0
_DP_A51, _DP_A52, _DP_A53, _DP_A54 = 19372.0 / 6561.0, -25360.0 / 2187.0, 64448.0 / 6561.0, -212.0 / 729.0
_DP_A61, _DP_A62, _DP_A63, _DP_A64, _DP_A65 = (
    9017.0 / 3168.0, -355.0 / 33.0, 46732.0 / 5247.0, 49.0 / 176.0, -5103.0 / 18656.0)
_DP_B1, _DP_B3, _DP_B4, _DP_B5, _DP_B6 = (
    35.0 / 384.0, 500.0 / 1113.0, 125.0 / 192.0, -2187.0 / 6784.0, 11.0 / 84.0)
# difference of the 5th- and 4th-order weights (local error estimate)
_DP_E1, _DP_E3, _DP_E4, _DP_E5, _DP_E6, _DP_E7 = (
    71.0 / 57600.0, -71.0 / 16695.0, 71.0 / 1920.0, -17253.0 / 339200.0, 22.0 / 525.0, -1.0 / 40.0)
# continuous extension of order 4 (Hairer, Norsett & Wanner 1993, Sec. II.6,
# eq. 6.12, Shampine's dense output): y(t0 + x h) = y0 + h sum_j k_j
# (P_j1 x + P_j2 x^2 + P_j3 x^3 + P_j4 x^4); stage 2 has all-zero weights.
_DP_P = (
    (1.0, -8048581381.0 / 2820520608.0, 8663915743.0 / 2820520608.0, -12715105075.0 / 11282082432.0),
    (0.0, 131558114200.0 / 32700410799.0, -68118460800.0 / 10900136933.0, 87487479700.0 / 32700410799.0),
    (0.0, -1754552775.0 / 470086768.0, 14199869525.0 / 1410260304.0, -10690763975.0 / 1880347072.0),
    (0.0, 127303824393.0 / 49829197408.0, -318862633887.0 / 49829197408.0, 701980252875.0 / 199316789632.0),
    (0.0, -282668133.0 / 205662961.0, 2019193451.0 / 616988883.0, -1453857185.0 / 822651844.0),
    (0.0, 40617522.0 / 29380423.0, -110615467.0 / 29380423.0, 69997945.0 / 29380423.0),
)
#: default relative tolerance of the adaptive integrator
_DEFAULT_RTOL = 1e-8
_POS_SCALE_M = 1.0e5


def _atmosphere_kinks_m() -> tuple[float, ...]:
    """Geometric altitudes [m] where the atmosphere model is not smooth.

    USSA 1976 layer bases (geopotential H_b -> geometric z = r0 H_b / (r0 - H_b),
    USSA 1976 eq. 19), 86 km (start of the tabulated upper model), the upper
    table's knots and the cut-off at which the integrator sets the atmosphere to
    vacuum.
    """
    r0 = R0_GEOPOTENTIAL_M
    zs = {r0 * hb / (r0 - hb) for hb in _H_BASE[1:]}
    zs.add(_Z86_M)
    zs.update((91000.0, 110000.0, 120000.0))  # upper temperature pieces (USSA 1976 eqs. 25-31)
    zs.update(z for z in _UP_Z_M if z < _ATMOSPHERE_TOP_M)
    zs.add(_ATMOSPHERE_TOP_M)
    out = []
    for z in sorted(zs):
        if not out or z - out[-1] > 1.0:
            out.append(z)
    return tuple(out)


_ALT_KINKS_M = _atmosphere_kinks_m()
_VEL_SCALE_M_S = 10.0
_INTEGRATORS = ("dopri5", "rk4")


@dataclass(frozen=True, slots=True)
class AscentProfile:
    """Steering programme of a gravity-turn ascent.

    Parameters
    ----------
    vertical_rise_s : float
        Time from liftoff with thrust along the local vertical [s], >= 0.
    pitch_kick_deg : float
        Tilt of the thrust from the local vertical towards the launch azimuth
        during the kick [deg], in [0, 90).
    kick_duration_s : float
        Duration of the kick [s], > 0. After it the thrust follows the
        Earth-relative velocity (zero-lift gravity turn).
    steering : str
        Upper-stage law from ignition of `steer_from_stage` to final burnout:
        ``"linear_tangent"`` (tan of pitch above the local horizontal varies
        linearly in time; Bryson & Ho, Applied Optimal Control, 1975, Sec. 2.7,
        from memory), ``"pitch_rate"`` (pitch varies linearly in time) or
        ``"gravity_turn"`` (no steering: zero-lift all the way).
    steer_from_stage : str, optional
        Name of the first steered stage; default the second stage (the only
        stage of a single-stage vehicle, after the kick).
    final_pitch_deg : float
        Pitch above the local horizontal at final burnout [deg].
    initial_pitch_deg : float, optional
        Pitch above the local horizontal at steering start [deg]; default the
        inertial flight-path angle there (no jump in thrust direction).
    plane_azimuth_deg : float, optional
        Inertial azimuth at the site of the target orbit plane [deg]
        (`sizing.physics.gravity.launch_azimuth_deg` without rotation
        correction). When given, the steering law thrusts in that inertial
        plane instead of the plane of the current inertial velocity, so the
        Earth's rotation picked up before steering does not tilt the orbit.
    target_altitude_m : float, optional
        If given, `fly_ascent` solves pitch_kick_deg (and final_pitch_deg when
        steering) so that final burnout happens at this altitude with zero
        inertial flight-path angle.
    """

    vertical_rise_s: float = 10.0
    pitch_kick_deg: float = 2.0
    kick_duration_s: float = 10.0
    steering: str = "linear_tangent"
    steer_from_stage: str | None = None
    final_pitch_deg: float = 0.0
    initial_pitch_deg: float | None = None
    target_altitude_m: float | None = None
    plane_azimuth_deg: float | None = None

    def __post_init__(self) -> None:
        if self.steering not in ("linear_tangent", "pitch_rate", "gravity_turn"):
            raise FieldError(
                "profile.steering",
                "must be one of 'linear_tangent', 'pitch_rate', 'gravity_turn'.",
                self.steering,
            )
        if not self.vertical_rise_s >= 0:
            raise FieldError("profile.vertical_rise_s", "must be >= 0.", self.vertical_rise_s)
        if not self.kick_duration_s > 0:
            raise FieldError("profile.kick_duration_s", "must be > 0.", self.kick_duration_s)
        if not 0 <= self.pitch_kick_deg < 90:
            raise FieldError("profile.pitch_kick_deg", "must be in [0, 90).", self.pitch_kick_deg)
        if self.initial_pitch_deg is not None and not -89 < self.initial_pitch_deg < 89:
            raise FieldError("profile.initial_pitch_deg", "must be in (-89, 89).", self.initial_pitch_deg)
        if not -89 < self.final_pitch_deg < 89:
            raise FieldError("profile.final_pitch_deg", "must be in (-89, 89).", self.final_pitch_deg)


@dataclass(frozen=True, slots=True)
class StageBurnout:
    """State at burnout of one stage and the delta-v budget of its interval.

    The interval runs from the previous stage's burnout (or liftoff) to this
    burnout, so coasts before ignition are included.

    Attributes
    ----------
    stage : str
    time_s : float
        Time of burnout since first motion command (t = 0) [s].
    altitude_m : float
        Above mean sea level [m].
    downrange_m : float
        Ground distance from the launch site [m].
    speed_m_s : float
        Earth-relative speed [m/s].
    inertial_speed_m_s : float
        Speed in the inertial frame [m/s].
    flight_path_angle_deg : float
        Earth-relative velocity above the local horizontal [deg].
    mass_kg : float
        Mass just before separation [kg].
    ideal_delta_v_m_s : float
        int F_vac/m dt over the interval [m/s].
    speed_gain_m_s : float
        Gain in Earth-relative speed over the interval [m/s].
    losses_m_s : Mapping[str, float]
        gravity, drag, steering, pressure [m/s].
    centrifugal_m_s : float
        int a_cf . v_hat dt over the interval [m/s] (0 without rotation).
    """

    stage: str
    time_s: float
    altitude_m: float
    downrange_m: float
    speed_m_s: float
    inertial_speed_m_s: float
    flight_path_angle_deg: float
    mass_kg: float
    ideal_delta_v_m_s: float
    speed_gain_m_s: float
    losses_m_s: Mapping[str, float]
    centrifugal_m_s: float


@dataclass(frozen=True, slots=True)
class FlightHistory:
    """Time history sampled at every integration step, event and the refined max-q (1-D arrays).

    Columns: t_s [s], altitude_m [m above MSL], downrange_m [m], speed_m_s
    (Earth-relative) [m/s], inertial_speed_m_s [m/s], flight_path_angle_deg
    [deg], mach [-], dynamic_pressure_pa [Pa], acceleration_m_s2 (thrust plus
    drag over mass, i.e. sensed) [m/s^2], mass_kg [kg], thrust_n [N], drag_n
    [N], stage_index (lowest attached stage, 0 = bottom) [-].
    """

    t_s: np.ndarray
    altitude_m: np.ndarray
    downrange_m: np.ndarray
    speed_m_s: np.ndarray
    inertial_speed_m_s: np.ndarray
    flight_path_angle_deg: np.ndarray
    mach: np.ndarray
    dynamic_pressure_pa: np.ndarray
    acceleration_m_s2: np.ndarray
    mass_kg: np.ndarray
    thrust_n: np.ndarray
    drag_n: np.ndarray
    stage_index: np.ndarray

    COLUMNS = (
        "t_s", "altitude_m", "downrange_m", "speed_m_s", "inertial_speed_m_s",
        "flight_path_angle_deg", "mach", "dynamic_pressure_pa", "acceleration_m_s2",
        "mass_kg", "thrust_n", "drag_n", "stage_index",
    )

    def as_columns(self) -> dict[str, np.ndarray]:
        """Column name (unit-suffixed) -> array, in a stable order for CSV output."""
        return {k: getattr(self, k) for k in self.COLUMNS}


@dataclass(frozen=True, slots=True)
class FlightResult:
    """Outcome of one simulated flight. Read `warnings` and `terminated_by` first.

    Attributes
    ----------
    profile : str
        ``"vertical"`` or ``"ascent"``.
    terminated_by : str
        Event that ended the simulation: ``"apogee"``, ``"impact"``,
        ``"burnout"`` (final burnout; orbit insertion for an ascent) or
        ``"time_limit"``.
    apogee_m : float
        Highest altitude above mean sea level reached [m] (vertical profile;
        nan for an ascent).
    time_to_apogee_s : float
        Time of apogee [s] (nan if not reached).
    rail_exit_speed_m_s, rail_exit_time_s : float
        Speed and time when the vehicle leaves the rail (nan without a rail).
    max_dynamic_pressure_pa, max_q_time_s, max_q_altitude_m : float
        Max-q [Pa], its time [s] and altitude [m].
    max_acceleration_m_s2 : float
        Largest sensed acceleration (thrust plus drag over mass) [m/s^2].
    liftoff_thrust_to_weight : float
        First-stage thrust at the site pressure over m0 g0 [-] (mean thrust
        of a thrust curve).
    impact_time_s, impact_downrange_m : float
        Return to site altitude (nan unless flown to impact).
    orbit : OrbitElements or None
        Osculating orbit at final burnout (ascent profile).
    burnouts : tuple of StageBurnout
        One per stage that burned out.
    ideal_delta_v_m_s : float
        Sum of stage ideal delta-v [m/s].
    losses_m_s : Mapping[str, float]
        Total gravity, drag, steering, pressure losses [m/s].
    rotation_bonus_m_s : float
        See module docstring [m/s].
    final_inertial_speed_m_s : float
        |V| at the last event [m/s].
    budget_residual_m_s : float
        ideal - (final inertial speed - initial... ) closure error [m/s];
        sum(ideal) - (|V_final| - rotation_bonus + sum(losses)).
    ascent_profile : AscentProfile or None
        Steering programme actually flown (with solved kick/pitch when targeted).
    targeting_residual : tuple of float
        (altitude error [m], flight-path angle error [deg]) at final burnout
        when an ascent was targeted; empty otherwise.
    warnings : tuple of str
        Design-review flags, each naming its rule and source.
    history : FlightHistory
    """

    profile: str
    terminated_by: str
    apogee_m: float
    time_to_apogee_s: float
    rail_exit_speed_m_s: float
    rail_exit_time_s: float
    max_dynamic_pressure_pa: float
    max_q_time_s: float
    max_q_altitude_m: float
    max_acceleration_m_s2: float
    liftoff_thrust_to_weight: float
    impact_time_s: float
    impact_downrange_m: float
    orbit: OrbitElements | None
    burnouts: tuple[StageBurnout, ...]
    ideal_delta_v_m_s: float
    losses_m_s: Mapping[str, float]
    rotation_bonus_m_s: float
    final_inertial_speed_m_s: float
    budget_residual_m_s: float
    ascent_profile: AscentProfile | None
    targeting_residual: tuple[float, ...]
    warnings: tuple[str, ...]
    history: FlightHistory = field(repr=False)

    @property
    def total_loss_m_s(self) -> float:
        """Sum of the four loss terms [m/s]."""
        return float(sum(self.losses_m_s.values()))


# ---------------------------------------------------------------------------
# phase schedule
# ---------------------------------------------------------------------------
@dataclass(slots=True)
class _Phase:
    t0: float
    t1: float
    stage: int  # lowest attached stage
    burning: bool
    f_a: float = 0.0  # F_vac = f_a + f_b (t - t0)
    f_b: float = 0.0
    m_a: float = 0.0  # mdot = m_a + m_b (t - t0)
    m_b: float = 0.0
    burnout_of: int = -1  # stage index burning out at t1
    steer: int = _PRO


def _stage_windows(vehicle: Vehicle, *, ignore_first_coast: bool):
    out = []
    t = 0.0
    for i, st in enumerate(vehicle.stages):
        coast = st.coast_before_ignition_s
        if i == 0 and ignore_first_coast:
            coast = 0.0
        if i > 0:
            coast += vehicle.staging_delay_s
        t_ign = t + coast
        t_bo = t_ign + st.burn_time_s
        out.append((t_ign, t_bo))
        t = t_bo
    return out


def _build_phases(vehicle: Vehicle, windows, extra_times) -> list[_Phase]:
    """Split the flight into smooth phases, up to final burnout."""
    times = {0.0}
    for i, (t_ign, t_bo) in enumerate(windows):
        times.add(t_ign)
        times.add(t_bo)
        st = vehicle.stages[i]
        if st.thrust_curve is not None:
            times.update(t_ign + tk for tk in st.thrust_curve[0] if 0 < tk < st.burn_time_s)
        if st.propellant_mass_curve is not None:
            times.update(
                t_ign + tk for tk in st.propellant_mass_curve[0] if 0 < tk < st.burn_time_s
            )
    t_end = windows[-1][1]
    times.update(t for t in extra_times if 0 < t < t_end)
    ts = sorted(times)
    # merge near-duplicates
    merged = [ts[0]]
    for t in ts[1:]:
        if t - merged[-1] > 1e-9 * max(1.0, t):
            merged.append(t)
    phases = []
    for a, b in zip(merged, merged[1:]):
        mid = 0.5 * (a + b)
        stage = next(i for i, (_, tb) in enumerate(windows) if mid < tb)
        t_ign, t_bo = windows[stage]
        st = vehicle.stages[stage]
        ph = _Phase(a, b, stage, burning=t_ign <= mid < t_bo)
        if ph.burning:
            tau0, tau1 = a - t_ign, b - t_ign
            f0, f1 = st.thrust_vac_at(tau0), st.thrust_vac_at(tau1)
            if st.thrust_curve is None:
                f0 = f1 = st.thrust_vac_n
            ph.f_a = f0
            ph.f_b = (f1 - f0) / (b - a)
            if st.thrust_curve is None:
                ph.m_a = st.thrust_vac_n / (st.isp_vac_s * st.g0_m_s2)
            elif st.propellant_mass_curve is None:
                k = st.propellant_mass_kg / st.total_impulse_vac_n_s
                ph.m_a, ph.m_b = k * f0, k * ph.f_b
            else:
                tm, mm = st.propellant_mass_curve
                m0 = float(np.interp(tau0, tm, mm))
                m1 = float(np.interp(tau1, tm, mm))
                ph.m_a = (m0 - m1) / (b - a)
        if abs(b - t_bo) <= 1e-9 * max(1.0, b):
            ph.burnout_of = stage
        phases.append(ph)
    return phases


def _bounded_minimum(func, a: float, b: float, xatol: float, maxfun: int = 500) -> float:
    """Abscissa of a minimum of `func` on [a, b]: Brent's bounded method on plain floats.

    Golden-section search with parabolic interpolation (R. P. Brent, Algorithms
    for Minimization without Derivatives, 1973, Ch. 5; the FMIN routine of
    Forsythe, Malcolm & Moler, Computer Methods for Mathematical Computations,
    1977, Sec. 8.2), step for step as ``scipy.optimize.minimize_scalar(method=
    "bounded", options={"xatol": xatol})`` but without its per-call and numpy
    scalar overhead (it runs once per flight, at max-q).
    """
    sqrt_eps = math.sqrt(2.2e-16)
    golden_mean = 0.5 * (3.0 - math.sqrt(5.0))
    fulc = a + golden_mean * (b - a)
    nfc, xf = fulc, fulc
    rat = e = 0.0
    fx = func(xf)
    num = 1
    ffulc = fnfc = fx
    xm = 0.5 * (a + b)
    tol1 = sqrt_eps * abs(xf) + xatol / 3.0
    tol2 = 2.0 * tol1
    while abs(xf - xm) > (tol2 - 0.5 * (b - a)):
        golden = True
        if abs(e) > tol1:  # try a parabolic step
            golden = False
            r = (xf - nfc) * (fx - ffulc)
            q = (xf - fulc) * (fx - fnfc)
            p = (xf - fulc) * q - (xf - nfc) * r
            q = 2.0 * (q - r)
            if q > 0.0:
                p = -p
            q = abs(q)
            r = e
            e = rat
            if abs(p) < abs(0.5 * q * r) and p > q * (a - xf) and p < q * (b - xf):
                rat = (p + 0.0) / q
                x = xf + rat
                if (x - a) < tol2 or (b - x) < tol2:
                    rat = tol1 if xm - xf >= 0.0 else -tol1
            else:
                golden = True
        if golden:
            e = (a - xf) if xf >= xm else (b - xf)
            rat = golden_mean * e
        step = abs(rat) if abs(rat) > tol1 else tol1
        x = xf + (step if rat >= 0.0 else -step)
        fu = func(x)
        num += 1
        if fu <= fx:
            if x >= xf:
                a = xf
            else:
                b = xf
            fulc, ffulc = nfc, fnfc
            nfc, fnfc = xf, fx
            xf, fx = x, fu
        else:
            if x < xf:
                a = x
            else:
                b = x
            if fu <= fnfc or nfc == xf:
                fulc, ffulc = nfc, fnfc
                nfc, fnfc = x, fu
            elif fu <= ffulc or fulc == xf or fulc == nfc:
                fulc, ffulc = x, fu
        xm = 0.5 * (a + b)
        tol1 = sqrt_eps * abs(xf) + xatol / 3.0
        tol2 = 2.0 * tol1
        if num >= maxfun:
            break
    return xf


# ---------------------------------------------------------------------------
# the simulator
# ---------------------------------------------------------------------------
def simulate(
    vehicle: Vehicle,
    site: LaunchSite,
    *,
    profile: str,
    ascent: AscentProfile | None = None,
    earth: str = "round",
    rotating: bool = False,
    with_drag: bool = True,
    with_gravity: bool = True,
    stop_at: str = "apogee",
    max_step_s: float | None = None,
    record_history: bool = True,
    acceleration_limit_m_s2: float | None = None,
    detect_impact: bool = True,
    vacuum_step_factor: float = 8.0,
    integrator: str = "dopri5",
    rtol: float = _DEFAULT_RTOL,
) -> FlightResult:
    """Integrate one flight; `fly_vertical` and `fly_ascent` are the public entry points.

    Parameters are those of `fly_vertical` / `fly_ascent`; `profile` is
    ``"vertical"`` or ``"ascent"``. `integrator` is ``"dopri5"`` (adaptive
    Dormand-Prince 5(4), see the module docstring; `rtol` [-] sets its
    tolerance, `max_step_s` caps its step) or ``"rk4"`` (fixed-step classical
    Runge-Kutta with step `max_step_s`, default 0.5 s for an ascent, times
    `vacuum_step_factor` above 100 km). With `detect_impact` False an ascent that
    falls below the ground flies on to final burnout (through a vacuum below
    ground), which keeps the end state continuous in the steering parameters
    for the targeting solver; the result then carries a warning.
    """
    if earth not in ("round", "flat"):
        raise FieldError("earth", "must be 'round' or 'flat'.", earth)
    if stop_at not in ("apogee", "impact", "burnout"):
        raise FieldError("stop_at", "must be 'apogee', 'impact' or 'burnout'.", stop_at)
    if integrator not in _INTEGRATORS:
        raise FieldError("integrator", "must be 'dopri5' or 'rk4'.", integrator)
    if not 1e-14 <= rtol <= 1e-3:
        raise FieldError("rtol", "must be in [1e-14, 1e-3].", rtol)
    adaptive = integrator == "dopri5"
    round_ = earth == "round"
    rot = bool(rotating) and round_
    is_ascent = profile == "ascent"
    stages = vehicle.stages
    n_st = len(stages)
    warn: list[str] = []

    mu = GM_EARTH_M3_S2
    R = R_EARTH_EQ_M
    w = OMEGA_EARTH_RAD_S if rot else 0.0
    g_flat = G0_M_S2
    h0 = site.altitude_m
    lat = math.radians(site.latitude_deg)
    az = math.radians(site.azimuth_deg)

    # frame and unit vectors at the site
    if round_:
        cl, sl = math.cos(lat), math.sin(lat)
        r0 = ((R + h0) * cl, 0.0, (R + h0) * sl)
        up0 = (cl, 0.0, sl)
        east0 = (0.0, 1.0, 0.0)
        north0 = (-sl, 0.0, cl)
    else:
        r0 = (0.0, 0.0, h0)
        up0 = (0.0, 0.0, 1.0)
        east0 = (1.0, 0.0, 0.0)
        north0 = (0.0, 1.0, 0.0)
    ca, sa = math.cos(az), math.sin(az)
    azd = tuple(ca * n + sa * e for n, e in zip(north0, east0))
    rail_ang = math.radians(site.rail_angle_deg) if not is_ascent else 0.0
    rail_u = tuple(math.cos(rail_ang) * u + math.sin(rail_ang) * a for u, a in zip(up0, azd))
    rail_len = site.rail_length_m if not is_ascent else 0.0

    # liftoff checks
    st0 = stages[0]
    p_site = pressure_density_sound_speed(h0)[0] if with_drag or st0.exit_area_m2 > 0 else 0.0
    p_site = pressure_density_sound_speed(h0)[0]
    m0 = vehicle.gross_mass_kg
    weight0 = m0 * G0_M_S2
    if st0.thrust_curve is None:
        f_lift = st0.thrust_at(0.0, p_site)
        f_peak = f_lift
    else:
        f_lift = max(0.0, st0.total_impulse_vac_n_s / st0.burn_time_s - p_site * st0.exit_area_m2)
        f_peak = max(st0.thrust_at(t, p_site) for t in st0.thrust_curve[0])
    tw_lift = f_lift / weight0
    if with_gravity and f_peak * math.cos(rail_ang) <= weight0:
        raise FieldError(
            f"stages.{st0.name}.thrust",
            "liftoff thrust-to-weight must be > 1 (peak thrust at the site over m0 g0).",
            round(f_peak / weight0, 4),
        )
    if profile == "vertical" and tw_lift < HOBBY_MIN_LIFTOFF_TW:
        warn.append(
            f"liftoff thrust-to-weight {tw_lift:.2f} is below {HOBBY_MIN_LIFTOFF_TW:g} "
            "(Spaceport America Cup DTEG req. 5.18.2; also common hobby practice)."
        )
    if is_ascent and st0.coast_before_ignition_s > 0:
        warn.append(
            f"stages.{st0.name}.coast_before_ignition_s is ignored for an ascent "
            "(the clock starts at first-stage ignition)."
        )

    windows = _stage_windows(vehicle, ignore_first_coast=is_ascent)
    t_final_bo = windows[-1][1]
    extra = []
    steer_law = _PRO
    t_vert = t_kick_end = None
    steer_start = None
    if is_ascent:
        ascent = ascent or AscentProfile()
        t_vert = ascent.vertical_rise_s
        t_kick_end = t_vert + ascent.kick_duration_s
        extra += [t_vert, t_kick_end]
        if ascent.steering != "gravity_turn":
            names = [s.name for s in stages]
            k = min(1, n_st - 1) if ascent.steer_from_stage is None else None
            if k is None:
                if ascent.steer_from_stage not in names:
                    raise FieldError(
                        "profile.steer_from_stage", f"must be one of {names}.", ascent.steer_from_stage
                    )
                k = names.index(ascent.steer_from_stage)
            steer_start = windows[k][0]
            steer_law = _LTG if ascent.steering == "linear_tangent" else _PRATE
            extra.append(steer_start)
    phases = _build_phases(vehicle, windows, extra)
    for ph in phases:
        mid = 0.5 * (ph.t0 + ph.t1)
        if is_ascent:
            if mid < t_vert:
                ph.steer = _UP
            elif mid < t_kick_end:
                ph.steer = _KICK
            elif steer_start is not None and mid >= steer_start:
                ph.steer = steer_law
            else:
                ph.steer = _PRO
        else:
            ph.steer = _PRO

    total_burn = sum(st.burn_time_s for st in stages)
    if adaptive:
        # the error control chooses the step; the cap only keeps the
        # sampling of max-q and the history from becoming too sparse
        dt_max = math.inf if max_step_s is None else float(max_step_s)
        h_first = min(dt_max, max(1e-4, total_burn / 1000.0))
    elif max_step_s is None:
        dt_max = 0.5 if is_ascent else min(0.5, max(1e-3, total_burn / 100.0))
    else:
        dt_max = float(max_step_s)
    # above the sensible atmosphere the right-hand side is smooth (no drag-table
    # or layer kinks): take longer steps there
    dt_vac = dt_max * (vacuum_step_factor if is_ascent else 1.0)

    # --- closure state (phase parameters) --------------------------------
    P_fa = P_fb = P_ma = P_mb = P_t0 = 0.0
    P_burn = False
    P_ae = 0.0
    P_aref = vehicle.reference_area_m2(0)
    P_mach: tuple = stages[0].drag.mach
    P_cd: tuple = stages[0].drag.cd
    P_steer = _PRO
    on_rail = not is_ascent
    kick_s = math.sin(math.radians(ascent.pitch_kick_deg)) if is_ascent else 0.0
    kick_c = math.cos(math.radians(ascent.pitch_kick_deg)) if is_ascent else 1.0
    L_tan0 = L_tanf = L_th0 = L_thf = 0.0
    L_ts = 0.0
    L_span = 1.0
    plane_n = None
    if is_ascent and ascent.plane_azimuth_deg is not None and round_:
        bp = math.radians(ascent.plane_azimuth_deg)
        dpx, dpy, dpz = (math.cos(bp) * n + math.sin(bp) * e for n, e in zip(north0, east0))
        ux0, uy0, uz0 = up0
        nx, ny, nz = uy0 * dpz - uz0 * dpy, uz0 * dpx - ux0 * dpz, ux0 * dpy - uy0 * dpx
        nn = math.sqrt(nx * nx + ny * ny + nz * nz)
        plane_n = (nx / nn, ny / nn, nz / nn)
    if is_ascent and steer_start is not None:
        L_thf = math.radians(ascent.final_pitch_deg)
        L_tanf = math.tan(L_thf)
        L_ts = steer_start
        L_span = max(t_final_bo - steer_start, 1e-9)
    rux, ruy, ruz = rail_u
    w2 = w * w
    drag_on = with_drag
    grav_on = with_gravity
    ctab_bisect = __import__("bisect").bisect_right
    sqrt = math.sqrt
    pds = pressure_density_sound_speed
    atm_top = _ATMOSPHERE_TOP_M
    exp = math.exp
    z86, r0g, gmr, m0_air, r_star = _Z86_M, R0_GEOPOTENTIAL_M, _GMR, M0_KG_MOL, R_STAR_J_MOL_K
    h_base, t_base, p_base, lapse_b = _H_BASE, _T_BASE, _P_BASE, _LAPSE
    gmr_lapse = tuple(gmr / lp if lp != 0.0 else 0.0 for lp in _LAPSE)
    gam_r = GAMMA_AIR * _R_AIR
    up_z, up_lnp, up_lnr = _UP_Z_M, _UP_LNP, _UP_LNRHO
    r0k = R0_GEOPOTENTIAL_M * 1e-3
    bisect_r = __import__("bisect").bisect_right
    cos, sin = math.cos, math.sin
    s_pro, s_up, s_kick, s_ltg = _PRO, _UP, _KICK, _LTG

    def rhs(t, s, diag=False):
        """Derivative of the 13-component state (7 read); with `diag` also
        (altitude, |v_rel|, Mach, q, sensed acceleration, thrust, drag)."""
        x, y, z, vx, vy, vz, m = s[:7]
        if round_:
            r2 = x * x + y * y + z * z
            r = sqrt(r2)
            ir = 1.0 / r
            upx, upy, upz = x * ir, y * ir, z * ir
            alt = r - R
            if grav_on:
                gk = -mu / (r2 * r)
                gx, gy, gz = gk * x, gk * y, gk * z
            else:
                gx = gy = gz = 0.0
        else:
            upx, upy, upz = 0.0, 0.0, 1.0
            alt = z
            gx = gy = 0.0
            gz = -g_flat if grav_on else 0.0
        if w != 0.0:
            vrx, vry, vrz = vx + w * y, vy - w * x, vz
        else:
            vrx, vry, vrz = vx, vy, vz
        vrel2 = vrx * vrx + vry * vry + vrz * vrz
        vrel = sqrt(vrel2)
        # atmosphere: `pressure_density_sound_speed` (US Standard Atmosphere
        # 1976) written out here with the same operations, so that the hot
        # loop makes no function calls for it
        if alt < atm_top and (alt > 0.0 or detect_impact):
            if alt < z86:
                hg = r0g * alt / (r0g + alt)  # geopotential altitude, USSA 1976 eq. 18
                if hg >= 11000.0:
                    i = bisect_r(h_base, hg) - 1
                    if i > 6:
                        i = 6
                else:
                    i = 0
                tb = t_base[i]
                lapse = lapse_b[i]
                if lapse == 0.0:
                    tm = tb
                    p_a = p_base[i] * exp(-gmr * (hg - h_base[i]) / tb)
                else:
                    tm = tb + lapse * (hg - h_base[i])
                    p_a = p_base[i] * (tb / tm) ** gmr_lapse[i]
                rho = p_a * m0_air / (r_star * tm)
                a_s = sqrt(gam_r * tm)
            else:
                i = bisect_r(up_z, alt) - 1
                fz = (alt - up_z[i]) / (up_z[i + 1] - up_z[i])
                p_a = exp(up_lnp[i] + fz * (up_lnp[i + 1] - up_lnp[i]))
                rho = exp(up_lnr[i] + fz * (up_lnr[i + 1] - up_lnr[i]))
                # kinetic temperature above 86 km, USSA 1976 eqs. 25-31
                # (`sizing.physics.atmosphere._upper_temperature`)
                zk = alt * 1e-3
                if zk < 91.0:
                    tk = 186.8673
                elif zk < 110.0:
                    xt = (zk - 91.0) / -19.9429
                    xt = 1.0 - xt * xt
                    tk = 263.1905 - 76.3232 * sqrt(xt if xt > 0.0 else 0.0)
                elif zk < 120.0:
                    tk = 240.0 + 12.0 * (zk - 110.0)
                else:
                    tk = 1000.0 - 640.0 * exp(-0.01875 * ((zk - 120.0) * (r0k + 120.0) / (r0k + zk)))
                a_s = sqrt(gam_r * tk)
        else:
            p_a, rho, a_s = 0.0, 0.0, 1.0
        if P_burn:
            dtp = t - P_t0
            fv = P_fa + P_fb * dtp
            f = fv - p_a * P_ae
            if f < 0.0:
                f = 0.0
            mdot = P_ma + P_mb * dtp
        else:
            fv = f = mdot = 0.0
        if drag_on and rho > 0.0 and vrel > 0.0:
            mach = vrel / a_s
            if mach <= P_mach[0]:
                cd = P_cd[0]
            elif mach >= P_mach[-1]:
                cd = P_cd[-1]
            else:
                i = ctab_bisect(P_mach, mach)
                x0 = P_mach[i - 1]
                cd = P_cd[i - 1] + (P_cd[i] - P_cd[i - 1]) * (mach - x0) / (P_mach[i] - x0)
            dmag = 0.5 * rho * vrel2 * cd * P_aref
        else:
            mach = vrel / a_s if a_s > 0 else 0.0
            dmag = 0.0
        # thrust direction
        st_mode = P_steer
        if vrel > 1e-6:
            ivr = 1.0 / vrel
            vhx, vhy, vhz = vrx * ivr, vry * ivr, vrz * ivr
        if on_rail:
            tx, ty, tz = rux, ruy, ruz
        elif st_mode == s_pro:
            if vrel > 1e-6:
                tx, ty, tz = vhx, vhy, vhz
            else:
                tx, ty, tz = rux, ruy, ruz
        elif st_mode == s_up:
            tx, ty, tz = upx, upy, upz
        elif st_mode == s_kick:
            # azimuth direction at the current position: rotate the site's
            # azimuth vector into the local horizontal
            ax_, ay_, az_ = azd
            dd = ax_ * upx + ay_ * upy + az_ * upz
            hx, hy, hz = ax_ - dd * upx, ay_ - dd * upy, az_ - dd * upz
            hn = sqrt(hx * hx + hy * hy + hz * hz)
            tx = kick_c * upx + kick_s * hx / hn
            ty = kick_c * upy + kick_s * hy / hn
            tz = kick_c * upz + kick_s * hz / hn
        else:
            frac = (t - L_ts) / L_span
            if st_mode == s_ltg:
                # pitch th with tan(th) linear in time: cos th = 1/sqrt(1 + tan^2)
                th = math.atan(L_tan0 + (L_tanf - L_tan0) * frac)
                c_, s_ = cos(th), sin(th)
            else:
                th = L_th0 + (L_thf - L_th0) * frac
                c_, s_ = cos(th), sin(th)
            if plane_n is None:
                vu = vx * upx + vy * upy + vz * upz
                hx, hy, hz = vx - vu * upx, vy - vu * upy, vz - vu * upz
            else:
                pnx, pny, pnz = plane_n
                hx, hy, hz = pny * upz - pnz * upy, pnz * upx - pnx * upz, pnx * upy - pny * upx
            hn = sqrt(hx * hx + hy * hy + hz * hz)
            if hn > 0.0:
                hx, hy, hz = hx / hn, hy / hn, hz / hn
            else:
                hx, hy, hz = azd
            tx, ty, tz = c_ * hx + s_ * upx, c_ * hy + s_ * upy, c_ * hz + s_ * upz
        im = 1.0 / m
        if vrel <= 1e-6:
            vhx, vhy, vhz = tx, ty, tz
        fm = f * im
        dm = dmag * im
        ax = fm * tx - dm * vhx + gx
        ay = fm * ty - dm * vhy + gy
        az = fm * tz - dm * vhz + gz
        d_grav = -(gx * vhx + gy * vhy + gz * vhz)
        d_steer = fm * (1.0 - (tx * vhx + ty * vhy + tz * vhz))
        if on_rail:
            vhx, vhy, vhz = rux, ruy, ruz
            a_al = ax * rux + ay * ruy + az * ruz
            d_steer = 0.0
            d_grav = -(gx * rux + gy * ruy + gz * ruz)
            if a_al < 0.0 and (vx * rux + vy * ruy + vz * ruz) <= 0.0:
                a_al = 0.0
                d_grav = fm - dm
            ax, ay, az = a_al * rux, a_al * ruy, a_al * ruz
        d_cf = w2 * (x * vhx + y * vhy) if w != 0.0 else 0.0
        der = [vx, vy, vz, ax, ay, az, -mdot, d_grav, dm, d_steer, (fv - f) * im, fv * im, d_cf]
        if diag:
            sx, sy, sz = fm * tx - dm * vhx, fm * ty - dm * vhy, fm * tz - dm * vhz
            return der, (alt, vrel, mach, 0.5 * rho * vrel2, sqrt(sx * sx + sy * sy + sz * sz), f, dmag)
        return der

    def path_angle_deg(s):
        """Earth-relative flight-path angle above the local horizontal [deg] (90 at rest)."""
        x, y, z, vx, vy, vz = s[:6]
        if round_:
            ir = 1.0 / sqrt(x * x + y * y + z * z)
            upx, upy, upz = x * ir, y * ir, z * ir
        else:
            upx, upy, upz = 0.0, 0.0, 1.0
        if w != 0.0:
            vx, vy = vx + w * y, vy - w * x
        vrel = sqrt(vx * vx + vy * vy + vz * vz)
        if vrel > 0:
            return math.degrees(math.asin(max(-1.0, min(1.0, (vx * upx + vy * upy + vz * upz) / vrel))))
        return 90.0

    k1_cache = [None, None, None]  # (t, state object, derivative) of the last record()

    def rk4(t, s, h, k1=None):
        if k1 is None:
            if k1_cache[1] is s and k1_cache[0] == t:
                k1 = k1_cache[2]
            else:
                k1 = rhs(t, s)
        hh = 0.5 * h
        k2 = rhs(t + hh, [a + hh * b for a, b in zip(s, k1)])
        k3 = rhs(t + hh, [a + hh * b for a, b in zip(s, k2)])
        k4 = rhs(t + h, [a + h * b for a, b in zip(s, k3)])
        h6 = h / 6.0
        return [a + h6 * (b + 2.0 * (c + d) + e) for a, b, c, d, e in zip(s, k1, k2, k3, k4)]


    def dp_step(t, s, h):
        """One Dormand-Prince 5(4) step: (state, error norm, stages, (der, diag) at the end)."""
        if k1_cache[1] is s and k1_cache[0] == t:
            k1 = k1_cache[2]
        else:
            k1 = rhs(t, s)
        # the right-hand side reads only position, velocity and mass (the
        # first 7 components); the loss integrals ride along in s1. The stage
        # sums are written out on scalars (no per-stage lists or loops).
        x0, y0, z0, u0, v0, w0, m0_ = s[:7]
        x1, y1, z1, u1, v1, w1, n1 = k1[:7]
        a = h * _DP_A21
        k2 = rhs(t + 0.2 * h, (x0 + a * x1, y0 + a * y1, z0 + a * z1, u0 + a * u1, v0 + a * v1, w0 + a * w1,
                               m0_ + a * n1))
        x2, y2, z2, u2, v2, w2, n2 = k2[:7]
        a, b = h * _DP_A31, h * _DP_A32
        k3 = rhs(t + 0.3 * h, (x0 + a * x1 + b * x2, y0 + a * y1 + b * y2, z0 + a * z1 + b * z2,
                               u0 + a * u1 + b * u2, v0 + a * v1 + b * v2, w0 + a * w1 + b * w2,
                               m0_ + a * n1 + b * n2))
        x3, y3, z3, u3, v3, w3, n3 = k3[:7]
        a, b, c = h * _DP_A41, h * _DP_A42, h * _DP_A43
        k4 = rhs(t + 0.8 * h, (x0 + a * x1 + b * x2 + c * x3, y0 + a * y1 + b * y2 + c * y3,
                               z0 + a * z1 + b * z2 + c * z3, u0 + a * u1 + b * u2 + c * u3,
                               v0 + a * v1 + b * v2 + c * v3, w0 + a * w1 + b * w2 + c * w3,
                               m0_ + a * n1 + b * n2 + c * n3))
        x4, y4, z4, u4, v4, w4, n4 = k4[:7]
        a, b, c, d = h * _DP_A51, h * _DP_A52, h * _DP_A53, h * _DP_A54
        k5 = rhs(t + h * (8.0 / 9.0), (
            x0 + a * x1 + b * x2 + c * x3 + d * x4, y0 + a * y1 + b * y2 + c * y3 + d * y4,
            z0 + a * z1 + b * z2 + c * z3 + d * z4, u0 + a * u1 + b * u2 + c * u3 + d * u4,
            v0 + a * v1 + b * v2 + c * v3 + d * v4, w0 + a * w1 + b * w2 + c * w3 + d * w4,
            m0_ + a * n1 + b * n2 + c * n3 + d * n4))
        x5, y5, z5, u5, v5, w5, n5 = k5[:7]
        a, b, c, d, e = h * _DP_A61, h * _DP_A62, h * _DP_A63, h * _DP_A64, h * _DP_A65
        k6 = rhs(t + h, (
            x0 + a * x1 + b * x2 + c * x3 + d * x4 + e * x5, y0 + a * y1 + b * y2 + c * y3 + d * y4 + e * y5,
            z0 + a * z1 + b * z2 + c * z3 + d * z4 + e * z5, u0 + a * u1 + b * u2 + c * u3 + d * u4 + e * u5,
            v0 + a * v1 + b * v2 + c * v3 + d * v4 + e * v5, w0 + a * w1 + b * w2 + c * w3 + d * w4 + e * w5,
            m0_ + a * n1 + b * n2 + c * n3 + d * n4 + e * n5))
        x6, y6, z6, u6, v6, w6, n6 = k6[:7]
        b1, b3, b4, b5, b6 = h * _DP_B1, h * _DP_B3, h * _DP_B4, h * _DP_B5, h * _DP_B6
        s1 = [x0 + b1 * x1 + b3 * x3 + b4 * x4 + b5 * x5 + b6 * x6,
              y0 + b1 * y1 + b3 * y3 + b4 * y4 + b5 * y5 + b6 * y6,
              z0 + b1 * z1 + b3 * z3 + b4 * z4 + b5 * z5 + b6 * z6,
              u0 + b1 * u1 + b3 * u3 + b4 * u4 + b5 * u5 + b6 * u6,
              v0 + b1 * v1 + b3 * v3 + b4 * v4 + b5 * v5 + b6 * v6,
              w0 + b1 * w1 + b3 * w3 + b4 * w4 + b5 * w5 + b6 * w6,
              m0_ + b1 * n1 + b3 * n3 + b4 * n4 + b5 * n5 + b6 * n6]
        # the loss integrals (components 7-12) ride along
        s1 += [a + b1 * b + b3 * d + b4 * e + b5 * f + b6 * g
               for a, b, d, e, f, g in zip(s[7:], k1[7:], k3[7:], k4[7:], k5[7:], k6[7:])]
        k7, dg7 = rhs(t + h, s1, True)
        e1, e3, e4, e5, e6, e7 = h * _DP_E1, h * _DP_E3, h * _DP_E4, h * _DP_E5, h * _DP_E6, h * _DP_E7
        # error norm over position and velocity only: the mass is integrated
        # exactly (mdot linear in t) and the loss integrals are quadratures
        # that follow the state
        x7, y7, z7, u7, v7, w7 = k7[:6]
        ep = max(abs(e1 * x1 + e3 * x3 + e4 * x4 + e5 * x5 + e6 * x6 + e7 * x7),
                 abs(e1 * y1 + e3 * y3 + e4 * y4 + e5 * y5 + e6 * y6 + e7 * y7),
                 abs(e1 * z1 + e3 * z3 + e4 * z4 + e5 * z5 + e6 * z6 + e7 * z7))
        ev = max(abs(e1 * u1 + e3 * u3 + e4 * u4 + e5 * u5 + e6 * u6 + e7 * u7),
                 abs(e1 * v1 + e3 * v3 + e4 * v4 + e5 * v5 + e6 * v6 + e7 * v7),
                 abs(e1 * w1 + e3 * w3 + e4 * w4 + e5 * w5 + e6 * w6 + e7 * w7))
        u0, v0, w0 = s1[3], s1[4], s1[5]
        v_scale = _VEL_SCALE_M_S + sqrt(u0 * u0 + v0 * v0 + w0 * w0)
        err = max(ep / (rtol * _POS_SCALE_M), ev / (rtol * v_scale))
        return s1, err, (k1, k3, k4, k5, k6, k7), k7, dg7

    def dense(s0, h, K, x):
        """State at t0 + x h inside a Dormand-Prince step (4th-order continuous extension)."""
        x2 = x * x
        x3 = x2 * x
        x4 = x2 * x2
        hx, hx2, hx3, hx4 = h * x, h * x2, h * x3, h * x4
        P1, P3, P4, P5, P6, P7 = _DP_P
        w1 = hx + P1[1] * hx2 + P1[2] * hx3 + P1[3] * hx4
        w3 = P3[1] * hx2 + P3[2] * hx3 + P3[3] * hx4
        w4 = P4[1] * hx2 + P4[2] * hx3 + P4[3] * hx4
        w5 = P5[1] * hx2 + P5[2] * hx3 + P5[3] * hx4
        w6 = P6[1] * hx2 + P6[2] * hx3 + P6[3] * hx4
        w7 = P7[1] * hx2 + P7[2] * hx3 + P7[3] * hx4
        k1, k3, k4, k5, k6, k7 = K
        return [a + w1 * b + w3 * c + w4 * d + w5 * e + w6 * f + w7 * g
                for a, b, c, d, e, f, g in zip(s0, k1, k3, k4, k5, k6, k7)]

    alt_kinks = _ALT_KINKS_M

    def kink_crossing(dg0, dg1, s0, h, K):
        """Fraction x in (0, 1) of the step where the first atmosphere-layer or
        drag-table knot is crossed, located on the continuous extension; None if none."""
        alt0, alt1 = dg0[0], dg1[0]
        cands = []
        i0, i1 = bisect_r(alt_kinks, alt0), bisect_r(alt_kinks, alt1)
        if i0 != i1:
            zb = alt_kinks[i0] if i1 > i0 else alt_kinks[i0 - 1]
            cands.append((altitude, zb))
        if drag_on and alt0 < atm_top and alt1 < atm_top and dg0[1] > 0.0:
            m0_, m1_ = dg0[2], dg1[2]
            j0, j1 = bisect_r(P_mach, m0_), bisect_r(P_mach, m1_)
            if j0 != j1 and 0 < min(j0, j1) and max(j0, j1) <= len(P_mach):
                mb = P_mach[j0] if j1 > j0 else P_mach[j0 - 1]
                cands.append((mach_of, mb))
        if not cands:
            return None
        # a kink changes only the drag and pressure-thrust terms; if those
        # terms together move the speed by less than the tolerance over the
        # whole step, the kink cannot spoil it: no cut
        m_lo = s0[6] if s0[6] < K[0][6] * h + s0[6] else K[0][6] * h + s0[6]
        alt_lo = alt0 if alt0 < alt1 else alt1
        p_hi = pds(alt_lo)[0] if alt_lo < atm_top and P_burn else 0.0
        d_hi = dg0[6] if dg0[6] > dg1[6] else dg1[6]
        if h * (d_hi + p_hi * P_ae) / m_lo < rtol * (_VEL_SCALE_M_S + dg1[1]):
            return None
        best = None
        s6 = s0[:6]  # altitude and Mach need position and velocity only
        for fun, target in cands:
            a, b = 0.0, 1.0
            fa = fun(s0) - target
            fb = (alt1 if fun is altitude else dg1[2]) - target
            if (fa > 0) == (fb > 0):
                continue
            # a crossing in the step's last percent is kept by the caller
            # (as is a later one, if another comes earlier): one test
            # instead of the search (the usual case after `predict_kink`)
            if (fun(dense(s6, h, K, 0.99)) - target > 0) == (fa > 0):
                continue
            side = 0
            c = 0.5
            for _ in range(30):
                c = (a * fb - b * fa) / (fb - fa)
                fc = fun(dense(s6, h, K, c)) - target
                # a sliver of 1e-6 of the step past the kink costs nothing
                if b - a < 1e-6 or abs(fc) < 1e-9 * (1.0 + abs(target)):
                    break
                if (fc > 0) == (fb > 0):
                    b, fb = c, fc
                    if side == -1:
                        fa *= 0.5
                    side = -1
                else:
                    a, fa = c, fc
                    if side == 1:
                        fb *= 0.5
                    side = 1
            if best is None or c < best:
                best = c
        return best

    def predict_kink(t, h):
        """Step length that ends just past the next kink predicted within h, or None.

        Quadratic extrapolation of altitude and Mach number through the last
        three samples; the step then ends a little past the predicted crossing
        so that the kink falls in the step's last percent (see the loop).
        """
        if len(kink_track) < 3:
            return None
        (ta, aa, ma), (tb, ab, mb), (tc, ac, mc) = kink_track
        if not (ta < tb < tc) or tc != t:
            return None
        best = None
        series = [(aa, ab, ac, alt_kinks)]
        if drag_on and ac < atm_top and last_dg[0][1] > 0.0:
            series.append((ma, mb, mc, P_mach))
        for fa, fb, fc, knots in series:
            # Newton form through (ta, fa), (tb, fb), (tc, fc), evaluated at t + tau
            d1 = (fc - fb) / (tc - tb)
            d2 = (d1 - (fb - fa) / (tb - ta)) / (tc - ta)
            fh = fc + h * (d1 + d2 * (h + tc - tb))
            i0, i1 = bisect_r(knots, fc), bisect_r(knots, fh)
            if i0 == i1:
                continue
            kb = knots[i0] if i1 > i0 else knots[i0 - 1]
            lo, hi, flo, fhi = 0.0, h, fc - kb, fh - kb
            if (flo > 0) == (fhi > 0):
                continue
            for _ in range(8):
                mid = lo - flo * (hi - lo) / (fhi - flo)
                fm = fc + mid * (d1 + d2 * (mid + tc - tb)) - kb
                if (fm > 0) == (flo > 0):
                    lo, flo = mid, fm
                else:
                    hi, fhi = mid, fm
                if hi - lo < 1e-4 * h:
                    break
            tau = mid
            if best is None or tau < best:
                best = tau
        if best is None or best < 0.05 * h:
            return None
        return best * 1.003

    def mach_of(st_):
        x, y, vx, vy, vz = st_[0], st_[1], st_[3], st_[4], st_[5]
        if w != 0.0:
            vx, vy = vx + w * y, vy - w * x
        alt = altitude(st_)
        a_s = pds(alt)[2] if alt < atm_top else 1.0
        return sqrt(vx * vx + vy * vy + vz * vz) / a_s

    def advance(t, s, h):
        return dp_step(t, s, h)[0] if adaptive else rk4(t, s, h)

    cur_step = [None]  # (t0, s0, h, K, stage) of the step being checked for events

    def radial_speed(s):
        if round_:
            x, y, z = s[0], s[1], s[2]
            return (x * s[3] + y * s[4] + z * s[5]) / sqrt(x * x + y * y + z * z)
        return s[5]

    def altitude(s):
        if round_:
            return sqrt(s[0] * s[0] + s[1] * s[1] + s[2] * s[2]) - R
        return s[2]

    def rail_dist(s):
        return (s[0] - r0[0]) * rux + (s[1] - r0[1]) * ruy + (s[2] - r0[2]) * ruz

    def downrange(t, s):
        if round_:
            if w != 0.0:
                c, sn = math.cos(w * t), math.sin(w * t)
                sx, sy, sz = c * r0[0] - sn * r0[1], sn * r0[0] + c * r0[1], r0[2]
            else:
                sx, sy, sz = r0
            x, y, z = s[0], s[1], s[2]
            cx, cy, cz = y * sz - z * sy, z * sx - x * sz, x * sy - y * sx
            ang = math.atan2(sqrt(cx * cx + cy * cy + cz * cz), x * sx + y * sy + z * sz)
            return R * ang
        return math.hypot(s[0] - r0[0], s[1] - r0[1])

    def locate(t, s, h, fun, target=0.0):
        """Time tau in (0, h] where fun(state) crosses `target` (Illinois)."""
        a, b = 0.0, h
        fa = fun(s) - target
        if adaptive:
            _, s0_, h_, K_, _ = cur_step[0]

            def step_to(_t, _s, c):
                return dense(s0_, h_, K_, c / h_)
        else:
            step_to = rk4
        sb = step_to(t, s, h)
        fb = fun(sb) - target
        side = 0
        sc = sb
        c = b
        for _ in range(60):
            if fb == fa:
                break
            c = (a * fb - b * fa) / (fb - fa)
            sc = step_to(t, s, c)
            fc = fun(sc) - target
            if abs(fc) < 1e-12 * (1.0 + abs(target)) or (b - a) < 1e-10 * max(h, 1e-12):
                break
            if (fc > 0) == (fb > 0):
                b, fb = c, fc
                if side == -1:
                    fa *= 0.5
                side = -1
            else:
                a, fa = c, fc
                if side == 1:
                    fb *= 0.5
                side = 1
        if adaptive:
            # the interpolant located the event; integrate to it properly and
            # polish with a few secant steps on the integrated state (slope
            # from the interpolant)
            sc = dp_step(t, s, c)[0]
            fc = fun(sc) - target
            tol = 1e-10 * (1.0 + abs(target))
            if abs(fc) > tol:
                d = 1e-6 * h
                sl = (fun(step_to(t, s, c + d)) - fun(step_to(t, s, c))) / d
                for _ in range(4):
                    if sl == 0.0:
                        break
                    c = min(max(c - fc / sl, 0.0), h)
                    sc = dp_step(t, s, c)[0]
                    fc = fun(sc) - target
                    if abs(fc) <= tol:
                        break
        return c, sc

    # --- initial state ----------------------------------------------------
    s = [r0[0], r0[1], r0[2], -w * r0[1], w * r0[0], 0.0, m0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0]
    v_inertial0 = sqrt(s[3] ** 2 + s[4] ** 2 + s[5] ** 2)
    t = 0.0
    ground = h0

    H = {k: [] for k in FlightHistory.COLUMNS}
    stage_now = 0
    maxq = (0.0, 0.0, h0)
    max_acc = 0.0
    went_below = False

    last_dg = [None]  # diagnostics of the last recorded state
    kink_track: list = []  # last three (t, altitude, Mach) samples, to predict kinks
    q_samples: list = []  # last three (t, q, step) samples, for the max-q search

    def history_row(t, s, dg, stage):
        alt, vrel, mach, q, sens, f, dmag = dg
        return (t, alt, downrange(t, s), vrel, sqrt(s[3] ** 2 + s[4] ** 2 + s[5] ** 2), path_angle_deg(s), mach,
                q, sens, s[6], f, dmag, stage)

    def refine_max_q():
        """Largest q between the last three samples, on the steps' continuous extension.

        Brent's bounded method (`_bounded_minimum`) on q(t) evaluated
        on the Dormand-Prince interpolant of the two steps around the sampled peak.
        """
        nonlocal maxq
        (ta, _, _), (tb, _, stb), (tc, _, stc) = q_samples

        def state_at(tt, n=13):
            st_ = stb if tt <= tb else stc
            return dense(st_[1][:n], st_[2], st_[3], (tt - st_[0]) / st_[2]), st_

        def neg_q(tt):
            # q = rho |v_rel|^2 / 2, as in `rhs` (which it would cost in full)
            x, y, z, vx, vy, vz = state_at(tt, 6)[0]
            alt = altitude((x, y, z))
            if w != 0.0:
                vx, vy = vx + w * y, vy - w * x
            rho = pds(alt)[1] if alt < atm_top and (alt > 0.0 or detect_impact) else 0.0
            return -(0.5 * rho * (vx * vx + vy * vy + vz * vz))

        tq = _bounded_minimum(neg_q, ta, tc, 1e-6 * max(1.0, tc))
        sq, st_ = state_at(tq)
        dgq = rhs(tq, sq, True)[1]
        if dgq[3] > maxq[0]:
            maxq = (dgq[3], tq, dgq[0])
            if record_history:
                row = history_row(tq, sq, dgq, st_[4])
                k = __import__("bisect").bisect_left(H["t_s"], tq)
                for col, v in zip(FlightHistory.COLUMNS, row):
                    H[col].insert(k, v)

    def record(t, s, pre=None, step=None):
        nonlocal maxq, max_acc, went_below
        der, dg = rhs(t, s, True) if pre is None else pre
        k1_cache[0], k1_cache[1], k1_cache[2] = t, s, der
        last_dg[0] = dg
        if adaptive:
            kink_track.append((t, dg[0], dg[2]))
            if len(kink_track) > 3:
                del kink_track[0]
        alt, vrel, mach, q, sens, f, dmag = dg
        if alt < ground - 1.0:
            went_below = True
        new_max_q = q > maxq[0]
        if new_max_q:
            maxq = (q, t, alt)
        if sens > max_acc:
            max_acc = sens
        if record_history:
            for col, v in zip(FlightHistory.COLUMNS, history_row(t, s, dg, stage_now)):
                H[col].append(v)
        if adaptive:
            q_samples.append((t, q, step))
            if len(q_samples) > 3:
                del q_samples[0]
            if (not new_max_q and len(q_samples) == 3 and q_samples[1][1] == maxq[0] > 0.0
                    and q_samples[0][1] < q_samples[1][1] and q_samples[1][2] is not None
                    and step is not None):
                refine_max_q()
        return dg

    def set_phase(ph):
        nonlocal P_fa, P_fb, P_ma, P_mb, P_t0, P_burn, P_ae, P_aref, P_mach, P_cd, P_steer
        nonlocal stage_now
        st = stages[ph.stage]
        stage_now = ph.stage
        P_fa, P_fb, P_ma, P_mb, P_t0 = ph.f_a, ph.f_b, ph.m_a, ph.m_b, ph.t0
        P_burn = ph.burning
        P_ae = st.exit_area_m2
        P_aref = vehicle.reference_area_m2(ph.stage)
        P_mach, P_cd = st.drag.mach, st.drag.cd
        P_steer = ph.steer

    # --- bookkeeping -----------------------------------------------------
    events: dict[str, tuple] = {}
    burnouts: list[StageBurnout] = []
    acc_prev = (0.0,) * 6
    speed_rel_prev = 0.0
    apogee = (h0, math.nan)
    terminated = "time_limit"
    lifted = False

    def check_events(t, s, h, s1, skip):
        """Return (kind, tau, state) of the first event in this step, or None.

        `skip` names an event just handled at the step start (not re-detected).
        """
        found = []
        if on_rail and rail_len > 0.0 and skip != "rail_exit":
            if rail_dist(s1) >= rail_len:
                tau, se = locate(t, s, h, rail_dist, rail_len)
                found.append(("rail_exit", tau, se))
        if not is_ascent:
            vr0, vr1 = radial_speed(s), radial_speed(s1)
            if lifted and vr0 > 0.0 >= vr1 and skip != "apogee":
                tau, se = locate(t, s, h, radial_speed)
                found.append(("apogee", tau, se))
        a1 = altitude(s1)
        if (detect_impact and lifted and a1 < ground and altitude(s) >= ground
                and radial_speed(s1) < 0 and skip != "impact"):
            tau, se = locate(t, s, h, altitude, ground)
            found.append(("impact", tau, se))
        if not found:
            return None
        return min(found, key=lambda e: e[1])

    def finish_stage(i, t, s):
        nonlocal acc_prev, speed_rel_prev
        _, dg = rhs(t, s, True)
        acc = tuple(s[7:13])
        d = [a - b for a, b in zip(acc, acc_prev)]
        vrel = dg[1]
        burnouts.append(
            StageBurnout(
                stage=stages[i].name,
                time_s=t,
                altitude_m=dg[0],
                downrange_m=downrange(t, s),
                speed_m_s=vrel,
                inertial_speed_m_s=sqrt(s[3] ** 2 + s[4] ** 2 + s[5] ** 2),
                flight_path_angle_deg=path_angle_deg(s),
                mass_kg=s[6],
                ideal_delta_v_m_s=d[4],
                speed_gain_m_s=vrel - speed_rel_prev,
                losses_m_s=MappingProxyType(dict(zip(LOSS_KEYS, d[:4]))),
                centrifugal_m_s=d[5],
            )
        )
        acc_prev = acc
        speed_rel_prev = vrel

    # --- main loop ---------------------------------------------------------
    final_coast = _Phase(t_final_bo, math.inf, n_st - 1, burning=False, steer=_PRO)
    all_phases = list(phases)
    if not (is_ascent or stop_at == "burnout"):
        all_phases.append(final_coast)
    record(t, s)
    h_next = h_first if adaptive else 0.0
    done = False
    just = None
    budget_state = None
    for ph in all_phases:
        if done:
            break
        set_phase(ph)
        k1_cache[1] = None
        if P_steer in (_LTG, _PRATE) and abs(t - L_ts) < 1e-9:
            # start the law from the current inertial flight-path angle
            rr = sqrt(s[0] ** 2 + s[1] ** 2 + s[2] ** 2)
            vv = sqrt(s[3] ** 2 + s[4] ** 2 + s[5] ** 2)
            gam = math.asin(max(-1.0, min(1.0, (s[0] * s[3] + s[1] * s[4] + s[2] * s[5]) / (rr * vv))))
            if ascent.initial_pitch_deg is not None:
                gam = math.radians(ascent.initial_pitch_deg)
            L_th0 = gam
            L_tan0 = math.tan(gam)
        t1 = ph.t1
        t1_stop = t1 - 1e-12 * max(1.0, t1) if math.isfinite(t1) else math.inf
        while t < t1_stop:
            if t > _MAX_FLIGHT_TIME_S:
                done = True
                break
            remaining = t1 - t
            if adaptive:
                h = min(h_next, dt_max)
                if remaining <= 1.05 * h:
                    h = remaining
                hp = predict_kink(t, h)
                h_uncut = 0.0
                if hp is not None and hp < h:
                    h_uncut = h
                    h = hp
                try:
                    s1, err, K, k7, dg7 = dp_step(t, s, h)
                except (ValueError, OverflowError, ZeroDivisionError):
                    # a trial step so long that a stage state left the models'
                    # domain (e.g. far below ground): reject it like any other
                    if h < 1e-9 * max(1.0, t):
                        raise
                    h_next = 0.2 * h
                    continue
                # end steps on the atmosphere's and drag table's kinks, where the
                # right-hand side has a discontinuous derivative (like the
                # phase boundaries in time)
                xk = kink_crossing(last_dg[0], dg7, s, h, K)
                # a kink in the first or last percent of a step leaves a
                # sliver whose error is 1e-4 of a mid-step kink's: keep the step
                if xk is not None and 1e-2 < xk < 0.99:
                    hk = xk * h
                    s1k, errk, Kk, k7k, dg7k = dp_step(t, s, hk)
                    if errk <= 1.0:
                        # the step after the kink starts from the step size the
                        # uncut trial asked for
                        h_keep = h * min(5.0, max(0.2, 0.9 * max(err, 1e-10) ** -0.2))
                        h_next = max(h_next, h_keep)
                        s1, err, K, k7, dg7, h = s1k, errk, Kk, k7k, dg7k, hk
                        remaining = math.inf if math.isinf(remaining) else h
                # step-size control: Hairer, Norsett & Wanner 1993, Sec. II.4, eq. 4.13
                if err > 1.0:
                    h_next = h * max(0.2, 0.9 * err ** -0.2)
                    continue
                fac = 5.0 if err < 1e-10 else min(5.0, 0.9 * err ** -0.2)
                if h < remaining or h * fac > h_next:
                    h_next = h * fac
                # a step shortened to end on a predicted kink says nothing
                # about the step size beyond it: resume the uncut size
                if h_uncut > h_next:
                    h_next = h_uncut
                cur_step[0] = (t, s, h, K, stage_now)
            else:
                dt_here = dt_vac if altitude(s) > _VACUUM_ALT_M else dt_max
                if math.isinf(remaining):
                    h = dt_here
                else:
                    nsteps = max(1, math.ceil(remaining / dt_here - 1e-9))
                    h = remaining / nsteps
                s1 = rk4(t, s, h)
            if not lifted and (s1[3] - s[3]) ** 2 + (s1[4] - s[4]) ** 2 + (s1[5] - s[5]) ** 2 > 0:
                lifted_now = True
            else:
                lifted_now = lifted
            ev = check_events(t, s, h, s1, just) if lifted_now or on_rail else None
            just = None
            if ev is not None:
                kind, tau, se = ev
                t = t + tau
                s = se
                dg = record(t, s)
                if kind == "rail_exit":
                    events["rail_exit"] = (t, dg[1])
                    on_rail = False
                    k1_cache[1] = None
                elif kind == "apogee":
                    if dg[0] > apogee[0]:
                        apogee = (dg[0], t)
                    if stop_at == "apogee" and ph is final_coast:
                        terminated = "apogee"
                        done = True
                        break
                elif kind == "impact":
                    events["impact"] = (t, downrange(t, s))
                    terminated = "impact"
                    done = True
                    break
                lifted = lifted or lifted_now
                just = kind
                continue
            lifted = lifted_now
            t += h
            s = s1
            if on_rail and rail_len == 0.0 and lifted:
                on_rail = False
                k1_cache[1] = None
                events["rail_exit"] = (t, math.nan)
                record(t, s)
            elif adaptive:
                record(t, s, (k7, dg7), cur_step[0])
            else:
                record(t, s)
        if done:
            break
        if ph.burnout_of >= 0:
            i = ph.burnout_of
            finish_stage(i, t, s)
            k1_cache[1] = None
            if i == n_st - 1:
                budget_state = list(s)
            if i < n_st - 1:
                s[6] = vehicle.ignition_mass_kg(i + 1)
            else:
                s[6] = vehicle.payload_mass_kg + stages[i].structural_mass_kg
                if is_ascent or stop_at == "burnout":
                    terminated = "burnout"
                    done = True

    # --- results ---------------------------------------------------------
    if not is_ascent:
        hist_alt = H["altitude_m"]
        if record_history and hist_alt:
            k = int(np.argmax(hist_alt))
            if hist_alt[k] > apogee[0]:
                apogee = (hist_alt[k], H["t_s"][k] if terminated != "apogee" else apogee[1])
    # the budget is closed at final burnout (or at the last state if the
    # flight ended earlier); coasts after final burnout are not in it
    sb = budget_state if budget_state is not None else s
    acc = sb[7:13]
    v_in = sqrt(sb[3] ** 2 + sb[4] ** 2 + sb[5] ** 2)
    if w != 0.0:
        vrx, vry, vrz = sb[3] + w * sb[1], sb[4] - w * sb[0], sb[5]
        v_rel = sqrt(vrx * vrx + vry * vry + vrz * vrz)
        bonus = (v_in - v_rel) + acc[5]
    else:
        bonus = v_inertial0
    losses = dict(zip(LOSS_KEYS, acc[:4]))
    ideal = acc[4]
    residual = ideal - (v_in - bonus + sum(losses.values()))

    orbit = None
    if is_ascent or round_:
        r = sqrt(s[0] ** 2 + s[1] ** 2 + s[2] ** 2)
        v_s = sqrt(s[3] ** 2 + s[4] ** 2 + s[5] ** 2)
        if v_s > 0:
            gam = math.asin(max(-1.0, min(1.0, (s[0] * s[3] + s[1] * s[4] + s[2] * s[5]) / (r * v_s))))
            hx = s[1] * s[5] - s[2] * s[4]
            hy = s[2] * s[3] - s[0] * s[5]
            hz = s[0] * s[4] - s[1] * s[3]
            hn = sqrt(hx * hx + hy * hy + hz * hz)
            inc = math.degrees(math.acos(max(-1.0, min(1.0, hz / hn)))) if hn > 0 else math.nan
            if is_ascent:
                orbit = orbit_elements(r, v_s, gam, inclination_deg=inc)
    if is_ascent and went_below:
        terminated = "impact"
    if is_ascent and terminated == "impact":
        warn.append("the vehicle fell back to the ground before final burnout.")

    rail_exit_t, rail_exit_v = events.get("rail_exit", (math.nan, math.nan))
    if profile == "vertical" and rail_len > 0:
        if not math.isnan(rail_exit_v):
            if rail_exit_v < HOBBY_MIN_RAIL_EXIT_SPEED_M_S:
                warn.append(
                    f"rail-exit speed {rail_exit_v:.1f} m/s is below {HOBBY_MIN_RAIL_EXIT_SPEED_M_S:g} m/s "
                    "(common hobby practice, from memory) and below "
                    f"{DTEG_MIN_RAIL_EXIT_SPEED_M_S:g} m/s (Spaceport America Cup DTEG 10.2.1)."
                )
            elif rail_exit_v < DTEG_MIN_RAIL_EXIT_SPEED_M_S:
                warn.append(
                    f"rail-exit speed {rail_exit_v:.1f} m/s is below {DTEG_MIN_RAIL_EXIT_SPEED_M_S:g} m/s "
                    "(100 ft/s, Spaceport America Cup DTEG 10.2.1)."
                )
        else:
            warn.append("the vehicle never left the rail.")
    if acceleration_limit_m_s2 is not None and max_acc > acceleration_limit_m_s2:
        warn.append(
            f"max acceleration {max_acc:.1f} m/s^2 ({max_acc / G0_M_S2:.1f} g0) exceeds the stated "
            f"limit {acceleration_limit_m_s2:.1f} m/s^2."
        )

    hist = FlightHistory(
        **{
            k: np.asarray(v, dtype=(np.int64 if k == "stage_index" else float))
            for k, v in H.items()
        }
    )
    impact_t, impact_x = events.get("impact", (math.nan, math.nan))
    return FlightResult(
        profile=profile,
        terminated_by=terminated,
        apogee_m=apogee[0] if not is_ascent else math.nan,
        time_to_apogee_s=apogee[1] if not is_ascent else math.nan,
        rail_exit_speed_m_s=rail_exit_v,
        rail_exit_time_s=rail_exit_t,
        max_dynamic_pressure_pa=maxq[0],
        max_q_time_s=maxq[1],
        max_q_altitude_m=maxq[2],
        max_acceleration_m_s2=max_acc,
        liftoff_thrust_to_weight=tw_lift,
        impact_time_s=impact_t,
        impact_downrange_m=impact_x,
        orbit=orbit,
        burnouts=tuple(burnouts),
        ideal_delta_v_m_s=ideal,
        losses_m_s=MappingProxyType(losses),
        rotation_bonus_m_s=bonus,
        final_inertial_speed_m_s=v_in,
        budget_residual_m_s=residual,
        ascent_profile=ascent if is_ascent else None,
        targeting_residual=(),
        warnings=tuple(warn),
        history=hist,
    )


def fly_vertical(
    vehicle: Vehicle,
    site: LaunchSite,
    *,
    earth: str = "flat",
    with_drag: bool = True,
    with_gravity: bool = True,
    stop_at: str = "apogee",
    max_step_s: float | None = None,
    record_history: bool = True,
    acceleration_limit_m_s2: float | None = None,
) -> FlightResult:
    """Near-vertical flight from a launch rail (sounding and hobby rockets).

    The vehicle slides along the rail (length `site.rail_length_m`, tilted
    `site.rail_angle_deg` from the vertical towards `site.azimuth_deg`),
    held until thrust exceeds the weight component along the rail; after rail
    exit the thrust follows the velocity (zero lift, no wind). Earth does not
    rotate. Flat Earth: constant gravity g0 = 9.80665 m/s^2, altitude along
    the local vertical. Round Earth: inverse-square gravity.

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
        Largest integration step [s]; default none (the adaptive integrator's
        error control alone sets the step; see the module docstring). A cap
        gives a denser time history.
    record_history : bool
        Keep the time history (off saves time in optimisation loops).
    acceleration_limit_m_s2 : float, optional
        Add a warning when the sensed acceleration exceeds it.

    Returns
    -------
    FlightResult
        With rail-exit speed, per-stage burnouts, apogee and time to apogee
        (above mean sea level), max-q, max acceleration and the loss budget.
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
    return simulate(
        vehicle, site, profile="vertical", earth=earth, rotating=False,
        with_drag=with_drag, with_gravity=with_gravity, stop_at=stop_at,
        max_step_s=max_step_s, record_history=record_history,
        acceleration_limit_m_s2=acceleration_limit_m_s2,
    )


def fly_ascent(
    vehicle: Vehicle,
    site: LaunchSite,
    profile: AscentProfile | None = None,
    *,
    rotating: bool = True,
    with_drag: bool = True,
    max_step_s: float | None = None,
    record_history: bool = True,
    acceleration_limit_m_s2: float | None = None,
    max_targeting_evaluations: int = 60,
    optimize_kick: bool = True,
) -> FlightResult:
    """Gravity-turn ascent to orbit over a round, rotating Earth (3-D, inverse-square gravity).

    Vertical rise, pitch kick towards `site.azimuth_deg`, zero-lift gravity
    turn (thrust along the Earth-relative velocity), then optionally an
    upper-stage steering law (`AscentProfile.steering`). The flight ends at
    final burnout; `FlightResult.orbit` holds the osculating orbit there.

    When `profile.target_altitude_m` is set, the pitch kick (and the final
    pitch of the steering law) are solved with scipy.optimize.least_squares so
    that final burnout happens at that altitude with zero inertial flight-path
    angle; the orbit is then circular if the burnout speed equals the circular
    speed, else perigee (speed too high) or apogee (too low) sits at the target.
    `targeting_residual` reports what is left of (altitude [m], angle [deg]).
    For steered profiles the kick is also chosen for the highest burnout speed
    unless `optimize_kick` is False (then the given kick is kept and
    `initial_pitch_deg`/`final_pitch_deg` serve as the starting guess).

    Raises
    ------
    FieldError
        If the first stage cannot lift the vehicle.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014,
       Sec. 11.2-11.3 (gravity turn, launch losses).
    .. [2] A. E. Bryson, Y.-C. Ho, Applied Optimal Control, 1975, Sec. 2.7
       (linear tangent law; from memory).
    """
    profile = profile or AscentProfile()

    def run(p, hist, impact=True):
        return simulate(
            vehicle, site, profile="ascent", ascent=p, earth="round", rotating=rotating,
            with_drag=with_drag, stop_at="burnout", max_step_s=max_step_s,
            record_history=hist, acceleration_limit_m_s2=acceleration_limit_m_s2,
            detect_impact=impact,
        )

    if profile.target_altitude_m is None:
        return run(profile, record_history)
    res, p_best, resid = _target_ascent(run, profile, max_targeting_evaluations, optimize_kick)
    if record_history:
        res = run(p_best, True)
    return replace(res, targeting_residual=resid)


def _burnout_residual(res: FlightResult, target_alt_m: float) -> tuple[float, float]:
    o = res.orbit
    if o is None:
        # crashed: a large, still-continuous penalty
        last_alt = float(res.history.altitude_m[-1]) if len(res.history.t_s) else 0.0
        return (last_alt - target_alt_m - 1e5, -90.0)
    return (o.altitude_m - target_alt_m, o.flight_path_angle_deg)


_PITCH0_BOUNDS_DEG = (-5.0, 75.0)
_PITCHF_BOUNDS_DEG = (-30.0, 45.0)


def _target_ascent(run, profile: AscentProfile, max_eval: int, optimize_kick: bool = True):
    """Solve the steering programme for burnout at the target altitude with gamma = 0.

    Steered profiles: for a given pitch kick, the steering law's initial and
    final pitch are solved with scipy.optimize.least_squares for the two end
    conditions (altitude, zero inertial flight-path angle). Without a warm
    start (`profile.initial_pitch_deg` None) a few kicks around the given one
    are tried and the fastest feasible kept. With `optimize_kick`, the three
    parameters are then polished with SLSQP (scipy.optimize.minimize),
    maximising the inertial burnout speed subject to the two end conditions.
    Gravity-turn-only profiles have one free parameter (the kick), fitted in
    the least-squares sense. `max_eval` bounds the trajectories of each solve.
    """
    from scipy.optimize import least_squares, minimize

    target = float(profile.target_altitude_m)
    steer = profile.steering != "gravity_turn"
    scale_alt = 1.0e4  # 10 km of altitude error ~ 1 deg of flight-path angle
    memo: dict[tuple, tuple] = {}

    def evaluate(kick, th0=None, thf=None):
        key = (float(kick), th0 if th0 is None else float(th0), thf if thf is None else float(thf))
        if key in memo:
            return memo[key]
        kw = {"pitch_kick_deg": min(max(key[0], 0.0), 60.0)}
        if steer:
            kw["initial_pitch_deg"] = key[1]
            kw["final_pitch_deg"] = key[2]
        p = replace(profile, **kw)
        res = run(p, False, False)
        ra, rg = _burnout_residual(res, target)
        out = (np.array([ra / scale_alt, rg]), res, p)
        memo[key] = out
        return out

    def feasible(out) -> bool:
        r, res, _ = out
        return res.terminated_by == "burnout" and abs(r[0]) * scale_alt < 1.0 and abs(r[1]) < 1e-3

    def norm2(out) -> float:
        return float(np.sum(out[0] ** 2))

    def pack(out):
        r, res, p = out
        return res, p, (float(r[0] * scale_alt), float(r[1]))

    if not steer:
        best = min((0.5, 1.0, 2.0, 4.0, 8.0), key=lambda k: norm2(evaluate(k)))
        least_squares(lambda x: evaluate(x[0])[0], [best], bounds=([0.0], [60.0]),
                      diff_step=1e-6, max_nfev=max_eval)
        return pack(min(memo.values(), key=norm2))

    lb = [_PITCH0_BOUNDS_DEG[0], _PITCHF_BOUNDS_DEG[0]]
    ub = [_PITCH0_BOUNDS_DEG[1], _PITCHF_BOUNDS_DEG[1]]

    def inner(kick: float, x0) -> tuple:
        x0 = np.clip(np.asarray(x0, dtype=float), lb, ub)
        least_squares(lambda x: evaluate(kick, x[0], x[1])[0], x0, bounds=(lb, ub),
                      diff_step=1e-6, x_scale=[5.0, 5.0], xtol=1e-9, ftol=1e-10, gtol=1e-10,
                      max_nfev=max_eval)
        cands = [v for k, v in memo.items() if k[0] == float(kick) and k[1] is not None]
        return min(cands, key=norm2)

    def guess_pitch0(kick: float) -> float:
        h = run(replace(profile, pitch_kick_deg=kick, initial_pitch_deg=None), True).history
        idx = np.flatnonzero(h.stage_index == h.stage_index[-1])
        return float(h.flight_path_angle_deg[idx[0]]) if idx.size else 20.0

    k0 = profile.pitch_kick_deg if profile.pitch_kick_deg > 0 else 1.0
    best = None
    if profile.initial_pitch_deg is not None:
        out = inner(k0, (profile.initial_pitch_deg, profile.final_pitch_deg))
        if feasible(out):
            best = out
    if best is None:
        kicks = [0.5 * k0, k0, 2.0 * k0]
        for attempt in range(2):
            for k in kicks:
                out = inner(k, (guess_pitch0(k), 0.0))
                if feasible(out) and (best is None or
                                      out[1].final_inertial_speed_m_s > best[1].final_inertial_speed_m_s):
                    best = out
            if best is not None:
                break
            kicks = [k for k in (0.25, 1.0, 4.0, 8.0, 16.0) if k not in kicks]
    if best is None:
        return pack(min(memo.values(), key=norm2))
    if optimize_kick:
        p = best[2]
        x1 = np.array([p.pitch_kick_deg, p.initial_pitch_deg, p.final_pitch_deg])

        def obj(x):
            out = evaluate(*x)
            return -out[1].final_inertial_speed_m_s / 1000.0 if out[1].terminated_by == "burnout" else 10.0

        try:
            minimize(obj, x1, method="SLSQP",
                     constraints=[{"type": "eq", "fun": lambda x: evaluate(*x)[0]}],
                     bounds=[(0.0, 45.0), tuple(_PITCH0_BOUNDS_DEG), tuple(_PITCHF_BOUNDS_DEG)],
                     options={"maxiter": 30, "ftol": 1e-9, "eps": 1e-6})
        except (ValueError, FloatingPointError):  # pragma: no cover - keep the inner answer
            pass
        feas = [v for v in memo.values() if v[2].initial_pitch_deg is not None and feasible(v)]
        best = max(feas, key=lambda v: v[1].final_inertial_speed_m_s)
    return pack(best)


# ---------------------------------------------------------------------------
# batched ascents: many candidate vehicles in lock-step (numpy)
# ---------------------------------------------------------------------------
def _atmosphere_vec(alt_m: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(p [Pa], rho [kg/m^3], a [m/s]) for an array of altitudes, vacuum outside (0, 300 km).

    The same model as `pressure_density_sound_speed` (US Standard Atmosphere
    1976 below 86 km via `sizing.physics.atmosphere.atmosphere`; above, the
    module's log-linear table of pressure and density and the standard's
    closed-form kinetic temperature, USSA 1976 eqs. 25-31, for the speed of
    sound).
    """
    from sizing.physics.atmosphere import _UP_LNP, _UP_LNRHO, GAMMA_AIR, atmosphere
    from sizing.physics.atmosphere import _R_AIR as R_AIR

    p = np.zeros_like(alt_m)
    rho = np.zeros_like(alt_m)
    a = np.ones_like(alt_m)
    low = (alt_m > 0.0) & (alt_m < _Z86_M)
    if low.any():
        st = atmosphere(alt_m[low])
        p[low], rho[low], a[low] = st.pressure_Pa, st.density_kg_m3, st.speed_of_sound_m_s
    high = (alt_m >= _Z86_M) & (alt_m < _ATMOSPHERE_TOP_M)
    if high.any():
        z = alt_m[high]
        p[high] = np.exp(np.interp(z, _UP_Z_M, _UP_LNP))
        rho[high] = np.exp(np.interp(z, _UP_Z_M, _UP_LNRHO))
        zk = z * 1e-3
        x = (zk - 91.0) / -19.9429
        r0k = R0_GEOPOTENTIAL_M * 1e-3
        xi = (zk - 120.0) * (r0k + 120.0) / (r0k + zk)
        t = np.where(zk < 91.0, 186.8673,
                     np.where(zk < 110.0, 263.1905 - 76.3232 * np.sqrt(np.maximum(0.0, 1.0 - x * x)),
                              np.where(zk < 120.0, 240.0 + 12.0 * (zk - 110.0),
                                       1000.0 - 640.0 * np.exp(-0.01875 * xi))))
        a[high] = np.sqrt(GAMMA_AIR * R_AIR * t)
    return p, rho, a


def fly_ascent_batch(
    vehicles,
    site: LaunchSite,
    profiles=None,
    *,
    rotating: bool = True,
    with_drag: bool = True,
    max_step_s: float = 0.5,
    vacuum_step_factor: float = 8.0,
) -> tuple[FlightResult, ...]:
    """Fly many candidate vehicles at once, in lock-step on numpy arrays (trade studies).

    The equations, steering laws and loss budget are those of `fly_ascent`
    (round rotating Earth, final burnout ends the flight, no history, no impact
    event: a candidate that falls below ground flies on in vacuum and carries
    the impact warning, as in the targeting runs of `fly_ascent`). Each
    candidate's flight is cut into the same sequence of smooth phases; phase k
    of every candidate is integrated over its own time interval mapped onto a
    common normalised time, with classical fixed-step fourth-order Runge-Kutta
    (Hairer, Norsett & Wanner, Solving Ordinary Differential Equations I, 2nd
    ed., 1993, Sec. II.1): as many steps as the longest candidate's phase needs
    at `max_step_s` [s] (times `vacuum_step_factor` once every candidate is
    above 100 km). Max-q and max acceleration are sampled at the step ends.

    Parameters
    ----------
    vehicles : sequence of Vehicle
        Same number of stages, constant thrust (no thrust curve).
    site : LaunchSite
    profiles : AscentProfile or sequence of AscentProfile, optional
        One for all or one per vehicle; no `target_altitude_m`; the same
        `steering` and `steer_from_stage` for all.

    Returns
    -------
    tuple of FlightResult
        One per vehicle, in order (empty `history`).

    Raises
    ------
    FieldError
        If a vehicle cannot lift off, or the candidates do not share the
        phase structure (then fly them one by one with `fly_ascent`).
    """
    vehicles = list(vehicles)
    n = len(vehicles)
    if n == 0:
        return ()
    if profiles is None or isinstance(profiles, AscentProfile):
        profs = [profiles or AscentProfile()] * n
    else:
        profs = list(profiles)
        if len(profs) != n:
            raise FieldError("profiles", f"must be one profile or {n} (one per vehicle).", len(profs))
    if any(p.target_altitude_m is not None for p in profs):
        raise FieldError("profiles.target_altitude_m", "must be None in a batch (use fly_ascent).", "set")
    n_st = len(vehicles[0].stages)
    for v in vehicles:
        if len(v.stages) != n_st:
            raise FieldError("vehicles", f"must all have {n_st} stages.", len(v.stages))
        for st in v.stages:
            if st.thrust_curve is not None or st.propellant_mass_curve is not None:
                raise FieldError(f"stages.{st.name}.thrust_curve", "must be None in a batch.", "table")
    steering = {p.steering for p in profs}
    steer_from = {p.steer_from_stage for p in profs}
    if len(steering) > 1 or len(steer_from) > 1:
        raise FieldError("profiles.steering", "must be the same law and start stage for all.", sorted(steering))
    steering = steering.pop()
    steer_from = steer_from.pop()

    mu, R = GM_EARTH_M3_S2, R_EARTH_EQ_M
    w = OMEGA_EARTH_RAD_S if rotating else 0.0
    lat, az = math.radians(site.latitude_deg), math.radians(site.azimuth_deg)
    cl, sl = math.cos(lat), math.sin(lat)
    h0 = site.altitude_m
    r0 = np.array([(R + h0) * cl, 0.0, (R + h0) * sl])
    north0, east0 = np.array([-sl, 0.0, cl]), np.array([0.0, 1.0, 0.0])
    azd = math.cos(az) * north0 + math.sin(az) * east0
    p_site = pressure_density_sound_speed(h0)[0]

    # per-vehicle phases (the scalar simulator's schedule) and a common structure
    warn_all: list[list[str]] = [[] for _ in range(n)]
    tw_lift = np.empty(n)
    sched = []
    for i, (v, pr) in enumerate(zip(vehicles, profs)):
        st0 = v.stages[0]
        weight0 = v.gross_mass_kg * G0_M_S2
        f_lift = st0.thrust_at(0.0, p_site)
        if f_lift <= weight0:
            raise FieldError(
                f"stages.{st0.name}.thrust",
                "liftoff thrust-to-weight must be > 1 (peak thrust at the site over m0 g0).",
                round(f_lift / weight0, 4),
            )
        tw_lift[i] = f_lift / weight0
        if st0.coast_before_ignition_s > 0:
            warn_all[i].append(
                f"stages.{st0.name}.coast_before_ignition_s is ignored for an ascent "
                "(the clock starts at first-stage ignition)."
            )
        windows = _stage_windows(v, ignore_first_coast=True)
        t_vert, t_kick = pr.vertical_rise_s, pr.vertical_rise_s + pr.kick_duration_s
        extra = [t_vert, t_kick]
        steer_start = None
        if steering != "gravity_turn":
            names = [s.name for s in v.stages]
            if steer_from is None:
                k = min(1, n_st - 1)
            elif steer_from in names:
                k = names.index(steer_from)
            else:
                raise FieldError("profile.steer_from_stage", f"must be one of {names}.", steer_from)
            steer_start = windows[k][0]
            extra.append(steer_start)
        phases = _build_phases(v, windows, extra)
        for ph in phases:
            mid = 0.5 * (ph.t0 + ph.t1)
            if mid < t_vert:
                ph.steer = _UP
            elif mid < t_kick:
                ph.steer = _KICK
            elif steer_start is not None and mid >= steer_start:
                ph.steer = _LTG if steering == "linear_tangent" else _PRATE
            else:
                ph.steer = _PRO
        sched.append((phases, steer_start, windows[-1][1]))
    shape0 = [(ph.stage, ph.burning, ph.burnout_of, ph.steer) for ph in sched[0][0]]
    for phases, _, _ in sched[1:]:
        if [(ph.stage, ph.burning, ph.burnout_of, ph.steer) for ph in phases] != shape0:
            raise FieldError("vehicles", "must share the order of ignitions, burnouts and steering "
                             "events to fly in one batch (fly them with fly_ascent).", "mixed")

    kick = np.radians([p.pitch_kick_deg for p in profs])
    kick_s, kick_c = np.sin(kick), np.cos(kick)
    steer_t0 = np.array([s[1] if s[1] is not None else 0.0 for s in sched])
    t_final = np.array([s[2] for s in sched])
    span = np.maximum(t_final - steer_t0, 1e-9)
    thf = np.radians([p.final_pitch_deg for p in profs])
    tanf = np.tan(thf)
    th0 = np.zeros(n)
    tan0 = np.zeros(n)
    plane_n = None
    if any(p.plane_azimuth_deg is not None for p in profs):
        up0 = np.array([cl, 0.0, sl])
        plane_n = np.empty((3, n))
        for i, p in enumerate(profs):
            bp = math.radians(p.plane_azimuth_deg if p.plane_azimuth_deg is not None else site.azimuth_deg)
            dp = math.cos(bp) * north0 + math.sin(bp) * east0
            nv = np.cross(up0, dp)
            plane_n[:, i] = nv / np.linalg.norm(nv)
        use_plane = np.array([p.plane_azimuth_deg is not None for p in profs])

    def rhs(t, Y, P):
        x, y, z, vx, vy, vz, m = Y[0], Y[1], Y[2], Y[3], Y[4], Y[5], Y[6]
        r2 = x * x + y * y + z * z
        r = np.sqrt(r2)
        upx, upy, upz = x / r, y / r, z / r
        alt = r - R
        gk = -mu / (r2 * r)
        gx, gy, gz = gk * x, gk * y, gk * z
        vrx, vry, vrz = vx + w * y, vy - w * x, vz
        vrel2 = vrx * vrx + vry * vry + vrz * vrz
        vrel = np.sqrt(vrel2)
        p_a, rho, a_s = _atmosphere_vec(alt)
        if P["burn"]:
            fv = P["f"]
            f = np.maximum(fv - p_a * P["ae"], 0.0)
            mdot = P["mdot"]
        else:
            fv = f = mdot = np.zeros(n)
        mach = vrel / a_s
        if with_drag:
            cd = np.empty(n)
            for (mt, ct), idx in P["tables"]:
                cd[idx] = np.interp(mach[idx], mt, ct)
            dmag = 0.5 * rho * vrel2 * cd * P["aref"]
        else:
            dmag = np.zeros(n)
        mode = P["steer"]
        safe = vrel > 1e-6
        vinv = 1.0 / np.where(safe, vrel, 1.0)
        if mode == _PRO:
            tx = np.where(safe, vrx * vinv, upx)
            ty = np.where(safe, vry * vinv, upy)
            tz = np.where(safe, vrz * vinv, upz)
        elif mode == _UP:
            tx, ty, tz = upx, upy, upz
        elif mode == _KICK:
            dd = azd[0] * upx + azd[1] * upy + azd[2] * upz
            hx, hy, hz = azd[0] - dd * upx, azd[1] - dd * upy, azd[2] - dd * upz
            hn = np.sqrt(hx * hx + hy * hy + hz * hz)
            tx = kick_c * upx + kick_s * hx / hn
            ty = kick_c * upy + kick_s * hy / hn
            tz = kick_c * upz + kick_s * hz / hn
        else:
            frac = (t - steer_t0) / span
            th = np.arctan(tan0 + (tanf - tan0) * frac) if mode == _LTG else th0 + (thf - th0) * frac
            vu = vx * upx + vy * upy + vz * upz
            hx, hy, hz = vx - vu * upx, vy - vu * upy, vz - vu * upz
            if plane_n is not None:
                px = plane_n[1] * upz - plane_n[2] * upy
                py = plane_n[2] * upx - plane_n[0] * upz
                pz = plane_n[0] * upy - plane_n[1] * upx
                hx, hy, hz = np.where(use_plane, px, hx), np.where(use_plane, py, hy), np.where(use_plane, pz, hz)
            hn = np.sqrt(hx * hx + hy * hy + hz * hz)
            ok = hn > 0.0
            hinv = 1.0 / np.where(ok, hn, 1.0)
            hx = np.where(ok, hx * hinv, azd[0])
            hy = np.where(ok, hy * hinv, azd[1])
            hz = np.where(ok, hz * hinv, azd[2])
            c_, s_ = np.cos(th), np.sin(th)
            tx, ty, tz = c_ * hx + s_ * upx, c_ * hy + s_ * upy, c_ * hz + s_ * upz
        im = 1.0 / m
        vhx = np.where(safe, vrx * vinv, tx)
        vhy = np.where(safe, vry * vinv, ty)
        vhz = np.where(safe, vrz * vinv, tz)
        fm = f * im
        dm = dmag * im
        sx, sy, sz = fm * tx - dm * vhx, fm * ty - dm * vhy, fm * tz - dm * vhz
        der = np.array([
            vx, vy, vz, sx + gx, sy + gy, sz + gz, -mdot,
            -(gx * vhx + gy * vhy + gz * vhz), dm, fm * (1.0 - (tx * vhx + ty * vhy + tz * vhz)),
            (fv - f) * im, fv * im, w * w * (x * vhx + y * vhy),
        ])
        diag = (alt, vrel, 0.5 * rho * vrel2, np.sqrt(sx * sx + sy * sy + sz * sz), upx, upy, upz)
        return der, diag

    # --- initial state ----------------------------------------------------
    m0 = np.array([v.gross_mass_kg for v in vehicles])
    Y = np.zeros((13, n))
    Y[0], Y[1], Y[2] = r0[0], r0[1], r0[2]
    Y[3], Y[4] = -w * r0[1], w * r0[0]
    Y[6] = m0
    maxq = np.zeros(n)
    maxq_t = np.zeros(n)
    maxq_alt = np.full(n, h0)
    max_acc = np.zeros(n)
    min_alt = np.full(n, h0)
    acc_prev = np.zeros((6, n))
    speed_prev = np.zeros(n)
    burnouts: list[list[StageBurnout]] = [[] for _ in range(n)]
    budget_Y = None
    dt_max = float(max_step_s)

    def sample(t, Y, P):
        der, dg = rhs(t, Y, P)
        alt, _, q, sens = dg[0], dg[1], dg[2], dg[3]
        better = q > maxq
        maxq[better], maxq_t[better], maxq_alt[better] = q[better], t[better], alt[better]
        np.maximum(max_acc, sens, out=max_acc)
        np.minimum(min_alt, alt, out=min_alt)
        return der, dg

    for k in range(len(shape0)):
        phs = [s[0][k] for s in sched]
        ph0 = phs[0]
        T0 = np.array([ph.t0 for ph in phs])
        T1 = np.array([ph.t1 for ph in phs])
        D = T1 - T0
        stage_i = ph0.stage
        tables: dict = {}
        for i, v in enumerate(vehicles):
            d = v.stages[stage_i].drag
            tables.setdefault((d.mach, d.cd), []).append(i)
        P = {
            "burn": ph0.burning,
            "f": np.array([ph.f_a for ph in phs]),
            "mdot": np.array([ph.m_a for ph in phs]),
            "ae": np.array([v.stages[stage_i].exit_area_m2 for v in vehicles]),
            "aref": np.array([v.reference_area_m2(stage_i) for v in vehicles]),
            "tables": [((np.asarray(mt), np.asarray(ct)), np.asarray(idx)) for (mt, ct), idx in tables.items()],
            "steer": ph0.steer,
        }
        if ph0.steer in (_LTG, _PRATE) and np.all(np.abs(T0 - steer_t0) < 1e-9):
            rr = np.sqrt(Y[0] ** 2 + Y[1] ** 2 + Y[2] ** 2)
            vv = np.sqrt(Y[3] ** 2 + Y[4] ** 2 + Y[5] ** 2)
            gam = np.arcsin(np.clip((Y[0] * Y[3] + Y[1] * Y[4] + Y[2] * Y[5]) / (rr * vv), -1.0, 1.0))
            for i, p in enumerate(profs):
                if p.initial_pitch_deg is not None:
                    gam[i] = math.radians(p.initial_pitch_deg)
            th0[:] = gam
            tan0[:] = np.tan(gam)
        alt_now = np.sqrt(Y[0] ** 2 + Y[1] ** 2 + Y[2] ** 2) - R
        dt_here = dt_max * (vacuum_step_factor if np.all(alt_now > _VACUUM_ALT_M) else 1.0)
        nsteps = max(1, math.ceil(float(np.max(D)) / dt_here - 1e-9))
        hs = D / nsteps
        for j in range(nsteps):
            t = T0 + j * hs
            k1 = sample(t, Y, P)[0] if j > 0 or k == 0 else rhs(t, Y, P)[0]
            k2 = rhs(t + 0.5 * hs, Y + (0.5 * hs) * k1, P)[0]
            k3 = rhs(t + 0.5 * hs, Y + (0.5 * hs) * k2, P)[0]
            k4 = rhs(t + hs, Y + hs * k3, P)[0]
            Y = Y + (hs / 6.0) * (k1 + 2.0 * (k2 + k3) + k4)
        _, dg = sample(T1, Y, P)
        if ph0.burnout_of >= 0:
            i_st = ph0.burnout_of
            alt, vrel, upx, upy, upz = dg[0], dg[1], dg[4], dg[5], dg[6]
            vrx, vry, vrz = Y[3] + w * Y[1], Y[4] - w * Y[0], Y[5]
            fpa = np.degrees(np.arcsin(np.clip((vrx * upx + vry * upy + vrz * upz) / np.where(vrel > 0, vrel, 1.0),
                                               -1.0, 1.0)))
            fpa = np.where(vrel > 0, fpa, 90.0)
            d_acc = Y[7:13] - acc_prev
            v_in = np.sqrt(Y[3] ** 2 + Y[4] ** 2 + Y[5] ** 2)
            c, sn = np.cos(w * T1), np.sin(w * T1)
            sx, sy, sz = c * r0[0] - sn * r0[1], sn * r0[0] + c * r0[1], np.full(n, r0[2])
            cx, cy, cz = Y[1] * sz - Y[2] * sy, Y[2] * sx - Y[0] * sz, Y[0] * sy - Y[1] * sx
            down = R * np.arctan2(np.sqrt(cx * cx + cy * cy + cz * cz), Y[0] * sx + Y[1] * sy + Y[2] * sz)
            for i, v in enumerate(vehicles):
                burnouts[i].append(StageBurnout(
                    stage=v.stages[i_st].name, time_s=float(T1[i]), altitude_m=float(alt[i]),
                    downrange_m=float(down[i]), speed_m_s=float(vrel[i]), inertial_speed_m_s=float(v_in[i]),
                    flight_path_angle_deg=float(fpa[i]), mass_kg=float(Y[6, i]),
                    ideal_delta_v_m_s=float(d_acc[4, i]), speed_gain_m_s=float(vrel[i] - speed_prev[i]),
                    losses_m_s=MappingProxyType(dict(zip(LOSS_KEYS, (float(u) for u in d_acc[:4, i])))),
                    centrifugal_m_s=float(d_acc[5, i]),
                ))
            acc_prev = Y[7:13].copy()
            speed_prev = vrel.copy()
            if i_st < n_st - 1:
                Y[6] = [v.ignition_mass_kg(i_st + 1) for v in vehicles]
            else:
                budget_Y = Y.copy()
                Y[6] = [v.payload_mass_kg + v.stages[i_st].structural_mass_kg for v in vehicles]

    sb = budget_Y if budget_Y is not None else Y
    v_in = np.sqrt(sb[3] ** 2 + sb[4] ** 2 + sb[5] ** 2)
    vrx, vry, vrz = sb[3] + w * sb[1], sb[4] - w * sb[0], sb[5]
    v_rel = np.sqrt(vrx * vrx + vry * vry + vrz * vrz)
    bonus = (v_in - v_rel) + sb[12] if w != 0.0 else np.zeros(n)
    out = []
    empty = FlightHistory(**{k: np.zeros(0, dtype=(np.int64 if k == "stage_index" else float))
                             for k in FlightHistory.COLUMNS})
    for i in range(n):
        x, y, z, vx, vy, vz = (float(u) for u in Y[:6, i])
        r = math.sqrt(x * x + y * y + z * z)
        v_s = math.sqrt(vx * vx + vy * vy + vz * vz)
        gam = math.asin(max(-1.0, min(1.0, (x * vx + y * vy + z * vz) / (r * v_s))))
        hx, hy, hz = y * vz - z * vy, z * vx - x * vz, x * vy - y * vx
        hn = math.sqrt(hx * hx + hy * hy + hz * hz)
        inc = math.degrees(math.acos(max(-1.0, min(1.0, hz / hn)))) if hn > 0 else math.nan
        losses = {k_: float(u) for k_, u in zip(LOSS_KEYS, sb[7:11, i])}
        ideal = float(sb[11, i])
        residual = ideal - (float(v_in[i]) - float(bonus[i]) + sum(losses.values()))
        warns = list(warn_all[i])
        terminated = "burnout"
        if min_alt[i] < h0 - 1.0:
            terminated = "impact"
            warns.append("the vehicle fell back to the ground before final burnout.")
        out.append(FlightResult(
            profile="ascent", terminated_by=terminated, apogee_m=math.nan, time_to_apogee_s=math.nan,
            rail_exit_speed_m_s=math.nan, rail_exit_time_s=math.nan,
            max_dynamic_pressure_pa=float(maxq[i]), max_q_time_s=float(maxq_t[i]),
            max_q_altitude_m=float(maxq_alt[i]), max_acceleration_m_s2=float(max_acc[i]),
            liftoff_thrust_to_weight=float(tw_lift[i]), impact_time_s=math.nan, impact_downrange_m=math.nan,
            orbit=orbit_elements(r, v_s, gam, inclination_deg=inc), burnouts=tuple(burnouts[i]),
            ideal_delta_v_m_s=ideal, losses_m_s=MappingProxyType(losses), rotation_bonus_m_s=float(bonus[i]),
            final_inertial_speed_m_s=float(v_in[i]), budget_residual_m_s=residual, ascent_profile=profs[i],
            targeting_residual=(), warnings=tuple(warns), history=empty,
        ))
    return tuple(out)
