"""Tests of sizing.physics.liftoff: lift-off and flight-time checks of hobby candidates."""

from __future__ import annotations

import math
import re

import pytest

from sizing.errors import CannotLiftOffError, FieldError, FlightTimeCapError
from sizing.physics.liftoff import (
    HOBBY_MAX_FLIGHT_TIME_S,
    MSG_CANNOT_LIFT_OFF,
    MSG_FLIGHT_TIME_CAP,
    MSG_NO_RISE,
    flight_time_bound_s,
    fly_hobby,
    liftoff_thrust_to_weight,
)
from sizing.physics.flight import fly_vertical
from sizing.physics.vehicle import FlightStage, LaunchSite, Vehicle

G0 = 9.80665


def _v1_vehicle() -> Vehicle:
    """Check-values case V1: m0 1000 kg, m_p 800 kg, Isp 250 s, t_b 40 s (thrust 49 033.25 N)."""
    st = FlightStage("v1", 800.0, 200.0, 250.0, diameter_m=0.5, thrust_vac_n=49_033.25)
    return Vehicle((st,), 0.0)


def _spike_vehicle(peak_over_weight: float) -> Vehicle:
    """An invented 1 kg rocket whose thrust spikes to `peak_over_weight` x its weight for 0.1 s."""
    w = 1.0 * G0
    curve = ((0.0, 0.01, 0.1, 0.11), (0.0, peak_over_weight * w, peak_over_weight * w, 0.0))
    st = FlightStage("spike", 0.01, 0.89, 100.0, diameter_m=0.05, thrust_curve=curve)
    return Vehicle((st,), 0.1)


def test_flight_time_bound_matches_vertical_burn_closed_form():
    """Vertical burn at constant thrust, constant g (Sutton & Biblarz, Rocket Propulsion
    Elements, 9th ed., ch. 4, formulas as tabulated in the project's shared check values sec. 4,
    case V1, computed): ideal delta-v 3945.80 m/s, time to apogee 402.36 s without drag. The bound
    t_b + dv/g0 = 40 + 402.36 = 442.36 s exceeds it by exactly the gravity loss g t_b over g."""
    v = _v1_vehicle()
    bound = flight_time_bound_s(v)
    assert bound == pytest.approx(40.0 + 3945.80 / G0, abs=0.01)
    assert bound == pytest.approx(442.36, abs=0.01)
    fr = fly_vertical(v, LaunchSite(), with_drag=False, record_history=False)
    assert fr.time_to_apogee_s == pytest.approx(402.36, abs=0.01)
    assert fr.time_to_apogee_s <= bound


def test_fly_hobby_refuses_a_flight_longer_than_the_cap():
    """Same V1 case: its bound (442 s) is above the 300 s cap, so it is refused before flying;
    with a larger cap it flies and ends before the bound."""
    v = _v1_vehicle()
    with pytest.raises(FlightTimeCapError, match=re.escape(MSG_FLIGHT_TIME_CAP)) as info:
        fly_hobby(v, LaunchSite())
    assert "442 s bound > 300 s" in str(info.value)
    assert HOBBY_MAX_FLIGHT_TIME_S == 300.0
    fr = fly_hobby(v, LaunchSite(), max_flight_time_s=500.0)
    assert fr.terminated_by == "apogee" and fr.time_to_apogee_s <= flight_time_bound_s(v)


def test_fly_hobby_refuses_thrust_below_weight_at_once():
    """Newton's second law: a rocket whose peak thrust does not exceed its weight cannot rise."""
    v = _spike_vehicle(0.9)
    assert liftoff_thrust_to_weight(v, LaunchSite()) == pytest.approx(0.9, rel=1e-3)
    with pytest.raises(CannotLiftOffError, match=re.escape(MSG_CANNOT_LIFT_OFF)) as info:
        fly_hobby(v, LaunchSite(rail_length_m=1.0))
    text = str(info.value)
    assert "thrust-to-weight 0.90" in text and ".." not in text
    assert isinstance(info.value, FieldError)


def test_fly_hobby_refuses_a_rocket_that_stalls_on_the_rail():
    """Impulse-momentum bound (Newton's second law): a 1 kg rocket given 0.1 s of thrust at
    1.5 x weight gains at most (1.5 - 1) g0 x 0.1 s ~ 0.49 m/s, so it rises at most ~2.5 cm during
    the spike plus v^2/(2 g0) ~ 1.2 cm after it: it cannot clear a 1 m rail. Without a rail it
    lifts and falls back."""
    v = _spike_vehicle(1.5)
    assert liftoff_thrust_to_weight(v, LaunchSite()) == pytest.approx(1.5, rel=1e-3)
    with pytest.raises(CannotLiftOffError, match=re.escape(MSG_NO_RISE)) as info:
        fly_hobby(v, LaunchSite(rail_length_m=1.0))
    assert "1 m rail" in str(info.value) and ".." not in str(info.value)
    fr = fly_hobby(v, LaunchSite(rail_length_m=0.0))
    assert 0.0 < fr.apogee_m < 0.05


def test_fly_hobby_matches_fly_vertical_for_a_rocket_that_flies():
    """A rocket well above the limits flies exactly as `fly_vertical` (same integrator)."""
    v = _spike_vehicle(20.0)
    site = LaunchSite(rail_length_m=0.2)
    a = fly_hobby(v, site)
    b = fly_vertical(v, site, record_history=False)
    assert a.apogee_m == b.apogee_m and math.isfinite(a.rail_exit_speed_m_s)
