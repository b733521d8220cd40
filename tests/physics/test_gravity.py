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
)
from sizing.units import GM_EARTH_M3_S2, R_EARTH_EQ_M


@pytest.mark.parametrize("alt, v", [(200e3, 7784.26), (300e3, 7725.76), (400e3, 7668.56)])
def test_circular_speed_matches_check_values(alt, v):
    """check-values.md sec. 3 (C from WGS 84 a and GM; Curtis 3rd ed. eq. 2.63 gives 7.7843 km/s
    at 200 km with mu = 398600 km^3/s^2)."""
    assert circular_speed_m_s(alt) == pytest.approx(v, abs=0.01)


def test_circular_speed_curtis_constants():
    """Curtis, Orbital Mechanics for Engineering Students, 3rd ed.: mu = 398600 km^3/s^2,
    R = 6378 km, 200 km circular orbit 7.7843 km/s (check-values.md sec. 3)."""
    v = circular_speed_m_s(200e3, gm_m3_s2=3.986e14, radius_m=6378e3)
    assert v / 1000 == pytest.approx(7.7843, abs=5e-5)


def test_surface_gravity_and_rotation_speed():
    """check-values.md sec. 3 (C): GM/a^2 = 9.79829 m/s^2; equatorial omega a = 465.10 m/s."""
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
    """Spherical trigonometry (Napier) checked by vector geometry: the plane spanned by the site
    radius and the inertial heading has the requested inclination (h_z/|h| = cos i)."""
    az = launch_azimuth_deg(lat, inc)
    assert _inclination_of_launch(lat, az) == pytest.approx(inc, abs=1e-9)


def test_launch_azimuth_rotation_correction():
    """Adding the site's eastward rotation speed to the relative velocity along the corrected
    azimuth gives an inertial velocity along the inertial azimuth with the orbit speed."""
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
    """Curtis 3rd ed. eqs. 2.71 (vis-viva) and 2.31: perigee speed of an ellipse with r_p, r_a is
    sqrt(2 mu r_a / (r_p (r_p + r_a)))."""
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
