"""A stage split that counts each stage's gravity loss: the starting point for the flight-sized optimum.

The Lagrange split (`sizing.physics.staging`) puts delta-v where exhaust
velocity is high, whatever the stage's thrust: a low-thrust upper stage then
gets a large share and the flown vehicle sinks. Counting each stage's gravity
loss in the split fixes most of that before anything is flown.

A stage burning at constant thrust with a mean flight-path angle gamma loses
g t_b sin(gamma) to gravity (the vertical case of Curtis, Orbital Mechanics
for Engineering Students, 3rd ed., 2014, Sec. 11.3, with the path angle
averaged; Sutton & Biblarz, Rocket Propulsion Elements, 9th ed., Sec. 4.3).
With thrust-to-weight psi at ignition (vacuum thrust over m0 g0) the burn
time is t_b = c (1 - 1/n) / (psi g0), so the stage delivers

    dv_i(n_i) = c_i ln n_i - s_i c_i (1 - 1/n_i) / psi_i,    s_i = sin(gamma_i)

(g0 cancels: the loss g0 s t_b with t_b = c (1 - 1/n) / (psi g0)).

On an ascent to orbit the path angle falls from vertical at liftoff to
horizontal at insertion; here sin(gamma) is taken to fall linearly with the
ideal speed gained, so stage i flies with s_i = 1 - (V_{i-1} + V_i) / (2 V),
V_i the ideal speed at its burnout and V the total (a rough engineering
model, common practice, no source: the flown optimum replaces it). A vertical
flight has s_i = 1. With this model a low-thrust stage placed first pays for
its long burn, so the split does not empty the first stage the way a fixed
per-stage angle would.

The split minimises ln(m_gross / m_payload) = sum ln(n_i (1 - eps_i) /
(1 - n_i eps_i)) (Curtis eq. 11.54 rearranged) subject to sum dv_i = target,
by SLSQP over ln n_i.
"""

from __future__ import annotations

import math

import numpy as np


__all__ = ["gravity_loss_split", "mean_sin_path_angle", "stage_delivered_delta_v"]


def mean_sin_path_angle(c_m_s, n, *, vertical: bool = False) -> np.ndarray:
    """Mean sin(flight-path angle) of each stage under the model of the module notes [-]."""
    dv = np.asarray(c_m_s, float) * np.log(np.asarray(n, float))
    if vertical:
        return np.ones_like(dv)
    v_end = np.cumsum(dv)
    v_start = v_end - dv
    total = max(float(v_end[-1]), 1e-9)
    return np.clip(1.0 - (v_start + v_end) / (2.0 * total), 0.0, 1.0)


def stage_delivered_delta_v(n, c_m_s, psi, sin_gamma):
    """Ideal delta-v minus the gravity loss of a stage [m/s] (module notes); arrays broadcast."""
    n = np.asarray(n, float)
    return c_m_s * np.log(n) - sin_gamma * c_m_s * (1.0 - 1.0 / n) / psi


def gravity_loss_split(c_m_s, eps, thrust_to_weight, delta_v_m_s: float, *, vertical: bool = False) -> np.ndarray:
    """Stage mass ratios n_i that minimise gross mass for a delivered delta-v with gravity losses.

    Parameters
    ----------
    c_m_s, eps, thrust_to_weight : sequence of float
        Exhaust velocity [m/s], structural coefficient [-] and thrust-to-weight
        at ignition [-] of each stage, bottom first.
    delta_v_m_s : float
        Delta-v to deliver after gravity losses [m/s].
    vertical : bool
        A vertical flight (sin(gamma) = 1) instead of an ascent to orbit.

    Returns
    -------
    numpy.ndarray
        Mass ratios [-]; the best reachable split (nearest the target) when the
        target cannot be delivered.
    """
    from scipy.optimize import minimize

    c = np.asarray(c_m_s, float)
    e = np.asarray(eps, float)
    psi = np.asarray(thrust_to_weight, float)
    k = len(c)
    x_hi = -np.log(e) - 1e-3

    def growth(x):
        n = np.exp(x)
        return float(np.sum(np.log(n * (1.0 - e) / (1.0 - n * e))))

    def growth_grad(x):
        n = np.exp(x)
        return 1.0 + n * e / (1.0 - n * e)

    def delivered(x):
        n = np.exp(x)
        return float(np.sum(stage_delivered_delta_v(n, c, psi, mean_sin_path_angle(c, n, vertical=vertical)))) \
            - delta_v_m_s

    x0 = np.minimum(np.full(k, math.log(2.0)), 0.5 * x_hi)
    res = minimize(growth, x0, jac=growth_grad, method="SLSQP", bounds=[(1e-6, h) for h in x_hi],
                   constraints=[{"type": "eq", "fun": delivered}],
                   options={"maxiter": 200, "ftol": 1e-12})
    return np.exp(np.clip(res.x, 1e-6, x_hi))
