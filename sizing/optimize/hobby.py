"""Hobby stacks: choose one motor per stage (and nose ballast) to reach an apogee.

Given a motor list, the airframe of every stage and a payload, the search
finds the lightest (or cheapest) stack whose simulated apogee reaches the
target while meeting the liftoff thrust-to-weight, rail-exit speed and
maximum-acceleration limits.

Method (exact branch and bound on a known objective)
----------------------------------------------------
1. Every combination of one fitting motor per stage is enumerated with plain
   arithmetic (no simulation). Its liftoff mass and cost are known before
   flying it, and ballast can only add mass, so mass (or cost) without
   ballast is a lower bound of its objective.
2. Cheap rejections: liftoff thrust-to-weight (average thrust of the bottom
   motor over liftoff weight, ballast 0) below the minimum; and an energy
   bound on apogee below the target. The bound: in vertical flight the
   specific energy e = v^2/2 - mu/r grows at the rate v a_T <= dv_ideal(t)
   d(dv_ideal)/dt, so at apogee mu/r0 - mu/r_a <= dv_ideal^2 / 2, with the
   ideal (Tsiolkovsky) velocity increment of the stack; drag only lowers it.
   The bound is rigorous for any trajectory code that integrates these
   equations, with or without drag.
3. The remaining combinations are flown in increasing order of the lower
   bound. A combination that flies too fast for the acceleration limit gets
   the least nose ballast that brings it under (bisection; acceleration falls
   with mass), and with ``match_target=True`` the ballast that brings the
   apogee down to the target. A stack that cannot lift off (peak
   thrust-to-weight <= 1, or stalls on the rail) or whose flight-time bound
   exceeds 300 s is rejected at once (`sizing.physics.liftoff.fly_hobby`).
   With a `stability` callback (stage geometry given), each combination
   first gets the least nose ballast for its static margin
   (`sizing.optimize.hobby_safety.stability_ballast`), counted in its mass
   bound and thrust-to-weight and used as the floor of every ballast above;
   one that ballast cannot (or may not) make stable is rejected as
   ``"unstable"``.
   The search stops as soon as the next lower
   bound is not better than the best feasible objective found: the result is
   then the exact optimum over the list (up to the bisection tolerance).
4. Lists whose number of combinations exceeds `max_combinations` are first
   pruned per stage to the motors not dominated in (total impulse >=,
   loaded mass <=, cost <=) among motors of the same diameter and similar
   average thrust (within a factor 1.25). This is a heuristic and may miss the
   optimum; the result's `method` says when it was used. `max_simulations`
   caps the number of flights; a capped search returns the best found with
   status ``max_simulations``.

The minimum liftoff thrust-to-weight defaults to 5 (Spaceport America Cup
DTEG req. 5.18.2, quoted second-hand from a university team wiki, edition not checked; also the common hobby
rule of thumb). The minimum rail-exit speed defaults to 15 m/s (about 50 ft/s,
common hobby practice, from memory); `DTEG_RAIL_EXIT_SPEED_M_S` = 30.48 m/s
(100 ft/s, Spaceport America Cup DTEG 10.2.1, as quoted on the same wiki) is the
stricter student-competition rule.

Results are preliminary estimates, not clearance to fly.
"""

from __future__ import annotations

import itertools
import math
from collections import Counter
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from types import MappingProxyType


from sizing.errors import CannotLiftOffError, FieldError, FlightTimeCapError
from sizing.physics.liftoff import fly_hobby
from sizing.physics.motors import Motor, motor_flight_stage
from sizing.physics.vehicle import DragCurve, LaunchSite, Vehicle
from sizing.units import G0_M_S2, GM_EARTH_M3_S2, R_EARTH_EQ_M

__all__ = [
    "HOBBY_MIN_THRUST_TO_WEIGHT",
    "HOBBY_RAIL_EXIT_SPEED_M_S",
    "DTEG_RAIL_EXIT_SPEED_M_S",
    "HOBBY_CAUTION",
    "REJECT_REASONS",
    "StackStage",
    "StageChoice",
    "HobbyStackResult",
    "apogee_energy_bound",
    "build_motor_vehicle",
    "search_hobby_stack",
]

#: Minimum liftoff thrust-to-weight [-]: Spaceport America Cup DTEG req. 5.18.2, quoted second-hand from a university team wiki, edition not checked.
HOBBY_MIN_THRUST_TO_WEIGHT = 5.0
#: Minimum rail-exit speed [m/s]: ~50 ft/s, common hobby practice (from memory, no source).
HOBBY_RAIL_EXIT_SPEED_M_S = 15.0
#: Minimum rail-exit speed [m/s]: 100 ft/s, Spaceport America Cup DTEG 10.2.1, quoted second-hand from a university team wiki, edition not checked.
DTEG_RAIL_EXIT_SPEED_M_S = 30.48

HOBBY_CAUTION = (
    "Preliminary estimates only, not clearance to fly. Follow the applicable hobby safety code, "
    "local law, range and aviation rules and licensed practice; keep clear distances."
)

#: Reasons a combination can be rejected, as counted in `HobbyStackResult.rejected`.
REJECT_REASONS: tuple[str, ...] = (
    "thrust_to_weight",   # liftoff average thrust / weight below the minimum
    "energy_bound",       # even without drag or gravity loss the target is out of reach
    "apogee",             # simulated apogee below the target
    "rail_exit_speed",    # too slow off the rail
    "max_acceleration",   # too hard, and ballast cannot fix it within the other limits
    "overshoot",          # match_target: cannot ballast down to the target
    "cannot_lift_off",    # peak thrust-to-weight <= 1, or stalls on the rail (sizing.physics.liftoff)
    "flight_time_cap",    # flight-time bound above HOBBY_MAX_FLIGHT_TIME_S (sizing.physics.liftoff)
    "flight_error",       # the flight could not be built or simulated
    "unstable",           # static margin below the minimum and nose ballast cannot (or may not) fix it
    "worse_than_best",    # flown and feasible, but a better stack was found
    "objective_bound",    # never flown: cannot beat the optimum found
    "not_evaluated",      # never flown: the simulation cap was reached
)


@dataclass(frozen=True, slots=True)
class StackStage:
    """Airframe of one stage of a motor stack (the motor is chosen by the search).

    Parameters
    ----------
    name : str
        Stage name given by the user.
    airframe_mass_kg : float
        Body, fins, coupler and recovery of this stage without motor [kg], >= 0.
    diameter_m : float
        Body diameter for the drag reference area [m], > 0.
    motor_diameter_m : float or None
        Motor mount diameter [m]; when given, only motors whose `diameter_m`
        is within 0.5 mm fit (motors without a diameter always fit).
    drag : DragCurve or None
        C_D(Mach) while this stage is the lowest; None: default slender body.
    allowed_motors : tuple of str or None
        Restrict this stage to these motor names.
    coast_before_ignition_s : float
        Coast between burnout of the stage below and ignition [s], >= 0.
    """

    name: str
    airframe_mass_kg: float
    diameter_m: float
    motor_diameter_m: float | None = None
    drag: DragCurve | None = None
    allowed_motors: tuple[str, ...] | None = None
    coast_before_ignition_s: float = 0.0

    def __post_init__(self) -> None:
        p = f"stages.{self.name}."
        for fname, zero_ok in (("airframe_mass_kg", True), ("diameter_m", False),
                               ("coast_before_ignition_s", True)):
            v = getattr(self, fname)
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) \
                    or (v < 0 if zero_ok else v <= 0):
                raise FieldError(p + fname, "must be >= 0." if zero_ok else "must be > 0.", v)
            object.__setattr__(self, fname, float(v))
        if self.motor_diameter_m is not None and not (self.motor_diameter_m > 0):
            raise FieldError(p + "motor_diameter_m", "must be > 0.", self.motor_diameter_m)
        if self.allowed_motors is not None:
            object.__setattr__(self, "allowed_motors", tuple(self.allowed_motors))

    def fits(self, motor: Motor) -> bool:
        """True when the motor may fly in this stage (mount diameter and allowed list)."""
        if self.allowed_motors is not None and motor.name not in self.allowed_motors:
            return False
        if self.motor_diameter_m is not None and motor.diameter_m is not None:
            return abs(motor.diameter_m - self.motor_diameter_m) <= 5e-4
        return True


@dataclass(frozen=True, slots=True)
class StageChoice:
    """The motor chosen for one stage and the resulting stage masses."""

    name: str
    motor: str
    impulse_class: str
    designation: str
    total_impulse_n_s: float
    airframe_mass_kg: float
    motor_loaded_mass_kg: float
    stage_mass_kg: float
    cost: float | None


@dataclass(frozen=True, slots=True)
class HobbyStackResult:
    """Outcome of `search_hobby_stack`. Read `success` and `message` first.

    Attributes
    ----------
    success : bool
    status : str
        ``"optimal"``, ``"infeasible"`` or ``"max_simulations"``.
    message : str
    objective : str
        ``"mass"`` or ``"cost"``.
    stages : tuple of StageChoice
        Bottom first; empty when nothing was feasible.
    payload_mass_kg, ballast_mass_kg, liftoff_mass_kg : float
        [kg]; ballast rides in the nose (with the payload).
    cost : float or None
        Sum of motor costs (None if a chosen motor has no cost).
    target_apogee_m, apogee_m : float
        Target and simulated apogee above the launch site [m].
    liftoff_thrust_to_weight : float
        Bottom motor average thrust / liftoff weight [-].
    rail_exit_speed_m_s, max_acceleration_m_s2 : float
        From the flight [m/s], [m/s^2].
    margins : Mapping[str, float]
        Positive = satisfied: ``apogee_m`` (apogee - target),
        ``thrust_to_weight`` (T/W - minimum), ``rail_exit_speed_m_s``
        (speed - minimum), ``max_acceleration_m_s2`` (limit - max; only with a limit).
    rejected : Mapping[str, int]
        Number of combinations rejected per reason (see `REJECT_REASONS`).
    n_combinations, n_simulated : int
        Combinations considered; flights simulated (including ballast bisection).
    method : str
        ``"exhaustive branch and bound"`` or ``"... after dominance pruning (heuristic)"``.
    caution : str
    """

    success: bool
    status: str
    message: str
    objective: str
    stages: tuple[StageChoice, ...]
    payload_mass_kg: float
    ballast_mass_kg: float
    liftoff_mass_kg: float
    cost: float | None
    target_apogee_m: float
    apogee_m: float
    liftoff_thrust_to_weight: float
    rail_exit_speed_m_s: float
    max_acceleration_m_s2: float
    margins: Mapping[str, float]
    rejected: Mapping[str, int]
    n_combinations: int
    n_simulated: int
    method: str
    caution: str = field(default=HOBBY_CAUTION)

    @property
    def motors(self) -> tuple[str, ...]:
        """Chosen motor names, bottom stage first."""
        return tuple(s.motor for s in self.stages)


# ---------------------------------------------------------------- helpers
@dataclass(frozen=True, slots=True)
class _Flown:
    """What the search reads from a flight: apogee above the site, rail exit, max acceleration."""

    apogee_m: float
    rail_exit_speed_m_s: float
    max_acceleration_m_s2: float


@dataclass(frozen=True, slots=True)
class _Limits:
    """The limits a flown stack must meet (see `search_hobby_stack` for each).

    Attributes
    ----------
    target_apogee_m : float
        Apogee to reach above the site [m].
    min_thrust_to_weight : float
        Liftoff average thrust / weight minimum [-].
    min_rail_exit_speed_m_s : float
        Minimum rail-exit speed [m/s].
    max_acceleration_m_s2 : float or None
        Limit on the largest acceleration [m/s^2]; None: no limit.
    match_target : bool
        Ballast the apogee down to the target.
    apogee_tolerance_m : float
        Tolerance of `match_target` and of the ballast bisection [m].
    """

    target_apogee_m: float
    min_thrust_to_weight: float
    min_rail_exit_speed_m_s: float
    max_acceleration_m_s2: float | None
    match_target: bool
    apogee_tolerance_m: float


@dataclass(frozen=True, slots=True)
class _Candidate:
    """A combination that passed the cheap rejections, with its objective lower bound.

    `key` is (cost, mass [kg]) or (mass [kg], 0) without the ballast beyond
    `stability_ballast_kg`; `mass_kg` is the liftoff mass without any ballast [kg].
    """

    key: tuple[float, float]
    combo: tuple[Motor, ...]
    mass_kg: float
    stability_ballast_kg: float


@dataclass(frozen=True, slots=True)
class _Best:
    """The best feasible stack so far: objective key, motors, ballast [kg], flight, liftoff T/W [-]."""

    key: tuple[float, float]
    combo: tuple[Motor, ...]
    ballast_kg: float
    flown: _Flown
    thrust_to_weight: float


def _thrust_to_weight(motor: Motor, liftoff_mass_kg: float) -> float:
    """Liftoff thrust-to-weight, average thrust / (m g0) [-], of the bottom motor."""
    return motor.average_thrust_n / (liftoff_mass_kg * G0_M_S2)


def _objective_key(objective: str, cost: float, mass_kg: float) -> tuple[float, float]:
    """Sort key of a stack: (cost, mass [kg]) for the cost objective, else (mass [kg], 0)."""
    return (cost, mass_kg) if objective == "cost" else (mass_kg, 0.0)


def apogee_energy_bound(delta_v_ideal_m_s: float, *, launch_radius_m: float = R_EARTH_EQ_M) -> float:
    """Upper bound of the apogee height of a vertical flight with this ideal delta-v [m].

    Energy argument (see module docstring): mu/r0 - mu/r_a <= dv^2/2 with
    inverse-square gravity, mu = GM of WGS 84. Returns inf when dv reaches
    escape speed.

    Examples
    --------
    >>> round(apogee_energy_bound(100.0), 1)  # dv^2/(2 GM/R^2) = 510.3 m; with g0: 509.9 m
    510.3
    """
    e = GM_EARTH_M3_S2 / launch_radius_m - 0.5 * delta_v_ideal_m_s**2
    if e <= 0:
        return math.inf
    return GM_EARTH_M3_S2 / e - launch_radius_m


def _ideal_delta_v(motors: Sequence[Motor], stages: Sequence[StackStage], top_mass_kg: float) -> float:
    """Sum of c_i ln(m_ign_i / m_burnout_i) with c_i = I_i / m_p,i (Tsiolkovsky)."""
    above = top_mass_kg
    dv = 0.0
    for m, s in zip(reversed(motors), reversed(stages)):
        m0 = above + s.airframe_mass_kg + m.loaded_mass_kg
        mf = m0 - m.propellant_mass_kg
        dv += (m.total_impulse_n_s / m.propellant_mass_kg) * math.log(m0 / mf)
        above = m0
    return dv


def build_motor_vehicle(
    motors: Sequence[Motor],
    stages: Sequence[StackStage],
    *,
    payload_mass_kg: float,
    ballast_mass_kg: float = 0.0,
    payload_diameter_m: float | None = None,
    staging_delay_s: float = 0.0,
) -> Vehicle:
    """Vehicle of a motor stack: one motor per stage, bottom first, ballast in the nose."""
    if len(motors) != len(stages):
        raise FieldError("stages", f"need one motor per stage ({len(stages)}).", len(motors))
    flight = tuple(
        motor_flight_stage(
            m, name=s.name, airframe_mass_kg=s.airframe_mass_kg, diameter_m=s.diameter_m,
            drag=s.drag, coast_before_ignition_s=s.coast_before_ignition_s,
        )
        for m, s in zip(motors, stages)
    )
    return Vehicle(flight, float(payload_mass_kg) + float(ballast_mass_kg), payload_diameter_m, staging_delay_s)


def _default_flight(vehicle: Vehicle, site: LaunchSite):
    return fly_hobby(vehicle, site)


def _pareto(cands: list[Motor]) -> list[Motor]:
    """Motors not dominated in (impulse >=, loaded mass <=, cost <=) within diameter/thrust groups."""
    keep = []
    for a in cands:
        dominated = False
        for b in cands:
            if b is a:
                continue
            same_group = (a.diameter_m == b.diameter_m) and (
                0.8 <= b.average_thrust_n / a.average_thrust_n <= 1.25
            )
            if not same_group:
                continue
            ca = a.cost if a.cost is not None else 0.0
            cb = b.cost if b.cost is not None else 0.0
            no_worse = (b.total_impulse_n_s >= a.total_impulse_n_s and b.loaded_mass_kg <= a.loaded_mass_kg
                        and cb <= ca)
            better = (b.total_impulse_n_s > a.total_impulse_n_s or b.loaded_mass_kg < a.loaded_mass_kg
                      or cb < ca)
            if no_worse and better:
                dominated = True
                break
        if not dominated:
            keep.append(a)
    return keep


# ---------------------------------------------------------------- search
def search_hobby_stack(
    motors: Sequence[Motor],
    stages: Sequence[StackStage],
    *,
    payload_mass_kg: float,
    target_apogee_m: float,
    site: LaunchSite | None = None,
    objective: str = "mass",
    min_thrust_to_weight: float = HOBBY_MIN_THRUST_TO_WEIGHT,
    min_rail_exit_speed_m_s: float = HOBBY_RAIL_EXIT_SPEED_M_S,
    max_acceleration_m_s2: float | None = None,
    match_target: bool = False,
    apogee_tolerance_m: float = 1.0,
    payload_diameter_m: float | None = None,
    flight: Callable[[Vehicle, LaunchSite], object] | None = None,
    max_combinations: int = 200_000,
    max_simulations: int = 2_000,
    stability: Callable[[tuple[Motor, ...]], float] | None = None,
) -> HobbyStackResult:
    """Lightest or cheapest motor stack reaching a target apogee within the hobby limits.

    Parameters
    ----------
    motors : sequence of Motor
        The motor list (names unique).
    stages : sequence of StackStage
        Airframes, bottom first; the number of stages is ``len(stages)``.
    payload_mass_kg : float
        Mass above the top stage [kg], >= 0.
    target_apogee_m : float
        Apogee to reach, above the launch site [m], > 0.
    site : LaunchSite or None
        None: sea level, vertical, 1.0 m rail (an assumption; give your own).
    objective : str
        ``"mass"`` (liftoff mass incl. ballast) or ``"cost"`` (sum of motor
        costs, ties broken by mass; every motor needs a cost).
    min_thrust_to_weight : float
        Liftoff average thrust / weight minimum [-]; default 5 (DTEG 5.18.2).
    min_rail_exit_speed_m_s : float
        Minimum speed at the end of the rail [m/s]; default 15 m/s (hobby
        practice); `DTEG_RAIL_EXIT_SPEED_M_S` for the 100 ft/s rule.
    max_acceleration_m_s2 : float or None
        Limit on the largest acceleration in flight [m/s^2]; None: no limit.
    match_target : bool
        Also ballast the stack so its apogee equals the target (within
        `apogee_tolerance_m`) instead of merely reaching it.
    apogee_tolerance_m : float
        Tolerance of `match_target` and of the ballast bisection [m].
    payload_diameter_m : float or None
        Payload diameter if wider than the stages [m].
    flight : callable or None
        ``flight(vehicle, site)`` returning an object with ``apogee_m``
        (above mean sea level), ``rail_exit_speed_m_s`` and
        ``max_acceleration_m_s2``; None uses `sizing.physics.liftoff.fly_hobby`
        (`fly_vertical`, flat Earth, drag on; a stack that cannot lift off
        or whose flight-time bound exceeds `HOBBY_MAX_FLIGHT_TIME_S` = 300 s
        is rejected without a long simulation).
        With ``site.rail_length_m == 0`` the rail-exit check is skipped.
    max_combinations : int
        Above this, dominance pruning (heuristic) is applied first.
    max_simulations : int
        Cap on simulated flights.
    stability : callable or None
        ``stability(combo)`` -> the least nose ballast [kg] that gives every
        configuration its minimum static margin (0 when it already has it;
        inf when ballast cannot or may not fix it: rejected as
        ``"unstable"``); see `sizing.optimize.hobby_safety`. The ballast is
        a floor for the acceleration and target-matching ballast. None: no
        stability check.

    Returns
    -------
    HobbyStackResult
        ``status="infeasible"`` (success False) when no combination meets
        every limit; `rejected` then says why.

    Raises
    ------
    FieldError
        Bad options (no stages, no motors, target <= 0, unknown objective,
        cost objective with a motor lacking a cost, a stage no motor fits).
    """
    motors = tuple(motors)
    stages = tuple(stages)
    _check_search_options(motors, stages, objective=objective, target_apogee_m=target_apogee_m,
                          payload_mass_kg=payload_mass_kg, min_thrust_to_weight=min_thrust_to_weight,
                          min_rail_exit_speed_m_s=min_rail_exit_speed_m_s,
                          max_acceleration_m_s2=max_acceleration_m_s2)
    site = LaunchSite(rail_length_m=1.0) if site is None else site
    limits = _Limits(target_apogee_m, min_thrust_to_weight, min_rail_exit_speed_m_s, max_acceleration_m_s2,
                     match_target, apogee_tolerance_m)
    per_stage, n_comb, method = _motor_choices(motors, stages, max_combinations)
    rejected: Counter[str] = Counter()
    cands = _ranked_candidates(per_stage, stages, payload_mass_kg=payload_mass_kg, objective=objective,
                               limits=limits, launch_radius_m=R_EARTH_EQ_M + site.altitude_m,
                               stability=stability, rejected=rejected)
    flights = _StackFlights(stages=stages, payload_mass_kg=payload_mass_kg, payload_diameter_m=payload_diameter_m,
                            fly=_default_flight if flight is None else flight, site=site)
    best, status = _branch_and_bound(cands, flights, objective=objective, limits=limits,
                                     max_simulations=max_simulations, rejected=rejected)
    tally = dict(rejected=MappingProxyType({r: int(rejected.get(r, 0)) for r in REJECT_REASONS}),
                 n_comb=n_comb, n_sim=flights.n, method=method, objective=objective,
                 payload_mass_kg=payload_mass_kg)
    if best is None:
        return _infeasible_result(status, n_stages=len(stages), n_motors=len(motors),
                                  target_apogee_m=target_apogee_m, **tally)
    return _found_result(best, status, stages=stages, site=site, limits=limits, max_simulations=max_simulations,
                         **tally)


def _check_search_options(motors: tuple[Motor, ...], stages: tuple[StackStage, ...], *, objective: str,
                          target_apogee_m: float, payload_mass_kg: float, min_thrust_to_weight: float,
                          min_rail_exit_speed_m_s: float, max_acceleration_m_s2: float | None) -> None:
    """Refuse bad options of `search_hobby_stack` before any flight (one `FieldError` each)."""
    if not motors:
        raise FieldError("motors", "at least one motor is required.", 0)
    if not stages:
        raise FieldError("stages", "at least one stage is required.", 0)
    if objective not in ("mass", "cost"):
        raise FieldError("objective", "must be 'mass' or 'cost'.", objective)
    if not (target_apogee_m > 0 and math.isfinite(target_apogee_m)):
        raise FieldError("target_apogee", "must be > 0.", target_apogee_m)
    if not payload_mass_kg >= 0:
        raise FieldError("payload_mass", "must be >= 0.", payload_mass_kg)
    if not min_thrust_to_weight > 0:
        raise FieldError("min_thrust_to_weight", "must be > 0.", min_thrust_to_weight)
    if not min_rail_exit_speed_m_s >= 0:
        raise FieldError("min_rail_exit_speed", "must be >= 0.", min_rail_exit_speed_m_s)
    if max_acceleration_m_s2 is not None and not max_acceleration_m_s2 > 0:
        raise FieldError("max_acceleration", "must be > 0.", max_acceleration_m_s2)
    if objective == "cost":
        missing = [m.name for m in motors if m.cost is None]
        if missing:
            raise FieldError("motor.cost", "is required for every motor when objective = 'cost'; missing for "
                             + ", ".join(missing[:5]) + ".")
    names = [m.name for m in motors]
    if len(set(names)) != len(names):
        raise FieldError("motor.name", "must be unique in the motor list.", names)


def _motor_choices(motors: tuple[Motor, ...], stages: tuple[StackStage, ...],
                   max_combinations: int) -> tuple[list[list[Motor]], int, str]:
    """The motors that fit each stage, pruned by dominance when the combinations exceed the cap.

    Returns
    -------
    (list of list of Motor, int, str)
        Motors per stage (bottom first), number of combinations, and the
        method text (``"... after dominance pruning (heuristic)"`` when pruned).

    Raises
    ------
    FieldError
        A stage that no motor of the list fits.
    """
    per_stage = []
    for s in stages:
        fit = [m for m in motors if s.fits(m)]
        if not fit:
            raise FieldError(f"stages.{s.name}.motor_diameter_m",
                             "no motor of the list fits this stage (diameter or allowed list).",
                             s.motor_diameter_m)
        per_stage.append(fit)
    n_comb = math.prod(len(f) for f in per_stage)
    method = "exhaustive branch and bound"
    if n_comb > max_combinations:
        per_stage = [_pareto(f) for f in per_stage]
        n_comb = math.prod(len(f) for f in per_stage)
        method += " after dominance pruning (heuristic)"
    return per_stage, n_comb, method


def _ranked_candidates(per_stage: list[list[Motor]], stages: tuple[StackStage, ...], *, payload_mass_kg: float,
                       objective: str, limits: _Limits, launch_radius_m: float,
                       stability: Callable[[tuple[Motor, ...]], float] | None,
                       rejected: Counter[str]) -> list[_Candidate]:
    """Steps 1-2 of the method: every combination, the cheap rejections, sorted by the lower bound.

    Rejected here (counted in `rejected`): ``unstable`` (no finite stability
    ballast, or its ballast breaks the thrust-to-weight minimum),
    ``thrust_to_weight`` (liftoff average T/W below the minimum) and
    ``energy_bound`` (`apogee_energy_bound` of the ideal delta-v below the
    target). The sort is stable, so ties keep the enumeration order.
    """
    cands = []
    for combo in itertools.product(*per_stage):
        b0 = 0.0 if stability is None else float(stability(combo))
        if not math.isfinite(b0):
            rejected["unstable"] += 1
            continue
        m0 = payload_mass_kg + sum(s.airframe_mass_kg + m.loaded_mass_kg for m, s in zip(combo, stages))
        if _thrust_to_weight(combo[0], m0 + b0) < limits.min_thrust_to_weight:
            rejected["unstable" if b0 > 0 and _thrust_to_weight(combo[0], m0) >= limits.min_thrust_to_weight
                     else "thrust_to_weight"] += 1
            continue
        dv = _ideal_delta_v(combo, stages, payload_mass_kg + b0)
        if apogee_energy_bound(dv, launch_radius_m=launch_radius_m) < limits.target_apogee_m:
            rejected["energy_bound"] += 1
            continue
        cost = sum(m.cost for m in combo) if objective == "cost" else 0.0
        cands.append(_Candidate(_objective_key(objective, cost, m0 + b0), combo, m0, b0))
    cands.sort(key=lambda c: c.key)
    return cands


@dataclass(slots=True, kw_only=True)
class _StackFlights:
    """Flies a combination with a nose ballast and counts the flights (`n`).

    The flight function's apogee is taken above the site; with no rail
    (``site.rail_length_m == 0``) the rail-exit speed is inf, so its check passes.
    """

    stages: tuple[StackStage, ...]
    payload_mass_kg: float
    payload_diameter_m: float | None
    fly: Callable[[Vehicle, LaunchSite], object]
    site: LaunchSite
    n: int = 0

    def __call__(self, combo: tuple[Motor, ...], ballast_kg: float) -> _Flown:
        self.n += 1
        veh = build_motor_vehicle(combo, self.stages, payload_mass_kg=self.payload_mass_kg,
                                  ballast_mass_kg=ballast_kg, payload_diameter_m=self.payload_diameter_m)
        r = self.fly(veh, self.site)
        rail = float(r.rail_exit_speed_m_s) if self.site.rail_length_m > 0 else math.inf
        return _Flown(float(r.apogee_m) - self.site.altitude_m, rail, float(r.max_acceleration_m_s2))


def _branch_and_bound(cands: list[_Candidate], flights: _StackFlights, *, objective: str, limits: _Limits,
                      max_simulations: int, rejected: Counter[str]) -> tuple[_Best | None, str]:
    """Step 3 of the method: fly the candidates in order of their lower bound until none can win.

    Stops at the first candidate whose lower bound is not better than the
    best feasible objective (the rest: ``objective_bound``), or when
    `max_simulations` flights are spent (the rest: ``not_evaluated``, status
    ``"max_simulations"``). A flight that raises is counted as
    ``cannot_lift_off``, ``flight_time_cap`` or ``flight_error``.

    Returns
    -------
    (_Best or None, str)
        The best feasible stack (None if none) and the status.
    """
    best = None
    status = "optimal"
    for idx, c in enumerate(cands):
        if best is not None and c.key >= best.key:
            rejected["objective_bound"] += len(cands) - idx
            break
        if flights.n >= max_simulations:
            status = "max_simulations"
            rejected["not_evaluated"] += len(cands) - idx
            break
        try:
            reason, ballast, res = _evaluate(c.combo, c.mass_kg, flights, limits, b0=c.stability_ballast_kg)
        except CannotLiftOffError:
            reason = "cannot_lift_off"
        except FlightTimeCapError:
            reason = "flight_time_cap"
        except (FieldError, ValueError, FloatingPointError):
            reason = "flight_error"
        if reason is not None:
            rejected[reason] += 1
            continue
        total = c.mass_kg + ballast
        full_key = _objective_key(objective, c.key[0], total)
        if best is None or full_key < best.key:
            if best is not None:
                rejected["worse_than_best"] += 1
            best = _Best(full_key, c.combo, ballast, res, _thrust_to_weight(c.combo[0], total))
        else:
            rejected["worse_than_best"] += 1
    return best, status


def _infeasible_result(status: str, *, n_stages: int, n_motors: int, target_apogee_m: float,
                       rejected: Mapping[str, int], n_comb: int, n_sim: int, method: str, objective: str,
                       payload_mass_kg: float) -> HobbyStackResult:
    """The result when no combination met every limit: the rejection counts say why."""
    msg = (f"no stack of {n_stages} stage(s) from {n_motors} motors reaches "
           f"{target_apogee_m:g} m within the limits; rejected: "
           + ", ".join(f"{k} {v}" for k, v in rejected.items() if v))
    if status == "max_simulations":
        msg += f"; stopped after {n_sim} simulations (raise max_simulations)"
    return HobbyStackResult(
        False, "infeasible" if status == "optimal" else status, msg, objective, (), float(payload_mass_kg),
        0.0, math.nan, None, float(target_apogee_m), math.nan, math.nan, math.nan, math.nan,
        MappingProxyType({}), rejected, n_comb, n_sim, method,
    )


def _found_result(best: _Best, status: str, *, stages: tuple[StackStage, ...], site: LaunchSite,
                  limits: _Limits, max_simulations: int, rejected: Mapping[str, int], n_comb: int, n_sim: int,
                  method: str, objective: str, payload_mass_kg: float) -> HobbyStackResult:
    """The result of the best stack: stage choices, masses [kg], flight values and margins.

    Margins are positive when met: apogee - target [m], T/W - minimum [-],
    rail-exit speed - minimum [m/s] (nan without a rail) and, with a limit,
    limit - max acceleration [m/s^2].
    """
    combo = best.combo
    choices = tuple(
        StageChoice(s.name, m.name, m.impulse_class, m.designation, m.total_impulse_n_s, s.airframe_mass_kg,
                    m.loaded_mass_kg, s.airframe_mass_kg + m.loaded_mass_kg, m.cost)
        for m, s in zip(combo, stages)
    )
    cost = None if any(m.cost is None for m in combo) else float(sum(m.cost for m in combo))
    res = best.flown
    apogee = res.apogee_m
    rail = res.rail_exit_speed_m_s if site.rail_length_m > 0 else math.nan
    acc = res.max_acceleration_m_s2
    margins = {
        "apogee_m": apogee - limits.target_apogee_m,
        "thrust_to_weight": best.thrust_to_weight - limits.min_thrust_to_weight,
        "rail_exit_speed_m_s": rail - limits.min_rail_exit_speed_m_s,
    }
    if limits.max_acceleration_m_s2 is not None:
        margins["max_acceleration_m_s2"] = limits.max_acceleration_m_s2 - acc
    msg = ("optimum over the motor list" if status == "optimal"
           else f"best found before the cap of {max_simulations} simulations (not proven optimal)")
    return HobbyStackResult(
        True, status, msg, objective, choices, float(payload_mass_kg), float(best.ballast_kg),
        float(payload_mass_kg + best.ballast_kg + sum(c.stage_mass_kg for c in choices)), cost,
        float(limits.target_apogee_m), apogee, best.thrust_to_weight, rail, acc, MappingProxyType(margins),
        rejected, n_comb, n_sim, method,
    )


def _evaluate(combo, m0, simulate, limits: _Limits, *, b0=0.0):
    """Fly one combination, adding nose ballast when the limits call for it.

    `simulate(combo, ballast_kg)` flies it (a `_StackFlights`); `limits` are
    the search's limits. `b0` is the least ballast (stability); every ballast
    found is at least b0. Returns (reason or None, ballast_kg, flight result).
    """
    target_apogee_m = limits.target_apogee_m
    min_tw = limits.min_thrust_to_weight
    min_rail = limits.min_rail_exit_speed_m_s
    max_acc = limits.max_acceleration_m_s2
    match = limits.match_target
    tol = limits.apogee_tolerance_m
    g0 = G0_M_S2
    # the most ballast the thrust-to-weight minimum allows
    b_max = combo[0].average_thrust_n / (min_tw * g0) - m0
    res = simulate(combo, b0)

    def ok_basic(r):
        if not r.rail_exit_speed_m_s >= min_rail:
            return "rail_exit_speed"
        if not r.apogee_m >= target_apogee_m - (tol if match else 0.0):
            return "apogee"
        return None

    reason = ok_basic(res)
    if reason is not None:
        return reason, 0.0, res
    ballast = b0
    if max_acc is not None and res.max_acceleration_m_s2 > max_acc:
        # least ballast with max acceleration <= limit (acceleration falls with mass)
        if b_max <= b0:
            return "max_acceleration", 0.0, res
        r_hi = simulate(combo, b_max)
        if r_hi.max_acceleration_m_s2 > max_acc:
            return "max_acceleration", 0.0, res
        lo, hi = b0, b_max
        res_hi = r_hi
        for _ in range(40):
            if hi - lo <= max(1e-4, 1e-3 * hi):
                break
            mid = 0.5 * (lo + hi)
            r_mid = simulate(combo, mid)
            if r_mid.max_acceleration_m_s2 > max_acc:
                lo = mid
            else:
                hi, res_hi = mid, r_mid
        ballast, res = hi, res_hi
        reason = ok_basic(res)
        if reason is not None:
            return "max_acceleration", 0.0, res
    if match and res.apogee_m > target_apogee_m + tol:
        # ballast until the apogee comes down to the target
        if b_max <= ballast:
            return "overshoot", 0.0, res
        r_hi = simulate(combo, b_max)  # heavier than b_max breaks the T/W minimum
        if r_hi.apogee_m > target_apogee_m + tol:
            return "overshoot", 0.0, res
        lo, hi = ballast, b_max
        res_lo = res
        for _ in range(60):
            mid = 0.5 * (lo + hi)
            r_mid = simulate(combo, mid)
            if r_mid.apogee_m > target_apogee_m:
                lo, res_lo = mid, r_mid
            else:
                hi = mid
            if abs(r_mid.apogee_m - target_apogee_m) <= tol:
                lo, res_lo = mid, r_mid
                break
        ballast, res = lo, res_lo
        if not abs(res.apogee_m - target_apogee_m) <= tol:
            return "overshoot", 0.0, res
        if not res.rail_exit_speed_m_s >= min_rail:
            return "rail_exit_speed", 0.0, res
    return None, ballast, res
