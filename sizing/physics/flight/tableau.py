"""Butcher tableau of the Dormand-Prince 5(4) pair, as data.

The compiled integrator (`sizing.physics.flight.integrator`) reads these arrays;
`tests/physics/flight/test_tableau.py` checks them against the order
conditions and against scipy's own copy (``scipy.integrate._ivp.rk.RK45``).

References
----------
.. [1] J. R. Dormand, P. J. Prince, "A family of embedded Runge-Kutta formulae",
   J. Comput. Appl. Math. 6(1), 1980, 19-26, Table 2.
.. [2] E. Hairer, S. P. Norsett, G. Wanner, Solving Ordinary Differential
   Equations I, 2nd ed., Springer, 1993, Sec. II.5 Table 5.2 (coefficients) and
   Sec. II.6 (continuous extension; Shampine's dense output of order 4).
"""

from __future__ import annotations

import numpy as np

__all__ = ["C", "A", "B", "E", "P", "N_STAGES", "ORDER", "ERROR_ORDER"]

#: Number of stages including the FSAL stage (the 7th stage is f at the step end).
N_STAGES = 7
#: Order of the propagated solution and of the embedded error estimate.
ORDER, ERROR_ORDER = 5, 4

#: Nodes c_i.
C = np.array([0.0, 1.0 / 5.0, 3.0 / 10.0, 4.0 / 5.0, 8.0 / 9.0, 1.0, 1.0])

#: Runge-Kutta matrix a_ij (row i: weights of the earlier stages for stage i).
A = np.array([
    [0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0],
    [1.0 / 5.0, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0],
    [3.0 / 40.0, 9.0 / 40.0, 0.0, 0.0, 0.0, 0.0, 0.0],
    [44.0 / 45.0, -56.0 / 15.0, 32.0 / 9.0, 0.0, 0.0, 0.0, 0.0],
    [19372.0 / 6561.0, -25360.0 / 2187.0, 64448.0 / 6561.0, -212.0 / 729.0, 0.0, 0.0, 0.0],
    [9017.0 / 3168.0, -355.0 / 33.0, 46732.0 / 5247.0, 49.0 / 176.0, -5103.0 / 18656.0, 0.0, 0.0],
    [35.0 / 384.0, 0.0, 500.0 / 1113.0, 125.0 / 192.0, -2187.0 / 6784.0, 11.0 / 84.0, 0.0],
])

#: Weights b_i of the 5th-order solution (equal to the last row of A: FSAL).
B = A[6].copy()

#: Error weights e_i = b_i - b*_i (5th minus 4th order), for the local error estimate.
E = np.array([71.0 / 57600.0, 0.0, -71.0 / 16695.0, 71.0 / 1920.0, -17253.0 / 339200.0,
              22.0 / 525.0, -1.0 / 40.0])

#: Dense-output coefficients: y(t0 + x h) = y0 + h sum_i k_i sum_j P[i, j] x^(j+1).
P = np.array([
    [1.0, -8048581381.0 / 2820520608.0, 8663915743.0 / 2820520608.0, -12715105075.0 / 11282082432.0],
    [0.0, 0.0, 0.0, 0.0],
    [0.0, 131558114200.0 / 32700410799.0, -68118460800.0 / 10900136933.0, 87487479700.0 / 32700410799.0],
    [0.0, -1754552775.0 / 470086768.0, 14199869525.0 / 1410260304.0, -10690763975.0 / 1880347072.0],
    [0.0, 127303824393.0 / 49829197408.0, -318862633887.0 / 49829197408.0, 701980252875.0 / 199316789632.0],
    [0.0, -282668133.0 / 205662961.0, 2019193451.0 / 616988883.0, -1453857185.0 / 822651844.0],
    [0.0, 40617522.0 / 29380423.0, -110615467.0 / 29380423.0, 69997945.0 / 29380423.0],
])
