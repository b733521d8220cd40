"""Tests of sizing.optimize.hobby: motor stack search."""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from pathlib import Path

import pytest

from sizing.errors import FieldError
from sizing.optimize.hobby import (
    DTEG_RAIL_EXIT_SPEED_M_S,
    HOBBY_CAUTION,
    HOBBY_MIN_THRUST_TO_WEIGHT,
    HOBBY_RAIL_EXIT_SPEED_M_S,
    REJECT_REASONS,
    StackStage,
    apogee_energy_bound,
    build_motor_vehicle,
    search_hobby_stack,
)
from sizing.physics.motors import Motor, load_motors
from sizing.physics.vehicle import LaunchSite

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "problems" / "motors" / "demo_motors.toml"
G0 = 9.80665
SITE = LaunchSite(rail_length_m=1.5)


@dataclass
class _Flight:
    apogee_m: float
    rail_exit_speed_m_s: float
    max_acceleration_m_s2: float


def surrogate_flight(vehicle, site):
    """Deterministic stand-in for the flight module, to test the search logic only (not
    physics): rail exit from constant-acceleration kinematics v = sqrt(2 a L) with the mean
    thrust; apogee = 0.55 x the energy bound of the stack's ideal delta-v (so the bound
    stays valid); max acceleration = peak thrust / burnout mass of each stage."""
    s0 = vehicle.stages[0]
    m0 = vehicle.gross_mass_kg
    a0 = s0.total_impulse_vac_n_s / s0.burn_time_s / m0 - G0
    rail = math.sqrt(2 * max(a0, 0.0) * site.rail_length_m)
    dv = 0.0
    acc = 0.0
    for i, s in enumerate(vehicle.stages):
        mi = vehicle.ignition_mass_kg(i)
        mf = mi - s.propellant_mass_kg
        dv += s.exhaust_velocity_vac_m_s * math.log(mi / mf)
        acc = max(acc, max(s.thrust_curve[1]) / mf)
    return _Flight(site.altitude_m + 0.55 * apogee_energy_bound(dv), rail, acc)


@pytest.fixture(scope="module")
def motors():
    return load_motors(DEMO)


def two_stages():
    return (StackStage("booster", 0.35, 0.066), StackStage("sustainer", 0.25, 0.066))


def _brute_force(motors, stages, payload, target, *, objective="mass", min_tw=5.0, min_rail=15.0):
    best = None
    for combo in itertools.product(motors, repeat=len(stages)):
        m0 = payload + sum(s.airframe_mass_kg + m.loaded_mass_kg for m, s in zip(combo, stages))
        if combo[0].average_thrust_n / (m0 * G0) < min_tw:
            continue
        r = surrogate_flight(build_motor_vehicle(combo, stages, payload_mass_kg=payload), SITE)
        if r.apogee_m < target or r.rail_exit_speed_m_s < min_rail:
            continue
        key = (m0,) if objective == "mass" else (sum(m.cost for m in combo), m0)
        if best is None or key < best[0]:
            best = (key, tuple(m.name for m in combo))
    return best


@pytest.mark.parametrize("objective", ["mass", "cost"])
@pytest.mark.parametrize("target", [800.0, 3000.0])
def test_search_equals_brute_force(motors, objective, target):
    """The branch and bound returns the same stack as flying every combination (consistency
    check against exhaustive search, no external source)."""
    stages = two_stages()
    res = search_hobby_stack(motors, stages, payload_mass_kg=0.2, target_apogee_m=target, site=SITE,
                             objective=objective, flight=surrogate_flight)
    best = _brute_force(motors, stages, 0.2, target, objective=objective)
    assert res.success, res.message
    assert res.motors == best[1]
    assert res.liftoff_mass_kg == pytest.approx(best[0][-1])
    assert res.n_simulated < res.n_combinations  # pruning did something
    assert sum(res.rejected.values()) == res.n_combinations - 1
    assert set(res.rejected) == set(REJECT_REASONS)
    assert res.apogee_m >= target and all(v >= 0 for v in res.margins.values())
    assert res.caution == HOBBY_CAUTION


def test_energy_bound_above_published_vertical_flight():
    """Case V1 of the closed form of the vertical burn at constant thrust (Sutton & Biblarz,
    Rocket Propulsion Elements, 9th ed., ch. 4; equation numbers from memory), values computed
    and verified with scipy.integrate.solve_ivp: ideal dv 3945.80 m/s gives apogee 694 591.3 m
    with constant g and 779 665 m with an inverse-square coast (energy equation, WGS 84 GM and
    radius, computed). (Tabulated in the project's shared check values, sec. 4.) The energy bound must lie above both, and tend
    to dv^2/(2 g_R) for small dv, g_R = GM/R^2 = 9.798 m/s^2 (WGS 84 GM and equatorial
    radius), which is above dv^2/(2 g0) with g0 = 9.80665 m/s^2."""
    from sizing.units import GM_EARTH_M3_S2, R_EARTH_EQ_M

    bound = apogee_energy_bound(3945.80)
    assert bound > 779_665.0 > 694_591.3
    g_r = GM_EARTH_M3_S2 / R_EARTH_EQ_M**2
    assert apogee_energy_bound(50.0) == pytest.approx(50.0**2 / (2 * g_r), rel=1e-4)
    assert apogee_energy_bound(50.0) > 50.0**2 / (2 * G0)
    assert apogee_energy_bound(20_000.0) == math.inf


def test_thrust_to_weight_minimum_default_and_option(motors):
    """Liftoff T/W >= 5 (Spaceport America Cup Design, Test & Evaluation Guide, req. 5.18.2, as
    quoted on a university rocket-team wiki, found; 5:1 is also the common hobby rule of thumb).
    (Tabulated in the project's shared check values, sec. 6.)"""
    assert HOBBY_MIN_THRUST_TO_WEIGHT == 5.0
    slow = [m for m in motors if m.name == "Wren E28"]  # 13.4 N average
    stage = (StackStage("only", 0.12, 0.04),)
    # m0 = 0.1 + 0.12 + 0.0724 = 0.292 kg -> T/W = 13.4 / (0.292 g0) = 4.7
    strict = search_hobby_stack(slow, stage, payload_mass_kg=0.1, target_apogee_m=10.0, site=SITE,
                                flight=surrogate_flight)
    assert not strict.success and strict.rejected["thrust_to_weight"] == 1
    loose = search_hobby_stack(slow, stage, payload_mass_kg=0.1, target_apogee_m=10.0, site=SITE,
                               flight=surrogate_flight, min_thrust_to_weight=3.0,
                               min_rail_exit_speed_m_s=5.0)
    assert loose.success and loose.liftoff_thrust_to_weight == pytest.approx(4.7, abs=0.05)


def test_rail_exit_rule_is_an_option(motors):
    """15 m/s hobby practice (common practice, no source; from memory) vs 30.48 m/s = 100 ft/s
    (Spaceport America Cup Design, Test & Evaluation Guide, req. 10.2.1, as quoted on a
    university rocket-team wiki, found; 1 ft = 0.3048 m exactly): the stricter rule never gives
    a lighter stack. (Tabulated in the project's shared check values, sec. 6.)"""
    assert HOBBY_RAIL_EXIT_SPEED_M_S == 15.0
    assert DTEG_RAIL_EXIT_SPEED_M_S == pytest.approx(100 * 0.3048)
    stage = (StackStage("only", 0.5, 0.066),)
    kw = dict(payload_mass_kg=0.3, target_apogee_m=300.0, site=LaunchSite(rail_length_m=3.0),
              flight=surrogate_flight)
    hobby = search_hobby_stack(motors, stage, **kw)
    dteg = search_hobby_stack(motors, stage, min_rail_exit_speed_m_s=DTEG_RAIL_EXIT_SPEED_M_S, **kw)
    assert hobby.success and dteg.success
    assert dteg.rail_exit_speed_m_s >= DTEG_RAIL_EXIT_SPEED_M_S
    assert dteg.liftoff_mass_kg > hobby.liftoff_mass_kg
    assert dteg.rejected["rail_exit_speed"] > 0


def test_acceleration_limit_adds_least_ballast(motors):
    """Search logic on the surrogate flight (consistency check, no external source)."""
    stage = (StackStage("only", 0.3, 0.054),)
    kw = dict(payload_mass_kg=0.2, target_apogee_m=200.0, site=SITE, flight=surrogate_flight)
    free = search_hobby_stack(motors, stage, **kw)
    limit = 0.8 * free.max_acceleration_m_s2
    capped = search_hobby_stack(motors, stage, max_acceleration_m_s2=limit, **kw)
    assert capped.success, capped.message
    assert capped.max_acceleration_m_s2 <= limit
    assert capped.liftoff_mass_kg >= free.liftoff_mass_kg
    if capped.ballast_mass_kg > 0:
        motor = next(m for m in motors if m.name == capped.motors[0])
        lighter = surrogate_flight(build_motor_vehicle([motor], stage, payload_mass_kg=0.2,
                                                       ballast_mass_kg=capped.ballast_mass_kg * 0.99), SITE)
        assert lighter.max_acceleration_m_s2 > limit


def test_match_target_ballasts_down_to_target(motors):
    """Search logic on the surrogate flight (consistency check, no external source)."""
    stage = (StackStage("only", 0.3, 0.054),)
    res = search_hobby_stack(motors, stage, payload_mass_kg=0.2, target_apogee_m=1000.0, site=SITE,
                             flight=surrogate_flight, match_target=True, apogee_tolerance_m=0.5)
    assert res.success, res.message
    assert res.apogee_m == pytest.approx(1000.0, abs=0.5)
    assert res.ballast_mass_kg > 0


def test_unreachable_target_is_infeasible_with_reasons(motors):
    """Search logic on the surrogate flight (consistency check, no external source)."""
    res = search_hobby_stack(motors, two_stages(), payload_mass_kg=0.2, target_apogee_m=1e6, site=SITE,
                             flight=surrogate_flight)
    assert not res.success and res.status == "infeasible"
    assert res.rejected["energy_bound"] > 0 and res.n_simulated == 0
    assert "energy_bound" in res.message


def test_motor_mount_restricts_choice(motors):
    stage = (StackStage("only", 0.3, 0.04, motor_diameter_m=0.029),)
    res = search_hobby_stack(motors, stage, payload_mass_kg=0.1, target_apogee_m=300.0, site=SITE,
                             flight=surrogate_flight)
    chosen = next(m for m in motors if m.name == res.motors[0])
    assert chosen.diameter_m == pytest.approx(0.029)
    with pytest.raises(FieldError, match="no motor of the list fits"):
        search_hobby_stack(motors, (StackStage("x", 0.3, 0.04, motor_diameter_m=0.075),),
                           payload_mass_kg=0.1, target_apogee_m=300.0, site=SITE, flight=surrogate_flight)


def test_cost_objective_needs_costs():
    m = Motor("nocost", 40.0, 0.02, 0.05, 1.0)
    with pytest.raises(FieldError, match="motor.cost"):
        search_hobby_stack([m], (StackStage("s", 0.1, 0.03),), payload_mass_kg=0.1, target_apogee_m=50.0,
                           objective="cost", flight=surrogate_flight)


def test_large_list_uses_documented_pruning(motors):
    res = search_hobby_stack(motors, two_stages(), payload_mass_kg=0.2, target_apogee_m=800.0, site=SITE,
                             flight=surrogate_flight, max_combinations=50)
    assert "heuristic" in res.method
    assert res.success


def test_search_with_flight_module(motors):
    """End to end with sizing.physics.flight.fly_vertical (drag, flat Earth): the chosen
    stack, flown again, meets the target and the limits (consistency check, no external
    source; the flight model is checked in tests/physics/test_trajectory.py)."""
    traj = pytest.importorskip("sizing.physics.flight")
    stage = (StackStage("only", 0.4, 0.066),)
    res = search_hobby_stack(motors, stage, payload_mass_kg=0.3, target_apogee_m=300.0, site=SITE)
    assert res.success, res.message
    motor = next(m for m in motors if m.name == res.motors[0])
    veh = build_motor_vehicle([motor], stage, payload_mass_kg=0.3, ballast_mass_kg=res.ballast_mass_kg)
    again = traj.fly_vertical(veh, SITE)
    assert again.apogee_m == pytest.approx(res.apogee_m, rel=1e-9)
    assert again.apogee_m >= 300.0
    assert again.rail_exit_speed_m_s >= HOBBY_RAIL_EXIT_SPEED_M_S


def test_search_rejects_a_stack_that_stalls_on_the_rail_as_cannot_lift_off():
    """Impulse-momentum bound (Newton's second law): an invented 0.1 s spike motor at 1.5 x the
    weight of a ~1 kg rocket gives it at most (1.5 - 1) g0 x 0.1 s ~ 0.5 m/s, a rise of a few cm:
    it cannot clear a 1.5 m rail. With the real flight module (no stand-in) the search refuses it
    as cannot_lift_off instead of flying it to the simulator's time limit."""
    m_loaded, airframe = 0.02, 1.0
    f = 1.5 * (m_loaded + airframe) * G0
    spike = Motor("Spike", 0.1 * f, 0.01, m_loaded, 0.11,
                  thrust_curve=((0.0, 0.0), (0.01, f), (0.1, f), (0.11, 0.0)))
    res = search_hobby_stack([spike], [StackStage("only", airframe, 0.05)], payload_mass_kg=0.0,
                             target_apogee_m=0.001, site=SITE, min_thrust_to_weight=1.1)
    assert not res.success and res.status == "infeasible"
    assert res.rejected["cannot_lift_off"] == 1 and res.n_simulated == 1
    assert "cannot_lift_off 1" in res.message
