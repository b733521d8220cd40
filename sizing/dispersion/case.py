"""The flight a dispersion run perturbs: nominal vehicle, site, wind, target, and how a sample changes them.

`case_from_file` reads a design file (stage masses given; flown as it is), a
problem file with an apogee or orbit target (sized first, exactly as
`sizing solve` sizes it, then flown as the sized design) or a hobby motor-stack
file (the stack search picks the motors first). `DispersionCase.vary` turns
one row of sampled input values into the perturbed vehicle, site and wind.

How an input changes a stage (every other property is kept):

* ``isp``/``total_impulse``: exhaust velocity; a constant-thrust stage keeps its
  thrust (mass flow F / (Isp g0) and burn time follow), a thrust curve is
  scaled in thrust at fixed times;
* ``thrust``: the thrust level at fixed total impulse (a curve is scaled by s in
  thrust and by 1/s in time);
* ``propellant_mass``, ``structural_mass``: the masses (a constant-thrust stage
  burns longer; a motor's propellant curve is scaled);
* ``drag``: C_D(Mach) multiplied by the sampled factor;
* ``mixture_ratio``: outage. The loaded fuel m_p / (1 + r0) and oxidiser
  m_p r0 / (1 + r0) burn at ratio r until one runs out; the rest of the other
  stays in the stage as dead mass (mass balance of a propellant budget's
  mixture-ratio residual; e.g. Humble, Henry & Larson, Space Propulsion
  Analysis and Design, 1995, Ch. 5, from memory). The Isp is not changed:
  disperse ``isp`` beside it (and correlate the two) for that effect;
* the nozzle exit area is held at the nominal (back-pressure loss unchanged).
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any, Mapping

import numpy as np

from ..errors import FieldError, ProblemDefinitionError
from ..physics.flight import AscentProfile, Wind
from ..physics.vehicle import DragCurve, FlightStage, LaunchSite, Vehicle
from ..physics.wind import WindProfile
from ..problem.dispersions import DispersionSpec
from ..units import GM_EARTH_M3_S2
from .sampling import Marginal, resolve_marginal

__all__ = ["DispersionCase", "Variant", "case_from_file", "case_from_problem", "case_from_hobby", "sized_design",
           "DISPERSION_STEP_NOTE", "MSG_NO_DISPERSIONS", "MSG_WATER", "MSG_NO_TARGET_SIZE", "MSG_NEEDS_NOMINAL",
           "MSG_CURVE_MIXTURE", "orbit_energy_shortfall_m_s"]

#: Why dispersed flights drop the step cap of `sizing fly` (checked by tests/dispersion/test_flights.py).
DISPERSION_STEP_NOTE = (
    "dispersed flights take the integrator's adaptive steps alone (rtol 1e-8), without the step cap of "
    "`sizing fly` (0.5 s vertical, 2 s ascent; a denser history for plots): about 1.5 to 2 times faster, "
    "and the demo designs' apogee moves by less than 1 m, the orbit's energy by less than 0.01 m/s")

MSG_NO_DISPERSIONS = ("has no [dispersions] table: add one ([[dispersions.input]] tables; see "
                      "docs/problem-files.md) or pass --dispersions FILE")
MSG_WATER = "dispersions of water stacks are not supported; use a motor stack or a design file"
MSG_NO_TARGET_SIZE = ("cannot be dispersed as it stands: give every stage propellant_mass and structural_mass "
                      "(a design) or an apogee or orbit target to size it first")
MSG_NEEDS_NOMINAL = "needs its nominal value: give nominal = ... in this [[dispersions.input]]"
MSG_CURVE_MIXTURE = "a mixture ratio applies to a constant-thrust liquid stage, not to a thrust curve"


@dataclass(frozen=True, slots=True)
class Variant:
    """One sampled flight's inputs (the perturbed objects, ready for `fly_many`)."""

    vehicle: Vehicle
    site: LaunchSite
    wind: Wind | None
    descent_wind: WindProfile | None
    payload_mass_kg: float


@dataclass(frozen=True)
class DispersionCase:
    """A nominal flight and the marginals of its dispersed inputs. Picklable (workers receive it).

    Attributes
    ----------
    name, source : str
    target_kind : str
        ``"apogee"`` (above the site), ``"orbit"`` or ``"none"``.
    target : dict
        ``apogee_above_site_m``, or ``perigee_altitude_m``, ``apogee_altitude_m``,
        ``inclination_deg`` [m, deg].
    vehicle : Vehicle
        Nominal vehicle; its payload is `payload_mass_kg` + `extra_top_mass_kg`.
    payload_mass_kg : float
        The payload [kg].
    extra_top_mass_kg : float
        Carried above the last stage besides the payload [kg]: nose ballast of a
        hobby stack, or the propellant reserve of sizing to a confidence.
    site : LaunchSite
    profile : str
        ``"vertical"`` or ``"ascent"``.
    ascent : AscentProfile or None
        Steering programme (fixed in every sample).
    fly_options : dict
        Options of `fly_many` (earth, max_step_s, ...), those `sizing fly` uses.
    wind : WindProfile or None
        Nominal wind (hobby files); None: calm.
    descent : tuple or None
        Top stage's descent under recovery (hobby): (mass [kg], recovery definition).
    spec : DispersionSpec
    marginals : tuple of Marginal
        One per input of `spec`, nominal resolved.
    hobby : dict or None
        What the stack search chose (motors, ballast), for the report.
    """

    name: str
    source: str
    target_kind: str
    target: Mapping[str, float]
    vehicle: Vehicle
    payload_mass_kg: float
    extra_top_mass_kg: float
    site: LaunchSite
    profile: str
    ascent: AscentProfile | None
    fly_options: Mapping[str, Any]
    spec: DispersionSpec
    marginals: tuple[Marginal, ...]
    wind: WindProfile | None = None
    descent: tuple | None = None
    hobby: Mapping[str, Any] | None = None

    # -- nominal values ------------------------------------------------------
    def stage_index(self, name: str) -> int:
        return [s.name for s in self.vehicle.stages].index(name)

    def vary(self, row: np.ndarray) -> Variant:
        """The perturbed vehicle, site and wind of one sample (values in `spec.inputs` order).

        Raises
        ------
        FieldError
            The sampled values make a vehicle the flight layer refuses (e.g. a
            negative mass): the sample is recorded as invalid.
        """
        per_stage: dict[str, dict[str, float]] = {}
        payload = self.payload_mass_kg
        site_kw: dict[str, float] = {}
        wind_speed = wind_dir = None
        for inp, m, v in zip(self.spec.inputs, self.marginals, row.tolist()):
            if inp.stage is not None:
                per_stage.setdefault(inp.stage, {})[inp.key] = v if inp.key in _ABSOLUTE else (
                    v / m.nominal if m.nominal != 0.0 else math.nan)
            elif inp.key == "payload_mass":
                payload = v
            elif inp.key == "launch.rail_angle":
                site_kw["rail_angle_deg"] = v
            elif inp.key == "launch.azimuth":
                site_kw["azimuth_deg"] = v % 360.0
            elif inp.key == "wind.speed":
                wind_speed = v
            else:
                wind_dir = v % 360.0
        stages = tuple(_vary_stage(st, per_stage[st.name], self._mixture_nominal(st.name))
                       if st.name in per_stage else st for st in self.vehicle.stages)
        vehicle = replace(self.vehicle, stages=stages, payload_mass_kg=payload + self.extra_top_mass_kg)
        site = replace(self.site, **site_kw) if site_kw else self.site
        kernel_wind, descent_wind = self._winds(wind_speed, wind_dir)
        return Variant(vehicle, site, kernel_wind, descent_wind, payload)

    def _mixture_nominal(self, stage: str) -> float | None:
        for inp, m in zip(self.spec.inputs, self.marginals):
            if inp.stage == stage and inp.key == "mixture_ratio":
                return m.nominal
        return None

    def _winds(self, speed: float | None, direction: float | None) -> tuple[Wind | None, WindProfile | None]:
        """Kernel wind (ascent) and the wind profile of the descent, dispersed."""
        nominal = self.wind
        if speed is None and direction is None:
            return _kernel_wind(nominal), nominal
        base_speed = _reference_speed(nominal)
        if nominal is None or base_speed == 0.0:
            prof = WindProfile("power_law" if self.spec.wind_exponent > 0 else "constant",
                               speed_m_s=max(speed or 0.0, 0.0), direction_from_deg=direction or 0.0,
                               reference_height_m=self.spec.wind_reference_height_m,
                               exponent=self.spec.wind_exponent if self.spec.wind_exponent > 0 else 1.0 / 7.0)
            return _kernel_wind(prof), prof
        scale = 1.0 if speed is None else max(speed, 0.0) / base_speed
        turn = 0.0 if direction is None else direction - _reference_direction(nominal)
        if nominal.kind == "table":
            prof = replace(nominal, speeds_m_s=tuple(s * scale for s in nominal.speeds_m_s),
                           directions_from_deg=tuple((d + turn) % 360.0 for d in nominal.directions_from_deg))
        else:
            prof = replace(nominal, speed_m_s=nominal.speed_m_s * scale,
                           direction_from_deg=(nominal.direction_from_deg + turn) % 360.0)
        return _kernel_wind(prof), prof


#: Stage inputs taken as absolute values (the others act as ratios to the nominal).
_ABSOLUTE = ("coast_before_ignition", "mixture_ratio")


def _outage_kg(propellant_kg: float, r0: float, r: float) -> float:
    """Propellant left unburnt when a load mixed at O/F r0 burns at r [kg] (see the module notes)."""
    fuel, ox = propellant_kg / (1.0 + r0), propellant_kg * r0 / (1.0 + r0)
    burnt = ox * (1.0 + 1.0 / r) if r > r0 else fuel * (1.0 + r)
    return max(0.0, propellant_kg - burnt)


def _vary_stage(st: FlightStage, f: Mapping[str, float], r0: float | None) -> FlightStage:
    """A stage with ratios (isp, total_impulse, thrust, masses, drag) and absolute values applied."""
    k_imp = f.get("isp", 1.0) * f.get("total_impulse", 1.0)
    k_f = f.get("thrust", 1.0)
    k_p = f.get("propellant_mass", 1.0)
    mp = st.propellant_mass_kg * k_p
    ms = st.structural_mass_kg * f.get("structural_mass", 1.0)
    kw: dict[str, Any] = {"isp_vac_s": st.isp_vac_s * k_imp, "nozzle_exit_area_m2": st.exit_area_m2,
                          "isp_sl_s": None if st.isp_sl_s is None else st.isp_sl_s * k_imp}
    if "mixture_ratio" in f:
        if st.thrust_curve is not None:
            raise FieldError(f"stages.{st.name}.mixture_ratio", MSG_CURVE_MIXTURE + ".")
        dead = _outage_kg(mp, r0, f["mixture_ratio"]) if f["mixture_ratio"] > 0 else math.nan
        mp, ms = mp - dead, ms + dead
    if st.thrust_curve is None:
        kw["thrust_vac_n"] = st.thrust_vac_n * k_f
    else:
        ts, fs = st.thrust_curve
        kw["thrust_curve"] = (tuple(t / k_f for t in ts), tuple(x * k_imp * k_f for x in fs))
        if st.propellant_mass_curve is not None:
            tm, mm = st.propellant_mass_curve
            kw["propellant_mass_curve"] = (tuple(t / k_f for t in tm), tuple(x * k_p for x in mm))
    if "drag" in f:
        kw["drag"] = DragCurve(st.drag.mach, tuple(c * f["drag"] for c in st.drag.cd))
    if "coast_before_ignition" in f:
        kw["coast_before_ignition_s"] = f["coast_before_ignition"]
    return replace(st, propellant_mass_kg=mp, structural_mass_kg=ms, **kw)


def _reference_speed(w: WindProfile | None) -> float:
    if w is None:
        return 0.0
    return max(w.speeds_m_s, default=0.0) if w.kind == "table" else w.speed_m_s


def _reference_direction(w: WindProfile) -> float:
    if w.kind != "table":
        return w.direction_from_deg
    return w.directions_from_deg[int(np.argmax(w.speeds_m_s))]


def _kernel_wind(w: WindProfile | None) -> Wind | None:
    """The flight layer's wind for a profile: power law or table of speed, one direction.

    A table whose direction turns with height is flown with the direction of
    its strongest wind (the kernel's wind has one direction); the descent uses
    the whole table.
    """
    if w is None or w.is_calm:
        return None
    if w.kind == "constant":
        return Wind(speed_m_s=w.speed_m_s, from_deg=w.direction_from_deg, exponent=0.0)
    if w.kind == "power_law" and w.top_height_m is None:
        return Wind(speed_m_s=w.speed_m_s, from_deg=w.direction_from_deg, reference_height_m=w.reference_height_m,
                    exponent=w.exponent)
    if w.kind == "power_law":
        h = np.concatenate([np.linspace(0.0, w.top_height_m, 24), [w.top_height_m * 10.0]])
        return Wind(from_deg=w.direction_from_deg, heights_m=tuple(h), speeds_m_s=tuple(w.speed_at_m_s(h)))
    return Wind(from_deg=_reference_direction(w), heights_m=w.heights_m, speeds_m_s=w.speeds_m_s)


# ---------------------------------------------------------------- nominal values of the inputs
def _nominal(inp, vehicle: Vehicle, payload_kg: float, site: LaunchSite, wind: WindProfile | None,
             stage_defs: Mapping[str, Any]) -> float:
    if inp.stage is None:
        return {"payload_mass": payload_kg, "launch.rail_angle": site.rail_angle_deg,
                "launch.azimuth": site.azimuth_deg, "wind.speed": _reference_speed(wind),
                "wind.direction": 0.0 if wind is None else _reference_direction(wind)}[inp.key]
    st = next(s for s in vehicle.stages if s.name == inp.stage)
    if inp.key == "mixture_ratio":
        r0 = inp.nominal
        prop = getattr(stage_defs.get(inp.stage), "propellant", None)
        if r0 is None and prop is not None and getattr(prop, "mixture_ratio", 0.0) > 0:
            r0 = prop.mixture_ratio
        if r0 is None:
            raise ValueError(f"dispersions: {inp.quantity}: {MSG_NEEDS_NOMINAL} (O/F of the loaded propellant).")
        return r0
    if inp.key == "thrust":
        return st.thrust_vac_n if st.thrust_curve is None else st.total_impulse_vac_n_s / st.burn_time_s
    return {"isp": st.isp_vac_s, "total_impulse": st.total_impulse_vac_n_s, "propellant_mass": st.propellant_mass_kg,
            "structural_mass": st.structural_mass_kg, "drag": 1.0,
            "coast_before_ignition": st.coast_before_ignition_s}[inp.key]


def _marginals(spec: DispersionSpec, source: str, vehicle: Vehicle, payload_kg: float, site: LaunchSite,
               wind: WindProfile | None, stage_defs: Mapping[str, Any]) -> tuple[Marginal, ...]:
    faults, out = [], []
    for inp in spec.inputs:
        try:
            out.append(resolve_marginal(inp, _nominal(inp, vehicle, payload_kg, site, wind, stage_defs)))
        except ValueError as exc:
            faults.append(str(exc))
    if faults:
        raise ProblemDefinitionError(source, faults)
    return tuple(out)


# ---------------------------------------------------------------- from files
def case_from_file(path: str | Path, *, dispersions: str | Path | None = None) -> DispersionCase:
    """The dispersion case of a design, problem or hobby file.

    Parameters
    ----------
    path : str or Path
        Design file (flown as given), problem file with an apogee or orbit target
        (sized first, as `sizing solve` does) or hobby motor-stack file.
    dispersions : str or Path, optional
        A TOML file whose ``[dispersions]`` table replaces the file's own.

    Raises
    ------
    ProblemDefinitionError
        Bad input, no ``[dispersions]`` table, or a file that cannot be dispersed.
        A fault of the table given by `dispersions` names that file, not `path`.
    """
    from ..problem.load import read_toml

    data = dict(read_toml(path))
    if dispersions is not None:
        extra = read_toml(dispersions)
        if "dispersions" not in extra:
            raise ProblemDefinitionError(str(dispersions), [MSG_NO_DISPERSIONS.split(":")[0] + "."])
        data["dispersions"] = extra["dispersions"]
    if "dispersions" not in data:
        raise ProblemDefinitionError(str(path), [MSG_NO_DISPERSIONS + "."])
    try:
        if "hobby" in data:
            from ..problem.hobby import hobby_problem_from_dict

            return case_from_hobby(hobby_problem_from_dict(data, source=str(path), base_dir=Path(path).parent))
        from ..problem.load import problem_from_dict

        return case_from_problem(problem_from_dict(data, source=str(path)))
    except ProblemDefinitionError as exc:
        if dispersions is None:
            raise
        raise _table_faults_named_by(exc, str(dispersions)) from None


def _is_table_fault(fault: str) -> bool:
    """True for a fault of the [dispersions] table ("dispersions.input[1] ...", "dispersions: ...")."""
    return fault.startswith("dispersions") and fault[len("dispersions"):][:1] in (".", ":", "[", " ", "")


def _table_faults_named_by(exc: ProblemDefinitionError, table_file: str) -> ProblemDefinitionError:
    """`exc` with the faults of the [dispersions] table named by `table_file`, the file the table came from."""
    sources = [table_file if _is_table_fault(f) else s for s, f in zip(exc.fault_sources, exc.faults)]
    primary = exc.source if exc.source in sources else table_file
    return type(exc)(primary, exc.faults, sources)


def sized_design(problem, result=None):
    """The design of a flight-target problem as `sizing solve --out design.toml` writes it, loaded back.

    Sized to the required probability when the problem's [dispersions] table gives one. Returns
    (design problem, sizing result). A result that did not converge raises.
    """
    from ..errors import InfeasibleProblemError
    from ..optimize.api import solve
    from ..problem.load import problem_from_dict
    from ..report.design import design_toml

    if result is None:
        if problem.dispersions is not None and problem.dispersions.probability is not None:
            from .confidence import solve_with_dispersions

            result = solve_with_dispersions(problem)  # sized to the probability, as `sizing solve` does
        else:
            result = solve(problem)
    if not result.success:
        raise InfeasibleProblemError(f"{problem.source}: sizing failed before the dispersion run: {result.message}",
                                     dict(result.best or {}))
    data = dict(tomllib.loads(design_toml(result)))
    if problem.raw.get("dispersions") is not None and "dispersions" not in data:
        data["dispersions"] = problem.raw["dispersions"]
    return problem_from_dict(data, source=problem.source), result


def case_from_problem(problem, *, spec: DispersionSpec | None = None) -> DispersionCase:
    """The case of a (main-layout) problem: its design, or the design `solve` sizes for it."""
    from ..optimize.flight import FLY_OPTIONS_ASCENT, FLY_OPTIONS_VERTICAL
    from ..optimize.flight_problem import ascent_profile, design_vehicle, launch_site, profile_of

    spec = spec or problem.dispersions
    if spec is None:
        raise ProblemDefinitionError(problem.source, [MSG_NO_DISPERSIONS + "."])
    if not problem.design_masses_given:
        if not problem.is_flight_target:
            raise ProblemDefinitionError(problem.source, [MSG_NO_TARGET_SIZE + "."])
        problem, _ = sized_design(replace(problem, dispersions=spec))
        spec = problem.dispersions
    vehicle = design_vehicle(problem)
    site = launch_site(problem)
    vertical = profile_of(problem) == "vertical"
    reserve = spec.reserve_propellant_kg
    payload = problem.payload_mass_kg - reserve
    if not payload > 0:
        raise ProblemDefinitionError(problem.source, [
            f"dispersions.reserve_propellant: must be less than mission.payload_mass ({problem.payload_mass_kg:g} "
            f"kg, which carries it). Got {reserve!r}."])
    if problem.apogee_m is not None:
        kind, target = "apogee", {"apogee_above_site_m": problem.apogee_m}
    elif problem.orbit_altitude_m is not None:
        kind = "orbit"
        target = {"perigee_altitude_m": problem.orbit_altitude_m,
                  "apogee_altitude_m": problem.orbit_apogee_m or problem.orbit_altitude_m,
                  "inclination_deg": problem.inclination_deg}
    else:
        kind, target = "none", {}
    opts = ({"profile": "vertical", **FLY_OPTIONS_VERTICAL} if vertical
            else {"profile": "ascent", "earth": "round", "rotating": True, "stop_at": "burnout",
                  **FLY_OPTIONS_ASCENT})
    opts["max_step_s"] = None  # adaptive steps alone (DISPERSION_STEP_NOTE)
    stage_defs = {s.name: s for s in problem.stages}
    return DispersionCase(
        name=problem.name, source=problem.source, target_kind=kind, target=target, vehicle=vehicle,
        payload_mass_kg=payload, extra_top_mass_kg=reserve, site=site,
        profile="vertical" if vertical else "ascent", ascent=None if vertical else ascent_profile(problem),
        fly_options=opts, spec=spec,
        marginals=_marginals(spec, problem.source, vehicle, payload, site, None, stage_defs))


def case_from_hobby(problem) -> DispersionCase:
    """The case of a hobby motor-stack problem: the stack the search picks, flown as `sizing hobby` flies it."""
    from ..optimize.hobby import build_motor_vehicle
    from ..optimize.hobby_problem import _stack_stages, solve_hobby
    from ..problem.hobby import HobbyProblem

    assert isinstance(problem, HobbyProblem)
    if problem.dispersions is None:
        raise ProblemDefinitionError(problem.source, [MSG_NO_DISPERSIONS + "."])
    if problem.kind != "motors":
        raise ProblemDefinitionError(problem.source, [f"hobby.kind: {MSG_WATER}. Got 'water'."])
    result = solve_hobby(problem)
    if not result.success:
        from ..errors import InfeasibleProblemError

        raise InfeasibleProblemError(f"{problem.source}: the stack search found no stack to disperse: "
                                     f"{result.message}", dict(result.best or {}))
    hob = result.flight["hobby"]
    by_name = {m.name: m for m in problem.motors}
    motors = [by_name[s["motor"]] for s in hob["stages"]]
    ballast = float(hob.get("ballast_mass_kg") or 0.0)
    vehicle = build_motor_vehicle(motors, _stack_stages(problem), payload_mass_kg=problem.payload_mass_kg,
                                  ballast_mass_kg=ballast, payload_diameter_m=problem.payload_diameter_m)
    top = problem.motor_stages[-1]
    spec = problem.dispersions
    return DispersionCase(
        name=problem.name, source=problem.source, target_kind="apogee",
        target={"apogee_above_site_m": problem.target_apogee_m}, vehicle=vehicle,
        payload_mass_kg=problem.payload_mass_kg, extra_top_mass_kg=ballast, site=problem.site,
        profile="vertical", ascent=None, fly_options={"profile": "vertical", "earth": "flat"}, spec=spec,
        marginals=_marginals(spec, problem.source, vehicle, problem.payload_mass_kg, problem.site, problem.wind, {}),
        wind=problem.wind, descent=(top.name, top.recovery),
        hobby={"motors": [m.name for m in motors], "ballast_mass_kg": ballast, "stack_message": result.message})


def orbit_energy_shortfall_m_s(radius_m: float, speed_m_s: float, target_perigee_radius_m: float,
                               target_apogee_radius_m: float, gm_m3_s2: float = GM_EARTH_M3_S2) -> float:
    """Speed missing at burnout to reach the target orbit's energy by one prograde impulse [m/s].

    The target orbit's specific energy is eps_t = -mu / (2 a), a = (r_p + r_a) / 2;
    the speed with that energy at the burnout radius r is sqrt(2 (eps_t + mu / r))
    (vis-viva, H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed.,
    2014, eq. 2.80 / 2.81). The shortfall is that speed minus the speed reached
    (negative: energy to spare). Orbit shape errors are left to guidance; this
    is the performance measure of the flight performance reserve.

    Examples
    --------
    >>> r = 6378137.0 + 500e3
    >>> v = (3.986004418e14 / r) ** 0.5
    >>> abs(orbit_energy_shortfall_m_s(r, v, r, r)) < 1e-9
    True
    """
    a = 0.5 * (target_perigee_radius_m + target_apogee_radius_m)
    v2 = 2.0 * (-gm_m3_s2 / (2.0 * a) + gm_m3_s2 / radius_m)
    return math.sqrt(max(v2, 0.0)) - speed_m_s
