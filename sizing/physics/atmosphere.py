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

from sizing.physics._jit import njit

__all__ = [
    "AtmosphereState",
    "atmosphere",
    "standard_atmosphere",
    "pressure_density_sound_speed",
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


def _upper_tables():
    """ln p and ln rho at the upper nodes; the 86 km node from the lower model."""
    h = R0_GEOPOTENTIAL_M * _Z86_M / (R0_GEOPOTENTIAL_M + _Z86_M)
    tb, pb, lapse = _T_BASE[6], _P_BASE[6], _LAPSE[6]
    t = tb + lapse * (h - _H_BASE[6])
    p = pb * (tb / t) ** (_GMR / lapse)
    rho = p * M0_KG_MOL / (R_STAR_J_MOL_K * t)
    pp = (p,) + _UP_P_PA[1:]
    rr = (rho,) + _UP_RHO[1:]
    return tuple(math.log(v) for v in pp), tuple(math.log(v) for v in rr)


_UP_LNP, _UP_LNRHO = _upper_tables()

# the same tables as arrays, read by the compiled model (numba freezes them as constants)
_A_H_BASE = np.array(_H_BASE)
_A_T_BASE = np.array(_T_BASE)
_A_P_BASE = np.array(_P_BASE)
_A_LAPSE = np.array(_LAPSE + (0.0,))
_A_GMR_LAPSE = np.array(tuple(_GMR / lp if lp != 0.0 else 0.0 for lp in _LAPSE) + (0.0,))
_A_MW_RATIO = np.array(_MW_RATIO)
_A_UP_Z = np.array(_UP_Z_M)
_A_UP_LNP = np.array(_UP_LNP)
_A_UP_LNRHO = np.array(_UP_LNRHO)
_SOUND_K = GAMMA_AIR * _R_AIR
_R0K = R0_GEOPOTENTIAL_M * 1e-3


@njit
def standard_atmosphere(z_m):
    """(T [K], p [Pa], rho [kg/m^3], a [m/s]) at geometric altitude `z_m` (USSA 1976; see module notes).

    The one implementation of the model: compiled, called by the flight
    equations, by `atmosphere` (scalars and arrays) and by
    `pressure_density_sound_speed`.
    """
    if z_m < _Z86_M:
        h = R0_GEOPOTENTIAL_M * z_m / (R0_GEOPOTENTIAL_M + z_m)  # geopotential altitude, eq. 18
        i = 0
        if h >= 11000.0:
            i = 6
            while h < _A_H_BASE[i]:
                i -= 1
        tb = _A_T_BASE[i]
        lapse = _A_LAPSE[i]
        if lapse == 0.0:
            tm = tb
            p = _A_P_BASE[i] * math.exp(-_GMR * (h - _A_H_BASE[i]) / tb)  # eq. 33b
        else:
            tm = tb + lapse * (h - _A_H_BASE[i])  # eq. 23
            p = _A_P_BASE[i] * (tb / tm) ** _A_GMR_LAPSE[i]  # eq. 33a
        rho = p * M0_KG_MOL / (R_STAR_J_MOL_K * tm)  # eq. 42
        a = math.sqrt(_SOUND_K * tm)  # eq. 50
        t_kin = tm
        if z_m > 80000.0:  # T = T_M M/M0 (Table 8)
            k = min(int((z_m - 80000.0) / 500.0), 11)
            f = (z_m - (80000.0 + 500.0 * k)) / 500.0
            t_kin = tm * (_A_MW_RATIO[k] + f * (_A_MW_RATIO[k + 1] - _A_MW_RATIO[k]))
        return t_kin, p, rho, a
    n = _A_UP_Z.shape[0]
    if z_m >= _A_UP_Z[n - 1]:
        i = n - 2
    else:
        i = 0
        while z_m >= _A_UP_Z[i + 1]:
            i += 1
    f = (z_m - _A_UP_Z[i]) / (_A_UP_Z[i + 1] - _A_UP_Z[i])
    p = math.exp(_A_UP_LNP[i] + f * (_A_UP_LNP[i + 1] - _A_UP_LNP[i]))
    rho = math.exp(_A_UP_LNRHO[i] + f * (_A_UP_LNRHO[i + 1] - _A_UP_LNRHO[i]))
    # kinetic temperature above 86 km, USSA 1976 eqs. 25-31 (closed forms)
    zk = z_m * 1e-3
    if zk < 91.0:
        t = 186.8673
    elif zk < 110.0:
        x = (zk - 91.0) / -19.9429
        t = 263.1905 - 76.3232 * math.sqrt(max(0.0, 1.0 - x * x))
    elif zk < 120.0:
        t = 240.0 + 12.0 * (zk - 110.0)
    else:
        xi = (zk - 120.0) * (_R0K + 120.0) / (_R0K + zk)
        t = 1000.0 - 640.0 * math.exp(-0.01875 * xi)
    return t, p, rho, math.sqrt(_SOUND_K * t)


@njit
def _atmosphere_array(z):
    flat = z.ravel()
    out = np.empty((4, flat.shape[0]))
    for j in range(flat.shape[0]):
        t, p, rho, a = standard_atmosphere(flat[j])
        out[0, j] = t
        out[1, j] = p
        out[2, j] = rho
        out[3, j] = a
    return out


def pressure_density_sound_speed(z_m: float) -> tuple[float, float, float]:
    """(p [Pa], rho [kg/m^3], a [m/s]) at a scalar altitude (`standard_atmosphere`)."""
    _, p, rho, a = standard_atmosphere(float(z_m))
    return p, rho, a


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
        return AtmosphereState(*standard_atmosphere(z))
    z = np.asarray(altitude_m, dtype=float)
    if not np.all(np.isfinite(z)):
        raise ValueError("altitude_m must be finite everywhere.")
    out = _atmosphere_array(np.ascontiguousarray(z))
    return AtmosphereState(*(row.reshape(z.shape) for row in out))
