"""Stage masses sized together with the simulated flight for a target apogee.

Two steps:

1. A start on the Lagrange line: the mass split that is optimal for an ideal
   delta-v (`sizing.physics.staging.optimal_mass_ratios`), with the delta-v
   found by Brent's root finder (scipy.optimize.brentq) so that the flown
   apogee equals the target. Cheap and robust, but it ignores how drag and
   gravity losses depend on the split.
2. The integrated optimum: every stage's propellant mass free (log scale),
   gross mass minimised (or the payload maximised for a given gross mass) by
   SLSQP with the flown apogee as an equality constraint and optional path
   limits (max-q, max sensed acceleration), the Jacobian by forward
   differences of flights at a tight tolerance (`sizing.optimize.shooting`).
   A stage that does not pay for itself shrinks towards nothing.

Then each shorter stack (one stage left out at a time) is sized the same way;
where one is lighter, the result says so.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from sizing.errors import MSG_TARGET_UNREACHABLE, FieldError, InfeasibleProblemError
from sizing.optimize.shooting import solve_shooting
from sizing.physics.flight import fly_vertical
from sizing.physics.flight import layout as L
from sizing.physics.flight.kernel import run_flight
from sizing.physics.flight.setup import prepare_flight
from sizing.physics.rocket import stack_masses
from sizing.physics.staging import optimal_mass_ratios, optimal_mass_ratios_for_growth
from sizing.physics.vehicle import FlightStageSpec, LaunchSite, Vehicle, build_vehicle, structural_masses, with_model_coefficients
from sizing.units import G0_M_S2

__all__ = ["ApogeeDesign", "size_for_apogee", "MIN_USEFUL_SHARE"]

#: A stage with less than this share of the propellant is reported as not paying for itself.
MIN_USEFUL_SHARE = 0.02


@dataclass(frozen=True, slots=True)
class ApogeeDesign:
    """Sized stack for an apogee: masses, the optimiser's account and shorter stacks compared."""

    specs: tuple[FlightStageSpec, ...]
    propellant_mass_kg: tuple[float, ...]
    structural_mass_kg: tuple[float, ...]
    payload_mass_kg: float
    vehicle: Vehicle
    success: bool
    message: str
    n_flights: int
    n_iterations: int
    lagrange_delta_v_m_s: float
    alternatives: tuple[tuple[str, float], ...] = ()  # (stages flown, gross mass [kg]) of shorter stacks
    warnings: tuple[str, ...] = ()
    trade_factors: dict | None = None


class _Stack:
    """Masses from log propellant masses; the flight of a design."""

    def __init__(self, specs, payload_kg, site, earth, payload_diameter_m, staging_delay_s, extra_inert_kg=None):
        self.specs = tuple(specs)
        self.payload_kg = float(payload_kg)
        self.site, self.earth = site, earth
        self.payload_diameter_m, self.staging_delay_s = payload_diameter_m, staging_delay_s
        self.extra = list(extra_inert_kg) if extra_inert_kg is not None else [0.0] * len(self.specs)

    def variant(self, **kw) -> "_Stack":
        """The same stack with some of specs, payload_kg, extra_inert_kg changed (trade factors)."""
        args = dict(specs=self.specs, payload_kg=self.payload_kg, site=self.site, earth=self.earth,
                    payload_diameter_m=self.payload_diameter_m, staging_delay_s=self.staging_delay_s,
                    extra_inert_kg=self.extra)
        args.update(kw)
        return _Stack(**args)

    def masses(self, mp, payload=None) -> tuple[list[float], list[float]]:
        mp = [float(m) for m in mp]
        ms = structural_masses(self.specs, mp, self.payload_kg if payload is None else payload)
        return mp, [m + e for m, e in zip(ms, self.extra)]

    def gross(self, mp, payload=None) -> float:
        mp, ms = self.masses(mp, payload)
        return (self.payload_kg if payload is None else payload) + sum(mp) + sum(ms)

    def vehicle(self, mp, payload=None) -> Vehicle:
        mp, ms = self.masses(mp, payload)
        return build_vehicle(self.specs, mp, ms, self.payload_kg if payload is None else payload,
                             payload_diameter_m=self.payload_diameter_m, staging_delay_s=self.staging_delay_s)

    def fly(self, mp, payload=None, rtol: float = 1e-8):
        """(apogee [m], max-q [Pa], max sensed acceleration [m/s^2]) of a design (no history)."""
        veh = self.vehicle(mp, payload)
        setup = prepare_flight(veh, self.site, profile="vertical", earth=self.earth, stop_at="apogee",
                               record_history=False, rtol=rtol)
        out = run_flight(*setup.kernel_args(1))[0]
        return float(out[L.OUT_APOGEE]), float(out[L.OUT_MAXQ]), float(out[L.OUT_MAX_ACC])

    def lagrange_masses(self, dv: float):
        c = [s.exhaust_velocity_vac_m_s for s in self.specs]
        eps = [s.structural_coefficient for s in self.specs]
        m = stack_masses(optimal_mass_ratios(c, eps, dv).mass_ratios, eps, self.payload_kg)
        return [max(float(x), 1e-9 * self.payload_kg) for x in m["propellant_mass_kg"]]


def _lagrange_start(stack: _Stack, target_m: float, tol_m: float, max_gross_to_payload: float):
    """Ideal delta-v whose Lagrange split flies to the target apogee: (masses, delta-v, flights).

    The root is sought on sqrt(apogee above the site), nearly linear in the
    delta-v (h = v_b^2 / 2g for a burnout speed v_b that grows with it), so a
    bracket found by one extrapolation and Brent's method (scipy.optimize.brentq)
    need few flights; each delta-v is flown once (memoised).
    """
    from scipy.optimize import brentq

    c = [s.exhaust_velocity_vac_m_s for s in stack.specs]
    eps = [s.structural_coefficient for s in stack.specs]
    dv_cap = optimal_mass_ratios_for_growth(c, eps, math.log(max_gross_to_payload)).delta_v_m_s
    h_t = target_m - stack.site.altitude_m
    v_t = math.sqrt(2.0 * G0_M_S2 * h_t)
    seen: dict[float, float] = {}
    best = {"apogee": -math.inf, "dv": math.nan}

    def err(dv: float) -> float:
        if dv not in seen:
            try:
                ap = stack.fly(stack.lagrange_masses(dv))[0]
            except FieldError:  # cannot lift off at this size: short of the target
                ap = stack.site.altitude_m
            if ap > best["apogee"]:
                best.update(apogee=ap, dv=dv)
            seen[dv] = math.sqrt(max(ap - stack.site.altitude_m, 0.0)) - math.sqrt(h_t)
        return seen[dv]

    top = 0.999 * dv_cap
    lo, hi = None, min(1.3 * v_t, top)
    while (e := err(hi)) < 0:
        lo = hi
        if hi >= top * (1 - 1e-9):
            raise InfeasibleProblemError(
                f"mission.apogee: apogee {target_m:g} m {MSG_TARGET_UNREACHABLE}; best apogee "
                f"{best['apogee']:.1f} m at ideal delta-v {best['dv']:.1f} m/s (searched up to gross/payload = "
                f"{max_gross_to_payload:g}). Raise Isp, lower structural coefficients, add a stage or lower the "
                "target.", {"ideal_delta_v_m_s": best["dv"], "apogee_m": best["apogee"]})
        # the no-loss slope d sqrt(h) / d dv = 1/sqrt(2 g) and 20 % more (a secant on these convex
        # curves overshoots into exponentially heavy stacks)
        hi = min(max(hi + 1.2 * (-e) * math.sqrt(2.0 * G0_M_S2), 1.05 * hi), top)
    if lo is None:
        lo = 0.05 * v_t
    dv = brentq(err, lo, hi, xtol=1.0, rtol=1e-5, maxiter=40) if err(lo) < 0 else lo
    return stack.lagrange_masses(dv), dv, len(seen)


def _integrated(stack: _Stack, mp0, target_m: float, tol_m: float, limits, *, gross_mass_kg=None,
                max_gross_mass_kg=None, max_iterations: int = 40):
    """SLSQP over log propellant masses (and the payload when the gross mass is given)."""
    mp0 = np.asarray(mp0, float)
    n = len(mp0)
    free_payload = gross_mass_kg is not None
    m_ref = stack.gross(mp0)
    scale = max(tol_m, 1e-3 * (target_m - stack.site.altitude_m))
    q_lim, a_lim = limits
    n_ineq = (q_lim is not None) + (a_lim is not None) + (max_gross_mass_kg is not None)

    def unpack(z):
        mp = mp0 * np.exp(z[:n])
        pay = stack.payload_kg * math.exp(z[n]) if free_payload else None
        return mp, pay

    def fly(z, _token, stack=stack):
        mp, pay = unpack(z)
        g = stack.gross(mp, pay)
        try:
            ap, q, a = stack.fly(mp, pay, rtol=1e-8)
        except FieldError:
            ap, q, a = stack.site.altitude_m, 0.0, 0.0
        obj = -pay / stack.payload_kg if free_payload else g / m_ref
        out = [obj, (ap - target_m) / scale]
        if free_payload:
            out.append((g - gross_mass_kg) / gross_mass_kg)
        if q_lim is not None:
            out.append((q_lim - q) / q_lim)
        if a_lim is not None:
            out.append((a_lim - a) / a_lim)
        if max_gross_mass_kg is not None:
            out.append((max_gross_mass_kg - g) / max_gross_mass_kg)
        return np.array(out), None

    size = n + (1 if free_payload else 0)
    lo = np.full(size, math.log(1e-4))
    hi = np.full(size, math.log(50.0))
    res = solve_shooting(fly, np.zeros(size), lo, hi, n_eq=1 + (1 if free_payload else 0), n_ineq=n_ineq,
                         eq_tol=tol_m / scale, max_iterations=max_iterations, step=1e-5, stall_tol=1e-6,
                         stall_iterations=2)
    mp, pay = unpack(res.z)
    scale_kg = stack.payload_kg if free_payload else m_ref  # objective unit [kg]
    return mp, pay, res, (lambda st: fly(res.z, None, st)[0]), scale_kg


def size_for_apogee(specs, payload_mass_kg: float, target_m: float, site: LaunchSite, *, earth: str = "round",
                    tolerance_m: float | None = None, max_gross_to_payload: float = 1.0e4,
                    max_dynamic_pressure_pa: float | None = None, max_acceleration_m_s2: float | None = None,
                    gross_mass_kg: float | None = None, max_gross_mass_kg: float | None = None,
                    payload_diameter_m: float | None = None, staging_delay_s: float = 0.0,
                    compare_shorter: bool = True) -> ApogeeDesign:
    """Minimum gross mass (or maximum payload for `gross_mass_kg`) stack for an apogee above MSL [m].

    See the module notes. Raises `InfeasibleProblemError` when no split on the
    Lagrange line reaches the target within `max_gross_to_payload`, and
    `FieldError` for a target at or below the site.
    """
    specs = tuple(specs)
    if not target_m > site.altitude_m:
        raise FieldError("mission.apogee", f"must be above the launch site altitude ({site.altitude_m:g} m).",
                         target_m)
    tol = max(1.0, 1e-4 * (target_m - site.altitude_m)) if tolerance_m is None else float(tolerance_m)
    stack = _Stack(specs, payload_mass_kg, site, earth, payload_diameter_m, staging_delay_s)
    mp0, dv0, n_start = _lagrange_start(stack, target_m, tol, max_gross_to_payload)
    if any(s.mass_model is not None for s in specs):  # the Lagrange line with the model's coefficients
        specs = with_model_coefficients(specs, mp0, payload_mass_kg)
        stack = stack.variant(specs=specs)
        mp0, dv0, n_more = _lagrange_start(stack, target_m, tol, max_gross_to_payload)
        n_start += n_more
    mp, pay, res, outputs_of, scale_kg = _integrated(stack, mp0, target_m, tol, (max_dynamic_pressure_pa, max_acceleration_m_s2),
                                           gross_mass_kg=gross_mass_kg, max_gross_mass_kg=max_gross_mass_kg)
    payload = stack.payload_kg if pay is None else float(pay)
    ok = res.success
    mp_list, ms_list = stack.masses(mp, payload)
    if not ok:  # keep the Lagrange start, which meets the target
        mp_list, ms_list = stack.masses(mp0, payload)
    warnings = []
    total = sum(mp_list)
    for s, m in zip(specs, mp_list):
        if m < MIN_USEFUL_SHARE * total:
            warnings.append(f"stage {s.name!r} carries {100 * m / total:.1f} % of the propellant: it does not pay "
                            "for its structure and drag at this target; size the stack without it.")
    alternatives = []
    if compare_shorter and len(specs) > 1 and gross_mass_kg is None:
        gross = stack.gross(mp_list, payload)
        for i in range(len(specs)):
            sub = specs[:i] + specs[i + 1:]
            try:
                alt = size_for_apogee(sub, payload_mass_kg, target_m, site, earth=earth, tolerance_m=tol,
                                      max_gross_to_payload=max_gross_to_payload,
                                      max_dynamic_pressure_pa=max_dynamic_pressure_pa,
                                      max_acceleration_m_s2=max_acceleration_m_s2, payload_diameter_m=payload_diameter_m,
                                      staging_delay_s=staging_delay_s, compare_shorter=False)
            except (InfeasibleProblemError, FieldError):
                continue
            if not alt.success:
                continue
            g_alt = alt.vehicle.gross_mass_kg
            names = " + ".join(s.name for s in sub)
            alternatives.append((names, g_alt))
            if g_alt < gross * (1 - 1e-4):
                warnings.append(f"fewer stages are lighter: {names} alone reaches the apogee at {g_alt:,.4g} kg "
                                f"gross, {100 * (gross - g_alt) / gross:.1f} % less than {len(specs)} stages.")
    veh = stack.vehicle(mp_list, payload)
    msg = res.message if ok else f"integrated optimum not found ({res.message}); Lagrange-line start kept"
    tf = _trade_factors(stack, res, outputs_of, scale_kg, veh.gross_mass_kg) if ok and gross_mass_kg is None else None
    return ApogeeDesign(specs, tuple(mp_list), tuple(ms_list), payload, veh, True, msg,
                        n_start + res.n_flights, res.n_iterations, dv0, tuple(alternatives), tuple(warnings), tf)


def _trade_factors(stack: _Stack, res, outputs_of, scale_kg: float, gross: float) -> dict:
    """Gross-mass trade factors at the optimum by the envelope theorem (see `orbit_sizing._trade_factors`)."""
    from dataclasses import replace

    def change(st: _Stack) -> float:
        return float(res.objective_change(outputs_of(st)) * scale_kg)

    specs, n = stack.specs, len(stack.specs)
    stages = {}
    for i, s in enumerate(specs):
        isp = specs[:i] + (replace(s, isp_vac_s=s.isp_vac_s + 1.0,
                                   isp_sl_s=None if s.isp_sl_s is None else s.isp_sl_s + 1.0),) + specs[i + 1:]
        eps = specs[:i] + (replace(s, structural_coefficient=s.structural_coefficient + 0.01),) + specs[i + 1:]
        inert = [stack.extra[k] + (1.0 if k == i else 0.0) for k in range(n)]
        stages[s.name] = {"per_structural_kg": change(stack.variant(extra_inert_kg=inert)),
                          "per_isp_s": change(stack.variant(specs=isp)),
                          # a mass-model stage has no structural coefficient to vary
                          "per_0_01_structural_coefficient": math.nan if s.mass_model is not None
                          else change(stack.variant(specs=eps))}
    return {"basis": ("change in minimum gross mass at fixed payload and apogee, split re-optimised "
                      "(envelope theorem on the flown optimum, first order)"),
            "gross_mass_per_payload_kg": change(stack.variant(payload_kg=stack.payload_kg + 1.0)),
            "gross_mass_kg": gross, "stages": stages}


def verify_apogee(design: ApogeeDesign, site: LaunchSite, earth: str = "round", **kw):
    """The design's flight with history (what `sizing fly` reproduces)."""
    return fly_vertical(design.vehicle, site, earth=earth, **kw)
