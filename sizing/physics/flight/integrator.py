"""Embedded Dormand-Prince 5(4) steps with FSAL and dense output (compiled).

The coefficients are data (`sizing.physics.flight.tableau`). The error norm is
the larger of the position error over ``rtol * pos_scale`` and the velocity
error over ``rtol * (vel_scale + |V|)``: the mass is integrated exactly (its
rate is linear in time within a phase) and the loss integrals are quadratures
that follow the state, so neither enters the norm. In a body-axis phase
(``MODE_BODY``) the attitude enters it too: the axis error over ``100 rtol``
and the angular-velocity error over ``100 rtol (1 rad/s + |omega|)``. The
attitude moves the position only through the thrust and normal-force
directions, integrated over the step; with the factor 100 the demo hobby
stack's apogee and drift stay within 1e-5 m of an rtol 1e-12 flight at
rtol 1e-8, with half the steps of a factor 1 (measured; a project choice, no
source). Step-size control:
h_new = h min(5, max(0.2, 0.9 err^(-1/5))) (Hairer, Norsett & Wanner, Solving
Ordinary Differential Equations I, 2nd ed., 1993, Sec. II.4, eq. 4.13).
"""

from __future__ import annotations

import math

import numpy as np

from sizing.physics._jit import njit
from sizing.physics.flight.equations import derivatives
from sizing.physics.flight.layout import MODE_BODY, N_MOTION, N_STATE, PH_MODE, Y_AXIS, Y_OMEGA
from sizing.physics.flight.tableau import A, B, C, E, N_STAGES, P

__all__ = ["dp_step", "dense", "step_factor"]

_A, _B, _C, _E, _P = A, B, C, E, P
_ATT_SCALE = 100.0  # attitude errors of 100 rtol: see dp_step


@njit
def dp_step(t, y, h, K, y1, ytmp, diag, k1_valid, par, ph, on_rail, rtol, pos_scale, vel_scale):
    """One step of size h from (t, y); fills K (7 x N_STATE stages), y1 (new state) and diag (at t + h).

    K[0] must hold f(t, y) when `k1_valid`. Returns the error norm (<= 1: accept).
    K[6] is f(t + h, y1) (first stage of the next step).
    """
    if not k1_valid:
        derivatives(t, y, K[0], diag, par, ph, on_rail)
    # the right-hand side reads position, velocity and mass (and the attitude of a
    # body-axis phase) only: the intermediate stage states need no loss integrals
    body = ph[PH_MODE] == MODE_BODY
    for i in range(1, N_STAGES - 1):
        for j in range(N_MOTION):
            acc = y[j]
            for k in range(i):
                acc += h * _A[i, k] * K[k, j]
            ytmp[j] = acc
        if body:
            for j in range(Y_AXIS, N_STATE):
                acc = y[j]
                for k in range(i):
                    acc += h * _A[i, k] * K[k, j]
                ytmp[j] = acc
        derivatives(t + _C[i] * h, ytmp, K[i], diag, par, ph, on_rail)
    for j in range(N_STATE):
        acc = y[j]
        for k in range(N_STAGES - 1):
            acc += h * _B[k] * K[k, j]
        y1[j] = acc
    derivatives(t + h, y1, K[N_STAGES - 1], diag, par, ph, on_rail)
    ep = 0.0
    ev = 0.0
    for j in range(6):
        e = 0.0
        for k in range(N_STAGES):
            e += _E[k] * K[k, j]
        e = abs(h * e)
        if j < 3:
            ep = max(ep, e)
        else:
            ev = max(ev, e)
    speed = math.sqrt(y1[3] * y1[3] + y1[4] * y1[4] + y1[5] * y1[5])
    err = max(ep / (rtol * pos_scale), ev / (rtol * (vel_scale + speed)))
    if body:
        eb = ew = 0.0
        for j in range(Y_AXIS, N_STATE):
            e = 0.0
            for k in range(N_STAGES):
                e += _E[k] * K[k, j]
            e = abs(h * e)
            if j < Y_OMEGA:
                eb = max(eb, e)
            else:
                ew = max(ew, e)
        rate = math.sqrt(y1[Y_OMEGA] ** 2 + y1[Y_OMEGA + 1] ** 2 + y1[Y_OMEGA + 2] ** 2)
        err = max(err, eb / (rtol * _ATT_SCALE), ew / (rtol * _ATT_SCALE * (1.0 + rate)))
    return err


@njit
def dense(y0, h, K, x, out, n):
    """State at t0 + x h inside a step (4th-order continuous extension); first n components."""
    x2 = x * x
    w = np.empty(N_STAGES)
    for i in range(N_STAGES):
        w[i] = h * x * (_P[i, 0] + x * _P[i, 1] + x2 * _P[i, 2] + x2 * x * _P[i, 3])
    for j in range(n):
        acc = y0[j]
        for i in range(N_STAGES):
            acc += w[i] * K[i, j]
        out[j] = acc


@njit
def step_factor(err):
    """Step-size ratio after a step with error norm `err` (Hairer, Norsett & Wanner eq. 4.13)."""
    if err < 1e-10:
        return 5.0
    return min(5.0, max(0.2, 0.9 * err ** -0.2))
