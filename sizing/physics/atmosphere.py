"""US Standard Atmosphere 1976: temperature, pressure, density and speed of sound.

Model
-----
* -5 km to 86 km geometric altitude: the standard's lower-atmosphere definition
  (U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562, Part 1, eqs. 18, 33a/33b,
  42, 50): seven layers of linear molecular-scale temperature T_M in
  geopotential altitude H = r0 Z / (r0 + Z), r0 = 6 356 766 m, hydrostatic
  pressure, ideal-gas density rho = p M0 / (R* T_M) and speed of sound
  a = sqrt(gamma R* T_M / M0) with gamma = 1.4. The first layer's formula is used
  below sea level (the standard and ICAO tables start at -5 km).
  Kinetic temperature T = T_M (M / M0); M / M0 differs from 1 only between 80
  and 86 km, where it is interpolated in the standard's Table 8 (values FROM
  MEMORY; they change T by at most 4.2e-4 relative and do not affect p or rho).
* 86 km to 1000 km: kinetic temperature from the standard's closed forms
  (isothermal 86-91 km, elliptical 91-110 km, linear 110-120 km, exponential
  above 120 km with T_inf = 1000 K, lambda = 0.01875 /km). Pressure and density
  are interpolated log-linearly in altitude between values of the standard's
  Table I at 86, 90, 100, 110, 120, 150, 200, 300, 500 and 1000 km (the table
  values are FROM MEMORY; spot-checked against pyatmos.coesa76 in
  shared/reference/check-values.md section 2.2 to <= 5e-3). This is a fit, not
  the standard's diffusion integration; errors of a few percent between the
  nodes are possible. Speed of sound is continued with T and M0; above about
  90 km it has little physical meaning and dynamic pressure is negligible.
* Above 1000 km: p and rho continue exponentially with the 500-1000 km scale
  heights; T = 1000 K.

Constants are those of the standard: g0 = 9.80665 m/s^2, R* = 8.31432 J/(mol K),
M0 = 28.9644 g/mol, p0 = 101 325 Pa, T0 = 288.15 K.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

__all__ = [
    "AtmosphereState",
    "atmosphere",
    "geopotential_altitude_m",
    "R_STAR_J_MOL_K",
    "M0_KG_MOL",
    "R0_GEOPOTENTIAL_M",
    "P0_PA",
    "T0_K",
    "GAMMA_AIR",
]

G0 = 9.80665  # standard gravity [m/s^2], USSA 1976
R_STAR_J_MOL_K = 8.31432  # universal gas constant as adopted by USSA 1976
M0_KG_MOL = 28.9644e-3  # sea-level mean molecular weight [kg/mol]
R0_GEOPOTENTIAL_M = 6356766.0  # Earth radius for geopotential altitude [m]
P0_PA = 101325.0
T0_K = 288.15
GAMMA_AIR = 1.4

_GMR = G0 * M0_KG_MOL / R_STAR_J_MOL_K  # [K/m]
_R_AIR = R_STAR_J_MOL_K / M0_KG_MOL  # [J/(kg K)]

# Layer bases: geopotential altitude [m], lapse rate [K/m] (USSA 1976 Table 4).
_H_BASE = (0.0, 11000.0, 20000.0, 32000.0, 47000.0, 51000.0, 71000.0, 84852.0)
_LAPSE = (-6.5e-3, 0.0, 1.0e-3, 2.8e-3, 0.0, -2.8e-3, -2.0e-3)


def _layer_bases():
    t = [T0_K]
    p = [P0_PA]
    for i, lapse in enumerate(_LAPSE):
        dh = _H_BASE[i + 1] - _H_BASE[i]
        tb, pb = t[-1], p[-1]
        tn = tb + lapse * dh
        if lapse == 0.0:
            pn = pb * math.exp(-_GMR * dh / tb)
        else:
            pn = pb * (tb / tn) ** (_GMR / lapse)
        t.append(tn)
        p.append(pn)
    return tuple(t), tuple(p)


_T_BASE, _P_BASE = _layer_bases()
_Z86_M = 86000.0

# M/M0 at 80..86 km in 0.5 km steps (USSA 1976 Table 8; FROM MEMORY).
_MW_Z_M = tuple(80000.0 + 500.0 * i for i in range(13))
_MW_RATIO = (
    1.0, 0.999996, 0.999988, 0.999969, 0.999938, 0.999904, 0.999864,
    0.999822, 0.999778, 0.999731, 0.999681, 0.999632, 0.999579,
)

# Upper table nodes: geometric altitude [m], pressure [Pa], density [kg/m^3]
# (USSA 1976 Table I, FROM MEMORY; the 86 km node is computed from the lower model).
_UP_Z_M = (86000.0, 90000.0, 100000.0, 110000.0, 120000.0, 150000.0,
           200000.0, 300000.0, 500000.0, 1000000.0)
_UP_P_PA = (0.0, 1.8359e-1, 3.2011e-2, 7.1042e-3, 2.5382e-3, 4.5422e-4,
            8.4736e-5, 8.7704e-6, 3.0236e-7, 7.5138e-9)
_UP_RHO = (0.0, 3.416e-6, 5.604e-7, 9.708e-8, 2.222e-8, 2.076e-9,
           2.541e-10, 1.916e-11, 5.215e-13, 3.561e-15)


class AtmosphereState(NamedTuple):
    """Atmospheric state; floats for a scalar altitude, arrays otherwise.

    Attributes
    ----------
    temperature_K : kinetic temperature [K]
    pressure_Pa : static pressure [Pa]
    density_kg_m3 : density [kg/m^3]
    speed_of_sound_m_s : speed of sound [m/s]
    """

    temperature_K: float | np.ndarray
    pressure_Pa: float | np.ndarray
    density_kg_m3: float | np.ndarray
    speed_of_sound_m_s: float | np.ndarray


def geopotential_altitude_m(z_m):
    """Geopotential altitude H = r0 Z / (r0 + Z) [m] (USSA 1976 eq. 18)."""
    return R0_GEOPOTENTIAL_M * z_m / (R0_GEOPOTENTIAL_M + z_m)


def _lower_scalar(z: float) -> tuple[float, float]:
    """(T_M [K], p [Pa]) below 86 km."""
    h = R0_GEOPOTENTIAL_M * z / (R0_GEOPOTENTIAL_M + z)
    i = 0
    if h >= 11000.0:
        i = 6
        while h < _H_BASE[i]:
            i -= 1
    tb = _T_BASE[i]
    pb = _P_BASE[i]
    lapse = _LAPSE[i]
    dh = h - _H_BASE[i]
    if lapse == 0.0:
        return tb, pb * math.exp(-_GMR * dh / tb)
    t = tb + lapse * dh
    return t, pb * (tb / t) ** (_GMR / lapse)


_P86, _T86_M = None, None


def _upper_temperature(z: float) -> float:
    """Kinetic temperature above 86 km (USSA 1976 eqs. 25-31, closed forms) [K]."""
    zk = z * 1e-3
    if zk < 91.0:
        return 186.8673
    if zk < 110.0:
        x = (zk - 91.0) / -19.9429
        return 263.1905 - 76.3232 * math.sqrt(max(0.0, 1.0 - x * x))
    if zk < 120.0:
        return 240.0 + 12.0 * (zk - 110.0)
    r0k = R0_GEOPOTENTIAL_M * 1e-3
    xi = (zk - 120.0) * (r0k + 120.0) / (r0k + zk)
    return 1000.0 - 640.0 * math.exp(-0.01875 * xi)


def _init_upper():
    t, p = _lower_scalar(_Z86_M)
    rho = p * M0_KG_MOL / (R_STAR_J_MOL_K * t)
    pp = (p,) + _UP_P_PA[1:]
    rr = (rho,) + _UP_RHO[1:]
    return tuple(math.log(v) for v in pp), tuple(math.log(v) for v in rr)


_UP_LNP, _UP_LNRHO = _init_upper()


def _upper_scalar(z: float) -> tuple[float, float, float]:
    """(T [K], p [Pa], rho [kg/m^3]) at or above 86 km."""
    zs = _UP_Z_M
    n = len(zs)
    if z >= zs[-1]:
        i = n - 2
    else:
        i = 0
        while z >= zs[i + 1]:
            i += 1
    f = (z - zs[i]) / (zs[i + 1] - zs[i])
    lnp = _UP_LNP[i] + f * (_UP_LNP[i + 1] - _UP_LNP[i])
    lnr = _UP_LNRHO[i] + f * (_UP_LNRHO[i + 1] - _UP_LNRHO[i])
    return _upper_temperature(z), math.exp(lnp), math.exp(lnr)


def _mw_ratio(z: float) -> float:
    if z <= 80000.0:
        return 1.0
    k = min(int((z - 80000.0) / 500.0), 11)
    f = (z - _MW_Z_M[k]) / 500.0
    return _MW_RATIO[k] + f * (_MW_RATIO[k + 1] - _MW_RATIO[k])


def _atmosphere_scalar(z: float) -> AtmosphereState:
    if z < _Z86_M:
        tm, p = _lower_scalar(z)
        rho = p * M0_KG_MOL / (R_STAR_J_MOL_K * tm)
        a = math.sqrt(GAMMA_AIR * _R_AIR * tm)
        return AtmosphereState(tm * _mw_ratio(z), p, rho, a)
    t, p, rho = _upper_scalar(z)
    return AtmosphereState(t, p, rho, math.sqrt(GAMMA_AIR * _R_AIR * t))


def pressure_density_sound_speed(z_m: float) -> tuple[float, float, float]:
    """Fast scalar (p [Pa], rho [kg/m^3], a [m/s]) for the trajectory integrator."""
    if z_m < _Z86_M:
        tm, p = _lower_scalar(z_m)
        return p, p * M0_KG_MOL / (R_STAR_J_MOL_K * tm), math.sqrt(GAMMA_AIR * _R_AIR * tm)
    t, p, rho = _upper_scalar(z_m)
    return p, rho, math.sqrt(GAMMA_AIR * _R_AIR * t)


def _atmosphere_array(z: np.ndarray) -> AtmosphereState:
    z = np.asarray(z, dtype=float)
    t = np.empty_like(z)
    p = np.empty_like(z)
    rho = np.empty_like(z)
    a = np.empty_like(z)
    low = z < _Z86_M
    if low.any():
        zl = z[low]
        h = R0_GEOPOTENTIAL_M * zl / (R0_GEOPOTENTIAL_M + zl)
        idx = np.clip(np.searchsorted(_H_BASE, h, side="right") - 1, 0, 6)
        hb = np.asarray(_H_BASE)[idx]
        tb = np.asarray(_T_BASE)[idx]
        pb = np.asarray(_P_BASE)[idx]
        lapse = np.asarray(_LAPSE)[idx]
        dh = h - hb
        tm = tb + lapse * dh
        iso = lapse == 0.0
        with np.errstate(divide="ignore", invalid="ignore"):
            pg = pb * (tb / tm) ** (_GMR / np.where(iso, 1.0, lapse))
        pi = pb * np.exp(-_GMR * dh / tb)
        pl = np.where(iso, pi, pg)
        mw = np.interp(zl, _MW_Z_M, _MW_RATIO, left=1.0, right=_MW_RATIO[-1])
        t[low] = tm * mw
        p[low] = pl
        rho[low] = pl * M0_KG_MOL / (R_STAR_J_MOL_K * tm)
        a[low] = np.sqrt(GAMMA_AIR * _R_AIR * tm)
    high = ~low
    if high.any():
        for j in np.flatnonzero(high.ravel()):
            s = _atmosphere_scalar(float(z.flat[j]))
            t.flat[j], p.flat[j], rho.flat[j], a.flat[j] = s
    return AtmosphereState(t, p, rho, a)


def atmosphere(altitude_m):
    """Standard atmosphere at geometric altitude (US Standard Atmosphere 1976).

    Parameters
    ----------
    altitude_m : float or array_like
        Geometric altitude above mean sea level [m], finite; the model is
        defined from -5 km to 1000 km (extrapolated beyond, see module notes).

    Returns
    -------
    AtmosphereState
        temperature_K [K], pressure_Pa [Pa], density_kg_m3 [kg/m^3],
        speed_of_sound_m_s [m/s]; floats for a scalar input, else arrays of
        the input's shape.

    References
    ----------
    .. [1] U.S. Standard Atmosphere, 1976, NOAA-S/T 76-1562, NOAA/NASA/USAF,
       Washington DC, 1976, Part 1 (eqs. 18, 23, 33a, 33b, 42, 50) and Table I.

    Examples
    --------
    >>> round(atmosphere(11000.0).pressure_Pa, 1)
    22700.0
    """
    if np.ndim(altitude_m) == 0:
        z = float(altitude_m)
        if not math.isfinite(z):
            raise ValueError(f"altitude_m must be finite. Got {altitude_m!r}.")
        return _atmosphere_scalar(z)
    z = np.asarray(altitude_m, dtype=float)
    if not np.all(np.isfinite(z)):
        raise ValueError("altitude_m must be finite everywhere.")
    return _atmosphere_array(z)
