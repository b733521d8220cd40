"""Vectorised optimal staging over many problems at once, for trade studies."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..physics.rocket import stack_masses
from ..physics.staging import optimal_mass_ratios_batch

__all__ = ["BatchResult", "solve_batch"]


@dataclass(frozen=True, slots=True)
class BatchResult:
    """Arrays for M problems of N stages (bottom stage first). Infeasible rows are NaN.

    Attributes
    ----------
    gross_mass_kg : ndarray (M,)
    ignition_mass_kg, propellant_mass_kg, structural_mass_kg, mass_ratio, delta_v_m_s : ndarray (M, N)
    success : ndarray of bool (M,)
        False where the target is beyond sum c_i ln(1/eps_i) or the root did not converge.
    """

    gross_mass_kg: np.ndarray
    ignition_mass_kg: np.ndarray
    propellant_mass_kg: np.ndarray
    structural_mass_kg: np.ndarray
    mass_ratio: np.ndarray
    delta_v_m_s: np.ndarray
    success: np.ndarray

    @property
    def payload_fraction(self) -> np.ndarray:
        """Payload / gross mass for each problem [-]."""
        above_top = self.ignition_mass_kg[:, -1] - self.propellant_mass_kg[:, -1] - self.structural_mass_kg[:, -1]
        return above_top / self.gross_mass_kg


def solve_batch(exhaust_velocity_m_s, structural_coefficient, payload_mass_kg, delta_v_m_s) -> BatchResult:
    """Minimum-gross-mass staging of M unconstrained problems at once (Lagrange method).

    Parameters
    ----------
    exhaust_velocity_m_s : array_like (M, N)
        Effective exhaust velocities [m/s].
    structural_coefficient : array_like (M, N)
        Structural coefficients [-], in (0, 1).
    payload_mass_kg : array_like (M,)
        Payload masses [kg].
    delta_v_m_s : array_like (M,)
        Ideal delta-v targets [m/s].

    References
    ----------
    .. [1] H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2014, Sec. 11.6.
    """
    c = np.atleast_2d(np.asarray(exhaust_velocity_m_s, dtype=float))
    e = np.atleast_2d(np.asarray(structural_coefficient, dtype=float))
    c, e = np.broadcast_arrays(c, e)
    m = c.shape[0]
    pl = np.broadcast_to(np.asarray(payload_mass_kg, dtype=float), (m,))
    dv = np.broadcast_to(np.asarray(delta_v_m_s, dtype=float), (m,))
    n, _u, ok = optimal_mass_ratios_batch(c, e, dv)
    masses = stack_masses(n, e, pl)
    return BatchResult(
        gross_mass_kg=masses["gross_mass_kg"],
        ignition_mass_kg=masses["ignition_mass_kg"],
        propellant_mass_kg=masses["propellant_mass_kg"],
        structural_mass_kg=masses["structural_mass_kg"],
        mass_ratio=n,
        delta_v_m_s=c * np.log(n),
        success=ok,
    )
