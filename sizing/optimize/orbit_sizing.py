"""Stage masses and ascent steering optimised together for a target orbit (direct shooting).

The design vector holds, scaled to O(1):

* the log of each stage's propellant mass relative to a starting split;
* the pitch kick [deg] and a launch-azimuth offset [deg] (the first stage flies
  a vertical rise, the kick and a zero-lift gravity turn: no angle of attack
  through the dense atmosphere);
* the pitch above the local horizontal [deg] at nodes spread evenly over each
  upper stage's ascent burn, interpolated linearly in time (the steering
  programme written to the design file); upper stages steer in the plane of
  an orbit of the target inclination through the current point;
* with a coast-and-insertion arc: the coast [s], the insertion burn's fixed
  pitch [deg] and the insertion burn's share of the last stage's propellant
  (restart), or the kick stage's coast (a separate insertion stage).

Every evaluation flies the whole ascent, coast and insertion burn with the
compiled kernel (`sizing.physics.flight`). Constraints: perigee and apogee
radii of the final orbit, inclination, and optional path limits (max-q, max
sensed acceleration) and a pitch-rate limit (linear in the nodes). Objective:
gross liftoff mass, or minus the payload for a fixed gross mass. Solved by
`sizing.optimize.shooting.solve_shooting` in two passes: the stage split held
in its starting proportions with one overall scale (finds the steering and a
feasible size), then every stage free.

A stage that carries no useful propellant shrinks towards the lower bound; the
result says so (`FlightSizingResult.warnings`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from sizing.errors import FieldError
from sizing.optimize.shooting import ShootingResult, find_feasible, solve_shooting
from sizing.physics.flight import AscentProfile
from sizing.physics.flight import layout as L
from sizing.physics.flight.kernel import run_flight
from sizing.physics.flight.profiles import InsertionBurn
from sizing.physics.flight.setup import burn_schedule, prepare_flight, replay_steps
from sizing.physics.flight.results import insertion_coast_rows
from sizing.physics.gravity import (circular_speed_m_s, launch_azimuth_deg, lowest_coast_radius_m,
                                    site_rotation_speed_m_s, time_to_apoapsis_s)
from sizing.physics.rocket import stack_masses
from sizing.physics.loss_estimate import gravity_loss_split
from sizing.physics.vehicle import (FlightStageSpec, LaunchSite, Vehicle, build_vehicle, structural_masses,
                                    with_model_coefficients)
from sizing.units import GM_EARTH_M3_S2, R_EARTH_EQ_M

__all__ = ["INSERTION_MODES", "TRANSFER_PLANS", "MIN_TRANSFER_PERIGEE_M", "OrbitGoal", "PathLimits", "OrbitDesign", "size_for_orbit"]

#: Default lowest perigee altitude of a coasting transfer orbit [m]: below about 150-200 km a half-orbit
#: coast loses noticeable energy to drag, and a small shortfall at cut-off brings an unguided vehicle back
#: into the atmosphere (common practice, no source).
MIN_TRANSFER_PERIGEE_M = 180e3
#: How the vehicle reaches the target orbit.
INSERTION_MODES = ("coast", "kick_stage", "direct")
TRANSFER_PLANS = ("lightest", "short_coast", "low_transfer")
_PITCH_SCALE_DEG = 30.0
COAST0 = 300.0  # starting insertion coast [s]
#: Longest coast of the "short_coast" plan, as a fraction of the target orbit's period (this tool's
#: definition of short: an eighth of an orbit, 710 s at 500 km).
SHORT_COAST_FRACTION = 0.125
#: Orbit residual [m/s] under which the scale-only feasibility counts as reached (else every stage moves).
FEASIBLE_START_M_S = 5.0
_COAST_SCALE_S = 1000.0
_SHARE_SCALE = 0.05  # insertion share of the last stage's propellant per unit
#: Weight of the pitch-programme smoothing term (Tikhonov regularisation of the nodes): a 10 deg wiggle
#: costs about 4e-6 of the objective (0.004 % of gross mass), enough to settle directions the flight
#: hardly feels (a short stage's nodes) without moving the optimum measurably.
_SMOOTHING = 1.0e-5


@dataclass(frozen=True, slots=True)
class OrbitGoal:
    """Target orbit.

    Parameters
    ----------
    perigee_altitude_m, apogee_altitude_m : float
        Apsis altitudes above the equatorial radius [m] (equal: circular).
    inclination_deg : float, optional
        Orbit inclination [deg]; None flies the site's azimuth and leaves it free.
    ascending : bool
        Northbound (True) or southbound pass over the site.
    insertion : str
        ``"coast"``: the last stage burns into a transfer orbit, coasts and
        restarts to raise the perigee (circularise); ``"kick_stage"``: the last
        stage is an insertion stage that ignites after the coast;
        ``"direct"``: final burnout is the insertion.
    transfer : str
        Which starting designs the optimiser tries for a coasting insertion
        (`_starts`): ``"lightest"`` both and keeps the lighter, ``"short_coast"``
        only the burn-most-of-the-way-up one, ``"low_transfer"`` only the
        low-transfer, long-coast one (the short coast when that is out of reach).
    """

    perigee_altitude_m: float
    apogee_altitude_m: float
    inclination_deg: float | None = None
    ascending: bool = True
    insertion: str = "coast"
    transfer: str = "lightest"

    def __post_init__(self) -> None:
        if self.insertion not in INSERTION_MODES:
            raise FieldError("mission.insertion", f"must be one of {', '.join(map(repr, INSERTION_MODES))}.",
                             self.insertion)
        if self.transfer not in TRANSFER_PLANS:
            raise FieldError("mission.transfer", f"must be one of {', '.join(map(repr, TRANSFER_PLANS))}.",
                             self.transfer)
        if not self.apogee_altitude_m >= self.perigee_altitude_m:
            raise FieldError("mission.orbit_apogee", "must be >= the perigee altitude.", self.apogee_altitude_m)


def orbit_period_s(goal: OrbitGoal) -> float:
    """Period of the target orbit [s]: 2 pi sqrt(a^3 / GM) (Kepler's third law; Curtis, Orbital Mechanics
    for Engineering Students, 3rd ed., Eq. 2.83)."""
    a = R_EARTH_EQ_M + 0.5 * (goal.perigee_altitude_m + goal.apogee_altitude_m)
    return 2.0 * math.pi * math.sqrt(a ** 3 / GM_EARTH_M3_S2)


@dataclass(frozen=True, slots=True)
class PathLimits:
    """Path limits a reviewer sets (None: no limit).

    max_dynamic_pressure_pa [Pa], max_acceleration_m_s2 (sensed) [m/s^2],
    max_pitch_rate_deg_s (between programme nodes) [deg/s],
    min_transfer_perigee_m: lowest perigee altitude of the orbit coasted in
    before the insertion burn [m] (None: `MIN_TRANSFER_PERIGEE_M`; 0 turns the
    limit off).
    """

    max_dynamic_pressure_pa: float | None = None
    max_acceleration_m_s2: float | None = None
    max_pitch_rate_deg_s: float | None = None
    min_transfer_perigee_m: float | None = None

    def transfer_perigee_m(self) -> float:
        """The transfer-perigee limit in force [m]."""
        return MIN_TRANSFER_PERIGEE_M if self.min_transfer_perigee_m is None else self.min_transfer_perigee_m


@dataclass(frozen=True, slots=True)
class OrbitDesign:
    """An optimised launcher: masses, vehicle, site, steering programme, and the optimiser's account."""

    vehicle: Vehicle
    site: LaunchSite
    profile: AscentProfile
    propellant_mass_kg: tuple[float, ...]
    structural_mass_kg: tuple[float, ...]
    payload_mass_kg: float
    success: bool
    message: str
    n_flights: int
    n_iterations: int
    residuals: dict = field(default_factory=dict)
    warnings: tuple[str, ...] = ()
    trade_factors: dict | None = None


@dataclass(slots=True)
class _Layout:
    """Where each variable sits in z, and how to turn z into a flight."""

    specs: tuple[FlightStageSpec, ...]
    payload_kg: float
    site: LaunchSite
    goal: OrbitGoal
    mp_ref: np.ndarray
    nodes: int
    vertical_rise_s: float
    kick_duration_s: float
    azimuth_deg: float
    plane_inclination_deg: float | None
    payload_diameter_m: float | None
    staging_delay_s: float
    scale_only: bool = False  # pass 1: one overall mass scale
    payload_free: bool = False  # the payload is a variable (log, last slot): maximum payload for a gross mass
    extra_inert_kg: tuple[float, ...] | None = None  # inert mass added per stage (trade factors)
    n_mass: int = 0
    i_kick: int = 0
    i_az: int = 0
    i_pitch: int = 0
    n_pitch: int = 0
    i_ins: int = -1  # coast, pitch, share (coast mode) or coast, pitch (kick stage)
    steered: tuple[int, ...] = ()

    def __post_init__(self) -> None:
        n = len(self.specs)
        kick_stage = self.goal.insertion == "kick_stage"
        last_steered = n - 2 if kick_stage else n - 1
        self.steered = tuple(range(min(1, n - 1) if n > 1 else 0, last_steered + 1))
        self.n_mass = 1 if self.scale_only else n
        self.i_kick = self.n_mass
        self.i_az = self.i_kick + 1
        self.i_pitch = self.i_az + 1
        self.n_pitch = 1 + (self.nodes - 1) * len(self.steered)
        self.i_ins = self.i_pitch + self.n_pitch if self.goal.insertion != "direct" else -1

    @property
    def size(self) -> int:
        extra = {"coast": 3, "kick_stage": 2, "direct": 0}[self.goal.insertion]
        return self.i_pitch + self.n_pitch + extra + (1 if self.payload_free else 0)

    def payload(self, z: np.ndarray) -> float:
        return self.payload_kg * math.exp(float(z[-1])) if self.payload_free else self.payload_kg

    def bounds(self) -> tuple[np.ndarray, np.ndarray]:
        lo = np.full(self.size, -np.inf)
        hi = np.full(self.size, np.inf)
        lo[:self.n_mass], hi[:self.n_mass] = math.log(1e-3), math.log(20.0)
        lo[self.i_kick], hi[self.i_kick] = 0.02, 3.0  # 0.2 .. 30 deg / 10
        lo[self.i_az], hi[self.i_az] = -5.0, 5.0  # deg
        sl = slice(self.i_pitch, self.i_pitch + self.n_pitch)
        lo[sl], hi[sl] = -60.0 / _PITCH_SCALE_DEG, 80.0 / _PITCH_SCALE_DEG
        if self.payload_free:
            lo[-1], hi[-1] = math.log(1e-3), math.log(1e3)
        if self.i_ins >= 0:
            lo[self.i_ins], hi[self.i_ins] = 0.0, 8.0  # coast up to 8000 s
            if self.goal.transfer == "short_coast":  # what the plan asks for: no half-orbit coast
                hi[self.i_ins] = SHORT_COAST_FRACTION * orbit_period_s(self.goal) / _COAST_SCALE_S
            lo[self.i_ins + 1], hi[self.i_ins + 1] = -45.0 / _PITCH_SCALE_DEG, 45.0 / _PITCH_SCALE_DEG
            if self.goal.insertion == "coast":
                lo[self.i_ins + 2], hi[self.i_ins + 2] = 0.002 / _SHARE_SCALE, 0.9 / _SHARE_SCALE
        return lo, hi

    def masses(self, z: np.ndarray) -> tuple[list[float], list[float]]:
        if self.scale_only:
            mp = self.mp_ref * math.exp(z[0])
        else:
            mp = self.mp_ref * np.exp(z[:self.n_mass])
        ms = structural_masses(self.specs, mp, self.payload_kg)
        if self.extra_inert_kg is not None:
            ms = [a + b for a, b in zip(ms, self.extra_inert_kg)]
        return [float(m) for m in mp], ms

    def gross_mass(self, z: np.ndarray) -> float:
        mp, ms = self.masses(z)
        return self.payload(z) + sum(mp) + sum(ms)

    def vehicle(self, z: np.ndarray) -> Vehicle:
        mp, ms = self.masses(z)
        return build_vehicle(self.specs, mp, ms, self.payload(z), payload_diameter_m=self.payload_diameter_m,
                             staging_delay_s=self.staging_delay_s)

    def insertion(self, z: np.ndarray, vehicle: Vehicle) -> InsertionBurn | None:
        if self.i_ins < 0:
            return None
        coast = float(z[self.i_ins]) * _COAST_SCALE_S
        pitch = float(z[self.i_ins + 1]) * _PITCH_SCALE_DEG
        if self.goal.insertion == "coast":
            share = float(z[self.i_ins + 2]) * _SHARE_SCALE
            return InsertionBurn(coast, pitch, share * vehicle.stages[-1].propellant_mass_kg)
        return InsertionBurn(coast, pitch)

    def node_rows(self, vehicle: Vehicle, insertion: InsertionBurn | None) -> list[tuple[float, int]]:
        """(time since liftoff [s], pitch-variable index) of each programme row.

        Node n of the j-th steered stage is variable j (nodes - 1) + n, so a
        stage's last node is the next stage's first (held across staging).
        """
        sched = burn_schedule(vehicle, ignore_first_coast=True, insertion=insertion)
        t_kick_end = self.vertical_rise_s + self.kick_duration_s
        rows: list[tuple[float, int]] = []
        for j, i in enumerate(self.steered):
            a, b = sched.windows[i]
            if insertion is not None and insertion.propellant_kg is not None and i == len(self.specs) - 1:
                b = sched.cutoff_s
            if i == 0:
                a = max(a, t_kick_end)
            for n in range(self.nodes):
                t = a + (b - a) * n / (self.nodes - 1)
                if not rows or t > rows[-1][0] + 1e-6:
                    rows.append((float(t), j * (self.nodes - 1) + n))
        return rows

    def profile(self, z: np.ndarray, vehicle: Vehicle) -> AscentProfile:
        insertion = self.insertion(z, vehicle)
        pitch = np.asarray(z[self.i_pitch:self.i_pitch + self.n_pitch]) * _PITCH_SCALE_DEG
        rows = [(t, float(pitch[k])) for t, k in self.node_rows(vehicle, insertion)]
        first = self.specs[self.steered[0]].name if self.steered else None
        table = len(rows) >= 2
        return AscentProfile(
            vertical_rise_s=self.vertical_rise_s, pitch_kick_deg=float(z[self.i_kick]) * 10.0,
            kick_duration_s=self.kick_duration_s, steering="table" if table else "gravity_turn",
            steer_from_stage=first, pitch_table=tuple(rows) if table else None,
            hold_inclination_deg=self.plane_inclination_deg, ascending=self.goal.ascending, insertion=insertion)

    def roughness(self, z: np.ndarray) -> float:
        """Sum of squared second differences of the pitch nodes (scaled), for the smoothing term."""
        p = np.asarray(z[self.i_pitch:self.i_pitch + self.n_pitch])
        return float(np.sum(np.diff(p, 2) ** 2)) if p.size > 2 else 0.0

    def site_for(self, z: np.ndarray) -> LaunchSite:
        return replace(self.site, azimuth_deg=(self.azimuth_deg + float(z[self.i_az])) % 360.0)

    def pitch_rate_rows(self, z: np.ndarray, limit_deg_s: float) -> tuple[np.ndarray, np.ndarray]:
        """Linear inequalities limit * dt -/+ (theta_j - theta_i) >= 0 between consecutive rows (dt of design z)."""
        veh = self.vehicle(z)
        rows = self.node_rows(veh, self.insertion(z, veh))
        A, b = [], []
        for (t0, i), (t1, j) in zip(rows, rows[1:]):
            if i == j:
                continue
            for sign in (1.0, -1.0):
                a = np.zeros(self.size)
                a[self.i_pitch + j] -= sign * _PITCH_SCALE_DEG
                a[self.i_pitch + i] += sign * _PITCH_SCALE_DEG
                A.append(a)
                b.append(limit_deg_s * (t1 - t0))
        return np.array(A), np.array(b)


def orbit_residuals_m_s(y: np.ndarray, rp_t: float, ra_t: float, *, at_perigee: bool = False
                        ) -> tuple[list[float], float]:
    """Speed-like residuals of a final state against a target orbit [m/s], and its inclination [deg].

    Circular target (rp = ra = r_t): radial speed v_r, v_theta - sqrt(GM/r_t)
    and the radius error as the speed that moves an apsis as far,
    (r - r_t) v_c / (4 r_t) (vis-viva to first order). Three conditions: the
    apsis pair alone is degenerate at zero eccentricity (|e| has no slope
    there). Elliptical target: v - sqrt(GM (2/r - 1/a_t)) (vis-viva) and
    (h - sqrt(GM p_t)) / r (angular momentum), which fix a and e. All are close
    to linear in the burnout velocity, unlike apsis altitudes (about 3.6 km of
    apogee per m/s in low orbit), which keeps the optimiser's linearisation
    valid over its steps. `at_perigee`: the state must be the perigee of the
    target (radial speed, perigee speed by vis-viva, radius), as for the burnout
    into a transfer orbit. Formulas: Curtis, Orbital Mechanics for Engineering
    Students, 3rd ed., Ch. 2 (vis-viva, angular momentum; from memory).
    """
    x, yy, z, vx, vy, vz = (float(c) for c in y[:6])
    rn = math.sqrt(x * x + yy * yy + z * z)
    hx, hy, hz = yy * vz - z * vy, z * vx - x * vz, x * vy - yy * vx
    hn = math.sqrt(hx * hx + hy * hy + hz * hz)
    inc = math.degrees(math.acos(max(-1.0, min(1.0, hz / hn)))) if hn > 0 else 90.0
    if abs(ra_t - rp_t) < 1.0 or at_perigee:
        v_c = math.sqrt(GM_EARTH_M3_S2 / rp_t)
        v_p = math.sqrt(GM_EARTH_M3_S2 * (2.0 / rp_t - 2.0 / (rp_t + ra_t)))  # vis-viva at perigee
        v_r = (x * vx + yy * vy + z * vz) / rn
        return [v_r, hn / rn - v_p, (rn - rp_t) * v_c / (4.0 * rp_t)], inc
    a_t = 0.5 * (rp_t + ra_t)
    p_t = 2.0 * rp_t * ra_t / (rp_t + ra_t)
    v_req = math.sqrt(max(0.0, GM_EARTH_M3_S2 * (2.0 / rn - 1.0 / a_t)))
    return [math.sqrt(vx * vx + vy * vy + vz * vz) - v_req, (hn - math.sqrt(GM_EARTH_M3_S2 * p_t)) / rn], inc


def _flight(lay: _Layout, z: np.ndarray, rtol: float, steps: np.ndarray | None = None):
    """Fly design z; with `steps`, replay that step record (see `replay_steps`) when the phases allow it."""
    vehicle = lay.vehicle(z)
    profile = lay.profile(z, vehicle)
    site = lay.site_for(z)
    setup = prepare_flight(vehicle, site, profile="ascent", ascent=profile, rotating=True, stop_at="burnout",
                           record_history=False, detect_impact=False, rtol=rtol)
    if steps is not None:
        setup = replay_steps(setup, steps) or setup
    return vehicle, profile, site, run_flight(*setup.kernel_args(1))


class _Outputs:
    """fly(z) -> [objective, apsis residuals, inclination residual, path margins] for `solve_shooting`."""

    def __init__(self, lay: _Layout, limits: PathLimits, *, rtol: float, gross_mass_kg: float | None = None,
                 max_gross_mass_kg: float | None = None, at_perigee: bool = False):
        self.lay, self.limits, self.rtol = lay, limits, rtol
        self.gross_target = gross_mass_kg if lay.payload_free else None
        self.gross_cap = max_gross_mass_kg
        g = lay.goal
        self.rp_t = R_EARTH_EQ_M + g.perigee_altitude_m
        self.ra_t = R_EARTH_EQ_M + g.apogee_altitude_m
        self.v_t = circular_speed_m_s(g.perigee_altitude_m)
        self.at_perigee = at_perigee
        self.n_orbit = 3 if (abs(self.ra_t - self.rp_t) < 1.0 or at_perigee) else 2
        self.n_eq = self.n_orbit + (1 if g.inclination_deg is not None else 0) + (self.gross_target is not None)
        self.rp_min = (R_EARTH_EQ_M + limits.transfer_perigee_m()
                       if g.insertion != "direct" and limits.transfer_perigee_m() > 0 and not at_perigee else None)
        self.n_ineq = ((limits.max_dynamic_pressure_pa is not None) + (limits.max_acceleration_m_s2 is not None)
                       + (self.gross_cap is not None) + (self.rp_min is not None))
        self.m_ref = lay.gross_mass(np.zeros(lay.size))

    def __call__(self, z: np.ndarray, steps: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray | None]:
        try:
            _, _, _, (out, y, _, burn, _, rec) = _flight(self.lay, z, self.rtol, steps)
        except FieldError:  # a design outside the models' domain (e.g. thrust-to-weight <= 1)
            return np.full(1 + self.n_eq + self.n_ineq, 1e3), None
        token = rec[: int(out[L.OUT_N_STEPREC])].copy() if out[L.OUT_N_STEPREC] > 0 else None
        orbit, inc = orbit_residuals_m_s(y, self.rp_t, self.ra_t, at_perigee=self.at_perigee)
        gross = self.lay.gross_mass(z)
        obj = -self.lay.payload(z) / self.lay.payload_kg if self.lay.payload_free else gross / self.m_ref
        obj += _SMOOTHING * self.lay.roughness(z)
        res = [obj, *orbit]
        if self.lay.goal.inclination_deg is not None:
            res.append(math.radians(inc - self.lay.goal.inclination_deg) * self.v_t)  # plane error as a speed
        if self.gross_target is not None:
            res.append(100.0 * (gross - self.gross_target) / self.gross_target)  # 1 unit = 1 % of the gross mass
        if self.limits.max_dynamic_pressure_pa is not None:
            res.append((self.limits.max_dynamic_pressure_pa - out[L.OUT_MAXQ]) / self.limits.max_dynamic_pressure_pa)
        if self.limits.max_acceleration_m_s2 is not None:
            res.append((self.limits.max_acceleration_m_s2 - out[L.OUT_MAX_ACC]) / self.limits.max_acceleration_m_s2)
        if self.gross_cap is not None:
            res.append((self.gross_cap - gross) / self.gross_cap)
        if self.rp_min is not None:  # the coast arc, from the state at cut-off (or below the kick stage)
            rows = insertion_coast_rows(burn, len(self.lay.specs))
            low = lowest_coast_radius_m(rows[0][L.B_Y:L.B_Y + 6]) if rows is not None else 0.0
            res.append((low - self.rp_min) / 100e3)  # 1 unit = 100 km; a flight that never cut off: far below
        return np.array(res), (token if steps is None else None)


def _initial_split(specs, payload_kg: float, goal: OrbitGoal, site: LaunchSite, loss_guess_m_s: float) -> np.ndarray:
    """Propellant masses of the gravity-loss-aware split (`sizing.physics.loss_estimate`) for the orbit
    speed plus `loss_guess_m_s` of drag and steering, minus the rotation bonus."""
    v = circular_speed_m_s(0.5 * (goal.perigee_altitude_m + goal.apogee_altitude_m))
    bonus = site_rotation_speed_m_s(site.latitude_deg, site.altitude_m) * math.sin(math.radians(site.azimuth_deg))
    c = [s.exhaust_velocity_vac_m_s for s in specs]
    eps = [s.structural_coefficient for s in specs]
    psi = [s.thrust_to_weight * (s.isp_vac_s / s.isp_sl_s if (i == 0 and s.isp_sl_s) else 1.0)
           for i, s in enumerate(specs)]
    n = gravity_loss_split(c, eps, psi, v + loss_guess_m_s - bonus)
    m = stack_masses(n, eps, payload_kg)
    mp = np.asarray(m["propellant_mass_kg"], float)
    # a stage the estimate empties starts at a small share, so the optimiser can still grow it
    return np.maximum(mp, 0.05 * mp.sum() / len(mp))


def _fixed_coefficients(specs) -> tuple[FlightStageSpec, ...]:
    """The specs with their mass models off: each stage keeps its structural coefficient."""
    return tuple(replace(s, mass_model=None) for s in specs)


def _model_start(specs, mp0, payload_kg: float, goal: OrbitGoal, site: LaunchSite, loss_guess_m_s: float):
    """Mass-model stages: the coefficient of each model at the starting split, the split again, twice
    (fixed point). Each coefficient is held within [0.04, 0.20] (common practice, no source: the span of
    liquid and solid stages), since a model's coefficient grows steeply as a stage gets small and a
    lopsided start can run away. Returns (specs, propellant masses)."""
    for _ in range(2):
        specs = tuple(replace(s, structural_coefficient=min(max(s.structural_coefficient, 0.04), 0.20))
                      if s.mass_model is not None else s for s in with_model_coefficients(specs, mp0, payload_kg))
        mp0 = _initial_split(specs, payload_kg, goal, site, loss_guess_m_s)
    return specs, mp0


def _start(lay: _Layout, rtol: float) -> np.ndarray:
    """A starting design: a 3 deg kick, the upper-stage pitch falling linearly from the flight-path angle
    reached at their ignition to zero, and an insertion coast to the transfer orbit's apoapsis."""
    z = np.zeros(lay.size)
    z[lay.i_kick] = 0.3
    gt = AscentProfile(vertical_rise_s=lay.vertical_rise_s, pitch_kick_deg=3.0, kick_duration_s=lay.kick_duration_s,
                       steering="gravity_turn")
    veh = lay.vehicle(z)
    setup = prepare_flight(veh, lay.site_for(z), profile="ascent", ascent=gt, rotating=True, stop_at="burnout",
                           record_history=True, detect_impact=False, rtol=1e-6)
    out, y, _, burn, hist, _ = run_flight(*setup.kernel_args(256))
    h = hist[: int(out[L.OUT_N_HIST])]
    r, v = h[:, 1:4], h[:, 4:7]
    fpa = np.degrees(np.arcsin(np.clip(np.einsum("ij,ij->i", r, v) / (np.linalg.norm(r, axis=1)
                                                                        * np.linalg.norm(v, axis=1)), -1, 1)))
    s0 = lay.steered[0] if lay.steered else 0
    t_ign = burn_schedule(veh, ignore_first_coast=True).windows[s0][0]
    gam0 = float(np.interp(t_ign, h[:, 0], fpa))
    z[lay.i_pitch:lay.i_pitch + lay.n_pitch] = np.linspace(gam0, 0.0, lay.n_pitch) / _PITCH_SCALE_DEG
    if lay.i_ins >= 0:
        z[lay.i_ins] = COAST0 / 1000.0  # refined below
        if lay.goal.insertion == "coast":
            z[lay.i_ins + 2] = 0.1 / _SHARE_SCALE
    return z


def size_for_orbit(specs, payload_mass_kg: float, goal: OrbitGoal, site: LaunchSite | None = None, *,
                   limits: PathLimits | None = None, nodes_per_stage: int = 4, vertical_rise_s: float = 10.0,
                   kick_duration_s: float = 10.0, loss_guess_m_s: float = 300.0,
                   payload_diameter_m: float | None = None, staging_delay_s: float = 0.0, rtol: float = 1e-8,
                   max_iterations: int = 60, gross_mass_kg: float | None = None,
                   max_gross_mass_kg: float | None = None) -> OrbitDesign:
    """Minimum gross mass stage split and ascent programme for a target orbit (module notes).

    Parameters
    ----------
    specs : sequence of FlightStageSpec
        Stages without masses, bottom first.
    payload_mass_kg : float
        Payload [kg].
    goal : OrbitGoal
    site : LaunchSite, optional
        Launch site; its azimuth is replaced by the inclination's launch
        azimuth (rotation-corrected) when the goal gives an inclination.
    limits : PathLimits, optional
    nodes_per_stage : int
        Pitch-programme nodes per upper-stage burn, >= 2.
    vertical_rise_s, kick_duration_s : float
        First-stage vertical rise and kick duration [s].
    loss_guess_m_s : float
        Drag and steering losses assumed for the starting split [m/s] (gravity
        losses are estimated per stage).
    rtol : float
        Integrator tolerance of the optimisation flights [-].
    gross_mass_kg : float, optional
        Maximise the payload for this gross mass [kg] (`payload_mass_kg` is then the starting guess).
    max_gross_mass_kg : float, optional
        Gross mass cap [kg].
    """
    specs = tuple(specs)
    site = site or LaunchSite()
    limits = limits or PathLimits()
    if nodes_per_stage < 2:
        raise FieldError("steering.nodes_per_stage", "must be >= 2.", nodes_per_stage)
    if goal.insertion == "kick_stage" and len(specs) < 2:
        raise FieldError("mission.insertion", "'kick_stage' needs at least two stages.", goal.insertion)
    az = site.azimuth_deg
    if goal.inclination_deg is not None:
        v_orb = circular_speed_m_s(goal.perigee_altitude_m)
        az = launch_azimuth_deg(site.latitude_deg, goal.inclination_deg, orbit_speed_m_s=v_orb,
                                ascending=goal.ascending, altitude_m=site.altitude_m)
    site = replace(site, azimuth_deg=az)
    mp0 = _initial_split(specs, payload_mass_kg, goal, site, loss_guess_m_s)
    common = dict(specs=specs, payload_kg=float(payload_mass_kg), site=site, goal=goal, mp_ref=mp0,
                  nodes=nodes_per_stage, vertical_rise_s=vertical_rise_s, kick_duration_s=kick_duration_s,
                  azimuth_deg=az, plane_inclination_deg=goal.inclination_deg, payload_diameter_m=payload_diameter_m,
                  staging_delay_s=staging_delay_s)
    run = (common, limits, rtol, max_iterations, gross_mass_kg, max_gross_mass_kg)
    runs = _run_starts(*run)
    if any(s.mass_model is not None for s in specs):
        # mass models: also start from the models' own coefficients (neither start wins everywhere: on
        # corvid variants each one fails or lands 13 % heavier where the other does not)
        specs2, mp2 = _model_start(specs, mp0, payload_mass_kg, goal, site, loss_guess_m_s)
        runs += _run_starts(dict(common, specs=specs2, mp_ref=mp2), *run[1:], suffix=" (model coefficients)")
    n_total = sum(r[4] for r in runs)
    label, lay2, outputs, res, _, used = min(runs, key=lambda r: (not r[3].success,
                                                                 _merit(r[1], r[3], gross_mass_kg)))
    design = _design(lay2, outputs, res, n_total, sum(r[3].n_iterations for r in runs))
    if len(runs) > 1:
        design = replace(design, warnings=design.warnings + (_basin_note(runs, label, gross_mass_kg),))
    if not res.success or gross_mass_kg is not None:
        return design
    out_kw = dict(rtol=rtol, max_gross_mass_kg=max_gross_mass_kg)
    return replace(design, trade_factors=_trade_factors(used, limits, out_kw, res, lay2.gross_mass(res.z)))


def _run_starts(common: dict, limits: PathLimits, rtol: float, max_iterations: int, gross_mass_kg, max_gross_mass_kg,
                suffix: str = "") -> list:
    """Every starting design optimised: (label, layout, outputs, result, flights, common) per start."""
    runs = []
    for label, start in _starts(common, limits, rtol):
        lay2, outputs, res, n = _passes(common, start, limits, rtol, max_iterations, gross_mass_kg,
                                        max_gross_mass_kg)
        runs.append((label + suffix, lay2, outputs, res, n, common))
    return runs


def _starts(common: dict, limits: PathLimits, rtol: float):
    """Starting designs of the scale-only pass: (label, layout, z).

    Direct shooting finds a local optimum, and an ascent to a high orbit has
    two: burn most of the way up and insert after a short coast, or burn into
    a low transfer orbit whose apoapsis is the target, coast about half an orbit
    and circularise there (a Hohmann transfer with a finite first burn; Curtis,
    Orbital Mechanics for Engineering Students, 3rd ed., Sec. 6.2). The second is
    the lighter one for low-thrust upper stages and high targets. Both are tried
    when the target perigee is well above the low transfer perigee and the
    insertion has a coast; the lighter design is kept. The goal's `transfer`
    plan may ask for one of them only (the short coast stands in when the low
    transfer is out of reach).
    """
    goal = common["goal"]
    low = None
    h_p = max(limits.transfer_perigee_m(), 150e3)
    if (goal.transfer != "short_coast" and goal.insertion != "direct" and goal.perigee_altitude_m >= h_p + 100e3
            and not (goal.insertion == "kick_stage" and len(common["specs"]) < 3)):  # a kick stage above
        low = _low_transfer_start(common, h_p, rtol)  # one stage would leave the transfer to the zero-lift turn
    if low is None or goal.transfer != "low_transfer":
        lay1 = _Layout(**common, scale_only=True)
        yield "short-coast", (lay1, _start(lay1, rtol), None)
    if low is not None:  # the ascent reaches the transfer: feasibility moves the last stage and the insertion
        lay, z = low
        yield "low-transfer, long-coast", (lay, z, [len(common["specs"]) - 1, *range(lay.i_ins, lay.size)])


def _low_transfer_start(common: dict, h_p: float, rtol: float):
    """A starting design that burns into the low transfer orbit, coasts to its apoapsis and circularises.

    The ascent steering and size come from a scale-only feasibility solve of
    direct insertion at the perigee of the transfer orbit (perigee altitude
    `h_p` [m], the transfer-perigee limit; apoapsis the target's apogee) with
    the insertion burn's propellant, sized
    by the rocket equation for the apoapsis burn of a Hohmann transfer
    (Curtis 3rd ed., Sec. 6.2), riding along as inert mass; the coast is the
    two-body time from that burnout to apoapsis (Kepler's equation, Curtis
    3rd ed., Sec. 3.4). Returns (full layout, z) or None when the transfer is
    out of reach of the starting split.
    """
    goal, mp_ref, payload = common["goal"], common["mp_ref"], common["payload_kg"]
    specs = _fixed_coefficients(common["specs"])  # a start: fixed coefficients do
    n = len(specs)
    kick = goal.insertion == "kick_stage"
    direct = OrbitGoal(h_p, goal.apogee_altitude_m, goal.inclination_deg, goal.ascending,
                       "direct")
    sub = dict(common, goal=direct, specs=specs)
    s_kg = 0.0
    if kick:  # the transfer is flown by the stages below the kick stage, which rides as payload
        ms_k = structural_masses(specs, mp_ref, payload)[-1]
        sub.update(specs=specs[:-1], mp_ref=mp_ref[:-1], payload_kg=payload + float(mp_ref[-1]) + ms_k)
    else:
        ra = R_EARTH_EQ_M + goal.apogee_altitude_m
        a_tr = 0.5 * (R_EARTH_EQ_M + h_p + ra)
        a_fin = 0.5 * (R_EARTH_EQ_M + goal.perigee_altitude_m + ra)
        dv2 = math.sqrt(GM_EARTH_M3_S2 * (2.0 / ra - 1.0 / a_fin)) - math.sqrt(GM_EARTH_M3_S2 * (2.0 / ra - 1.0 / a_tr))
        ms = structural_masses(specs, mp_ref, payload)
        s_kg = (ms[-1] + payload) * math.expm1(dv2 / specs[-1].exhaust_velocity_vac_m_s)
        eps = ms[-1] / (ms[-1] + float(mp_ref[-1]))  # the stage's structure grows with the reserved propellant
        sub["extra_inert_kg"] = (0.0,) * (n - 1) + (s_kg / (1.0 - eps),)
    lay_d = _Layout(**sub, scale_only=True)
    out_d = _Outputs(lay_d, PathLimits(), rtol=rtol, at_perigee=True)
    lo, hi = lay_d.bounds()
    try:
        z_d, _ = find_feasible(out_d, _start(lay_d, rtol), lo, hi, n_eq=out_d.n_eq)
        g = out_d(z_d)[0]
        _, _, _, (_, y, _, _, _, _) = _flight(lay_d, z_d, rtol)
    except FieldError:
        return None
    if not np.all(np.abs(g[1:1 + out_d.n_eq]) < 5.0):  # m/s: the transfer was not reached
        return None
    lay = _Layout(**common, scale_only=False)
    z = np.zeros(lay.size)
    z[:n] = z_d[0]
    if kick:
        z[n - 1] = 0.0
    else:
        mp_last = float(mp_ref[-1]) * math.exp(z_d[0]) + s_kg
        z[n - 1] = math.log(mp_last / float(mp_ref[-1]))
        z[lay.i_ins + 2] = min(0.9, max(0.002, s_kg / mp_last)) / _SHARE_SCALE
    z[lay.i_kick:lay.i_pitch + lay.n_pitch] = z_d[lay_d.i_kick:lay_d.i_pitch + lay_d.n_pitch]
    z[lay.i_ins] = min(8.0, time_to_apoapsis_s(y) / _COAST_SCALE_S)
    return lay, z


def _passes(common: dict, start, limits: PathLimits, rtol: float, max_iterations: int,
            gross_mass_kg: float | None, max_gross_mass_kg: float | None):
    """Scale-only feasibility from one start, then every stage free (after the fixed-coefficient
    optimum when a stage carries a mass model). Returns (layout, outputs, result, flights)."""
    specs = common["specs"]
    lay1, z1, free = start
    out1 = _Outputs(lay1, limits, rtol=rtol)
    lo1, hi1 = lay1.bounds()
    z1, n_fl = find_feasible(out1, z1, lo1, hi1, n_eq=out1.n_eq, free=free)
    z2 = np.concatenate([np.full(len(specs), z1[0]), z1[1:]]) if lay1.scale_only else z1
    if lay1.scale_only:
        n_fl += 1  # the check below flies the feasible point once more
        if not np.all(np.abs(out1(z1)[0][1:1 + out1.n_eq]) < FEASIBLE_START_M_S):
            # the split scaled as a whole misses the orbit: let every stage's propellant move too
            z2, n_more = _full_feasibility(common, z2, limits, rtol)
            n_fl += n_more
    common = dict(common)
    if gross_mass_kg is not None:  # scale the feasible vehicle and its payload to the gross mass
        k = gross_mass_kg / lay1.gross_mass(z1)
        common.update(payload_kg=common["payload_kg"] * k, mp_ref=common["mp_ref"] * k)
        z2 = np.concatenate([z2, [0.0]])

    def integrated(z_start, lim=limits, **kw):
        lay = _Layout(**{**common, **kw}, scale_only=False, payload_free=gross_mass_kg is not None)
        out = _Outputs(lay, lim, rtol=rtol, gross_mass_kg=gross_mass_kg, max_gross_mass_kg=max_gross_mass_kg)
        lo, hi = lay.bounds()
        lin = None
        if lim.max_pitch_rate_deg_s is not None:
            lin = lay.pitch_rate_rows(z_start, lim.max_pitch_rate_deg_s)
        return lay, out, solve_shooting(out, z_start, lo, hi, n_eq=out.n_eq, n_ineq=out.n_ineq, linear_ineq=lin,
                                        eq_tol=0.05, max_iterations=max_iterations, step=1e-6)

    def limited(z_start, **kw):
        """The integrated optimum; from the short-coast start the transfer-perigee limit joins in a second
        solve from the unlimited optimum when that optimum breaks it (a limit active far from the start
        drove SLSQP into a far heavier basin). Returns (layout, outputs, result, flights)."""
        if free is not None or limits.transfer_perigee_m() <= 0 or common["goal"].insertion == "direct":
            lay, out, res = integrated(z_start, **kw)
            return lay, out, res, res.n_flights
        lay, out, res = integrated(z_start, replace(limits, min_transfer_perigee_m=0.0), **kw)
        if not res.success:
            lay, out, res2 = integrated(z_start, **kw)
            return lay, out, res2, res.n_flights + res2.n_flights
        check = _Outputs(lay, limits, rtol=rtol, gross_mass_kg=gross_mass_kg, max_gross_mass_kg=max_gross_mass_kg)
        g = check(res.z)[0]
        if g[-1] >= -1e-4:  # the perigee margin is the last output; inactive: its multiplier is 0
            return lay, check, replace(res, outputs=g), res.n_flights + 1
        lay, out, res2 = integrated(res.z, **kw)
        return lay, out, res2, res.n_flights + 1 + res2.n_flights

    if any(s.mass_model is not None for s in specs):
        # continuation: the optimum with the model's coefficients held fixed, then with the model itself
        _lay, _out, res0, n0 = limited(z2, specs=_fixed_coefficients(specs))
        n_fl += n0
        if res0.success:
            z2 = res0.z
    lay2, outputs, res, n2 = limited(z2)
    return lay2, outputs, res, n_fl + n2


def _full_feasibility(common: dict, z: np.ndarray, limits: PathLimits, rtol: float) -> tuple[np.ndarray, int]:
    """Least squares for the orbit with every variable free (masses one by one), from z; the mass model
    off (fixed coefficients), as in the first integrated pass. Returns (z, flights)."""
    lay = _Layout(**{**common, "specs": _fixed_coefficients(common["specs"])}, scale_only=False)
    out = _Outputs(lay, replace(limits, min_transfer_perigee_m=0.0), rtol=rtol)
    lo, hi = lay.bounds()
    return find_feasible(out, z, lo, hi, n_eq=out.n_eq)


def _merit(lay: _Layout, res: ShootingResult, gross_mass_kg: float | None) -> float:
    """What the optimiser minimised, in kilograms: gross mass, or minus the payload for a fixed gross mass."""
    return -lay.payload(res.z) if gross_mass_kg is not None else lay.gross_mass(res.z)


def _basin_note(runs, kept: str, gross_mass_kg: float | None) -> str:
    """Review note: the starting designs tried and what each gave."""
    parts = []
    for label, lay, _out, res, _n, _common in runs:
        if not res.success:
            parts.append(f"{label}: no feasible design")
        elif gross_mass_kg is not None:
            parts.append(f"{label}: payload {lay.payload(res.z):,.1f} kg")
        else:
            parts.append(f"{label}: gross {lay.gross_mass(res.z):,.0f} kg")
    design = next(r for r in runs if r[0] == kept)
    coast = design[1].insertion(design[3].z, design[1].vehicle(design[3].z))
    coast_text = f"; its insertion coast is {coast.coast_s:,.0f} s" if coast is not None else ""
    count = {2: "two", 3: "three", 4: "four"}.get(len(runs), str(len(runs)))
    return (f"steering: optimised from {count} starting designs ({'; '.join(parts)}); kept: the one from the "
            f"{kept} start{coast_text} (direct shooting finds a local optimum from each start).")


def _trade_factors(common: dict, limits: PathLimits, out_kw: dict, res: ShootingResult, gross: float) -> dict:
    """Gross-mass trade factors at the optimum by the envelope theorem: one flight per parameter.

    Each parameter (payload +1 kg; per stage structural mass +1 kg, Isp +1 s,
    structural coefficient +0.01) is changed with the design held at the
    optimum; the change of the gross mass and of the constraint outputs,
    weighted by the multipliers (`ShootingResult.objective_change`), is the
    first-order change of the minimum gross mass with steering and split
    re-optimised.
    """
    specs = common["specs"]
    n = len(specs)

    def change(**kw) -> float:
        lay = _Layout(**{**common, **kw})
        outputs = _Outputs(lay, limits, **out_kw)
        g = outputs(res.z)[0]
        return float(res.objective_change(g) * outputs.m_ref)

    stages = {}
    for i, s in enumerate(specs):
        inert = tuple(1.0 if k == i else 0.0 for k in range(n))
        isp = specs[:i] + (replace(s, isp_vac_s=s.isp_vac_s + 1.0,
                                   isp_sl_s=None if s.isp_sl_s is None else s.isp_sl_s + 1.0),) + specs[i + 1:]
        eps = specs[:i] + (replace(s, structural_coefficient=s.structural_coefficient + 0.01),) + specs[i + 1:]
        stages[s.name] = {"per_structural_kg": change(extra_inert_kg=inert), "per_isp_s": change(specs=isp),
                          # a mass-model stage has no structural coefficient to vary
                          "per_0_01_structural_coefficient": math.nan if s.mass_model is not None
                          else change(specs=eps)}
    return {"basis": ("change in minimum gross mass at fixed payload and target orbit, steering and split "
                      "re-optimised (envelope theorem on the flown optimum, first order)"),
            "gross_mass_per_payload_kg": change(payload_kg=common["payload_kg"] + 1.0),
            "gross_mass_kg": gross, "stages": stages}


def _design(lay: _Layout, outputs: _Outputs, res: ShootingResult, n_flights: int, n_iterations: int) -> OrbitDesign:
    z = res.z
    vehicle = lay.vehicle(z)
    mp, ms = lay.masses(z)
    residuals = {"orbit_m_s": [float(v) for v in res.outputs[1:1 + outputs.n_orbit]]}
    if lay.goal.inclination_deg is not None:
        residuals["plane_m_s"] = float(res.outputs[1 + outputs.n_orbit])
    return OrbitDesign(vehicle=vehicle, site=lay.site_for(z), profile=lay.profile(z, vehicle),
                       propellant_mass_kg=tuple(mp), structural_mass_kg=tuple(ms), payload_mass_kg=lay.payload(z),
                       success=res.success, message=res.message, n_flights=n_flights, n_iterations=n_iterations,
                       residuals=residuals)
