"""Compressed-air water stages: a pressurised bottle that expels water, then air.

A water stage is a pressure vessel (usually a plastic drinks bottle) partly
filled with water and pumped up with air. This module simulates its thrust
and builds flight stages and stacks for `sizing.physics.flight`.

Thrust phases
-------------
1. **Launch tube** (optional). The bottle sits on a tube of length L_t and
   outer diameter d_t reaching into it. The air pushes on the tube section:
   F = (p - p_a) A_t, no water leaves, and the gas expands by A_t x as the
   rocket rises by x; the rocket's motion on the tube is integrated with its
   whole mass and gravity. The gas that followed the rocket into the tube
   stays behind when the rocket leaves.
2. **Water.** Quasi-steady incompressible Bernoulli flow through the nozzle
   (bottle section much larger than the nozzle, water head and water inertia
   neglected): exit speed u = sqrt(2 (p - p_a) / rho_w), volume flow A_e u,
   thrust F = rho_w A_e u^2 = 2 (p - p_a) A_e. The air expands polytropically,
   p V^n = const, with n = 1.4 (adiabatic) by default. The phase ends when the
   water is gone or when the air has fallen to ambient pressure (the water
   left then rides along as dead mass).
3. **Air.** Blow-down of the remaining air through the nozzle, taken as a
   convergent nozzle with quasi-steady isentropic flow of a perfect gas:
   choked while p / p_a >= ((gamma + 1)/2)^(gamma/(gamma - 1)) = 1.893, with
   mdot = A p sqrt(gamma/(R T)) (2/(gamma+1))^((gamma+1)/(2(gamma-1))) and
   F = mdot a* + (p* - p_a) A; unchoked below, exit pressure p_a and
   F = mdot u_e. The gas left in the bottle expands isentropically
   (gamma = 1.4).

Times follow from the quadratures t = integral dV / (A_e u) (water) and
t = integral dm / mdot (air), evaluated on a grid stretched towards the end of
each phase so that the square-root end of the flow is resolved.

Published methods
-----------------
* Water phase: the textbook model of Kagan, Buchholz & Klein, "Soda-bottle
  water rockets", The Physics Teacher 33, 150-157 (1995); Barrio-Perotti et
  al., Eur. J. Phys. 31, 1131-1147 (2010), report agreement within about 6 %
  with field tests for a model of this kind. The polytropic exponent lies
  between isothermal and adiabatic in practice (Romanelli, Bove & Gonzalez
  Madina, arXiv:1211.1923). Gommes, Am. J. Phys. 78, 236-243 (2010), shows
  that vapour condensation, water inertia and transient flow are each not
  negligible but largely cancel. Equation numbers from memory are not given.
* Air phase: isentropic flow of a perfect gas through a convergent nozzle
  (J. D. Anderson, Modern Compressible Flow, 3rd ed., 2003, ch. 5; Sutton &
  Biblarz, Rocket Propulsion Elements, 9th ed., 2017, ch. 3 -- chapter
  references from memory).

Safety
------
A bottle is a pressure vessel that can burst violently. Every stage carries
its rated (or tested burst) gauge pressure, and the initial pressure must not
exceed rated / safety_factor. The safety factor defaults to 2 and may not be
set below 2: the student-rocketry rule burst >= 2 x maximum expected operating
pressure (Spaceport America Cup design, test & evaluation guide, as quoted on a
university team wiki); a factor of 1 would allow launching at the burst
pressure itself. These figures are estimates, not clearance to fly: follow the
applicable hobby safety code and local aviation rules, keep clear distances,
never exceed a vessel's rating and pressure-test behind shielding.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.integrate import cumulative_trapezoid

from sizing.errors import CannotLiftOffError, FieldError
from sizing.physics.vehicle import P0_PA, DragCurve, FlightStage, Vehicle, _check_positive
from sizing.units import G0_M_S2

__all__ = [
    "RHO_WATER_KG_M3",
    "R_AIR_J_KG_K",
    "GAMMA_AIR",
    "DEFAULT_SAFETY_FACTOR",
    "MIN_SAFETY_FACTOR",
    "MSG_SAFETY_FACTOR",
    "WATER_CAUTION",
    "MSG_PRESSURE_LIMIT",
    "MSG_FILL_FRACTION",
    "MSG_TUBE_FIT",
    "MSG_NO_LIFTOFF",
    "WaterStage",
    "WaterThrust",
    "simulate_water_thrust",
    "water_flight_stage",
    "water_vehicle",
]

#: Density of liquid water at 20 degC [kg/m^3] (CoolProp 8.0.0, check-values.md section 8, tag L).
RHO_WATER_KG_M3 = 998.21
#: Specific gas constant of dry air [J/(kg K)]: R* / M0 = 8314.32 / 28.9644 (US Standard Atmosphere 1976).
R_AIR_J_KG_K = 8314.32 / 28.9644
#: Ratio of specific heats of air [-] (1.4022 at 288 K per CoolProp, check-values.md section 8; 1.4 used).
GAMMA_AIR = 1.4
#: Default safety factor on the rated/burst pressure [-]: burst >= 2 x MEOP (Spaceport America Cup
#: design, test & evaluation guide, quoted second-hand from a university team wiki, edition not checked).
DEFAULT_SAFETY_FACTOR = 2.0
#: Smallest accepted safety factor [-]: the same rule, burst >= 2 x maximum expected operating pressure.
MIN_SAFETY_FACTOR = 2.0

WATER_CAUTION = (
    "Preliminary estimates only, not clearance to fly. A pressurised bottle can burst violently: "
    "never exceed the vessel's rating, pressure-test behind shielding and keep clear distances. "
    "Follow the applicable hobby safety code, local law, range and aviation rules and licensed practice."
)
MSG_PRESSURE_LIMIT = (
    "is above the allowed pressure rated_pressure / safety_factor; the tool refuses it"
)
MSG_SAFETY_FACTOR = (
    "must be >= 2: the burst (or rated) pressure must be at least 2 x the maximum expected operating "
    "pressure (Spaceport America Cup design, test & evaluation guide, quoted second-hand from a university team wiki, edition not checked)"
)
MSG_FILL_FRACTION = "must be in (0, 1)"
MSG_NO_LIFTOFF = "no design within the bounds can lift off and clear the rail or launch tube"
MSG_TUBE_FIT = "launch tube must fit: tube diameter <= nozzle diameter and water + tube volume < bottle volume"

_N_TUBE = 24
_N_WATER = 160
_N_AIR = 80
_JUMP_S = 1e-5  # time step used to represent a thrust jump between phases


def _pos(value, name: str, *, zero_ok: bool = False) -> float:
    return _check_positive(value, name, allow_zero=zero_ok)


def _circle_area_m2(diameter_m: float) -> float:
    """Area of a circle, pi d^2 / 4 [m^2], of a diameter [m]."""
    return 0.25 * math.pi * diameter_m**2


def _air_mass_kg(pressure_pa, volume_m3, temperature_k):
    """Mass of air, ideal gas m = p V / (R T) [kg], of pressure [Pa], volume [m^3], temperature [K]."""
    return pressure_pa * volume_m3 / (R_AIR_J_KG_K * temperature_k)


def _polytropic_temperature_k(ref_temperature_k, pressure_pa, ref_pressure_pa, exponent):
    """Gas temperature after a polytropic change p V^n = const [K].

    T = T_ref (p / p_ref)^((n - 1) / n), the perfect-gas polytropic relation
    (with n = gamma the isentropic relation of Anderson, Modern Compressible
    Flow, 3rd ed., 2003, cited in the module notes). Accepts floats or numpy
    arrays of pressure [Pa].
    """
    return ref_temperature_k * (pressure_pa / ref_pressure_pa) ** ((exponent - 1) / exponent)


def _with_last(values: np.ndarray, last: float) -> np.ndarray:
    """A copy of `values` whose last element is `last` (a phase's end point)."""
    out = values.copy()
    out[-1] = last
    return out


@dataclass(frozen=True, slots=True)
class WaterStage:
    """A compressed-air water stage (bottle, water, air, nozzle), SI units.

    Parameters
    ----------
    name : str
        Stage name given by the user.
    bottle_volume_m3 : float
        Internal volume of the pressure vessel [m^3], > 0.
    dry_mass_kg : float
        Everything of the stage except water and air: bottle, fins, nose,
        coupler, recovery [kg], >= 0.
    diameter_m : float
        Body diameter for the drag reference area [m], > 0.
    nozzle_throat_diameter_m : float
        Nozzle (throat) diameter [m], > 0.
    initial_gauge_pressure_pa : float
        Launch pressure above ambient [Pa], > 0, at most
        rated_pressure_pa / safety_factor.
    water_fill_fraction : float
        Water volume / bottle volume [-], in (0, 1).
    rated_pressure_pa : float
        The vessel's rated or tested burst gauge pressure [Pa], > 0.
    safety_factor : float
        Divides `rated_pressure_pa` to give the highest allowed launch
        pressure [-], >= 2 (`MIN_SAFETY_FACTOR`). Default 2 (burst >= 2 x
        MEOP, see module notes).
    launch_tube_length_m : float
        Length of launch tube inside the bottle [m], >= 0 (0: no tube).
    launch_tube_diameter_m : float or None
        Outer diameter of the launch tube [m], <= nozzle diameter; required
        when the tube length is > 0.
    polytropic_exponent : float
        n in p V^n = const during the water phase [-], in [1, 1.4]
        (1 isothermal, 1.4 adiabatic, default).
    air_temperature_k : float
        Air temperature at launch [K], > 0.
    drag : DragCurve or None
        C_D(Mach) while this stage is the lowest; None takes
        `DragCurve.default_slender_body` (C_D 0.30 subsonic).

    Raises
    ------
    FieldError
        On any bad field; for a launch pressure above rated / safety_factor
        the message starts with `MSG_PRESSURE_LIMIT`, for a safety factor
        below 2 with `MSG_SAFETY_FACTOR`.
    """

    name: str
    bottle_volume_m3: float
    dry_mass_kg: float
    diameter_m: float
    nozzle_throat_diameter_m: float
    initial_gauge_pressure_pa: float
    water_fill_fraction: float
    rated_pressure_pa: float
    safety_factor: float = DEFAULT_SAFETY_FACTOR
    launch_tube_length_m: float = 0.0
    launch_tube_diameter_m: float | None = None
    polytropic_exponent: float = GAMMA_AIR
    air_temperature_k: float = 293.15
    drag: DragCurve | None = None

    def __post_init__(self) -> None:
        p = f"stages.{self.name}."
        s = lambda k, v: object.__setattr__(self, k, v)  # noqa: E731
        if not isinstance(self.name, str) or not self.name.strip():
            raise FieldError("stages.name", "must be a non-empty string.", self.name)
        s("bottle_volume_m3", _pos(self.bottle_volume_m3, p + "bottle_volume"))
        s("dry_mass_kg", _pos(self.dry_mass_kg, p + "dry_mass", zero_ok=True))
        s("diameter_m", _pos(self.diameter_m, p + "diameter"))
        s("nozzle_throat_diameter_m", _pos(self.nozzle_throat_diameter_m, p + "nozzle_diameter"))
        s("initial_gauge_pressure_pa", _pos(self.initial_gauge_pressure_pa, p + "pressure"))
        s("rated_pressure_pa", _pos(self.rated_pressure_pa, p + "rated_pressure"))
        s("air_temperature_k", _pos(self.air_temperature_k, p + "air_temperature"))
        sf = _pos(self.safety_factor, p + "safety_factor")
        if sf < MIN_SAFETY_FACTOR:
            raise FieldError(p + "safety_factor", MSG_SAFETY_FACTOR + ".", self.safety_factor)
        s("safety_factor", sf)
        f = _pos(self.water_fill_fraction, p + "fill_fraction")
        if not f < 1.0:
            raise FieldError(p + "fill_fraction", MSG_FILL_FRACTION + ".", self.water_fill_fraction)
        s("water_fill_fraction", f)
        n = _pos(self.polytropic_exponent, p + "polytropic_exponent")
        if not 1.0 <= n <= GAMMA_AIR:
            raise FieldError(p + "polytropic_exponent", "must be in [1, 1.4].", self.polytropic_exponent)
        s("polytropic_exponent", n)
        if self.drag is not None and not isinstance(self.drag, DragCurve):
            raise FieldError(p + "drag", "must be a DragCurve.", self.drag)
        lt = _pos(self.launch_tube_length_m, p + "launch_tube_length", zero_ok=True)
        s("launch_tube_length_m", lt)
        if lt > 0:
            if self.launch_tube_diameter_m is None:
                raise FieldError(p + "launch_tube_diameter", "is required when launch_tube_length > 0.")
            dt = _pos(self.launch_tube_diameter_m, p + "launch_tube_diameter")
            s("launch_tube_diameter_m", dt)
            tube_v = 0.25 * math.pi * dt * dt * lt
            if dt > self.nozzle_throat_diameter_m or f * self.bottle_volume_m3 + tube_v >= self.bottle_volume_m3:
                raise FieldError(
                    p + "launch_tube_diameter",
                    f"{MSG_TUBE_FIT} (nozzle {self.nozzle_throat_diameter_m:g} m, "
                    f"tube volume {tube_v:.3g} m^3, water {f * self.bottle_volume_m3:.3g} m^3, "
                    f"bottle {self.bottle_volume_m3:.3g} m^3).",
                    dt,
                )
        elif self.launch_tube_diameter_m is not None:
            s("launch_tube_diameter_m", _pos(self.launch_tube_diameter_m, p + "launch_tube_diameter"))
        limit = self.max_gauge_pressure_pa
        if self.initial_gauge_pressure_pa > limit * (1 + 1e-12):
            raise FieldError(
                p + "pressure",
                f"{MSG_PRESSURE_LIMIT}: {self.rated_pressure_pa:.6g} Pa / {sf:g} = {limit:.6g} Pa "
                f"({limit / 1e5:.3g} bar gauge). Lower the pressure or use a vessel rated higher. "
                "Never exceed a vessel's rating; pressure-test behind shielding.",
                self.initial_gauge_pressure_pa,
            )

    @property
    def max_gauge_pressure_pa(self) -> float:
        """Highest allowed launch gauge pressure, rated / safety_factor [Pa]."""
        return self.rated_pressure_pa / self.safety_factor

    @property
    def water_volume_m3(self) -> float:
        """Water volume at launch [m^3]."""
        return self.water_fill_fraction * self.bottle_volume_m3

    @property
    def water_mass_kg(self) -> float:
        """Water mass at launch [kg]."""
        return RHO_WATER_KG_M3 * self.water_volume_m3

    @property
    def nozzle_area_m2(self) -> float:
        """pi d^2 / 4 of the nozzle [m^2]."""
        return _circle_area_m2(self.nozzle_throat_diameter_m)

    def air_mass_kg(self, ambient_pressure_pa: float = P0_PA) -> float:
        """Air in the bottle at launch, ideal gas p V / (R T) [kg]."""
        p0 = ambient_pressure_pa + self.initial_gauge_pressure_pa
        return _air_mass_kg(p0, self.bottle_volume_m3 - self.water_volume_m3, self.air_temperature_k)

    def launch_mass_kg(self, ambient_pressure_pa: float = P0_PA) -> float:
        """Dry mass + water + air at launch [kg]."""
        return self.dry_mass_kg + self.water_mass_kg + self.air_mass_kg(ambient_pressure_pa)


@dataclass(frozen=True, slots=True)
class WaterThrust:
    """Simulated thrust of one water stage.

    Arrays share one time base (time since release [s]); a thrust jump
    between phases is represented by two points `_JUMP_S` = 1e-5 s apart.

    Attributes
    ----------
    times_s, thrust_n, gauge_pressure_pa, water_mass_kg, air_mass_kg : numpy.ndarray
        Time [s], thrust [N], bottle gauge pressure [Pa], water and air left in
        the bottle [kg].
    tube_end_s, water_end_s, end_s : float
        End of the launch-tube, water and air phases [s].
    tube_exit_speed_m_s : float
        Speed when leaving the launch tube [m/s] (0 without a tube).
    water_ran_out : bool
        False when the air fell to ambient pressure before all water left.
    """

    times_s: np.ndarray
    thrust_n: np.ndarray
    gauge_pressure_pa: np.ndarray
    water_mass_kg: np.ndarray
    air_mass_kg: np.ndarray
    tube_end_s: float
    water_end_s: float
    end_s: float
    tube_exit_speed_m_s: float
    water_ran_out: bool

    def impulse_n_s(self, start_s: float = 0.0, end_s: float | None = None) -> float:
        """Impulse of the (piecewise-linear) thrust table between two times [N s]."""
        t = self.times_s
        end = t[-1] if end_s is None else end_s
        m = (t >= start_s - 1e-12) & (t <= end + 1e-12)
        return float(np.trapezoid(self.thrust_n[m], t[m]))

    @property
    def total_impulse_n_s(self) -> float:
        """Impulse of the whole table [N s]."""
        return float(np.trapezoid(self.thrust_n, self.times_s))

    @property
    def propellant_mass_kg(self) -> np.ndarray:
        """Water + air still to be expelled [kg]: runs down to 0 at `end_s`."""
        rest = self.water_mass_kg + self.air_mass_kg - self.water_mass_kg[-1] - self.air_mass_kg[-1]
        out = np.minimum.accumulate(np.maximum(rest, 0.0))  # remove round-off upticks
        out[-1] = 0.0
        return out

    @property
    def residual_mass_kg(self) -> float:
        """Water and air left in the bottle after the last phase [kg]."""
        return float(self.water_mass_kg[-1] + self.air_mass_kg[-1])


def _air_blowdown_state(p_pa, t_k, area_m2, pa_pa):
    """Mass flow [kg/s] and thrust [N] of a convergent nozzle, isentropic perfect gas.

    Anderson, Modern Compressible Flow, 3rd ed., ch. 5 (from memory): choked
    when p/p_a >= ((g+1)/2)^(g/(g-1)); otherwise exit pressure = p_a.
    """
    g = GAMMA_AIR
    r = R_AIR_J_KG_K
    p = np.asarray(p_pa, dtype=float)
    t = np.asarray(t_k, dtype=float)
    crit = ((g + 1) / 2) ** (g / (g - 1))
    choked = p / pa_pa >= crit
    # choked branch
    mdot_c = area_m2 * p * np.sqrt(g / (r * t)) * (2 / (g + 1)) ** ((g + 1) / (2 * (g - 1)))
    a_star = np.sqrt(g * r * t * 2 / (g + 1))
    p_star = p * (2 / (g + 1)) ** (g / (g - 1))
    f_c = mdot_c * a_star + (p_star - pa_pa) * area_m2
    # unchoked branch
    ratio = np.maximum(p / pa_pa, 1.0)
    m2 = 2 / (g - 1) * (ratio ** ((g - 1) / g) - 1)
    te = t / (1 + 0.5 * (g - 1) * m2)
    ue = np.sqrt(m2 * g * r * te)
    mdot_u = pa_pa / (r * te) * ue * area_m2
    f_u = mdot_u * ue
    return np.where(choked, mdot_c, mdot_u), np.where(choked, f_c, f_u)


def simulate_water_thrust(
    stage: WaterStage,
    *,
    mass_above_kg: float = 0.0,
    ambient_pressure_pa: float = P0_PA,
    g_m_s2: float = G0_M_S2,
) -> WaterThrust:
    """Thrust, pressure and mass left of a water stage over time.

    Parameters
    ----------
    stage : WaterStage
    mass_above_kg : float
        Everything carried by this stage (upper stages, payload) [kg], >= 0.
        Used only for the motion on a launch tube.
    ambient_pressure_pa : float
        Outside pressure [Pa], > 0.
    g_m_s2 : float
        Gravity on the launch tube [m/s^2].

    Returns
    -------
    WaterThrust

    Raises
    ------
    CannotLiftOffError
        When the launch-tube force cannot lift the rocket, or the rocket
        stalls part-way up the tube (a `FieldError`).

    Notes
    -----
    Methods as in the module docstring: quasi-steady Bernoulli water jet with
    polytropic air expansion (Kagan, Buchholz & Klein 1995), then isentropic
    convergent-nozzle blow-down of the air (Anderson, Modern Compressible Flow).
    The phases are `_launch_tube_phase`, `_water_phase` and `_air_phase`.
    """
    pa = _pos(ambient_pressure_pa, "ambient_pressure")
    m_above = _pos(mass_above_kg, "mass_above", zero_ok=True)
    p0 = pa + stage.initial_gauge_pressure_pa
    phases: list[_Phase] = []
    p_start = p0
    v_exit = 0.0
    tube_end = 0.0
    if stage.launch_tube_length_m > 0:
        tube, p_start, v_exit = _launch_tube_phase(stage, ambient_pressure_pa=pa, mass_above_kg=m_above,
                                                   g_m_s2=g_m_s2)
        phases.append(tube)
        tube_end = float(tube.times_s[-1])
    t_start_k = _polytropic_temperature_k(stage.air_temperature_k, p_start, p0, stage.polytropic_exponent)
    water, p1, ran_out = _water_phase(stage, start_pressure_pa=p_start, start_temperature_k=t_start_k,
                                      ambient_pressure_pa=pa, start_s=tube_end, after_tube=bool(phases))
    water_end = float(water.times_s[-1])
    end = water_end
    if ran_out and p1 > pa * (1 + 1e-9):
        phases.append(water)
        t1k = _polytropic_temperature_k(t_start_k, p1, p_start, stage.polytropic_exponent)
        air = _air_phase(stage, start_pressure_pa=p1, start_temperature_k=t1k, ambient_pressure_pa=pa,
                         start_s=water_end)
        phases.append(air)
        end = float(air.times_s[-1])
    else:
        phases.append(_Phase(water.times_s, _with_last(water.thrust_n, 0.0), water.gauge_pressure_pa,
                             water.water_mass_kg, water.air_mass_kg))
    return WaterThrust(
        times_s=np.concatenate([ph.times_s for ph in phases]),
        thrust_n=np.concatenate([ph.thrust_n for ph in phases]),
        gauge_pressure_pa=np.concatenate([ph.gauge_pressure_pa for ph in phases]),
        water_mass_kg=np.concatenate([ph.water_mass_kg for ph in phases]),
        air_mass_kg=np.concatenate([ph.air_mass_kg for ph in phases]),
        tube_end_s=tube_end,
        water_end_s=water_end,
        end_s=end,
        tube_exit_speed_m_s=v_exit,
        water_ran_out=bool(ran_out),
    )


@dataclass(frozen=True, slots=True)
class _Phase:
    """One thrust phase on its own grid; the fields match `WaterThrust` (time since release [s],
    thrust [N], bottle gauge pressure [Pa], water and air in the bottle [kg])."""

    times_s: np.ndarray
    thrust_n: np.ndarray
    gauge_pressure_pa: np.ndarray
    water_mass_kg: np.ndarray
    air_mass_kg: np.ndarray


def _launch_tube_phase(
    stage: WaterStage, *, ambient_pressure_pa: float, mass_above_kg: float, g_m_s2: float,
) -> tuple[_Phase, float, float]:
    """Phase 1: the rocket rides up its launch tube, driven by the air on the tube section.

    Work-energy along the stroke x: 1/2 m v^2 = W_gas(x) - m g x, with the
    polytropic work W_gas(x) = integral_0^x (p(x') - p_a) A_t dx' and
    p (V_a0 + A_t x)^n = const (closed form; logarithmic for n = 1); time by
    the quadrature dt = dx / v on a grid x = L_t s^2, dense near x = 0 where
    v grows like sqrt(x). No water leaves; the air that followed into the tube
    stays behind.

    Parameters
    ----------
    stage : WaterStage
        With ``launch_tube_length_m > 0``.
    ambient_pressure_pa : float
        Outside pressure p_a [Pa].
    mass_above_kg : float
        Mass carried by the stage [kg].
    g_m_s2 : float
        Gravity on the tube [m/s^2].

    Returns
    -------
    phase : _Phase
        Starting at t = 0.
    end_pressure_pa : float
        Absolute bottle pressure when the rocket leaves the tube [Pa].
    exit_speed_m_s : float
        Speed when leaving the tube [m/s].

    Raises
    ------
    CannotLiftOffError
        The tube force at release is not above the weight, or the rocket
        stalls part-way up the tube.
    """
    pa = ambient_pressure_pa
    n = stage.polytropic_exponent
    va0 = stage.bottle_volume_m3 - stage.water_volume_m3
    p0 = pa + stage.initial_gauge_pressure_pa
    a_t = _circle_area_m2(stage.launch_tube_diameter_m)
    lt = stage.launch_tube_length_m
    m_tot = stage.launch_mass_kg(pa) + mass_above_kg
    if (p0 - pa) * a_t <= m_tot * g_m_s2:
        raise CannotLiftOffError(
            f"stages.{stage.name}.launch_tube_diameter",
            f"cannot lift off: the tube force (p - p_a) A_t = {(p0 - pa) * a_t:.3g} N must exceed the "
            f"weight {m_tot * g_m_s2:.3g} N; widen the tube, raise the pressure or lighten the rocket.",
        )
    s = np.linspace(0.0, 1.0, _N_TUBE)
    x = lt * s**2  # dense near x = 0 where v -> 0 like sqrt(x)
    vol = va0 + a_t * x
    p = p0 * (va0 / vol) ** n
    if abs(n - 1.0) < 1e-12:
        work = p0 * va0 * np.log(vol / va0) - pa * a_t * x
    else:
        work = p0 * va0 / (n - 1) * (1 - (va0 / vol) ** (n - 1)) - pa * a_t * x
    v2 = 2 * (work - m_tot * g_m_s2 * x) / m_tot
    if not np.all(v2[1:] > 0.0):
        stall = float(x[1:][v2[1:] <= 0.0][0])
        raise CannotLiftOffError(
            f"stages.{stage.name}.launch_tube_length",
            f"cannot lift off: the rocket stalls {stall * 1e3:.0f} mm up the "
            f"{lt * 1e3:.0f} mm launch tube (the gas work falls below the lift); raise the pressure, "
            "shorten or widen the tube, or lighten the rocket.",
        )
    v = np.sqrt(v2)
    # dt/ds = (dx/ds) / v; near s=0, x = lt s^2 and v ~ sqrt(2 a0 x) so dt/ds -> 2 sqrt(lt / (2 a0))
    a0 = (p0 - pa) * a_t / m_tot - g_m_s2
    dtds = np.empty_like(s)
    dtds[1:] = 2 * lt * s[1:] / v[1:]
    dtds[0] = 2.0 * math.sqrt(lt / (2.0 * a0))
    t = cumulative_trapezoid(dtds, s, initial=0.0)
    tk = _polytropic_temperature_k(stage.air_temperature_k, p, p0, n)
    phase = _Phase(t, (p - pa) * a_t, p - pa, np.full_like(t, stage.water_mass_kg), _air_mass_kg(p, va0, tk))
    return phase, float(p[-1]), float(v[-1])


def _water_phase(
    stage: WaterStage, *, start_pressure_pa: float, start_temperature_k: float, ambient_pressure_pa: float,
    start_s: float, after_tube: bool,
) -> tuple[_Phase, float, bool]:
    """Phase 2: water expelled through the nozzle by the expanding air.

    Quasi-steady incompressible Bernoulli jet u = sqrt(2 (p - p_a) / rho_w),
    thrust F = 2 (p - p_a) A_e, air p V^n = const (Kagan, Buchholz & Klein,
    The Physics Teacher 33, 1995). Time t = integral dV / (A_e u) on an air
    volume grid stretched towards the end, V = V_end - (V_end - V_a0)(1 - s)^2;
    when the air reaches ambient pressure first, the finite limit of dt/ds at
    the end is used (p - p_a ~ (n p_a / V_end)(V_end - V)).

    Parameters
    ----------
    stage : WaterStage
    start_pressure_pa, start_temperature_k : float
        Absolute air pressure [Pa] and temperature [K] at the start (after the tube).
    ambient_pressure_pa : float
        Outside pressure p_a [Pa].
    start_s : float
        Time at the start of the phase [s].
    after_tube : bool
        The phase follows a launch tube: its times are shifted by `_JUMP_S`
        to represent the thrust jump.

    Returns
    -------
    phase : _Phase
    end_pressure_pa : float
        Absolute air pressure at the end [Pa].
    water_ran_out : bool
        True when all water left before the air fell to ambient pressure.
    """
    pa = ambient_pressure_pa
    p_start = start_pressure_pa
    n = stage.polytropic_exponent
    rho = RHO_WATER_KG_M3
    vb = stage.bottle_volume_m3
    va0 = vb - stage.water_volume_m3
    a_e = stage.nozzle_area_m2
    ma_w = _air_mass_kg(p_start, va0, start_temperature_k)  # air in the bottle during the water phase
    v_pa = va0 * (p_start / pa) ** (1.0 / n)  # air volume at which p falls to ambient
    ran_out = v_pa > vb
    v_end = vb if ran_out else v_pa
    s = np.linspace(0.0, 1.0, _N_WATER)
    w = 1.0 - s
    vol = _stretched_to_end(va0, v_end, w)
    p = p_start * (va0 / vol) ** n
    dp = np.maximum(p - pa, 0.0)
    u = np.sqrt(2.0 * dp / rho)
    dvds = 2.0 * (v_end - va0) * w
    dtds = np.empty_like(s)
    dtds[:-1] = dvds[:-1] / (a_e * u[:-1])
    if ran_out:
        dtds[-1] = 0.0
    else:
        # limit s -> 1: p - p_a ~ (n p_a / v_end)(v_end - vol), so dt/ds -> finite value
        k = n * pa / v_end
        dtds[-1] = 2.0 * (v_end - va0) / (a_e * math.sqrt(2.0 * k * (v_end - va0) / rho))
    t = start_s + cumulative_trapezoid(dtds, s, initial=0.0)
    if after_tube:
        t = t + _JUMP_S
    phase = _Phase(t, 2.0 * dp * a_e, p - pa, rho * (vb - vol), np.full_like(t, ma_w))
    return phase, float(p[-1]), ran_out


def _air_phase(
    stage: WaterStage, *, start_pressure_pa: float, start_temperature_k: float, ambient_pressure_pa: float,
    start_s: float,
) -> _Phase:
    """Phase 3: blow-down of the air left in the full bottle volume through the nozzle.

    The gas in the bottle expands isentropically (gamma = 1.4) from p_1 to
    p_a: m = p V / (R T) with p ~ m^gamma, so the mass left at ambient is
    m_end = m_1 (p_a / p_1)^(1/gamma). Flow and thrust from
    `_air_blowdown_state` (convergent nozzle, Anderson, Modern Compressible
    Flow, 3rd ed., ch. 5); time t = integral dm / mdot on a mass grid
    stretched towards the end, the last node evaluated slightly before the
    end (the 0/0 limit there). The phase starts `_JUMP_S` after `start_s`.

    Parameters
    ----------
    stage : WaterStage
    start_pressure_pa, start_temperature_k : float
        Absolute air pressure [Pa], above p_a, and temperature [K] when the water is gone.
    ambient_pressure_pa : float
        Outside pressure p_a [Pa].
    start_s : float
        End of the water phase [s].

    Returns
    -------
    _Phase
        Ending at thrust 0 and ambient pressure, with no water.
    """
    pa = ambient_pressure_pa
    p1 = start_pressure_pa
    t1k = start_temperature_k
    g = GAMMA_AIR
    m1 = _air_mass_kg(p1, stage.bottle_volume_m3, t1k)
    m_end = m1 * (pa / p1) ** (1.0 / g)
    s = np.linspace(0.0, 1.0, _N_AIR)
    w = 1.0 - s
    m = _stretched_to_end(m1, m_end, w)
    # evaluate the last node slightly before the end: 0/0 limit there
    w_eval = np.maximum(w, 1e-3 / _N_AIR)
    m_eval = _stretched_to_end(m1, m_end, w_eval)
    pp = p1 * (m_eval / m1) ** g
    tt = _polytropic_temperature_k(t1k, pp, p1, g)
    mdot, thrust = _air_blowdown_state(pp, tt, stage.nozzle_area_m2, pa)
    dtds = 2.0 * (m1 - m_end) * w_eval / mdot
    t = start_s + _JUMP_S + cumulative_trapezoid(dtds, s, initial=0.0)
    return _Phase(t, _with_last(thrust, 0.0), _with_last(pp, pa) - pa, np.zeros_like(t), m)


def _stretched_to_end(start, end, w):
    """Grid from `start` (w = 1) to `end` (w = 0), end - (end - start) w^2: dense near the end."""
    return end - (end - start) * w * w


# ---------------------------------------------------------------- flight stages
def water_flight_stage(
    stage: WaterStage,
    *,
    mass_above_kg: float = 0.0,
    ambient_pressure_pa: float = P0_PA,
    coast_before_ignition_s: float = 0.0,
) -> FlightStage:
    """The flight stage of a water stage: its simulated thrust and mass tables.

    The thrust table is delivered thrust at `ambient_pressure_pa` (it already
    contains the p - p_a terms), so the stage gets nozzle exit area 0.
    Propellant is the water and air expelled; water and air left in the
    bottle at the end count as structure. `isp_vac_s` is I / (m_p g0).

    Parameters
    ----------
    stage : WaterStage
    mass_above_kg : float
        Everything this stage carries [kg] (for the launch-tube motion).
    ambient_pressure_pa : float
        Outside pressure at release [Pa].
    coast_before_ignition_s : float
        Coast between the previous event and release of this stage's nozzle [s].

    Returns
    -------
    sizing.physics.vehicle.FlightStage
    """
    thr = simulate_water_thrust(stage, mass_above_kg=mass_above_kg, ambient_pressure_pa=ambient_pressure_pa)
    prop = thr.propellant_mass_kg
    mp = float(prop[0])
    prop = _with_last(prop, 0.0)
    impulse = thr.total_impulse_n_s
    return FlightStage(
        stage.name,
        mp,
        stage.dry_mass_kg + thr.residual_mass_kg,
        impulse / (mp * G0_M_S2),
        diameter_m=stage.diameter_m,
        thrust_curve=(tuple(thr.times_s.tolist()), tuple(thr.thrust_n.tolist())),
        propellant_mass_curve=(tuple(thr.times_s.tolist()), tuple(prop.tolist())),
        nozzle_exit_area_m2=0.0,
        drag=DragCurve.default_slender_body() if stage.drag is None else stage.drag,
        coast_before_ignition_s=coast_before_ignition_s,
    )


def water_vehicle(
    stages: WaterStage | Sequence[WaterStage],
    payload_mass_kg: float = 0.0,
    *,
    ambient_pressure_pa: float = P0_PA,
    payload_diameter_m: float | None = None,
) -> Vehicle:
    """A stack of water stages, bottom first, staging at burnout.

    Each upper stage is released the moment the stage below has expelled its
    water and air (staging delay 0, no coast before release). Only the bottom
    stage may have a launch tube. Every stage's thrust is computed at the same
    ambient pressure (hobby altitudes change it by a few per cent at most).

    Parameters
    ----------
    stages : WaterStage or sequence of WaterStage
        Bottom first.
    payload_mass_kg : float
        Mass above the top stage [kg], >= 0.
    ambient_pressure_pa : float
        Outside pressure [Pa].
    payload_diameter_m : float or None
        Payload diameter [m] if wider than the stages.

    Returns
    -------
    sizing.physics.vehicle.Vehicle
    """
    stack = (stages,) if isinstance(stages, WaterStage) else tuple(stages)
    if not stack:
        raise FieldError("stages", "at least one water stage is required.", stages)
    for s in stack[1:]:
        if s.launch_tube_length_m > 0:
            raise FieldError(
                f"stages.{s.name}.launch_tube_length", "must be 0: only the bottom stage sits on a launch tube.",
                s.launch_tube_length_m,
            )
    payload = _pos(payload_mass_kg, "payload_mass", zero_ok=True)
    flight = []
    above = payload
    for s in reversed(stack):
        flight.append(water_flight_stage(s, mass_above_kg=above, ambient_pressure_pa=ambient_pressure_pa))
        above += s.launch_mass_kg(ambient_pressure_pa)
    return Vehicle(tuple(reversed(flight)), payload, payload_diameter_m, 0.0)
