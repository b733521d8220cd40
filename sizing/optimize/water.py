"""Water-rocket settings for maximum apogee: fill fraction, launch pressure, nozzle diameter.

The optimiser lives here, above the physics (`sizing.physics.water` models the
stage and its thrust; `sizing.physics.liftoff.fly_hobby` flies it).
Preliminary estimates only: follow the applicable hobby safety code, never
exceed a vessel's rating and pressure-test behind shielding.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable, Iterator, Mapping, Sequence
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
    fill_lo_hi, nozzle_lo_hi = _check_options(vary, fill_bounds, nozzle_diameter_bounds_m)
    if site is None:
        site = LaunchSite(rail_length_m=stack[0].launch_tube_length_m)
    space = _DesignSpace.of(stack, vary, fill_lo_hi, nozzle_lo_hi,
                            _pressure_caps(stack, max_gauge_pressure_pa))
    apogee_of = _ApogeeCache(space=space, fly=_default_flight if apogee is None else apogee, site=site,
                             payload_mass_kg=payload_mass_kg, ambient_pressure_pa=ambient_pressure_pa)
    x0 = space.start_vector()
    initial = apogee_of(x0)
    best_x, best = x0, initial
    if "fill" in vary:
        best_x, best = _seed_fill_grid(space, apogee_of, fill_lo_hi, n_grid, best_x, best)
    res, best_x, best = _polish_with_powell(space, apogee_of, best_x, best, max_evaluations)
    design = space.build(best_x)
    if design is None or not math.isfinite(best):
        return WaterOptimum(False, _no_design_message(apogee_of.rejected, apogee_of.n_eval), stack, math.nan,
                            initial, apogee_of.n_eval, vary, rejected=apogee_of.rejected)
    ok = bool(res.success)
    msg = "optimum found" if ok else f"Powell stopped: {str(res.message).strip().rstrip('.')}"
    if not ok:
        warnings.warn(f"optimise_water_stage: {msg}. Raise max_evaluations.", SizingConvergenceWarning,
                      stacklevel=2)
    return WaterOptimum(ok, msg, design, best, initial, apogee_of.n_eval, vary, rejected=apogee_of.rejected)


def _check_options(
    vary: tuple[str, ...], fill_bounds: tuple[float, float], nozzle_diameter_bounds_m: tuple[float, float],
) -> tuple[tuple[float, float], tuple[float, float]]:
    """Check the varied names and the bounds; return (fill bounds [-], nozzle diameter bounds [m]) as floats.

    Raises
    ------
    ValueError
        An unknown or no varied name, fill bounds not 0 < low < high < 1, or
        nozzle bounds not 0 < low < high.
    """
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
    return (lo_f, hi_f), (lo_d, hi_d)


def _pressure_caps(stack: tuple[WaterStage, ...], max_gauge_pressure_pa: float | None) -> list[float]:
    """Highest launch gauge pressure of each stage [Pa]: min(rated / safety_factor, the user's limit)."""
    p_hi = []
    for s in stack:
        lim = s.max_gauge_pressure_pa
        if max_gauge_pressure_pa is not None:
            lim = min(lim, _pos(max_gauge_pressure_pa, "max_gauge_pressure"))
        p_hi.append(lim)
    return p_hi


@dataclass(frozen=True, slots=True)
class _DesignSpace:
    """The parameter vector of the search: per stage (bottom first), the varied ones in `_VARY` order.

    Attributes
    ----------
    stack : tuple of WaterStage
        The design as given.
    varied : tuple of str
        The varied names in `_VARY` order.
    bounds : list of (float, float)
        Bounds of each vector entry: fill [-], gauge pressure [Pa] (10 % of
        the cap to the cap), nozzle diameter [m].
    pressure_caps_pa : list of float
        Highest launch gauge pressure of each stage [Pa].
    nozzle_bounds_m : (float, float)
        Bounds of the nozzle diameter [m].
    """

    stack: tuple[WaterStage, ...]
    varied: tuple[str, ...]
    bounds: list[tuple[float, float]]
    pressure_caps_pa: list[float]
    nozzle_bounds_m: tuple[float, float]

    @classmethod
    def of(cls, stack, vary, fill_bounds, nozzle_bounds_m, pressure_caps_pa) -> _DesignSpace:
        """The space of `stack` with the names in `vary` free within the given bounds."""
        varied = tuple(v for v in _VARY if v in vary)
        bounds = []
        for i, _s in enumerate(stack):
            for v in varied:
                bounds.append({"fill": fill_bounds, "pressure": (0.1 * pressure_caps_pa[i], pressure_caps_pa[i]),
                               "nozzle": nozzle_bounds_m}[v])
        return cls(stack, varied, bounds, pressure_caps_pa, nozzle_bounds_m)

    def build(self, x) -> tuple[WaterStage, ...] | None:
        """The stages at vector `x` (clipped to the bounds); None when a stage is invalid.

        A varied nozzle scales a launch tube's diameter with it (same ratio);
        the pressure never exceeds the stage's rated / safety_factor.
        """
        out = []
        k = 0
        for s in self.stack:
            kw = {}
            for v in self.varied:
                val = float(np.clip(x[k], *self.bounds[k]))
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

    def start_vector(self, fills: Sequence[float] | None = None) -> np.ndarray:
        """The vector of the design as given; with `fills`, those fills at the pressure caps.

        Pressure as given (at most its cap) or, on the fill grid, the cap;
        nozzle as given, clipped to its bounds.
        """
        lo_d, hi_d = self.nozzle_bounds_m
        x = []
        for i, s in enumerate(self.stack):
            for v in self.varied:
                if v == "fill":
                    x.append(s.water_fill_fraction if fills is None else fills[i])
                elif v == "pressure":
                    p_hi = self.pressure_caps_pa[i]
                    x.append(p_hi if fills is not None else min(s.initial_gauge_pressure_pa, p_hi))
                else:
                    x.append(float(np.clip(s.nozzle_throat_diameter_m, lo_d, hi_d)))
        return np.array(x, dtype=float)


@dataclass(slots=True, kw_only=True)
class _ApogeeCache:
    """Apogee [m] of the design at a parameter vector, flown once per vector.

    A design that cannot be built or flown gets -inf and is counted in
    `rejected` (``cannot_lift_off``, ``flight_time_cap``, ``invalid``);
    `n_eval` counts the distinct vectors tried.
    """

    space: _DesignSpace
    fly: Callable[[Vehicle, LaunchSite], float]
    site: LaunchSite
    payload_mass_kg: float
    ambient_pressure_pa: float
    n_eval: int = 0
    cache: dict[tuple[float, ...], float] = field(default_factory=dict)
    rejected: dict[str, int] = field(
        default_factory=lambda: {"cannot_lift_off": 0, "flight_time_cap": 0, "invalid": 0})

    def __call__(self, x) -> float:
        key = tuple(round(float(v), 12) for v in x)
        if key in self.cache:
            return self.cache[key]
        val, reason = self._fly(self.space.build(x))
        if reason is not None:
            self.rejected[reason] += 1
        self.n_eval += 1
        self.cache[key] = val
        return val

    def _fly(self, design: tuple[WaterStage, ...] | None) -> tuple[float, str | None]:
        """(apogee [m], None), or (-inf, reason) for a design that cannot be built or flown."""
        if design is None:
            return -math.inf, "invalid"
        try:
            veh = water_vehicle(design, self.payload_mass_kg, ambient_pressure_pa=self.ambient_pressure_pa)
            return float(self.fly(veh, self.site)), None
        except CannotLiftOffError:
            return -math.inf, "cannot_lift_off"
        except FlightTimeCapError:
            return -math.inf, "flight_time_cap"
        except FieldError:
            return -math.inf, "invalid"


def _seed_fill_grid(space: _DesignSpace, apogee_of: _ApogeeCache, fill_bounds: tuple[float, float],
                    n_grid: int, best_x: np.ndarray, best: float) -> tuple[np.ndarray, float]:
    """Best of `best_x` and a grid of fills [-] over every stage (pressures at their caps).

    Returns
    -------
    (numpy.ndarray, float)
        The best vector and its apogee [m].
    """
    lo_f, hi_f = fill_bounds
    grid = np.linspace(lo_f, hi_f, max(int(n_grid), 2))
    for fills in _grid_product(grid, len(space.stack)):
        x = space.start_vector(fills)
        val = apogee_of(x)
        if val > best:
            best_x, best = x, val
    return best_x, best


def _polish_with_powell(space: _DesignSpace, apogee_of: _ApogeeCache, best_x: np.ndarray, best: float,
                        max_evaluations: int) -> tuple[optimize.OptimizeResult, np.ndarray, float]:
    """Bounded Powell search (`scipy.optimize.minimize`) from `best_x`, on the box scaled to [0, 1].

    A design that cannot be flown gets the finite penalty `_PENALTY_M`
    (Powell's line searches misbehave on infinite values).

    Returns
    -------
    (OptimizeResult, numpy.ndarray, float)
        Powell's result, and the better of `best_x` and Powell's point with its apogee [m].
    """
    scale = np.array([b[1] - b[0] for b in space.bounds])
    lo = np.array([b[0] for b in space.bounds])

    def objective(z):
        val = apogee_of(lo + z * scale)
        return -val if math.isfinite(val) else _PENALTY_M

    z0 = (best_x - lo) / scale
    res = optimize.minimize(
        objective, z0, method="Powell", bounds=[(0.0, 1.0)] * len(space.bounds),
        options={"xtol": 1e-4, "ftol": 1e-7, "maxfev": int(max_evaluations)},
    )
    x_res = lo + np.clip(res.x, 0.0, 1.0) * scale
    val = apogee_of(x_res)
    if val > best:
        best_x, best = x_res, val
    return res, best_x, best


def _no_design_message(rejected: Mapping[str, int], n_eval: int) -> str:
    """Why no design could be flown: `MSG_NO_LIFTOFF` when every one was too heavy, else the counts."""
    if rejected["cannot_lift_off"] == sum(rejected.values()):
        return (f"{MSG_NO_LIFTOFF} ({n_eval} designs tried within the bounds): raise the pressure, "
                "widen the nozzle bounds or lighten the rocket")
    parts = ", ".join(f"{k.replace('_', ' ')} {v}" for k, v in rejected.items() if v)
    return f"no design within the bounds could be flown ({n_eval} tried; {parts})"


def _grid_product(grid: np.ndarray, n: int) -> Iterator[tuple[float, ...]]:
    """All n-tuples of grid values (n = number of stages; small)."""
    if n == 1:
        for g in grid:
            yield (float(g),)
        return
    for g in grid:
        for rest in _grid_product(grid, n - 1):
            yield (float(g),) + rest
