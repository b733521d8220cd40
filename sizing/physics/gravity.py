"""Central gravity, Earth rotation, launch azimuth and two-body orbit elements.

Earth is a sphere of radius `R_EARTH_EQ_M` (WGS 84 semi-major axis) with a
point-mass gravity field GM = `GM_EARTH_M3_S2` (WGS 84 / IERS 2010), rotating at
`OMEGA_EARTH_RAD_S` (WGS 84); constants are defined in `sizing.units`.
Oblateness (J2) is neglected.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from sizing.errors import FieldError
from sizing.units import GM_EARTH_M3_S2, OMEGA_EARTH_RAD_S, R_EARTH_EQ_M

__all__ = [
    "GM_EARTH_M3_S2",
    "R_EARTH_EQ_M",
    "OMEGA_EARTH_RAD_S",
    "gravity_m_s2",
    "circular_speed_m_s",
    "site_rotation_speed_m_s",
    "launch_azimuth_deg",
    "OrbitElements",
    "orbit_elements",
    "time_to_apoapsis_s",
    "lowest_coast_radius_m",
]


def gravity_m_s2(altitude_m: float, *, gm_m3_s2: float = GM_EARTH_M3_S2,
                 radius_m: float = R_EARTH_EQ_M) -> float:
    """Gravitational acceleration GM / r^2 [m/s^2] (Newton's inverse-square law).

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014, eq. 1.36.

    Examples
    --------
    >>> round(gravity_m_s2(0.0), 5)
    9.79829
    """
    r = radius_m + altitude_m
    return gm_m3_s2 / (r * r)


def circular_speed_m_s(altitude_m: float, *, gm_m3_s2: float = GM_EARTH_M3_S2,
                       radius_m: float = R_EARTH_EQ_M) -> float:
    """Circular orbit speed sqrt(GM / r) [m/s] (two-body problem).

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014, eq. 2.63.

    Examples
    --------
    >>> round(circular_speed_m_s(200e3), 2)
    7784.26
    """
    return math.sqrt(gm_m3_s2 / (radius_m + altitude_m))


def site_rotation_speed_m_s(latitude_deg: float, altitude_m: float = 0.0, *,
                            omega_rad_s: float = OMEGA_EARTH_RAD_S,
                            radius_m: float = R_EARTH_EQ_M) -> float:
    """Eastward inertial speed of a point fixed on the rotating Earth, omega (R + h) cos(lat) [m/s].

    Examples
    --------
    >>> round(site_rotation_speed_m_s(0.0), 2)
    465.1
    """
    return omega_rad_s * (radius_m + altitude_m) * math.cos(math.radians(latitude_deg))


def launch_azimuth_deg(latitude_deg: float, inclination_deg: float, *,
                       orbit_speed_m_s: float | None = None, ascending: bool = True,
                       altitude_m: float = 0.0) -> float:
    """Launch azimuth (clockwise from north) that puts the orbit plane at an inclination.

    Inertial azimuth from the right spherical triangle formed by the equator,
    the orbit's ground track and the site's meridian (Napier's rules):
    sin(beta_I) = cos(i) / cos(lat). With `orbit_speed_m_s` the azimuth is
    corrected for the site's rotation speed v_rot (the velocity to be added in
    the rotating frame points along the difference of the two vectors):
    tan(beta) = (v sin beta_I - v_rot) / (v cos beta_I).

    Parameters
    ----------
    latitude_deg : float
        Site latitude [deg], in (-90, 90).
    inclination_deg : float
        Orbit inclination [deg], in [|lat|, 180 - |lat|].
    orbit_speed_m_s : float, optional
        Inertial speed at insertion [m/s]; enables the rotation correction.
    ascending : bool
        True for the northbound (ascending-node) solution, False for southbound.

    Returns
    -------
    float
        Azimuth [deg] in [0, 360).

    Raises
    ------
    FieldError
        If the inclination is below the site latitude (not reachable by a direct ascent).

    References
    ----------
    .. [1] D. A. Vallado, Fundamentals of Astrodynamics and Applications, 4th ed.,
       2013, launch-azimuth relations (section number from memory, not checked).
    .. [2] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014,
       Ch. 4 (spherical trigonometry of the orbit plane) -- from memory.

    Examples
    --------
    >>> launch_azimuth_deg(0.0, 0.0)
    90.0
    """
    lat = math.radians(latitude_deg)
    inc = math.radians(inclination_deg)
    if not -90.0 < latitude_deg < 90.0:
        raise FieldError("site.latitude_deg", "must be in (-90, 90) for an orbital launch.", latitude_deg)
    s = math.cos(inc) / math.cos(lat)
    if abs(s) > 1.0 + 1e-12:
        raise FieldError(
            "mission.inclination_deg",
            f"must be in [{abs(latitude_deg):g}, {180 - abs(latitude_deg):g}] from this site "
            f"(latitude {latitude_deg:g} deg) for a direct ascent.",
            inclination_deg,
        )
    s = max(-1.0, min(1.0, s))
    beta_i = math.asin(s)
    if not ascending:
        beta_i = math.pi - beta_i
    if orbit_speed_m_s is not None:
        v_rot = site_rotation_speed_m_s(latitude_deg, altitude_m)
        ve = orbit_speed_m_s * math.sin(beta_i) - v_rot
        vn = orbit_speed_m_s * math.cos(beta_i)
        beta = math.atan2(ve, vn)
    else:
        beta = beta_i
    return math.degrees(beta) % 360.0


@dataclass(frozen=True, slots=True)
class OrbitElements:
    """Osculating two-body orbit of a state.

    Attributes
    ----------
    altitude_m : float
        Altitude of the state above the spherical Earth [m].
    speed_m_s : float
        Inertial speed [m/s].
    flight_path_angle_deg : float
        Angle of the inertial velocity above the local horizontal [deg].
    perigee_alt_m, apogee_alt_m : float
        Periapsis and apoapsis altitudes [m]; apogee is inf for an escape orbit.
    semi_major_axis_m : float
        a [m]; negative for a hyperbola.
    eccentricity : float
        e [-].
    inclination_deg : float
        Orbit inclination [deg] (nan when not known, e.g. a planar state).
    """

    altitude_m: float
    speed_m_s: float
    flight_path_angle_deg: float
    perigee_alt_m: float
    apogee_alt_m: float
    semi_major_axis_m: float
    eccentricity: float
    inclination_deg: float = float("nan")


def orbit_elements(radius_m: float, speed_m_s: float, flight_path_angle_rad: float, *,
                   inclination_deg: float = float("nan"),
                   gm_m3_s2: float = GM_EARTH_M3_S2,
                   radius_earth_m: float = R_EARTH_EQ_M) -> OrbitElements:
    """Apsides of the osculating orbit from radius, speed and flight-path angle.

    Vis-viva energy E = v^2/2 - GM/r gives a = -GM/(2E); the angular momentum
    h = r v cos(gamma) gives e = sqrt(1 - h^2/(GM a)); r_p,a = a (1 -/+ e).

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014,
       eqs. 2.71 (vis-viva), 2.31, 2.73.

    Examples
    --------
    >>> from sizing.physics.gravity import circular_speed_m_s
    >>> el = orbit_elements(6378137.0 + 200e3, circular_speed_m_s(200e3), 0.0)
    >>> round(el.perigee_alt_m), round(el.apogee_alt_m)
    (200000, 200000)
    """
    r = radius_m
    v = speed_m_s
    energy = 0.5 * v * v - gm_m3_s2 / r
    h = r * v * math.cos(flight_path_angle_rad)
    p = h * h / gm_m3_s2  # semi-latus rectum
    e2 = 1.0 + 2.0 * energy * h * h / (gm_m3_s2 * gm_m3_s2)
    e = math.sqrt(max(0.0, e2))
    rp = p / (1.0 + e)
    if energy < 0.0:
        a = -gm_m3_s2 / (2.0 * energy)
        ra = p / (1.0 - e) if e < 1.0 else math.inf
    else:
        a = -gm_m3_s2 / (2.0 * energy) if energy > 0 else math.inf
        ra = math.inf
    return OrbitElements(
        altitude_m=r - radius_earth_m,
        speed_m_s=v,
        flight_path_angle_deg=math.degrees(flight_path_angle_rad),
        perigee_alt_m=rp - radius_earth_m,
        apogee_alt_m=ra - radius_earth_m,
        semi_major_axis_m=a,
        eccentricity=e,
        inclination_deg=inclination_deg,
    )


def time_to_apoapsis_s(y) -> float:
    """Two-body time from an inertial state (x, y, z, vx, vy, vz) [m, m/s] to the next apoapsis [s].

    True anomaly from the eccentricity vector, then eccentric and mean anomaly (Kepler's
    equation; Curtis, Orbital Mechanics for Engineering Students, 3rd ed., Sec. 3.4, from memory).
    inf on an escape path; 0 on a circular orbit.
    """
    r = [float(c) for c in y[0:3]]
    v = [float(c) for c in y[3:6]]
    rn = math.sqrt(sum(c * c for c in r))
    v2 = sum(c * c for c in v)
    rv = sum(a * b for a, b in zip(r, v))
    a = 1.0 / (2.0 / rn - v2 / GM_EARTH_M3_S2)
    if a <= 0:  # escape: no apoapsis
        return math.inf
    e_vec = [((v2 - GM_EARTH_M3_S2 / rn) * ri - rv * vi) / GM_EARTH_M3_S2 for ri, vi in zip(r, v)]
    e = math.sqrt(sum(c * c for c in e_vec))
    if e < 1e-6:  # circular: every point is an apsis
        return 0.0
    cos_nu = max(-1.0, min(1.0, sum(a_ * b for a_, b in zip(e_vec, r)) / (e * rn)))
    nu = math.acos(cos_nu) if rv >= 0 else 2.0 * math.pi - math.acos(cos_nu)
    ecc = 2.0 * math.atan(math.sqrt((1 - e) / (1 + e)) * math.tan(nu / 2.0))
    mean = ecc - e * math.sin(ecc)
    n = math.sqrt(GM_EARTH_M3_S2 / a ** 3)
    return float(((math.pi - mean) % (2.0 * math.pi)) / n)


def lowest_coast_radius_m(y) -> float:
    """Lowest radius of a two-body coast from an inertial state (x, y, z, vx, vy, vz) up to the next
    apoapsis [m]: the state's own radius when climbing (r . v >= 0), else the perigee radius passed on the
    way (`orbit_elements`, vis-viva and angular momentum)."""
    r = [float(c) for c in y[0:3]]
    v = [float(c) for c in y[3:6]]
    rn = math.sqrt(sum(c * c for c in r))
    rv = sum(a * b for a, b in zip(r, v))
    if rv >= 0:
        return rn
    vn = math.sqrt(sum(c * c for c in v))
    return orbit_elements(rn, vn, math.asin(max(-1.0, min(1.0, rv / (rn * vn)))), radius_earth_m=0.0).perigee_alt_m
