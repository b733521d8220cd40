"""Gravity, Earth rotation, launch azimuth and orbit elements."""

from __future__ import annotations

import math

import numpy as np
import pytest

from sizing.errors import FieldError
from sizing.physics.gravity import (
    circular_speed_m_s,
    gravity_m_s2,
    launch_azimuth_deg,
    orbit_elements,
    site_rotation_speed_m_s,
    time_to_apoapsis_s,
)
from sizing.units import GM_EARTH_M3_S2, R_EARTH_EQ_M


@pytest.mark.parametrize("alt, v", [(200e3, 7784.26), (300e3, 7725.76), (400e3, 7668.56)])
def test_circular_speed_matches_computed_wgs84_value(alt, v):
    """Circular speed v = sqrt(GM/r) from WGS 84 GM = 3.986004418e14 m^3/s^2 and equatorial
    radius a = 6 378 137 m (constants from memory); speeds computed from these published inputs.
    (Tabulated in the project's shared check values, sec. 3.)"""
    assert circular_speed_m_s(alt) == pytest.approx(v, abs=0.01)


def test_circular_speed_curtis_constants():
    """Curtis, Orbital Mechanics for Engineering Students, 3rd ed., circular-orbit speed
    v = sqrt(mu/r) with the book's mu = 398600 km^3/s^2 and R = 6378 km (constants and equation
    from memory); 7.7843 km/s at 200 km computed from these inputs. (Tabulated in the project's
    shared check values, sec. 3.)"""
    v = circular_speed_m_s(200e3, gm_m3_s2=3.986e14, radius_m=6378e3)
    assert v / 1000 == pytest.approx(7.7843, abs=5e-5)


def test_surface_gravity_and_rotation_speed():
    """WGS 84 GM, equatorial radius a and rotation rate omega = 7.292115e-5 rad/s (constants from
    memory; omega equals 2 pi / 86 164.0905 s, one sidereal day); GM/a^2 = 9.79829 m/s^2 and
    omega a = 465.10 m/s computed from these inputs, omega a cos(lat) at 60 deg. (Tabulated in
    the project's shared check values, sec. 3.)"""
    assert gravity_m_s2(0.0) == pytest.approx(9.79829, abs=1e-5)
    assert site_rotation_speed_m_s(0.0) == pytest.approx(465.10, abs=0.01)
    assert site_rotation_speed_m_s(60.0) == pytest.approx(465.10 / 2, abs=0.01)


def _inclination_of_launch(lat_deg: float, az_deg: float) -> float:
    """Inclination of the plane through the site with inertial heading az (vector geometry)."""
    lat, az = math.radians(lat_deg), math.radians(az_deg)
    r = np.array([math.cos(lat), 0.0, math.sin(lat)])
    east = np.array([0.0, 1.0, 0.0])
    north = np.array([-math.sin(lat), 0.0, math.cos(lat)])
    v = math.cos(az) * north + math.sin(az) * east
    h = np.cross(r, v)
    return math.degrees(math.acos(h[2] / np.linalg.norm(h)))


@pytest.mark.parametrize("lat, inc", [(0.0, 0.0), (28.5, 28.5), (28.5, 51.6), (45.0, 98.0), (5.2, 90.0)])
def test_launch_azimuth_gives_the_inclination(lat, inc):
    """Spherical trigonometry (Napier's rules, cos i = cos(lat) sin(az)) checked by vector
    geometry: the plane spanned by the site radius and the inertial heading has the requested
    inclination (h_z/|h| = cos i). Textbook geometry, independent computation in the test."""
    az = launch_azimuth_deg(lat, inc)
    assert _inclination_of_launch(lat, az) == pytest.approx(inc, abs=1e-9)


def test_launch_azimuth_rotation_correction():
    """Adding the site's eastward rotation speed to the relative velocity along the corrected
    azimuth gives an inertial velocity along the inertial azimuth with the orbit speed
    (Galilean velocity addition, re-derived in the test; consistency check, no external source)."""
    lat, inc, v = 28.5, 51.6, circular_speed_m_s(200e3)
    beta_i = math.radians(launch_azimuth_deg(lat, inc))
    beta = math.radians(launch_azimuth_deg(lat, inc, orbit_speed_m_s=v))
    v_rot = site_rotation_speed_m_s(lat)
    # relative velocity of magnitude u along beta, plus the site's eastward speed
    u = v * math.cos(beta_i) / math.cos(beta)
    east, north = u * math.sin(beta) + v_rot, u * math.cos(beta)
    assert math.atan2(east, north) == pytest.approx(beta_i, abs=1e-12)
    assert math.hypot(east, north) == pytest.approx(v, rel=1e-12)
    assert math.degrees(beta) < math.degrees(beta_i)  # launching east of north helps less


def test_launch_azimuth_below_latitude_is_an_error():
    with pytest.raises(FieldError, match="inclination"):
        launch_azimuth_deg(28.5, 10.0)


def test_orbit_elements_circular_and_elliptic():
    """Curtis, Orbital Mechanics for Engineering Students, 3rd ed., ch. 2: vis-viva equation and
    the orbit equation r = p / (1 + e cos theta) (equation numbers 2.71 and 2.31 from memory):
    perigee speed of an ellipse with r_p, r_a is sqrt(2 mu r_a / (r_p (r_p + r_a)))."""
    mu = GM_EARTH_M3_S2
    rp, ra = R_EARTH_EQ_M + 200e3, R_EARTH_EQ_M + 2000e3
    vp = math.sqrt(2 * mu * ra / (rp * (rp + ra)))
    el = orbit_elements(rp, vp, 0.0)
    assert el.perigee_alt_m == pytest.approx(200e3, abs=1e-3)
    assert el.apogee_alt_m == pytest.approx(2000e3, abs=1e-3)
    assert el.eccentricity == pytest.approx((ra - rp) / (ra + rp), rel=1e-12)
    # the same orbit seen at true anomaly 90 deg: r = p, gamma = atan(e)
    e = (ra - rp) / (ra + rp)
    p = rp * (1 + e)
    v = math.sqrt(mu * (2 / p - 2 / (rp + ra)))
    el2 = orbit_elements(p, v, math.atan(e))
    assert el2.perigee_alt_m == pytest.approx(200e3, abs=1e-3)
    assert el2.apogee_alt_m == pytest.approx(2000e3, abs=1e-3)
    esc = orbit_elements(rp, 1.01 * math.sqrt(2 * mu / rp), 0.0)
    assert math.isinf(esc.apogee_alt_m)


def test_time_to_apoapsis_from_perigee_is_half_the_period():
    """Perigee of a 300 x 800 km transfer orbit: half the period, pi*sqrt(a^3/mu)
    (Kepler's third law; Curtis, Orbital Mechanics for Engineering Students, 3rd ed., Eq. 2.83)."""
    r_p, r_a = R_EARTH_EQ_M + 300e3, R_EARTH_EQ_M + 800e3
    a = 0.5 * (r_p + r_a)
    v_p = math.sqrt(GM_EARTH_M3_S2 * (2.0 / r_p - 1.0 / a))
    t = time_to_apoapsis_s([r_p, 0.0, 0.0, 0.0, v_p * math.cos(0.3), v_p * math.sin(0.3)])
    assert t == pytest.approx(math.pi * math.sqrt(a ** 3 / GM_EARTH_M3_S2), rel=1e-12)


@pytest.mark.parametrize("gamma_deg", [4.0, -4.0])
def test_time_to_apoapsis_matches_a_numerical_two_body_coast(gamma_deg):
    """From a climbing and a descending state: the time at which an independent two-body
    integration (scipy solve_ivp, DOP853) next turns from climbing to descending."""
    from scipy.integrate import solve_ivp

    r0 = R_EARTH_EQ_M + 250e3
    v0 = 7900.0
    g = math.radians(gamma_deg)
    y0 = [r0, 0.0, 0.0, v0 * math.sin(g), v0 * math.cos(g), 0.0]

    def rhs(_t, y):
        r3 = (y[0] ** 2 + y[1] ** 2 + y[2] ** 2) ** 1.5
        return [y[3], y[4], y[5], -GM_EARTH_M3_S2 * y[0] / r3, -GM_EARTH_M3_S2 * y[1] / r3,
                -GM_EARTH_M3_S2 * y[2] / r3]

    def apoapsis(_t, y):
        return y[0] * y[3] + y[1] * y[4] + y[2] * y[5]

    apoapsis.direction = -1.0
    sol = solve_ivp(rhs, (0.0, 2e4), y0, method="DOP853", rtol=1e-12, atol=1e-6, events=apoapsis)
    assert time_to_apoapsis_s(y0) == pytest.approx(sol.t_events[0][0], rel=1e-8)


def test_time_to_apoapsis_escape_and_circular():
    r0 = R_EARTH_EQ_M + 400e3
    v_c = math.sqrt(GM_EARTH_M3_S2 / r0)
    assert time_to_apoapsis_s([r0, 0, 0, 0, 1.5 * v_c, 0]) == math.inf
    assert time_to_apoapsis_s([r0, 0, 0, 0, v_c, 0]) == 0.0
