"""Water-rocket settings for maximum apogee: fill fraction, launch pressure, nozzle diameter.

The optimiser lives here, above the physics (`sizing.physics.water` models the
stage and its thrust; `sizing.physics.liftoff.fly_hobby` flies it).
Preliminary estimates only: follow the applicable hobby safety code, never
exceed a vessel's rating and pressure-test behind shielding.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field, replace

import numpy as np
from scipy import optimize

from sizing.errors import CannotLiftOffError, FieldError, FlightTimeCapError, SizingConvergenceWarning
from sizing.physics.liftoff import fly_hobby
from sizing.physics.vehicle import P0_PA, LaunchSite, Vehicle
from sizing.physics.water import MSG_NO_LIFTOFF, WATER_CAUTION, WaterStage, _pos, water_vehicle

__all__ = ["WaterOptimum", "optimise_water_stage"]


# ---------------------------------------------------------------- optimisation
@dataclass(frozen=True, slots=True)
class WaterOptimum:
    """Outcome of `optimise_water_stage`. Read `success` and `message` first.

    Attributes
    ----------
    success : bool
    message : str
    stages : tuple of WaterStage
        Bottom first, with the best fill, pressure and nozzle found.
    apogee_m : float
        Apogee of the best design [m] (as returned by the flight function).
    initial_apogee_m : float
        Apogee of the design as given [m].
    n_evaluations : int
        Flights simulated.
    varied : tuple of str
        Which of ``"fill"``, ``"pressure"``, ``"nozzle"`` were optimised.
    caution : str
        `WATER_CAUTION`.
    rejected : Mapping[str, int]
        Designs not flown to apogee, per reason: ``cannot_lift_off`` (peak
        thrust-to-weight <= 1, a launch-tube force below the weight, or a
        stall on the rail or tube), ``flight_time_cap``, ``invalid`` (a
        field out of range).
    """

    success: bool
    message: str
    stages: tuple[WaterStage, ...]
    apogee_m: float
    initial_apogee_m: float
    n_evaluations: int
    varied: tuple[str, ...]
    caution: str = field(default=WATER_CAUTION)
    rejected: Mapping[str, int] = field(default_factory=dict)


_VARY = ("fill", "pressure", "nozzle")
_PENALTY_M = 1.0e6


def _default_flight(vehicle: Vehicle, site: LaunchSite) -> float:
    return float(fly_hobby(vehicle, site).apogee_m)


def optimise_water_stage(
    stages: WaterStage | Sequence[WaterStage],
    *,
    payload_mass_kg: float = 0.0,
    site: LaunchSite | None = None,
    vary: Sequence[str] = _VARY,
    max_gauge_pressure_pa: float | None = None,
    fill_bounds: tuple[float, float] = (0.05, 0.8),
    nozzle_diameter_bounds_m: tuple[float, float] = (0.004, 0.022),
    ambient_pressure_pa: float = P0_PA,
    apogee: Callable[[Vehicle, LaunchSite], float] | None = None,
    n_grid: int = 7,
    max_evaluations: int = 400,
) -> WaterOptimum:
    """Fill fraction, launch pressure and nozzle diameter of water stages for maximum apogee.

    Method: a coarse grid over the fill fraction of every stage (pressure at
    its upper bound, nozzle as given) seeds a bounded Powell search
    (`scipy.optimize.minimize(method="Powell")`) over all varied parameters of
    all stages. Pressure is bounded above by the smaller of
    `max_gauge_pressure_pa` and each stage's rated / safety_factor, so the
    result never exceeds a vessel's allowed pressure. When the nozzle varies
    and a launch tube is present, the tube keeps its ratio to the nozzle
    diameter. The 0.022 m default upper nozzle bound is about the bore of a
    standard drinks-bottle neck (from memory).

    Parameters
    ----------
    stages : WaterStage or sequence of WaterStage
        The design to start from, bottom first.
    payload_mass_kg : float
        Mass above the top stage [kg].
    site : LaunchSite or None
        Launch site; None is sea level, vertical, rail length = launch tube length.
    vary : sequence of str
        Any of ``"fill"``, ``"pressure"``, ``"nozzle"``.
    max_gauge_pressure_pa : float or None
        The user's pressure limit [Pa]; never above rated / safety_factor.
    fill_bounds : (float, float)
        Bounds of the fill fraction [-], inside (0, 1).
    nozzle_diameter_bounds_m : (float, float)
        Bounds of the nozzle diameter [m].
    ambient_pressure_pa : float
        Outside pressure for the thrust model [Pa].
    apogee : callable or None
        ``apogee(vehicle, site) -> apogee_m``; None uses
        `sizing.physics.liftoff.fly_hobby` (vertical flight; a design that
        cannot lift off, i.e. peak thrust-to-weight <= 1 or stalling on the
        rail or launch tube, is rejected at once, and so is one whose
        flight-time bound exceeds 300 s).
    n_grid : int
        Points of the seeding grid over the fill fraction, >= 2.
    max_evaluations : int
        Cap on simulated flights in the Powell search.

    Returns
    -------
    WaterOptimum
    """
    stack = (stages,) if isinstance(stages, WaterStage) else tuple(stages)
    vary = tuple(vary)
    for v in vary:
        if v not in _VARY:
            raise ValueError(f"unknown variable {v!r}. Choose from: 'fill', 'pressure', 'nozzle'.")
    if not vary:
        raise ValueError("vary must name at least one of: 'fill', 'pressure', 'nozzle'.")
    lo_f, hi_f = (float(x) for x in fill_bounds)
    if not 0.0 < lo_f < hi_f < 1.0:
        raise ValueError(f"fill_bounds must satisfy 0 < low < high < 1. Got {fill_bounds!r}.")
    lo_d, hi_d = (float(x) for x in nozzle_diameter_bounds_m)
    if not 0.0 < lo_d < hi_d:
        raise ValueError(f"nozzle_diameter_bounds_m must satisfy 0 < low < high. Got {nozzle_diameter_bounds_m!r}.")
    if site is None:
        site = LaunchSite(rail_length_m=stack[0].launch_tube_length_m)
    fly = _default_flight if apogee is None else apogee

    p_hi = []
    for s in stack:
        lim = s.max_gauge_pressure_pa
        if max_gauge_pressure_pa is not None:
            lim = min(lim, _pos(max_gauge_pressure_pa, "max_gauge_pressure"))
        p_hi.append(lim)

    # parameter vector: per stage, the varied ones in _VARY order
    bounds = []
    for i, s in enumerate(stack):
        for v in _VARY:
            if v in vary:
                bounds.append({"fill": (lo_f, hi_f), "pressure": (0.1 * p_hi[i], p_hi[i]),
                               "nozzle": (lo_d, hi_d)}[v])

    def build(x) -> tuple[WaterStage, ...] | None:
        out = []
        k = 0
        for i, s in enumerate(stack):
            kw = {}
            for v in _VARY:
                if v in vary:
                    val = float(np.clip(x[k], *bounds[k]))
                    k += 1
                    if v == "fill":
                        kw["water_fill_fraction"] = val
                    elif v == "pressure":
                        kw["initial_gauge_pressure_pa"] = min(val, s.max_gauge_pressure_pa)
                    else:
                        kw["nozzle_throat_diameter_m"] = val
                        if s.launch_tube_length_m > 0:
                            kw["launch_tube_diameter_m"] = s.launch_tube_diameter_m * val / s.nozzle_throat_diameter_m
            try:
                out.append(replace(s, **kw))
            except FieldError:
                return None
        return tuple(out)

    n_eval = 0
    cache: dict[tuple[float, ...], float] = {}
    rejected = {"cannot_lift_off": 0, "flight_time_cap": 0, "invalid": 0}

    def apogee_of(x) -> float:
        nonlocal n_eval
        key = tuple(round(float(v), 12) for v in x)
        if key in cache:
            return cache[key]
        design = build(x)
        if design is None:
            val = -math.inf
            rejected["invalid"] += 1
        else:
            try:
                veh = water_vehicle(design, payload_mass_kg, ambient_pressure_pa=ambient_pressure_pa)
                val = float(fly(veh, site))
            except CannotLiftOffError:
                val = -math.inf
                rejected["cannot_lift_off"] += 1
            except FlightTimeCapError:
                val = -math.inf
                rejected["flight_time_cap"] += 1
            except FieldError:
                val = -math.inf
                rejected["invalid"] += 1
        n_eval += 1
        cache[key] = val
        return val

    def start_vector(s_list, fills=None):
        x = []
        for i, s in enumerate(s_list):
            for v in _VARY:
                if v in vary:
                    if v == "fill":
                        x.append(s.water_fill_fraction if fills is None else fills[i])
                    elif v == "pressure":
                        x.append(p_hi[i] if fills is not None else min(s.initial_gauge_pressure_pa, p_hi[i]))
                    else:
                        x.append(float(np.clip(s.nozzle_throat_diameter_m, lo_d, hi_d)))
        return np.array(x, dtype=float)

    x0 = start_vector(stack)
    initial = apogee_of(x0)
    best_x, best = x0, initial
    if "fill" in vary:
        grid = np.linspace(lo_f, hi_f, max(int(n_grid), 2))
        for fills in _grid_product(grid, len(stack)):
            x = start_vector(stack, fills)
            val = apogee_of(x)
            if val > best:
                best_x, best = x, val

    scale = np.array([b[1] - b[0] for b in bounds])
    lo = np.array([b[0] for b in bounds])

    def objective(z):
        val = apogee_of(lo + z * scale)
        # a design that cannot be flown (e.g. thrust below weight) gets a finite penalty:
        # Powell's line searches misbehave on infinite values
        return -val if math.isfinite(val) else _PENALTY_M

    z0 = (best_x - lo) / scale
    res = optimize.minimize(
        objective, z0, method="Powell", bounds=[(0.0, 1.0)] * len(bounds),
        options={"xtol": 1e-4, "ftol": 1e-7, "maxfev": int(max_evaluations)},
    )
    x_res = lo + np.clip(res.x, 0.0, 1.0) * scale
    val = apogee_of(x_res)
    if val > best:
        best_x, best = x_res, val
    design = build(best_x)
    if design is None or not math.isfinite(best):
        if rejected["cannot_lift_off"] == sum(rejected.values()):
            msg = (f"{MSG_NO_LIFTOFF} ({n_eval} designs tried within the bounds): raise the pressure, "
                   "widen the nozzle bounds or lighten the rocket")
        else:
            parts = ", ".join(f"{k.replace('_', ' ')} {v}" for k, v in rejected.items() if v)
            msg = f"no design within the bounds could be flown ({n_eval} tried; {parts})"
        return WaterOptimum(False, msg, stack, math.nan, initial, n_eval, vary, rejected=rejected)
    ok = bool(res.success)
    msg = "optimum found" if ok else f"Powell stopped: {str(res.message).strip().rstrip('.')}"
    if not ok:
        import warnings

        warnings.warn(f"optimise_water_stage: {msg}. Raise max_evaluations.", SizingConvergenceWarning,
                      stacklevel=2)
    return WaterOptimum(ok, msg, design, best, initial, n_eval, vary, rejected=rejected)


def _grid_product(grid: np.ndarray, n: int):
    """All n-tuples of grid values (n = number of stages; small)."""
    if n == 1:
        for g in grid:
            yield (float(g),)
        return
    for g in grid:
        for rest in _grid_product(grid, n - 1):
            yield (float(g),) + rest
