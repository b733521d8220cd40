"""Results of a flight: burnout states with their delta-v budget, time history, orbit, flags.

`assemble` turns the kernel's arrays into these frozen dataclasses. Downrange,
speeds and flight-path angles are derived here from the recorded positions
and velocities (vectorised), not inside the kernel.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

import numpy as np

from sizing.physics.flight.layout import (
    B_T, B_Y, END_APOGEE, END_BURNOUT, END_IMPACT, END_TIME_LIMIT, H_ACC, H_ALPHA, H_ALT, H_DRAG, H_M, H_MACH, H_Q,
    H_STAGE, N_MOTION, N_STATE,
    H_T, H_THRUST, H_VREL, H_X, OUT_APOGEE, OUT_APOGEE_T, OUT_IMPACT_T, OUT_MAX_ACC, OUT_MAXQ,
    OUT_MAXQ_ALT, OUT_MAXQ_T, OUT_N_HIST, OUT_N_REJECTED, OUT_N_RHS, OUT_N_STEPS, OUT_RAIL_T, OUT_RAIL_V,
)
from sizing.physics.flight.profiles import AscentProfile
from sizing.physics.gravity import OrbitElements, orbit_elements

__all__ = ["LOSS_KEYS", "StageBurnout", "FlightHistory", "FlightResult", "FlightFrame", "assemble",
           "insertion_coast_rows"]

#: Names of the loss terms in every ``losses_m_s`` mapping.
LOSS_KEYS = ("gravity", "drag", "steering", "pressure")

_END_NAMES = {END_TIME_LIMIT: "time_limit", END_APOGEE: "apogee", END_IMPACT: "impact", END_BURNOUT: "burnout"}


@dataclass(frozen=True, slots=True)
class FlightFrame:
    """Geometry of the flight's frame, to derive downrange, speeds and angles from states.

    Attributes
    ----------
    round_earth : bool
    radius_m : float
        Earth radius [m] (round Earth).
    omega_rad_s : float
        Rotation rate of the frame [rad/s] (0: not rotating).
    site_position_m : tuple of float
        Site position at t = 0 [m].
    gm_m3_s2 : float
        Gravitational parameter [m^3/s^2].
    """

    round_earth: bool
    radius_m: float
    omega_rad_s: float
    site_position_m: tuple[float, float, float]
    gm_m3_s2: float

    def relative_velocity(self, r: np.ndarray, v: np.ndarray) -> np.ndarray:
        """Earth-relative velocity V - omega x r (rows of 3-vectors) [m/s]."""
        w = self.omega_rad_s
        out = np.array(v, dtype=float, copy=True)
        out[..., 0] += w * r[..., 1]
        out[..., 1] -= w * r[..., 0]
        return out

    def up(self, r: np.ndarray) -> np.ndarray:
        """Unit local vertical of positions (rows)."""
        if self.round_earth:
            return r / np.linalg.norm(r, axis=-1, keepdims=True)
        return np.broadcast_to(np.array([0.0, 0.0, 1.0]), r.shape)

    def flight_path_angle_deg(self, r: np.ndarray, v: np.ndarray) -> np.ndarray:
        """Earth-relative flight-path angle above the local horizontal [deg] (90 at rest)."""
        vr = self.relative_velocity(r, v)
        speed = np.linalg.norm(vr, axis=-1)
        s = np.einsum("...i,...i->...", vr, self.up(r))
        with np.errstate(invalid="ignore", divide="ignore"):
            ang = np.degrees(np.arcsin(np.clip(s / speed, -1.0, 1.0)))
        return np.where(speed > 0, ang, 90.0)

    def downrange_m(self, t: np.ndarray, r: np.ndarray) -> np.ndarray:
        """Ground distance from the (rotating) launch site [m]."""
        r0 = np.asarray(self.site_position_m)
        if not self.round_earth:
            return np.hypot(r[..., 0] - r0[0], r[..., 1] - r0[1])
        c, s = np.cos(self.omega_rad_s * t), np.sin(self.omega_rad_s * t)
        site = np.stack([c * r0[0] - s * r0[1], s * r0[0] + c * r0[1], np.full_like(t, r0[2])], axis=-1)
        cross = np.linalg.norm(np.cross(r, site), axis=-1)
        dot = np.einsum("...i,...i->...", r, site)
        return self.radius_m * np.arctan2(cross, dot)

    def east_north_m(self, t, r: np.ndarray, *, vector: bool = False) -> tuple[np.ndarray, np.ndarray]:
        """Ground offset (east, north) from the launch site [m] of positions (rows) at times t [s].

        Flat Earth: the frame's x (east) and y (north) less the site's. Round
        Earth: the position turned back into Earth-fixed axes, less the site,
        projected on the site's east and north (a local tangent plane: close for
        distances small against the Earth radius). With `vector`, `r` is a
        vector (e.g. an Earth-relative velocity) and only its components are taken.
        """
        r = np.asarray(r, dtype=float)
        return self.ground_offset(t, r[..., 0], r[..., 1], r[..., 2], vector=vector)

    def ground_offset(self, t, x, y, z, *, vector: bool = False):
        """`east_north_m` on components (floats, or arrays of one shape): (east, north) [m]."""
        sx, sy, sz = (0.0, 0.0, 0.0) if vector else self.site_position_m
        if not self.round_earth:
            return x - sx, y - sy
        w = self.omega_rad_s
        if w == 0.0:
            c, s = 1.0, 0.0
        elif isinstance(t, float):
            c, s = math.cos(w * t), math.sin(w * t)
        else:
            c, s = np.cos(w * t), np.sin(w * t)
        dx = c * x + s * y - sx
        dy = -s * x + c * y - sy
        dz = z - sz
        # east (z component 0) and north unit vectors at the site, Earth-fixed axes
        ux, uy, uz = self.site_position_m
        h = math.hypot(ux, uy)
        ex, ey = -uy / h, ux / h
        ru = math.sqrt(h * h + uz * uz)
        nx, ny, nz = -uz * ey / ru, uz * ex / ru, h / ru
        return dx * ex + dy * ey, dx * nx + dy * ny + dz * nz

    def orbit(self, y: np.ndarray) -> OrbitElements:
        """Osculating orbit of a state (Curtis, Orbital Mechanics for Engineering Students, 3rd ed., Ch. 2 and 4)."""
        x, yy, z, vx, vy, vz = (float(c) for c in y[:6])
        rn, vn = math.sqrt(x * x + yy * yy + z * z), math.sqrt(vx * vx + vy * vy + vz * vz)
        gam = math.asin(max(-1.0, min(1.0, (x * vx + yy * vy + z * vz) / (rn * vn)))) if vn > 0 else 0.0
        hx, hy, hz = yy * vz - z * vy, z * vx - x * vz, x * vy - yy * vx
        hn = math.sqrt(hx * hx + hy * hy + hz * hz)
        inc = math.degrees(math.acos(max(-1.0, min(1.0, hz / hn)))) if hn > 0 else math.nan
        return orbit_elements(rn, vn, gam, inclination_deg=inc, gm_m3_s2=self.gm_m3_s2,
                              radius_earth_m=self.radius_m)


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
    east_m, north_m : float
        Ground offset from the launch site, east and north [m] (`FlightFrame.east_north_m`).
    east_speed_m_s, north_speed_m_s : float
        East and north components of the Earth-relative velocity [m/s].
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
    east_m: float = math.nan
    north_m: float = math.nan
    east_speed_m_s: float = math.nan
    north_speed_m_s: float = math.nan


@dataclass(frozen=True, slots=True)
class FlightHistory:
    """Time history sampled at every integration step, event and the refined max-q (1-D arrays).

    Columns: t_s [s], altitude_m [m above MSL], downrange_m [m], speed_m_s
    (Earth-relative) [m/s], inertial_speed_m_s [m/s], flight_path_angle_deg
    [deg], mach [-], dynamic_pressure_pa [Pa], acceleration_m_s2 (thrust plus
    drag over mass, i.e. sensed) [m/s^2], mass_kg [kg], thrust_n [N], drag_n
    [N], stage_index (lowest attached stage, 0 = bottom) [-], east_m and north_m
    (ground offset from the site) [m], angle_of_attack_deg (body axis to the
    air-relative velocity; 0 unless the body axis is flown) [deg].
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
    angle_of_attack_deg: np.ndarray = field(default_factory=lambda: np.zeros(0))
    _frame: "FlightFrame | None" = field(default=None, repr=False, compare=False)
    _positions: np.ndarray = field(default_factory=lambda: np.zeros((0, 3)), repr=False, compare=False)

    @property
    def east_m(self) -> np.ndarray:
        """Ground offset east of the launch site [m] (derived when asked for)."""
        return self._ground()[0]

    @property
    def north_m(self) -> np.ndarray:
        """Ground offset north of the launch site [m] (derived when asked for)."""
        return self._ground()[1]

    def _ground(self) -> tuple[np.ndarray, np.ndarray]:
        if self._frame is None or self._positions.shape[0] == 0:
            z = np.zeros(self.t_s.shape)
            return z, z
        return self._frame.east_north_m(self.t_s, self._positions)

    COLUMNS = (
        "t_s", "altitude_m", "downrange_m", "speed_m_s", "inertial_speed_m_s",
        "flight_path_angle_deg", "mach", "dynamic_pressure_pa", "acceleration_m_s2",
        "mass_kg", "thrust_n", "drag_n", "stage_index", "east_m", "north_m", "angle_of_attack_deg",
    )

    def as_columns(self) -> dict[str, np.ndarray]:
        """Column name (unit-suffixed) -> array, in a stable order for CSV output."""
        return {k: getattr(self, k) for k in self.COLUMNS}

    @classmethod
    def empty(cls) -> "FlightHistory":
        z = np.zeros(0)
        return cls(*(z for _ in range(12)), np.zeros(0, dtype=np.int64), z)


@dataclass(frozen=True, slots=True)
class FlightResult:
    """Outcome of one simulated flight. Read `warnings` and `terminated_by` first.

    Attributes
    ----------
    profile : str
        ``"vertical"`` or ``"ascent"``.
    terminated_by : str
        ``"apogee"``, ``"impact"``, ``"burnout"`` (final burnout; orbit
        insertion for an ascent) or ``"time_limit"``.
    apogee_m : float
        Highest altitude above mean sea level reached [m] (vertical profile; nan for an ascent).
    time_to_apogee_s : float
        Time of apogee [s] (nan if not reached).
    rail_exit_speed_m_s, rail_exit_time_s : float
        Speed and time when the vehicle leaves the rail (nan without a rail).
    max_dynamic_pressure_pa, max_q_time_s, max_q_altitude_m : float
        Max-q [Pa], its time [s] and altitude [m].
    max_acceleration_m_s2 : float
        Largest sensed acceleration (thrust plus drag over mass) [m/s^2].
    liftoff_thrust_to_weight : float
        First-stage thrust at the site pressure over m0 g0 [-] (mean thrust of a thrust curve).
    impact_time_s, impact_downrange_m : float
        Return to site altitude (nan unless flown to impact).
    orbit : OrbitElements or None
        Osculating orbit at the end of an ascent.
    burnouts : tuple of StageBurnout
        One per stage that burned out.
    ideal_delta_v_m_s : float
        Sum of stage ideal delta-v [m/s].
    losses_m_s : Mapping[str, float]
        Total gravity, drag, steering, pressure losses [m/s].
    rotation_bonus_m_s : float
        (|V_final| - |v_rel,final|) + int a_cf . v_hat dt [m/s] (see `equations`).
    final_inertial_speed_m_s : float
        |V| at final burnout (or the last state) [m/s].
    budget_residual_m_s : float
        sum(ideal) - (|V_final| - rotation_bonus + sum(losses)) [m/s]: integration error only.
    ascent_profile : AscentProfile or None
        Steering programme flown.
    targeting_residual : tuple of float
        Residuals of the end conditions when an optimiser set the programme; empty otherwise.
    warnings : tuple of str
        Design-review flags, each naming its rule and source.
    coast_start_state : numpy.ndarray or None
        Inertial state (x, y, z [m], vx, vy, vz [m/s]) where the insertion coast
        begins (the last stage's cut-off, or burnout below a kick stage); None
        without an insertion burn or when the flight ended before it.
    coast_gravity_loss_m_s : float
        The part of ``losses_m_s["gravity"]`` accrued on the insertion coast
        (cut-off to insertion ignition): speed traded for height on the way to
        the apsis [m/s]; 0 without an insertion coast.
    n_steps, n_rejected, n_rhs : int
        Accepted and rejected integration steps, right-hand-side evaluations.
    history : FlightHistory
    final_state : numpy.ndarray
        The N_STATE-component state at the end of the flight (see `layout`).
    end_east_m, end_north_m : float
        Ground offset from the launch site at the end of the flight (apogee of a
        vertical flight stopped there), east and north [m].
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
    n_steps: int = 0
    n_rejected: int = 0
    n_rhs: int = 0
    history: FlightHistory = field(repr=False, default_factory=FlightHistory.empty)
    final_state: np.ndarray = field(repr=False, default_factory=lambda: np.zeros(N_STATE))
    end_east_m: float = math.nan
    end_north_m: float = math.nan
    coast_start_state: np.ndarray | None = field(repr=False, default=None)
    coast_gravity_loss_m_s: float = 0.0

    @property
    def total_loss_m_s(self) -> float:
        """Sum of the four loss terms [m/s]."""
        return float(sum(self.losses_m_s.values()))


def _history(frame: FlightFrame, hist: np.ndarray) -> FlightHistory:
    if hist.shape[0] == 0:
        return FlightHistory.empty()
    hist = hist[np.argsort(hist[:, H_T], kind="stable")]
    t = hist[:, H_T]
    r, v = hist[:, H_X:H_X + 3], hist[:, H_X + 3:H_X + 6]
    return FlightHistory(
        t_s=t, altitude_m=hist[:, H_ALT], downrange_m=frame.downrange_m(t, r), speed_m_s=hist[:, H_VREL],
        inertial_speed_m_s=np.linalg.norm(v, axis=1), flight_path_angle_deg=frame.flight_path_angle_deg(r, v),
        # no air, no Mach number: NaN in vacuum (moving with zero dynamic pressure)
        mach=np.where((hist[:, H_Q] == 0.0) & (hist[:, H_VREL] > 0.0), np.nan, hist[:, H_MACH]),
        dynamic_pressure_pa=hist[:, H_Q], acceleration_m_s2=hist[:, H_ACC],
        mass_kg=hist[:, H_M], thrust_n=hist[:, H_THRUST], drag_n=hist[:, H_DRAG],
        stage_index=hist[:, H_STAGE].astype(np.int64), angle_of_attack_deg=np.degrees(hist[:, H_ALPHA]),
        _frame=frame, _positions=r,
    )


def _state_figures(frame: FlightFrame, t: float, y) -> tuple[float, float, float, float, float]:
    """(altitude [m], downrange [m], Earth-relative speed [m/s], inertial speed [m/s], flight-path angle [deg])."""
    x, yy, z, vx, vy, vz = (float(c) for c in y[:6])
    w = frame.omega_rad_s
    vrx, vry = vx + w * yy, vy - w * x
    vrel = math.sqrt(vrx * vrx + vry * vry + vz * vz)
    v_in = math.sqrt(vx * vx + vy * vy + vz * vz)
    if frame.round_earth:
        r = math.sqrt(x * x + yy * yy + z * z)
        alt = r - frame.radius_m
        up = (x / r, yy / r, z / r)
        sx0, sy0, sz0 = frame.site_position_m
        c, sn = math.cos(w * t), math.sin(w * t)
        sx, sy, sz = c * sx0 - sn * sy0, sn * sx0 + c * sy0, sz0
        cx, cy, cz = yy * sz - z * sy, z * sx - x * sz, x * sy - yy * sx
        down = frame.radius_m * math.atan2(math.sqrt(cx * cx + cy * cy + cz * cz), x * sx + yy * sy + z * sz)
    else:
        alt = z
        up = (0.0, 0.0, 1.0)
        down = math.hypot(x - frame.site_position_m[0], yy - frame.site_position_m[1])
    fpa = 90.0
    if vrel > 0:
        fpa = math.degrees(math.asin(max(-1.0, min(1.0, (vrx * up[0] + vry * up[1] + vz * up[2]) / vrel))))
    return alt, down, vrel, v_in, fpa


def _burnouts(frame: FlightFrame, names, burn: np.ndarray) -> tuple[StageBurnout, ...]:
    out = []
    prev = [0.0] * 6
    speed_prev = 0.0
    for i, name in enumerate(names):
        row = burn[i].tolist()
        if not math.isfinite(row[B_T]):
            break
        y = row[B_Y:]
        alt, down, vrel, v_in, fpa = _state_figures(frame, row[B_T], y)
        east, north = (float(c) for c in frame.ground_offset(float(row[B_T]), y[0], y[1], y[2]))
        w = frame.omega_rad_s
        ve, vn = (float(c) for c in frame.ground_offset(float(row[B_T]), y[3] + w * y[1], y[4] - w * y[0], y[5],
                                                        vector=True))
        acc = y[7:13]
        d = [a - b for a, b in zip(acc, prev)]
        out.append(StageBurnout(
            stage=name, time_s=row[B_T], altitude_m=alt, downrange_m=down, speed_m_s=vrel,
            inertial_speed_m_s=v_in, flight_path_angle_deg=fpa, mass_kg=y[6], ideal_delta_v_m_s=d[4],
            speed_gain_m_s=vrel - speed_prev, losses_m_s=MappingProxyType(dict(zip(LOSS_KEYS, d[:4]))),
            centrifugal_m_s=d[5], east_m=east, north_m=north, east_speed_m_s=ve, north_speed_m_s=vn,
        ))
        prev, speed_prev = acc, vrel
    return tuple(out)


def insertion_coast_rows(burn: np.ndarray, n_st: int) -> tuple[np.ndarray, np.ndarray] | None:
    """Burnout-table rows (time, stage, state) where the insertion coast begins and ends: the marked
    cut-off (row n_st: the last stage's cut-off, or the burnout below a kick stage) and the marked
    insertion ignition (row n_st + 1), `setup._phase_table`. None when the flight did not reach them."""
    if burn.shape[0] < n_st + 2:
        return None
    a, b = burn[n_st], burn[n_st + 1]
    return (a, b) if math.isfinite(a[B_T]) and math.isfinite(b[B_T]) else None


def _coast(ascent: AscentProfile | None, burn: np.ndarray, n_st: int) -> tuple[np.ndarray | None, float]:
    """(inertial state where the insertion coast begins, gravity loss accrued on the coast [m/s]);
    (None, 0) without an insertion coast or when it was not flown."""
    rows = insertion_coast_rows(burn, n_st) if ascent is not None and ascent.insertion is not None else None
    if rows is None:
        return None, 0.0
    a, b = rows
    # the first accumulator of the state is the gravity loss (`layout`)
    return np.array(a[B_Y:B_Y + 6], float), float(b[B_Y + N_MOTION] - a[B_Y + N_MOTION])


def _altitude(frame: FlightFrame, y: np.ndarray) -> float:
    return float(np.linalg.norm(y[0:3]) - frame.radius_m) if frame.round_earth else float(y[2])


def assemble(*, frame: FlightFrame, profile: str, stage_names, kernel_out, site_altitude_m: float,
             liftoff_thrust_to_weight: float, ascent: AscentProfile | None, warnings: list[str],
             v_inertial0_m_s: float) -> FlightResult:
    """FlightResult from the kernel's (out, y_final, y_budget, burnouts, history)."""
    out, y, budget, burn, hist = kernel_out[:5]
    o = out.tolist()
    history = _history(frame, hist[: int(o[OUT_N_HIST])]) if o[OUT_N_HIST] > 0 else FlightHistory.empty()
    is_ascent = profile == "ascent"
    terminated = _END_NAMES[int(o[0])]
    apogee, t_apogee = o[OUT_APOGEE], o[OUT_APOGEE_T]
    if not is_ascent and history.t_s.size:
        k = int(np.argmax(history.altitude_m))
        if history.altitude_m[k] > apogee:
            apogee = float(history.altitude_m[k])
            if terminated != "apogee":
                t_apogee = float(history.t_s[k])
    b = budget.tolist()
    acc = b[7:13]
    _, _, v_rel, v_in, _ = _state_figures(frame, o[1], b)
    bonus = (v_in - v_rel) + acc[5] if frame.omega_rad_s != 0.0 else v_inertial0_m_s
    losses = dict(zip(LOSS_KEYS, acc[:4]))
    ideal = acc[4]
    orbit = frame.orbit(y) if is_ascent else None
    impact_t = o[OUT_IMPACT_T]
    impact_x = _state_figures(frame, impact_t, y.tolist())[1] if math.isfinite(impact_t) else math.nan
    end_e, end_n = (float(c) for c in frame.ground_offset(float(o[1]), float(y[0]), float(y[1]), float(y[2])))
    coast_start, coast_gravity = _coast(ascent, burn, len(stage_names))
    return FlightResult(
        profile=profile, terminated_by=terminated,
        apogee_m=apogee if not is_ascent else math.nan, time_to_apogee_s=t_apogee if not is_ascent else math.nan,
        rail_exit_speed_m_s=o[OUT_RAIL_V], rail_exit_time_s=o[OUT_RAIL_T],
        max_dynamic_pressure_pa=o[OUT_MAXQ], max_q_time_s=o[OUT_MAXQ_T],
        max_q_altitude_m=o[OUT_MAXQ_ALT], max_acceleration_m_s2=o[OUT_MAX_ACC],
        liftoff_thrust_to_weight=liftoff_thrust_to_weight, impact_time_s=impact_t, impact_downrange_m=impact_x,
        orbit=orbit, burnouts=_burnouts(frame, stage_names, burn), ideal_delta_v_m_s=ideal,
        losses_m_s=MappingProxyType(losses), rotation_bonus_m_s=bonus, final_inertial_speed_m_s=v_in,
        budget_residual_m_s=ideal - (v_in - bonus + sum(losses.values())), ascent_profile=ascent,
        targeting_residual=(), warnings=tuple(warnings), n_steps=int(o[OUT_N_STEPS]),
        n_rejected=int(o[OUT_N_REJECTED]), n_rhs=int(o[OUT_N_RHS]), history=history, final_state=y,
        end_east_m=end_e, end_north_m=end_n, coast_start_state=coast_start, coast_gravity_loss_m_s=coast_gravity,
    )
