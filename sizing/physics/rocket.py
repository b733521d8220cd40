"""Ideal rocket equation and stack mass bookkeeping (pure functions, SI)."""

from __future__ import annotations

import math

import numpy as np

__all__ = [
    "ideal_delta_v",
    "mass_ratio",
    "stage_mass_from_mass_ratio",
    "stack_masses",
    "stack_delta_v",
]


def ideal_delta_v(exhaust_velocity_m_s: float, mass_ratio_: float) -> float:
    """Ideal velocity increment of one burn (Tsiolkovsky rocket equation).

    Parameters
    ----------
    exhaust_velocity_m_s : float
        Effective exhaust velocity c [m/s], > 0.
    mass_ratio_ : float
        Initial-to-final mass m0/mf [-], >= 1.

    Returns
    -------
    float
        Delta-v = c ln(m0/mf) [m/s].

    References
    ----------
    .. [1] G. P. Sutton, O. Biblarz, Rocket Propulsion Elements, 9th ed., 2017, eq. 4-6.
    .. [2] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014, eq. 11.30.

    Examples
    --------
    >>> round(ideal_delta_v(300 * 9.80665, 5.0), 2)
    4734.92
    """
    return exhaust_velocity_m_s * math.log(mass_ratio_)


def mass_ratio(delta_v_m_s: float, exhaust_velocity_m_s: float) -> float:
    """Initial-to-final mass ratio for a velocity increment (inverse Tsiolkovsky).

    Parameters
    ----------
    delta_v_m_s : float
        Ideal velocity increment [m/s], >= 0.
    exhaust_velocity_m_s : float
        Effective exhaust velocity c [m/s], > 0.

    Returns
    -------
    float
        m0 / mf [-], >= 1.

    References
    ----------
    .. [1] G. P. Sutton, O. Biblarz, Rocket Propulsion Elements, 9th ed., 2017, eq. 4-6.

    Examples
    --------
    >>> mass_ratio(0.0, 3000.0)
    1.0
    """
    return math.exp(delta_v_m_s / exhaust_velocity_m_s)


def stage_mass_from_mass_ratio(n: float, eps: float, mass_above_kg: float) -> float:
    """Structural plus propellant mass of one stage for a given mass ratio.

    With structural coefficient eps = m_s/(m_s+m_p) and mass ratio
    n = (m + A)/(eps m + A), the stage mass is m = (n - 1) A / (1 - n eps).

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014,
       Sec. 11.6, eq. 11.63 (stage mass from the optimal mass ratio).
    """
    return (n - 1.0) * mass_above_kg / (1.0 - n * eps)


def stack_masses(n, eps, payload_mass_kg):
    """Stage masses of a stack from its mass ratios, working from the top stage down.

    Parameters
    ----------
    n : array_like, shape (..., N)
        Mass ratio of each stage, bottom stage first [-], 1 <= n < 1/eps.
    eps : array_like, shape (..., N)
        Structural coefficient of each stage [-], in (0, 1).
    payload_mass_kg : array_like, shape (...)
        Payload mass [kg].

    Returns
    -------
    dict of ndarray
        ``stage_mass_kg`` (structure + propellant), ``structural_mass_kg``,
        ``propellant_mass_kg``, ``ignition_mass_kg`` (stage plus all above it)
        and ``mass_above_kg``, each shaped like `n`, and ``gross_mass_kg``.

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014, Sec. 11.6.
    """
    n = np.asarray(n, dtype=float)
    eps = np.asarray(eps, dtype=float)
    above = np.asarray(payload_mass_kg, dtype=float) * np.ones(n.shape[:-1])
    stage = np.empty_like(n)
    ign = np.empty_like(n)
    mass_above = np.empty_like(n)
    for i in range(n.shape[-1] - 1, -1, -1):
        mass_above[..., i] = above
        stage[..., i] = (n[..., i] - 1.0) * above / (1.0 - n[..., i] * eps[..., i])
        above = above + stage[..., i]
        ign[..., i] = above
    structural = eps * stage
    return {
        "stage_mass_kg": stage,
        "structural_mass_kg": structural,
        "propellant_mass_kg": stage - structural,
        "ignition_mass_kg": ign,
        "mass_above_kg": mass_above,
        "gross_mass_kg": above,
    }


def stack_delta_v(
    exhaust_velocity_m_s,
    propellant_mass_kg,
    structural_mass_kg,
    payload_mass_kg: float,
) -> tuple[float, list[float]]:
    """Ideal delta-v of a stack with given stage masses (Tsiolkovsky, stage by stage).

    Returns the total and the per-stage increments, bottom stage first [m/s].
    """
    c = list(exhaust_velocity_m_s)
    mp = list(propellant_mass_kg)
    ms = list(structural_mass_kg)
    above = payload_mass_kg
    dv = [0.0] * len(c)
    for i in range(len(c) - 1, -1, -1):
        m0 = above + mp[i] + ms[i]
        mf = above + ms[i]
        dv[i] = c[i] * math.log(m0 / mf)
        above = m0
    return sum(dv), dv
