"""From a vehicle, a site and options to the kernel's flat arrays (`layout`): phase schedule, frame, steering.

The flight is cut into phases at every time where the right-hand side is not
smooth: ignition, burnout, staging, thrust-curve and propellant-curve knots,
the end of the vertical rise and of the pitch kick, steering start and the
knots of a pitch table. Within a phase the vacuum thrust and the mass flow are
linear in time, so the mass integrates exactly.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from sizing.errors import FieldError
from sizing.physics.atmosphere import _H_BASE, _UP_Z_M, _Z86_M, R0_GEOPOTENTIAL_M, pressure_density_sound_speed
from sizing.physics.flight import layout as L
from sizing.physics.flight.profiles import AscentProfile
from sizing.physics.flight.results import FlightFrame
from sizing.physics.vehicle import LaunchSite, Vehicle
from sizing.physics.wind import WindProfile
from sizing.units import G0_M_S2, GM_EARTH_M3_S2, OMEGA_EARTH_RAD_S, R_EARTH_EQ_M

if TYPE_CHECKING:
    from sizing.physics.airframe import Configuration

__all__ = ["ATMOSPHERE_TOP_M", "MAX_FLIGHT_TIME_S", "Wind", "FlightSetup", "BurnSchedule", "burn_schedule", "prepare_flight",
           "replay_steps", "altitude_kinks_m"]

#: Above this altitude the flight is in vacuum [m].
ATMOSPHERE_TOP_M = 300e3
#: Longest flight the kernel integrates [s].
MAX_FLIGHT_TIME_S = 2.0e5
_POS_SCALE_M = 1.0e5
_VEL_SCALE_M_S = 10.0


def altitude_kinks_m(top_m: float = ATMOSPHERE_TOP_M) -> np.ndarray:
    """Geometric altitudes [m] where the standard atmosphere is not smooth.

    USSA 1976 layer bases (geopotential H_b -> geometric z = r0 H_b / (r0 - H_b),
    USSA 1976 eq. 19), 86 km, the upper temperature pieces (91, 110, 120 km;
    eqs. 25-31), the upper table's knots and the vacuum cut-off.
    """
    r0 = R0_GEOPOTENTIAL_M
    zs = {r0 * hb / (r0 - hb) for hb in _H_BASE[1:]}
    zs.update((_Z86_M, 91000.0, 110000.0, 120000.0, top_m))
    zs.update(z for z in _UP_Z_M if z < top_m)
    out: list[float] = []
    for z in sorted(zs):
        if not out or z - out[-1] > 1.0:
            out.append(z)
    return np.array(out)


_ALT_KINKS = altitude_kinks_m()


@dataclass(frozen=True, slots=True)
class Wind:
    """Horizontal wind: power law w = w_ref (z / z_ref)^alpha above the site, or a table.

    Parameters
    ----------
    speed_m_s : float
        Speed at the reference height [m/s], >= 0.
    from_deg : float
        Direction the wind blows FROM, clockwise from north [deg] (meteorological convention).
    reference_height_m : float
        Height above the site of `speed_m_s` [m], > 0.
    exponent : float
        Power-law exponent alpha [-], in [0, 1); 0 is a constant wind (1/7 for open
        terrain is common practice, no source).
    heights_m, speeds_m_s : tuple of float, optional
        A table of speed vs height above the site instead of the power law.
    """

    speed_m_s: float = 0.0
    from_deg: float = 270.0
    reference_height_m: float = 10.0
    exponent: float = 0.0
    heights_m: tuple[float, ...] | None = None
    speeds_m_s: tuple[float, ...] | None = None

    def to_unit_east_north(self) -> tuple[float, float]:
        """Unit vector (east, north) of the direction the wind blows towards."""
        a = math.radians(self.from_deg + 180.0)
        return math.sin(a), math.cos(a)


@dataclass(frozen=True, slots=True)
class FlightSetup:
    """Everything the kernel needs for one flight, plus what the Python side needs afterwards."""

    phases: np.ndarray
    par: np.ndarray
    opt: np.ndarray
    y0: np.ndarray
    frame: FlightFrame
    liftoff_thrust_to_weight: float
    warnings: tuple[str, ...]
    v_inertial0_m_s: float

    def kernel_args(self, hist_cap: int = 512) -> tuple:
        """Positional arguments of `kernel.run_flight`."""
        return (self.phases, self.par, self.opt, self.y0, hist_cap)


@dataclass(frozen=True, slots=True)
class BurnSchedule:
    """Burn timeline: per stage (ignition, final burnout); burning intervals; insertion-burn times."""

    windows: list[tuple[float, float]]
    burns: list[tuple[int, float, float]]
    cutoff_s: float | None = None  # end of the ascent burn before the insertion coast
    insertion_s: float | None = None  # ignition of the insertion burn

    def burning(self, stage: int, t: float) -> bool:
        return any(s == stage and a <= t < b for s, a, b in self.burns)

    def extra_times(self) -> list[float]:
        return [t for t in (self.cutoff_s, self.insertion_s) if t is not None]


def burn_schedule(vehicle: Vehicle, *, ignore_first_coast: bool, insertion=None) -> BurnSchedule:
    """Ignition and burnout times of every stage [s], with the last stage's insertion coast and burn."""
    windows, burns = [], []
    t = 0.0
    n = len(vehicle.stages)
    cutoff = ignition = None
    for i, st in enumerate(vehicle.stages):
        coast = 0.0 if (i == 0 and ignore_first_coast) else st.coast_before_ignition_s
        last = i == n - 1 and insertion is not None
        if last and insertion.propellant_kg is None:
            coast, cutoff = insertion.coast_s, t
        if i > 0:
            coast += vehicle.staging_delay_s
        t_ign = t + coast
        if last and insertion.propellant_kg is not None:
            if st.thrust_curve is not None:
                raise FieldError(f"stages.{st.name}.thrust_curve",
                                 "an insertion restart needs a constant-thrust last stage.")
            if not insertion.propellant_kg < st.propellant_mass_kg:
                raise FieldError("insertion.propellant_kg",
                                 f"must be < the last stage's propellant ({st.propellant_mass_kg:g} kg).",
                                 insertion.propellant_kg)
            first = (st.propellant_mass_kg - insertion.propellant_kg) / st.mass_flow_kg_s
            cutoff = t_ign + first
            ignition = cutoff + insertion.coast_s
            t = ignition + insertion.propellant_kg / st.mass_flow_kg_s
            burns += [(i, t_ign, cutoff), (i, ignition, t)]
        else:
            if last:
                ignition = t_ign
            t = t_ign + st.burn_time_s
            burns.append((i, t_ign, t))
        windows.append((t_ign, t))
    return BurnSchedule(windows, burns, cutoff, ignition)


def _phase_times(vehicle: Vehicle, sched: BurnSchedule, extra_times) -> list[float]:
    windows = sched.windows
    times = {0.0}
    times.update(sched.extra_times())
    for (t_ign, t_bo), st in zip(windows, vehicle.stages):
        times.update((t_ign, t_bo))
        for curve in (st.thrust_curve, st.propellant_mass_curve):
            if curve is not None:
                times.update(t_ign + tk for tk in curve[0] if 0 < tk < st.burn_time_s)
    t_end = windows[-1][1]
    times.update(t for t in extra_times if 0 < t < t_end)
    ts = sorted(times)
    merged = [ts[0]]
    for t in ts[1:]:
        if t - merged[-1] > 1e-9 * max(1.0, t):
            merged.append(t)
    return merged


def _propulsion(st, tau0: float, tau1: float, dt: float) -> tuple[float, float, float, float]:
    """(F_a, F_b, mdot_a, mdot_b) of a burning phase: F_vac and mdot linear in time."""
    if st.thrust_curve is None:
        return st.thrust_vac_n, 0.0, st.thrust_vac_n / (st.isp_vac_s * st.g0_m_s2), 0.0
    f0, f1 = st.thrust_vac_at(tau0), st.thrust_vac_at(tau1)
    fb = (f1 - f0) / dt
    if st.propellant_mass_curve is None:
        k = st.propellant_mass_kg / st.total_impulse_vac_n_s  # propellant use follows delivered impulse
        return f0, fb, k * f0, k * fb
    tm, mm = st.propellant_mass_curve
    return f0, fb, (float(np.interp(tau0, tm, mm)) - float(np.interp(tau1, tm, mm))) / dt, 0.0


def _stage_constants(vehicle: Vehicle, drag_offsets) -> list[tuple]:
    """Per stage: (exit area, reference area, mass after its burnout, drag offset, drag length)."""
    n_st = len(vehicle.stages)
    out = []
    for i, st in enumerate(vehicle.stages):
        after = vehicle.ignition_mass_kg(i + 1) if i < n_st - 1 else vehicle.payload_mass_kg + st.structural_mass_kg
        out.append((st.exit_area_m2, vehicle.reference_area_m2(i), after, float(drag_offsets[i]),
                    float(len(st.drag.mach))))
    return out


def _phase_table(vehicle: Vehicle, sched: BurnSchedule, extra_times, mode_at, drag_offsets, final_coast: bool,
                 insertion=None, aero_offsets=None) -> np.ndarray:
    windows = sched.windows
    times = _phase_times(vehicle, sched, extra_times)
    if final_coast:
        times = times + [math.inf]
    n_st = len(vehicle.stages)
    consts = _stage_constants(vehicle, drag_offsets)
    marks = [(n_st + k, tm) for k, tm in enumerate((sched.cutoff_s, sched.insertion_s)) if tm is not None]
    fixed_pitch = math.radians(insertion.pitch_deg) if insertion is not None else 0.0
    rows = np.zeros((len(times) - 1, L.PH_SIZE))
    stage = 0
    for j, (a, b) in enumerate(zip(times, times[1:])):
        finite = math.isfinite(b)
        mid = 0.5 * (a + b) if finite else a + 1.0
        while stage < n_st - 1 and mid >= windows[stage][1]:
            stage += 1
        t_ign, t_bo = windows[stage]
        st = vehicle.stages[stage]
        row = rows[j]
        row[L.PH_T0], row[L.PH_T1], row[L.PH_STAGE] = a, b, stage
        if finite and sched.burning(stage, mid):
            row[L.PH_BURNING] = 1.0
            row[L.PH_FA], row[L.PH_FB], row[L.PH_MA], row[L.PH_MB] = _propulsion(st, a - t_ign, b - t_ign, b - a)
        row[L.PH_BURNOUT_OF] = row[L.PH_MARK] = -1.0
        tol = 1e-9 * max(1.0, b) if finite else 0.0
        for k, tm in marks:
            if finite and abs(b - tm) <= tol:
                row[L.PH_MARK] = k
        ae, aref, after, doff, dlen = consts[stage]
        if finite and abs(b - t_bo) <= tol:
            row[L.PH_BURNOUT_OF] = stage
            row[L.PH_MASS_AFTER] = after
        row[L.PH_MODE] = mode_at(mid)
        if sched.insertion_s is not None and mid > sched.insertion_s and stage == n_st - 1:
            row[L.PH_MODE], row[L.PH_PITCH] = L.MODE_FIXED, fixed_pitch
        row[L.PH_EXIT_AREA], row[L.PH_REF_AREA] = ae, aref
        row[L.PH_DRAG_OFF], row[L.PH_DRAG_LEN] = doff, dlen
        if aero_offsets is not None:
            row[L.PH_AERO_OFF] = aero_offsets[stage]
    return rows


def _site_frame(site: LaunchSite, round_: bool):
    """(r0, up0, east0, north0) of the site at t = 0: longitude 0 of the Earth-centred frame, or a local frame."""
    h0 = site.altitude_m
    if round_:
        lat = math.radians(site.latitude_deg)
        cl, sl = math.cos(lat), math.sin(lat)
        return ((R_EARTH_EQ_M + h0) * cl, 0.0, (R_EARTH_EQ_M + h0) * sl), (cl, 0.0, sl), (0.0, 1.0, 0.0), (-sl, 0.0, cl)
    return (0.0, 0.0, h0), (0.0, 0.0, 1.0), (1.0, 0.0, 0.0), (0.0, 1.0, 0.0)


def _environment(site: LaunchSite, *, round_: bool, omega: float, with_drag: bool, with_gravity: bool,
                 vacuum_below_ground: bool, vertical: bool, wind: Wind | None, atmosphere: tuple | None):
    r0, up0, east0, north0 = _site_frame(site, round_)
    az = math.radians(site.azimuth_deg)
    azd = tuple(math.cos(az) * n + math.sin(az) * e for n, e in zip(north0, east0))
    rail_ang = math.radians(site.rail_angle_deg) if vertical else 0.0
    rail_u = tuple(math.cos(rail_ang) * u + math.sin(rail_ang) * a for u, a in zip(up0, azd))
    env = np.zeros(L.PAR_HEADER)
    env[L.ENV_ROUND] = 1.0 if round_ else 0.0
    env[L.ENV_MU], env[L.ENV_RADIUS], env[L.ENV_OMEGA], env[L.ENV_G_FLAT] = (
        GM_EARTH_M3_S2, R_EARTH_EQ_M, omega, G0_M_S2)
    env[L.ENV_GRAVITY] = 1.0 if with_gravity else 0.0
    env[L.ENV_DRAG] = 1.0 if with_drag else 0.0
    env[L.ENV_ATM_TOP] = ATMOSPHERE_TOP_M
    env[L.ENV_VACUUM_BELOW_GROUND] = 1.0 if vacuum_below_ground else 0.0
    if atmosphere is not None:  # ("exponential", rho0, scale height, [mu, radius])
        env[L.ENV_ATM_MODEL], env[L.ENV_RHO0], env[L.ENV_SCALE_HEIGHT] = 1.0, atmosphere[1], atmosphere[2]
        if len(atmosphere) > 3:
            env[L.ENV_MU], env[L.ENV_RADIUS] = atmosphere[3], atmosphere[4]
            if round_:
                r0 = tuple(atmosphere[4] * u for u in up0)
    env[L.ENV_SITE_ALT] = site.altitude_m
    env[L.ENV_R0:L.ENV_R0 + 3] = r0
    env[L.ENV_UP0:L.ENV_UP0 + 3] = up0
    env[L.ENV_AZ0:L.ENV_AZ0 + 3] = azd
    env[L.ENV_RAIL:L.ENV_RAIL + 3] = rail_u
    env[L.ENV_RAIL_LEN] = site.rail_length_m if vertical else 0.0
    return env, (r0, up0, east0, north0), _wind_slots(env, wind)


def _wind_slots(env: np.ndarray, wind: Wind | WindProfile | None) -> np.ndarray:
    """Fill the ENV_WIND_* slots from a `Wind` or a `sizing.physics.wind.WindProfile`; return the wind table."""
    env[L.ENV_WIND_TOP] = math.inf
    if isinstance(wind, WindProfile):
        if wind.is_calm:
            return np.zeros(0)
        if wind.kind == "table":  # components: the direction may turn with height
            env[L.ENV_WIND_MODEL] = 3.0
            h = np.array(wind.heights_m, float)
            east, north = wind.velocity_m_s(h)
            return np.concatenate([h, east, north])
        rad = math.radians(wind.direction_from_deg)
        env[L.ENV_WIND_TO_EAST], env[L.ENV_WIND_TO_NORTH] = -math.sin(rad), -math.cos(rad)
        env[L.ENV_WIND_MODEL] = 1.0
        env[L.ENV_WIND_REF_SPEED], env[L.ENV_WIND_REF_HEIGHT] = wind.speed_m_s, wind.reference_height_m
        env[L.ENV_WIND_EXPONENT] = wind.exponent if wind.kind == "power_law" else 0.0
        if wind.top_height_m is not None:
            env[L.ENV_WIND_TOP] = wind.top_height_m
        return np.zeros(0)
    if wind is None or not (wind.speed_m_s > 0 or wind.heights_m):
        return np.zeros(0)
    env[L.ENV_WIND_TO_EAST], env[L.ENV_WIND_TO_NORTH] = wind.to_unit_east_north()
    if wind.heights_m:
        env[L.ENV_WIND_MODEL] = 2.0
        return np.concatenate([np.array(wind.heights_m, float), np.array(wind.speeds_m_s, float)])
    env[L.ENV_WIND_MODEL] = 1.0
    env[L.ENV_WIND_REF_SPEED], env[L.ENV_WIND_REF_HEIGHT] = wind.speed_m_s, wind.reference_height_m
    env[L.ENV_WIND_EXPONENT] = wind.exponent
    return np.zeros(0)


def _aero_block(config) -> np.ndarray:
    """The AB_* block (`layout`) of one configuration (a `sizing.physics.airframe.Configuration`)."""
    m_dry, m1, j_dry, x_p, j_p = config.mass_moments()
    mach = np.asarray(config.mach_grid, float)
    cn = np.asarray(config.cn_alpha_table, float)
    cnx = cn * np.asarray(config.x_cp_table_m, float)
    cnx2 = np.asarray(config.cn_alpha_x2_table_m2, float)
    head = np.zeros(L.AB_SIZE)
    head[L.AB_AREA], head[L.AB_NOZZLE_X] = config.reference_area_m2, config.length_m
    head[L.AB_M_DRY], head[L.AB_M1_DRY], head[L.AB_J_DRY] = m_dry, m1, j_dry
    head[L.AB_X_PROP], head[L.AB_J_PROP], head[L.AB_N_MACH] = x_p, j_p, len(mach)
    return np.concatenate([head, mach, cn, cnx, cnx2])


def _liftoff(vehicle: Vehicle, site: LaunchSite, with_gravity: bool, vertical: bool) -> tuple[float, list[str]]:
    """Liftoff thrust-to-weight (mean thrust of a curve) and its checks."""
    st0 = vehicle.stages[0]
    p_site = pressure_density_sound_speed(site.altitude_m)[0]
    weight0 = vehicle.gross_mass_kg * G0_M_S2
    if st0.thrust_curve is None:
        f_lift = f_peak = st0.thrust_at(0.0, p_site)
    else:
        f_lift = max(0.0, st0.total_impulse_vac_n_s / st0.burn_time_s - p_site * st0.exit_area_m2)
        f_peak = max(st0.thrust_at(t, p_site) for t in st0.thrust_curve[0])
    rail_ang = math.radians(site.rail_angle_deg) if vertical else 0.0
    if with_gravity and f_peak * math.cos(rail_ang) <= weight0:
        raise FieldError(f"stages.{st0.name}.thrust",
                         "liftoff thrust-to-weight must be > 1 (peak thrust at the site over m0 g0).",
                         round(f_peak / weight0, 4))
    return f_lift / weight0, []


def _steering(steer: np.ndarray, vehicle: Vehicle, ascent: AscentProfile, sched: BurnSchedule, east0, north0, up0,
              round_: bool):
    """Fill the ST_* slots of `steer`; return (pitch table [times, then pitch], extra phase times, steering start)."""
    steer[L.ST_KICK_SIN] = math.sin(math.radians(ascent.pitch_kick_deg))
    steer[L.ST_KICK_COS] = math.cos(math.radians(ascent.pitch_kick_deg))
    steer[L.ST_SPAN] = 1.0
    table = np.zeros(0)
    extra = [ascent.vertical_rise_s, ascent.vertical_rise_s + ascent.kick_duration_s]
    if ascent.steering == "gravity_turn":
        return table, extra, None
    names = [s.name for s in vehicle.stages]
    if ascent.steer_from_stage is None:
        k = min(1, len(names) - 1)
    elif ascent.steer_from_stage in names:
        k = names.index(ascent.steer_from_stage)
    else:
        raise FieldError("profile.steer_from_stage", f"must be one of {names}.", ascent.steer_from_stage)
    windows = sched.windows
    t_start = windows[k][0]
    extra.append(t_start)
    steer[L.ST_T_START] = t_start
    t_end = sched.cutoff_s if sched.cutoff_s is not None else windows[-1][1]
    steer[L.ST_SPAN] = max(t_end - t_start, 1e-9)
    steer[L.ST_THF] = math.radians(ascent.final_pitch_deg)
    steer[L.ST_TANF] = math.tan(steer[L.ST_THF])
    if ascent.initial_pitch_deg is not None:
        steer[L.ST_TH0], steer[L.ST_TH0_GIVEN] = math.radians(ascent.initial_pitch_deg), 1.0
        steer[L.ST_TAN0] = math.tan(steer[L.ST_TH0])
    if ascent.steering == "table":
        tab_t = np.array([t for t, _ in ascent.pitch_table])
        table = np.concatenate([tab_t, np.radians([p for _, p in ascent.pitch_table])])
        extra.extend(float(t) for t in tab_t)
    if round_ and ascent.hold_inclination_deg is not None:
        steer[L.ST_PLANE_MODE] = 2.0
        steer[L.ST_COS_INC] = math.cos(math.radians(ascent.hold_inclination_deg))
        steer[L.ST_ASCENDING] = 1.0 if ascent.ascending else 0.0
        steer[L.ST_YAW_BIAS] = math.radians(ascent.yaw_bias_deg)
    elif round_ and ascent.plane_azimuth_deg is not None:
        bp = math.radians(ascent.plane_azimuth_deg)
        d = np.array([math.cos(bp) * n + math.sin(bp) * e for n, e in zip(north0, east0)])
        n_ = np.cross(np.array(up0), d)
        steer[L.ST_PLANE_MODE] = 1.0
        steer[L.ST_PLANE_N:L.ST_PLANE_N + 3] = n_ / np.linalg.norm(n_)
    return table, extra, t_start


def _mode_function(vertical: bool, ascent: AscentProfile | None, t_start: float | None, body: bool = False):
    if vertical:
        mode = L.MODE_BODY if body else L.MODE_PROGRADE
        return lambda mid: mode
    law = {"linear_tangent": L.MODE_LINEAR_TANGENT, "pitch_rate": L.MODE_PITCH_RATE,
           "table": L.MODE_TABLE}.get(ascent.steering, L.MODE_PROGRADE)
    t_vert = ascent.vertical_rise_s
    t_kick = t_vert + ascent.kick_duration_s

    def mode_at(mid: float) -> int:
        if mid < t_vert:
            return L.MODE_UP
        if mid < t_kick:
            return L.MODE_KICK
        if t_start is not None and mid >= t_start:
            return law
        return L.MODE_PROGRADE

    return mode_at


def prepare_flight(vehicle: Vehicle, site: LaunchSite, *, profile: str, ascent: AscentProfile | None = None,
                   earth: str = "round", rotating: bool = False, with_drag: bool = True, with_gravity: bool = True,
                   stop_at: str = "apogee", max_step_s: float | None = None, record_history: bool = True,
                   detect_impact: bool = True, rtol: float = 1e-8, wind: Wind | WindProfile | None = None,
                   atmosphere: tuple | None = None,
                   stability: Sequence[Configuration] | None = None) -> FlightSetup:
    """Check the options and build the kernel's arrays for one flight (see `fly.simulate`).

    `wind` is a `Wind` or a `sizing.physics.wind.WindProfile`. `stability` (vertical
    profile only) is a sequence of `sizing.physics.airframe.Configuration`, one per
    stage (item i: stage i the lowest attached): the flight then turns its body
    axis under the aerodynamic moments (``MODE_BODY``, see `equations`).
    """
    if earth not in ("round", "flat"):
        raise FieldError("earth", "must be 'round' or 'flat'.", earth)
    if stop_at not in ("apogee", "impact", "burnout"):
        raise FieldError("stop_at", "must be 'apogee', 'impact' or 'burnout'.", stop_at)
    if not 1e-14 <= rtol <= 1e-3:
        raise FieldError("rtol", "must be in [1e-14, 1e-3].", rtol)
    if profile not in ("vertical", "ascent"):
        raise FieldError("profile", "must be 'vertical' or 'ascent'.", profile)
    vertical = profile == "vertical"
    if stability is not None:
        stability = tuple(stability)
        if not vertical:
            raise FieldError("stability", "applies to the vertical (rail) profile only.", profile)
        if len(stability) != len(vehicle.stages):
            raise FieldError("stability", f"needs one configuration per stage ({len(vehicle.stages)}).",
                             len(stability))
    round_ = earth == "round"
    omega = OMEGA_EARTH_RAD_S if (rotating and round_) else 0.0
    tw_lift, warnings = _liftoff(vehicle, site, with_gravity, vertical)
    st0 = vehicle.stages[0]
    if not vertical and st0.coast_before_ignition_s > 0:
        warnings.append(f"stages.{st0.name}.coast_before_ignition_s is ignored for an ascent "
                        "(the clock starts at first-stage ignition).")
    par, (r0, up0, east0, north0), wind_table = _environment(
        site, round_=round_, omega=omega, with_drag=with_drag, with_gravity=with_gravity,
        vacuum_below_ground=not detect_impact, vertical=vertical, wind=wind, atmosphere=atmosphere)
    if not vertical:
        ascent = ascent or AscentProfile()
    insertion = ascent.insertion if not vertical else None
    sched = burn_schedule(vehicle, ignore_first_coast=not vertical, insertion=insertion)
    extra: list[float] = []
    par[L.ST_SPAN] = 1.0
    pitch_table = np.zeros(0)
    t_start = None
    if not vertical:
        pitch_table, extra, t_start = _steering(par, vehicle, ascent, sched, east0, north0, up0, round_)
    kinks = _ALT_KINKS if atmosphere is None else np.array([math.inf])
    tables = [kinks, pitch_table, wind_table]
    n_st = len(vehicle.stages)
    tables += [np.concatenate([np.array(s.drag.mach, float), np.array(s.drag.cd, float)]) for s in vehicle.stages]
    if stability is not None:
        tables += [_aero_block(c) for c in stability]
    starts = L.PAR_HEADER + np.cumsum([0] + [len(t) for t in tables])
    par[L.TB_KINK_OFF], par[L.TB_KINK_N] = starts[0], len(kinks)
    par[L.TB_PITCH_OFF], par[L.TB_PITCH_N] = starts[1], len(pitch_table) // 2
    par[L.TB_WIND_OFF], par[L.TB_WIND_N] = starts[2], len(wind_table) // (3 if par[L.ENV_WIND_MODEL] == 3.0 else 2)
    offsets = starts[3:3 + n_st]
    aero_offsets = starts[3 + n_st:3 + 2 * n_st] if stability is not None else None
    par = np.concatenate([par] + tables)
    final_coast = vertical and stop_at != "burnout"
    phases = _phase_table(vehicle, sched, extra, _mode_function(vertical, ascent, t_start, stability is not None),
                          offsets, final_coast, insertion, aero_offsets)
    total_burn = sum(s.burn_time_s for s in vehicle.stages)
    opt = np.zeros(L.OPT_SIZE)
    opt[L.OPT_RTOL] = rtol
    opt[L.OPT_MAX_STEP] = math.inf if max_step_s is None else float(max_step_s)
    opt[L.OPT_H_FIRST] = min(opt[L.OPT_MAX_STEP], max(1e-4, total_burn / 1000.0))
    opt[L.OPT_STOP] = {"apogee": L.STOP_APOGEE, "impact": L.STOP_IMPACT, "burnout": L.STOP_BURNOUT}[
        "burnout" if not vertical else stop_at]
    opt[L.OPT_VERTICAL] = 1.0 if vertical else 0.0
    opt[L.OPT_RECORD] = 1.0 if record_history else 0.0
    opt[L.OPT_DETECT_IMPACT] = 1.0 if detect_impact else 0.0
    opt[L.OPT_MAX_TIME] = MAX_FLIGHT_TIME_S
    opt[L.OPT_N_STAGES] = len(vehicle.stages)
    opt[L.OPT_N_MARKS] = 2 if insertion is not None else 0
    opt[L.OPT_POS_SCALE], opt[L.OPT_VEL_SCALE] = _POS_SCALE_M, _VEL_SCALE_M_S
    r0 = tuple(par[L.ENV_R0:L.ENV_R0 + 3])
    y0 = np.zeros(L.N_STATE)
    y0[0:3] = r0
    y0[3], y0[4] = -omega * r0[1], omega * r0[0]
    y0[6] = vehicle.gross_mass_kg
    y0[L.Y_AXIS:L.Y_AXIS + 3] = par[L.ENV_RAIL:L.ENV_RAIL + 3] if vertical else par[L.ENV_UP0:L.ENV_UP0 + 3]
    frame = FlightFrame(round_, float(par[L.ENV_RADIUS]), omega, r0, float(par[L.ENV_MU]))
    return FlightSetup(phases, par, opt, y0, frame, tw_lift, tuple(warnings), float(np.linalg.norm(y0[3:6])))


def replay_steps(setup: FlightSetup, steps: np.ndarray) -> FlightSetup | None:
    """The same flight set up to take the recorded steps of another flight (internal numerical differentiation).

    `steps` is a kernel step record (phase index, step-end fraction of the
    phase). A flight whose inputs differ slightly from the recorded one keeps
    the recorded steps, mapped onto its own phase durations, so its end state is
    a smooth function of the inputs: forward differences of replayed flights
    are derivatives of one fixed discretisation (H. G. Bock, "Numerical
    treatment of inverse problems in chemical reaction kinetics", in Modelling
    of Chemical Reaction Systems, Springer, 1981, 102-125: internal numerical
    differentiation; from memory). Returns None when the phase structure
    differs (the caller then flies adaptively).
    """
    n_ph = setup.phases.shape[0]
    if steps.shape[0] == 0 or not np.all(np.isfinite(setup.phases[:, L.PH_T1])):
        return None
    idx = steps[:, 0].astype(np.int64)
    if idx.max() >= n_ph or np.any(np.diff(idx) < 0):
        return None
    counts = np.bincount(idx, minlength=n_ph)
    if np.any(counts == 0):
        return None
    phases = setup.phases.copy()
    starts = setup.par.shape[0] + np.concatenate([[0], np.cumsum(counts)[:-1]])
    phases[:, L.PH_STEP_OFF], phases[:, L.PH_STEP_N] = starts, counts
    opt = setup.opt.copy()
    opt[L.OPT_REPLAY] = 1.0
    par = np.concatenate([setup.par, steps[:, 1]])
    return FlightSetup(phases, par, opt, setup.y0, setup.frame, setup.liftoff_thrust_to_weight, setup.warnings,
                       setup.v_inertial0_m_s)
