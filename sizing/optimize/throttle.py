"""Thrust programme of one stage for the highest apogee of a vertical flight (direct shooting).

The stage burns a fixed propellant mass at a fixed exhaust velocity c with
vacuum thrust F(t) <= F_max, piecewise linear between evenly spaced nodes of a
free burn duration T_b: the classical maximum-altitude (Goddard) problem,
where drag makes full thrust from liftoff wasteful and the optimum has a
singular arc of reduced thrust (R. H. Goddard, A Method of Reaching Extreme
Altitudes, 1919; as an optimal-control benchmark: H. J. Kelley, 1962; E. D.
Dolan, J. J. More, T. S. Munson, Benchmarking Optimization Software with
COPS 3.0, Argonne ANL/MCS-TM-273, 2004, problem "Goddard rocket"). Useful for
throttleable or staged-grain sounding rockets.

Variables: the node thrusts over F_max and T_b; equality: delivered impulse
int F dt = c m_p (the propellant is used at exhaust velocity c; trapezoid rule,
exact for the piecewise-linear curve); objective: minus the apogee, from the
compiled flight. SLSQP with forward differences (`sizing.optimize.shooting`).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from sizing.optimize.shooting import solve_shooting
from sizing.physics.flight import layout as L
from sizing.physics.flight.kernel import run_flight
from sizing.physics.flight.setup import prepare_flight
from sizing.physics.vehicle import FlightStage, LaunchSite, Vehicle

__all__ = ["ThrustProgrammeResult", "optimise_thrust_programme"]


@dataclass(frozen=True, slots=True)
class ThrustProgrammeResult:
    """Optimised programme: node times [s], thrust [N], apogee above MSL [m], and the optimiser's account."""

    times_s: np.ndarray
    thrust_n: np.ndarray
    apogee_m: float
    vehicle: Vehicle
    success: bool
    message: str
    n_flights: int


def _curve_impulse(times: np.ndarray, thrust: np.ndarray) -> float:
    """Total impulse of a piecewise-linear thrust curve [N s] (trapezoid rule: exact here)."""
    return float(np.sum(0.5 * (thrust[1:] + thrust[:-1]) * np.diff(times)))


def optimise_thrust_programme(stage: FlightStage, payload_mass_kg: float, site: LaunchSite, *,
                              max_thrust_n: float, exhaust_velocity_m_s: float, nodes: int = 30,
                              burn_time_guess_s: float | None = None, earth: str = "round",
                              atmosphere: tuple | None = None, rtol: float = 1e-10,
                              max_iterations: int = 150) -> ThrustProgrammeResult:
    """Maximum-apogee thrust programme of `stage` (its propellant and structure kept; thrust replaced).

    `atmosphere` is passed to the flight (`sizing.physics.flight.simulate`), e.g.
    an exponential atmosphere and its own central body for benchmark problems.
    """
    c, mp = float(exhaust_velocity_m_s), stage.propellant_mass_kg
    impulse = c * mp
    tb0 = burn_time_guess_s if burn_time_guess_s is not None else 2.0 * impulse / max_thrust_n
    frac = np.linspace(0.0, 1.0, nodes)

    def vehicle(z) -> Vehicle:
        tb = tb0 * float(z[-1])
        thrust = np.clip(z[:-1], 0.0, 1.0) * max_thrust_n
        st = replace(stage, thrust_vac_n=None, thrust_curve=(tuple(frac * tb), tuple(thrust)),
                     propellant_mass_curve=None, isp_sl_s=None, nozzle_exit_area_m2=0.0)
        return Vehicle((st,), payload_mass_kg)

    def fly(z, _token):
        tb = tb0 * float(z[-1])
        thrust = z[:-1] * max_thrust_n
        veh = vehicle(z)
        setup = prepare_flight(veh, site, profile="vertical", earth=earth, stop_at="apogee", record_history=False,
                               rtol=rtol, atmosphere=atmosphere)
        out = run_flight(*setup.kernel_args(1))[0]
        apogee = float(out[L.OUT_APOGEE])
        return np.array([-(apogee - site.altitude_m) / 1000.0,
                         (_curve_impulse(frac * tb, thrust) - impulse) / impulse]), None

    z0 = np.concatenate([np.full(nodes, 0.5), [1.0]])
    lo = np.concatenate([np.zeros(nodes), [0.2]])
    hi = np.concatenate([np.ones(nodes), [20.0]])
    res = solve_shooting(fly, z0, lo, hi, n_eq=1, eq_tol=1e-6, max_iterations=max_iterations, step=1e-6,
                         stall_tol=1e-9, stall_iterations=10)
    z = res.z
    return ThrustProgrammeResult(times_s=frac * tb0 * z[-1], thrust_n=z[:-1] * max_thrust_n,
                                 apogee_m=site.altitude_m - 1000.0 * res.outputs[0], vehicle=vehicle(z),
                                 success=res.success, message=res.message, n_flights=res.n_flights)
