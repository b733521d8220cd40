"""Hobby problem files: motor stacks and compressed-air water stacks.

A hobby problem file has a top-level ``[hobby]`` table (what to search for),
``[mission]`` (the payload), an optional ``[launch]`` (the site and rail) and
one ``[[stage]]`` table per stage, bottom first. Motor problems take their
motors from a motor list file (``hobby.motors``, a path relative to the
problem file) and/or inline ``[[motor]]`` tables in the same format (see
docs/hobby.md). Water problems describe each bottle stage and, in
``[hobby.optimise]``, what the optimiser may vary.

Plain numbers are SI; strings carry their unit and are converted with
`sizing.units.to_si`. Pressures are gauge (above ambient). Every fault in a
file is collected and raised together as one `ProblemDefinitionError`, one
line per fault: where, what is allowed, what was given.

This module only reads and validates; `sizing.optimize.hobby_problem` solves.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal, Mapping, Union

from pydantic import (BaseModel, ConfigDict, Field, StrictBool, StrictFloat, StrictInt, StrictStr,
                      ValidationError)

from ..errors import MSG_MISSING_KEY, MSG_UNKNOWN_KEY, FieldError, ProblemDefinitionError
from ..physics.motors import Motor, load_motors, parse_motors
from ..physics.vehicle import DragCurve, LaunchSite
from ..units import to_si
from ..physics.water import DEFAULT_SAFETY_FACTOR, MIN_SAFETY_FACTOR, MSG_SAFETY_FACTOR, WaterStage
from .hobby_flight import (
    DEFAULT_MIN_STATIC_MARGIN_CAL,
    MSG_GEOMETRY_ALL_OR_NONE,
    MSG_GEOMETRY_NEEDED,
    MSG_MOTOR_LENGTH,
    WIND_KEYS,
    RecoveryDef,
    RecoveryTable,
    StageGeometryDef,
    StageGeometryTable,
    parse_geometry,
    parse_recovery,
    parse_wind,
)
from .load import _Collector, _loc_label, _stage_label, read_toml

__all__ = [
    "HobbyTable",
    "OptimiseTable",
    "HobbyMissionTable",
    "HobbyLaunchTable",
    "MotorStageTable",
    "WaterStageTable",
    "MotorStageDef",
    "HobbyProblem",
    "load_hobby_problem",
    "hobby_problem_from_dict",
    "is_hobby_data",
    "DEFAULT_RAIL_LENGTH_M",
    "MSG_NO_MOTORS",
    "MSG_NO_MOTOR_FITS",
    "MSG_UNKNOWN_MOTOR",
    "MSG_TARGET_REQUIRED",
    "MSG_MOTORS_ONLY",
    "MSG_WATER_ONLY",
    "MSG_TUBE_BOTTOM_ONLY",
    "MSG_DUPLICATE_MOTOR",
    "MSG_BOUNDS",
]

#: Rail length assumed when a motor problem has no [launch].rail_length [m] (an assumption, said in the output).
DEFAULT_RAIL_LENGTH_M = 1.0

MSG_NO_MOTORS = "give a motor list file (hobby.motors) or [[motor]] tables; none given"
MSG_NO_MOTOR_FITS = "no motor of the list fits this stage (motor_diameter or allowed_motors)"
MSG_UNKNOWN_MOTOR = "names a motor that is not in the motor list"
MSG_TARGET_REQUIRED = "is required for kind = 'motors' (apogee above the launch site, m)"
MSG_MOTORS_ONLY = "applies to kind = 'motors' only"
MSG_WATER_ONLY = "applies to kind = 'water' only"
MSG_TUBE_BOTTOM_ONLY = "must be 0: only the bottom stage sits on a launch tube"
MSG_DUPLICATE_MOTOR = "motor names must be unique across the motor file and the [[motor]] tables"
MSG_BOUNDS = "must be two values [low, high]"

#: A plain number (SI) or a string with its unit, e.g. "1.5 L", "5 bar".
Quantity = Union[StrictFloat, StrictInt, StrictStr]


# ---------------------------------------------------------------- schema (mirrors the TOML)
class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


class OptimiseTable(_Strict):
    """[hobby.optimise]: what the water optimiser may vary (kind = "water")."""

    vary: list[Literal["fill", "pressure", "nozzle"]] = ["fill", "pressure", "nozzle"]
    max_pressure: Quantity | None = None  # Pa gauge, the user's cap (pump, launcher)
    fill_bounds: list[Quantity] | None = None  # - , [low, high], default [0.05, 0.8]
    nozzle_diameter_bounds: list[Quantity] | None = None  # m, default [0.004, 0.022]
    max_evaluations: StrictInt | None = Field(default=None, gt=0)  # flights in the Powell search
    n_grid: StrictInt | None = Field(default=None, ge=2)  # fill grid points seeding the search


class HobbyTable(_Strict):
    """[hobby]: the kind of stack and what it must do."""

    kind: Literal["motors", "water"]
    target_apogee: Quantity | None = None  # m above the launch site
    objective: Literal["mass", "cost"] | None = None  # motors
    min_thrust_to_weight: Quantity | None = None  # -, default 5 (DTEG 5.18.2)
    rail_rule: Literal["hobby", "dteg"] | None = None  # 15 m/s (common practice) / 30.48 m/s (DTEG 10.2.1)
    min_rail_exit_speed: Quantity | None = None  # m/s, overrides rail_rule
    max_acceleration: Quantity | None = None  # m/s^2
    match_target: StrictBool | None = None  # motors: ballast down to the target
    motors: StrictStr | None = None  # motor list file, relative to the problem file
    max_simulations: StrictInt | None = Field(default=None, gt=0)  # motors
    max_combinations: StrictInt | None = Field(default=None, gt=0)  # motors
    optimise: OptimiseTable | None = None  # water
    min_static_margin: Quantity | None = None  # calibers, motors with geometry; default 1 (common practice)
    stability_fix: Literal["ballast", "none"] | None = None  # motors with geometry; default "ballast"


class HobbyMissionTable(_Strict):
    """[mission]: the payload carried above the top stage."""

    name: StrictStr | None = None
    payload_mass: Quantity  # kg
    payload_diameter: Quantity | None = None  # m, if wider than the stages
    notes: StrictStr | None = None
    payload_position: Quantity | None = None  # m from the nose tip (CG of the payload); default the nose base
    ballast_position: Quantity | None = None  # m from the nose tip; default half the nose length


class HobbyLaunchTable(_Strict):
    """[launch]: site and launcher."""

    altitude: Quantity | None = None  # m above mean sea level
    rail_length: Quantity | None = None  # m (water: default the launch tube length)
    rail_angle: Quantity | None = None  # deg from vertical, [0, 30]
    wind_speed: Quantity | None = None  # m/s (at wind_reference_height for a power law)
    wind_direction: Quantity | None = None  # deg the wind blows from, clockwise from north
    wind_profile: StrictStr | None = None  # "constant", "power_law", "table"
    wind_reference_height: Quantity | None = None  # m, power law; default 10 m
    wind_exponent: Quantity | None = None  # -, power law; default 1/7
    wind_table: list[Any] | None = None  # [[height m, speed m/s, direction deg], ...]


class MotorStageTable(_Strict):
    """[[stage]] of a motor stack: the airframe; the search picks the motor."""

    name: StrictStr | None = None
    airframe_mass: Quantity  # kg, body, fins, coupler, recovery without motor
    diameter: Quantity  # m, body diameter (drag reference)
    motor_diameter: Quantity | None = None  # m, motor mount
    allowed_motors: list[StrictStr] | None = None
    coast_before_ignition: Quantity | None = None  # s
    drag_mach: list[Quantity] | None = None  # -
    drag_cd: list[Quantity] | None = None  # -
    geometry: StageGeometryTable | None = None  # outer shape and mass layout (stability, drag)
    recovery: RecoveryTable | None = None  # parachute, streamer or dual deployment


class WaterStageTable(_Strict):
    """[[stage]] of a water stack: one pressurised bottle."""

    name: StrictStr | None = None
    bottle_volume: Quantity  # m^3 ("1.5 L")
    dry_mass: Quantity  # kg, everything but water and air
    diameter: Quantity  # m
    nozzle_diameter: Quantity  # m
    pressure: Quantity  # Pa gauge at launch
    fill_fraction: Quantity  # -, water volume / bottle volume
    rated_pressure: Quantity  # Pa gauge, rated or tested burst pressure
    safety_factor: Quantity | None = None  # -, default 2
    launch_tube_length: Quantity | None = None  # m, bottom stage only
    launch_tube_diameter: Quantity | None = None  # m
    polytropic_exponent: Quantity | None = None  # -, [1, 1.4]
    drag_mach: list[Quantity] | None = None
    drag_cd: list[Quantity] | None = None


class _HobbyFileBase(_Strict):
    hobby: HobbyTable
    mission: HobbyMissionTable
    launch: HobbyLaunchTable | None = None
    dispersions: dict[str, Any] | None = None  # validated by sizing.problem.dispersions


class MotorHobbyFile(_HobbyFileBase):
    """A motor-stack problem file."""

    stage: list[MotorStageTable] = Field(min_length=1)
    motor: list[dict[str, Any]] | None = None


class WaterHobbyFile(_HobbyFileBase):
    """A water-stack problem file."""

    stage: list[WaterStageTable] = Field(min_length=1)


class _AnyHobbyFile(_HobbyFileBase):
    """Used when hobby.kind itself is wrong: report that and the other tables' faults."""

    stage: list[dict[str, Any]] = Field(min_length=1)
    motor: list[dict[str, Any]] | None = None


_TABLE_MODELS: dict[str, type[BaseModel]] = {
    "hobby": HobbyTable,
    "optimise": OptimiseTable,
    "mission": HobbyMissionTable,
    "launch": HobbyLaunchTable,
    "geometry": StageGeometryTable,
    "recovery": RecoveryTable,
}


# ---------------------------------------------------------------- frozen SI model
@dataclass(frozen=True, slots=True)
class MotorStageDef:
    """Airframe of one motor stage, SI units (the motor is chosen by the search)."""

    name: str
    airframe_mass_kg: float
    diameter_m: float
    motor_diameter_m: float | None = None
    allowed_motors: tuple[str, ...] | None = None
    coast_before_ignition_s: float = 0.0
    drag: DragCurve | None = None
    geometry: StageGeometryDef | None = None
    recovery: RecoveryDef = RecoveryDef()


@dataclass(frozen=True, slots=True)
class HobbyProblem:
    """A validated hobby problem, SI units. Options left out in the file are None.

    Attributes
    ----------
    kind : str
        ``"motors"`` or ``"water"``.
    target_apogee_m : float or None
        Apogee above the launch site [m]; required for motors, optional for water.
    min_thrust_to_weight : float or None
        Liftoff minimum [-]; None: the search default (5).
    rail_rule : str or None
        ``"hobby"`` or ``"dteg"``; None: ``"hobby"``.
    min_rail_exit_speed_m_s : float or None
        Overrides `rail_rule` [m/s].
    site : LaunchSite
        Altitude, rail length and rail angle.
    rail_length_given : bool
        False when the rail length is this loader's default (motors: 1.0 m;
        water: the bottom stage's launch tube length).
    """

    name: str
    source: str
    kind: str
    payload_mass_kg: float
    payload_diameter_m: float | None
    target_apogee_m: float | None
    site: LaunchSite
    rail_length_given: bool
    min_thrust_to_weight: float | None = None
    rail_rule: str | None = None
    min_rail_exit_speed_m_s: float | None = None
    max_acceleration_m_s2: float | None = None
    # motors
    objective: str = "mass"
    match_target: bool = False
    motors: tuple[Motor, ...] = ()
    motors_file: str | None = None
    motor_stages: tuple[MotorStageDef, ...] = ()
    max_simulations: int | None = None
    max_combinations: int | None = None
    # water
    water_stages: tuple[WaterStage, ...] = ()
    vary: tuple[str, ...] = ()
    max_gauge_pressure_pa: float | None = None
    fill_bounds: tuple[float, float] | None = None
    nozzle_diameter_bounds_m: tuple[float, float] | None = None
    max_evaluations: int | None = None
    n_grid: int | None = None
    # flight safety (motors)
    wind: Any = None  # sizing.physics.wind.WindProfile or None (calm)
    payload_position_m: float | None = None
    ballast_position_m: float | None = None
    min_static_margin_cal: float = DEFAULT_MIN_STATIC_MARGIN_CAL
    stability_fix: str = "ballast"
    dispersions: Any = None  # sizing.problem.dispersions.DispersionSpec or None

    @property
    def has_geometry(self) -> bool:
        """True when every motor stage has a [stage.geometry] table."""
        return bool(self.motor_stages) and all(s.geometry is not None for s in self.motor_stages)

    @property
    def stage_names(self) -> tuple[str, ...]:
        """Stage names, bottom first."""
        stages = self.motor_stages if self.kind == "motors" else self.water_stages
        return tuple(s.name for s in stages)


# ---------------------------------------------------------------- loading
def is_hobby_data(data: Mapping[str, Any]) -> bool:
    """True for parsed TOML with a top-level [hobby] table."""
    return isinstance(data, Mapping) and "hobby" in data


def load_hobby_problem(path: str | Path) -> HobbyProblem:
    """Load and validate a hobby problem file.

    Parameters
    ----------
    path : str or Path
        TOML file with [hobby], [mission], optional [launch] and [[stage]] tables.

    Returns
    -------
    HobbyProblem
        Frozen, SI units.

    Raises
    ------
    ProblemDefinitionError
        One line per fault, naming the file, the field, the value and what is allowed.
    """
    data = read_toml(path)
    return hobby_problem_from_dict(data, source=str(path), base_dir=Path(path).parent)


_UNION_TAGS = ("float", "int", "str", "bool", "function-after", "constrained-float", "constrained-int")


def _render(exc: ValidationError, data: Mapping[str, Any], stage_model: type[BaseModel] | None) -> list[str]:
    """One line per faulty field of a pydantic error, with this file layout's allowed keys."""
    faults: dict[str, str] = {}
    for err in exc.errors():
        loc = tuple(p for p in err["loc"] if not (isinstance(p, str) and ("[" in p or p in _UNION_TAGS)))
        where = _loc_label(data, loc) or "file"
        if where in faults:
            continue
        kind = err["type"]
        if kind == "extra_forbidden":
            owner: type[BaseModel] = _AnyHobbyFile
            for item in loc[:-1]:
                if item == "stage" and stage_model is not None:
                    owner = stage_model
                elif isinstance(item, str) and item in _TABLE_MODELS:
                    owner = _TABLE_MODELS[item]
            allowed = list(owner.model_fields)
            if owner is _AnyHobbyFile:
                allowed = ["[hobby]", "[mission]", "[launch]", "[[stage]]", "[[motor]]"]
            import difflib

            near = difflib.get_close_matches(str(loc[-1]), [a.strip("[]") for a in allowed], n=1)
            hint = f" Did you mean '{near[0]}'?" if near else ""
            faults[where] = f"{where}: {MSG_UNKNOWN_KEY}.{hint} Allowed: {', '.join(allowed)}."
        elif kind == "missing":
            faults[where] = f"{where}: {MSG_MISSING_KEY}."
        elif kind == "literal_error":
            faults[where] = f"{where}: must be one of {err.get('ctx', {}).get('expected', '')}. Got {err['input']!r}."
        elif kind == "too_short" and loc and loc[-1] == "stage":
            faults[where] = f"{where}: at least one [[stage]] table is required."
        elif kind in ("float_type", "int_type", "string_type", "float_parsing", "int_parsing"):
            faults[where] = f"{where}: must be a number (SI) or a string with a unit. Got {err['input']!r}."
        elif kind == "bool_type":
            faults[where] = f"{where}: must be true or false. Got {err['input']!r}."
        elif kind in ("list_type", "dict_type", "model_type"):
            faults[where] = f"{where}: has the wrong shape ({err['msg'].lower()}). Got {err['input']!r}."
        else:
            faults[where] = f"{where}: {err['msg'].rstrip('.')}. Got {err.get('input')!r}."
    return list(faults.values())


def _drag(col: _Collector, where: str, mach_raw, cd_raw) -> DragCurve | None:
    if mach_raw is None and cd_raw is None:
        return None
    if (mach_raw is None) != (cd_raw is None):
        col.fault(f"{where}: drag_mach and drag_cd go together; give both or neither.")
        return None
    mach = [col.quantity(f"{where}.drag_mach[{k + 1}]", v, "dimensionless", lo=0.0, lo_open=False)
            for k, v in enumerate(mach_raw)]
    cd = [col.quantity(f"{where}.drag_cd[{k + 1}]", v, "dimensionless", lo=0.0) for k, v in enumerate(cd_raw)]
    if None in mach or None in cd:
        return None
    try:
        return DragCurve(tuple(mach), tuple(cd))
    except FieldError as exc:
        key = "drag_cd" if exc.field.endswith("cd") else "drag_mach"
        col.fault(f"{where}.{key}: {exc.message} Got {mach_raw if key == 'drag_mach' else cd_raw!r}.")
        return None


def _bounds(col: _Collector, where: str, raw, kind: str, lo: float, hi: float | None, unit: str):
    if raw is None:
        return None
    if len(raw) != 2:
        col.fault(f"{where}: {MSG_BOUNDS}. Got {raw!r}.")
        return None
    a = col.quantity(f"{where}[1]", raw[0], kind, lo=lo, hi=hi)
    b = col.quantity(f"{where}[2]", raw[1], kind, lo=lo, hi=hi)
    if a is None or b is None:
        return None
    if not a < b:
        col.fault(f"{where}: {MSG_BOUNDS} with low < high{unit}. Got {raw!r}.")
        return None
    return (a, b)


def hobby_problem_from_dict(data: Mapping[str, Any], *, source: str = "<dict>",
                            base_dir: str | Path | None = None) -> HobbyProblem:
    """Validate a raw hobby problem (as read from TOML) and build the SI `HobbyProblem`.

    Parameters
    ----------
    data : Mapping
        Parsed TOML.
    source : str
        File name used in every error line.
    base_dir : str or Path or None
        Folder that ``hobby.motors`` is relative to (the problem file's
        folder); None: the current directory.

    Raises
    ------
    ProblemDefinitionError
        One line per fault.
    """
    if not isinstance(data, Mapping) or not is_hobby_data(data):
        raise ProblemDefinitionError(source, ["hobby: a hobby problem needs a [hobby] table."])
    hob = data.get("hobby")
    kind = hob.get("kind") if isinstance(hob, Mapping) else None
    model = {"motors": MotorHobbyFile, "water": WaterHobbyFile}.get(kind, _AnyHobbyFile)
    stage_model = {"motors": MotorStageTable, "water": WaterStageTable}.get(kind)
    pre = _other_kind_faults(data, hob, kind)
    try:
        pf = model.model_validate(data)
    except ValidationError as exc:
        raise ProblemDefinitionError(source, _render(exc, data, stage_model) + pre) from None
    assert kind in ("motors", "water")

    col = _Collector()
    col.faults.extend(pre)
    h = pf.hobby
    m = pf.mission
    payload = col.quantity("mission.payload_mass", m.payload_mass, "mass", lo=0.0, lo_open=False)
    payload_d = col.quantity("mission.payload_diameter", m.payload_diameter, "length", lo=0.0)
    target = col.quantity("hobby.target_apogee", h.target_apogee, "length", lo=0.0,
                          allowed="must be > 0 m above the launch site")
    if kind == "motors" and h.target_apogee is None:
        col.fault(f"hobby.target_apogee: {MSG_TARGET_REQUIRED}.")
    tw = col.quantity("hobby.min_thrust_to_weight", h.min_thrust_to_weight, "dimensionless", lo=1.0,
                      allowed="must be > 1 (thrust must exceed weight to leave the rail)")
    rail_min = col.quantity("hobby.min_rail_exit_speed", h.min_rail_exit_speed, "velocity", lo=0.0,
                            lo_open=False)
    if h.min_rail_exit_speed is not None and h.rail_rule is not None:
        col.fault(f"hobby: give rail_rule or min_rail_exit_speed, not both. Got rail_rule = {h.rail_rule!r}, "
                  f"min_rail_exit_speed = {h.min_rail_exit_speed!r}.")
    amax = col.quantity("hobby.max_acceleration", h.max_acceleration, "acceleration", lo=0.0)

    # -- launch site -------------------------------------------------------------
    L = pf.launch
    alt = col.quantity("launch.altitude", L.altitude if L else None, "length", lo=-500.0, hi=10000.0,
                       lo_open=False, hi_open=False)
    rail = col.quantity("launch.rail_length", L.rail_length if L else None, "length", lo=0.0, hi=100.0,
                        lo_open=False, hi_open=False)
    angle = col.quantity("launch.rail_angle", L.rail_angle if L else None, "angle", lo=0.0, hi=30.0,
                         lo_open=False, hi_open=False,
                         allowed="must be in [0, 30] degrees from vertical "
                                 "(hobby safety codes keep launchers within 30 degrees)")

    margin_min = col.quantity("hobby.min_static_margin", h.min_static_margin, "dimensionless", lo=0.0,
                              lo_open=False, allowed="must be >= 0 calibers")
    pay_x = col.quantity("mission.payload_position", m.payload_position, "length", lo=0.0, lo_open=False)
    bal_x = col.quantity("mission.ballast_position", m.ballast_position, "length", lo=0.0, lo_open=False)
    wind = parse_wind(col, L) if kind == "motors" else None

    base = Path(base_dir) if base_dir is not None else Path(".")
    motors: tuple[Motor, ...] = ()
    motor_stages: list[MotorStageDef] = []
    water_stages: list[WaterStage] = []
    opt = None
    if kind == "motors":
        motors = _collect_motors(col, pf, base, source)
        motor_stages = _motor_stages(col, data, pf, motors)
    else:
        opt = _water_options(col, h)
        water_stages = _water_stages(col, data, pf)

    rail_given = L is not None and L.rail_length is not None
    if rail is None:
        rail = DEFAULT_RAIL_LENGTH_M if kind == "motors" else (
            water_stages[0].launch_tube_length_m if water_stages else 0.0)

    from .dispersions import parse_dispersions

    stage_names = [s.name for s in (motor_stages if kind == "motors" else water_stages)]
    dispersions, faults = parse_dispersions(pf.dispersions, stage_names, has_wind=wind is not None)
    col.faults.extend(faults)
    if col.faults:
        raise ProblemDefinitionError(source, col.faults)
    site = LaunchSite(altitude_m=alt or 0.0, rail_length_m=rail, rail_angle_deg=angle or 0.0)
    common = dict(
        name=m.name or Path(source).stem, source=source, kind=kind, payload_mass_kg=payload,
        payload_diameter_m=payload_d, target_apogee_m=target, site=site, rail_length_given=rail_given,
        min_thrust_to_weight=tw, rail_rule=h.rail_rule, min_rail_exit_speed_m_s=rail_min,
        max_acceleration_m_s2=amax, dispersions=dispersions,
    )
    if kind == "motors":
        return HobbyProblem(
            **common, objective=h.objective or "mass", match_target=bool(h.match_target), motors=motors,
            motors_file=None if h.motors is None else str(base / h.motors), motor_stages=tuple(motor_stages),
            max_simulations=h.max_simulations, max_combinations=h.max_combinations, wind=wind,
            payload_position_m=pay_x, ballast_position_m=bal_x,
            min_static_margin_cal=DEFAULT_MIN_STATIC_MARGIN_CAL if margin_min is None else margin_min,
            stability_fix=h.stability_fix or "ballast",
        )
    vary, maxp, fb, nb, max_eval, n_grid = opt
    return HobbyProblem(
        **common, water_stages=tuple(water_stages), vary=vary, max_gauge_pressure_pa=maxp, fill_bounds=fb,
        nozzle_diameter_bounds_m=nb, max_evaluations=max_eval, n_grid=n_grid,
    )


def _other_kind_faults(data: Mapping[str, Any], hob, kind) -> list[str]:
    """Keys of the other kind (motors vs water), checked on the raw table so they are reported with the
    schema faults."""
    pre: list[str] = []
    if kind == "water":
        for k in ("objective", "match_target", "motors", "max_simulations", "max_combinations"):
            if k in hob:
                pre.append(f"hobby.{k}: {MSG_MOTORS_ONLY}. Got {hob[k]!r} with kind = 'water'.")
        if "max_acceleration" in hob:
            pre.append(f"hobby.max_acceleration: {MSG_MOTORS_ONLY} (the water optimiser has no acceleration "
                       f"limit; the output reports the maximum). Got {hob['max_acceleration']!r}.")
        for k in ("min_static_margin", "stability_fix"):
            if k in hob:
                pre.append(f"hobby.{k}: {MSG_MOTORS_ONLY}. Got {hob[k]!r} with kind = 'water'.")
        for tab, keys in (("launch", WIND_KEYS), ("mission", ("payload_position", "ballast_position"))):
            raw_tab = data.get(tab)
            for k in keys:
                if isinstance(raw_tab, Mapping) and k in raw_tab:
                    pre.append(f"{tab}.{k}: {MSG_MOTORS_ONLY}. Got {raw_tab[k]!r} with kind = 'water'.")
    elif kind == "motors" and "optimise" in hob:
        pre.append(f"hobby.optimise: {MSG_WATER_ONLY}. Got a [hobby.optimise] table with kind = 'motors'.")
    return pre


def _stage_name(col: _Collector, where: str, st, i: int, names: set[str]) -> str:
    """The stage's name (default "stage N"), faulted when it repeats one in `names` (which it joins)."""
    name = st.name or f"stage {i + 1}"
    if name in names:
        col.fault(f"{where}.name: stage names must be unique. Got {name!r} twice.")
    names.add(name)
    return name


def _collect_motors(col: _Collector, pf, base: Path, source: str) -> tuple[Motor, ...]:
    """The candidate motors: the hobby.motors file (relative to `base`) and inline [[motor]] tables."""
    h = pf.hobby
    found: list[Motor] = []
    origin: dict[str, str] = {}
    if h.motors is not None:
        motors_file = base / h.motors
        try:
            for mo in load_motors(motors_file):
                found.append(mo)
                origin[mo.name] = str(motors_file)
        except ProblemDefinitionError as exc:
            for f in exc.faults:
                col.fault(f"hobby.motors ({exc.source}): {f}")
    if pf.motor is not None:
        try:
            inline = parse_motors({"motor": pf.motor}, source=source)
        except ProblemDefinitionError as exc:
            for f in exc.faults:
                col.fault(f)
            inline = ()
        for mo in inline:
            if mo.name in origin:
                col.fault(f"motor ({mo.name}).name: {MSG_DUPLICATE_MOTOR}; {origin[mo.name]} has it too. "
                          f"Got {mo.name!r}.")
                continue
            found.append(mo)
            origin[mo.name] = source
    if h.motors is None and pf.motor is None:
        col.fault(f"hobby.motors: {MSG_NO_MOTORS}.")
    motors = tuple(found)
    if h.objective == "cost":
        missing = [mo.name for mo in motors if mo.cost is None]
        if missing:
            col.fault("hobby.objective: 'cost' needs a cost for every motor; missing for "
                      + ", ".join(missing[:5]) + (" ..." if len(missing) > 5 else "") + ". Got 'cost'.")
    return motors


def _motor_stages(col: _Collector, data: Mapping[str, Any], pf, motors: tuple[Motor, ...]) -> list[MotorStageDef]:
    """The [[stage]] tables of a motor stack, each checked against the candidate motors."""
    known = {mo.name for mo in motors}
    names: set[str] = set()
    out: list[MotorStageDef] = []
    for i, st in enumerate(pf.stage):
        where = _stage_label(data, i)
        name = _stage_name(col, where, st, i, names)
        af = col.quantity(f"{where}.airframe_mass", st.airframe_mass, "mass", lo=0.0, lo_open=False)
        dia = col.quantity(f"{where}.diameter", st.diameter, "length", lo=0.0)
        mdia = col.quantity(f"{where}.motor_diameter", st.motor_diameter, "length", lo=0.0)
        coast = col.quantity(f"{where}.coast_before_ignition", st.coast_before_ignition, "time", lo=0.0,
                             lo_open=False)
        drag = _drag(col, where, st.drag_mach, st.drag_cd)
        allowed = tuple(st.allowed_motors) if st.allowed_motors is not None else None
        if allowed is not None and motors:
            unknown = [a for a in allowed if a not in known]
            if unknown:
                col.fault(f"{where}.allowed_motors: {MSG_UNKNOWN_MOTOR}. Got {', '.join(map(repr, unknown))}; "
                          f"the list has {len(known)} motors (e.g. {', '.join(sorted(known)[:3])}).")
                continue
        if af is None or dia is None or (st.motor_diameter is not None and mdia is None):
            continue
        geo = _stage_geometry(col, data, pf.stage, i, where, dia, af)
        recovery = parse_recovery(col, where, st.recovery)
        sd = MotorStageDef(name, af, dia, mdia, allowed, coast or 0.0, drag, geo, recovery)
        if geo is not None and motors:
            short = sorted(mo.name for mo in motors if _fits(sd, mo) and mo.length_m is None)
            if short:
                col.fault(f"{where}.geometry: {MSG_MOTOR_LENGTH}; give `length` for "
                          + ", ".join(short[:5]) + (" ..." if len(short) > 5 else "") + ". Got none.")
        if motors and not any(_fits(sd, mo) for mo in motors):
            have = sorted({round(mo.diameter_m * 1000, 1) for mo in motors if mo.diameter_m})
            col.fault(f"{where}.motor_diameter: {MSG_NO_MOTOR_FITS}; motor diameters in the list: "
                      f"{', '.join(f'{d:g}' for d in have)} mm. Got {st.motor_diameter!r}.")
            continue
        out.append(sd)
    _geometry_rules(col, data, pf)
    return out


def _geometry_rules(col: _Collector, data: Mapping[str, Any], pf) -> None:
    """Geometry on every stage or none; stability keys need it."""
    h, m = pf.hobby, pf.mission
    with_geo = [st.geometry is not None for st in pf.stage]
    if any(with_geo) and not all(with_geo):
        col.fault(f"{_stage_label(data, with_geo.index(False))}.geometry: {MSG_GEOMETRY_ALL_OR_NONE}. "
                  f"Got geometry on {sum(with_geo)} of {len(with_geo)} stages.")
    if not any(with_geo):
        for k, v in (("hobby.min_static_margin", h.min_static_margin), ("hobby.stability_fix", h.stability_fix),
                     ("mission.payload_position", m.payload_position),
                     ("mission.ballast_position", m.ballast_position)):
            if v is not None:
                col.fault(f"{k}: {MSG_GEOMETRY_NEEDED}. Got {v!r}.")


def _water_options(col: _Collector, h) -> tuple:
    """[hobby.optimise] of a water stack: (vary, max pressure, fill bounds, nozzle bounds, evaluations, grid)."""
    o = h.optimise or OptimiseTable()
    vary = tuple(dict.fromkeys(o.vary))
    if len(vary) != len(o.vary):
        col.fault(f"hobby.optimise.vary: each name once. Got {list(o.vary)!r}.")
    maxp = col.quantity("hobby.optimise.max_pressure", o.max_pressure, "pressure", lo=0.0)
    fb = _bounds(col, "hobby.optimise.fill_bounds", o.fill_bounds, "dimensionless", 0.0, 1.0, "")
    nb = _bounds(col, "hobby.optimise.nozzle_diameter_bounds", o.nozzle_diameter_bounds, "length", 0.0,
                 None, " (m)")
    return vary, maxp, fb, nb, o.max_evaluations, o.n_grid


def _water_stages(col: _Collector, data: Mapping[str, Any], pf) -> list[WaterStage]:
    """The [[stage]] tables of a water stack in SI."""
    names: set[str] = set()
    out: list[WaterStage] = []
    for i, st in enumerate(pf.stage):
        where = _stage_label(data, i)
        name = _stage_name(col, where, st, i, names)
        n0 = len(col.faults)
        q = col.quantity
        vol = q(f"{where}.bottle_volume", st.bottle_volume, "volume", lo=0.0)
        dry = q(f"{where}.dry_mass", st.dry_mass, "mass", lo=0.0, lo_open=False)
        dia = q(f"{where}.diameter", st.diameter, "length", lo=0.0)
        noz = q(f"{where}.nozzle_diameter", st.nozzle_diameter, "length", lo=0.0)
        pg = q(f"{where}.pressure", st.pressure, "pressure", lo=0.0, allowed="must be > 0 Pa (gauge)")
        fill = q(f"{where}.fill_fraction", st.fill_fraction, "dimensionless", lo=0.0, hi=1.0)
        rated = q(f"{where}.rated_pressure", st.rated_pressure, "pressure", lo=0.0,
                  allowed="must be > 0 Pa (gauge)")
        sf = q(f"{where}.safety_factor", st.safety_factor, "dimensionless", lo=MIN_SAFETY_FACTOR,
               lo_open=False, allowed=MSG_SAFETY_FACTOR)
        tl = q(f"{where}.launch_tube_length", st.launch_tube_length, "length", lo=0.0, lo_open=False)
        td = q(f"{where}.launch_tube_diameter", st.launch_tube_diameter, "length", lo=0.0)
        n_exp = q(f"{where}.polytropic_exponent", st.polytropic_exponent, "dimensionless", lo=1.0, hi=1.4,
                  lo_open=False, hi_open=False)
        drag = _drag(col, where, st.drag_mach, st.drag_cd)
        if i > 0 and tl:
            col.fault(f"{where}.launch_tube_length: {MSG_TUBE_BOTTOM_ONLY}. Got {st.launch_tube_length!r}.")
        if len(col.faults) > n0:
            continue
        kw: dict[str, Any] = {}
        if n_exp is not None:
            kw["polytropic_exponent"] = n_exp
        try:
            out.append(WaterStage(
                name, vol, dry, dia, noz, pg, fill, rated,
                safety_factor=DEFAULT_SAFETY_FACTOR if sf is None else sf,
                launch_tube_length_m=tl or 0.0, launch_tube_diameter_m=td, drag=drag, **kw,
            ))
        except FieldError as exc:
            key = exc.field.rsplit(".", 1)[-1]
            raw = getattr(st, key, None) if key in WaterStageTable.model_fields else exc.value
            got = f" Got {raw!r}." if raw is not None else ""
            col.fault(f"{where}.{key}: {exc.message}{got}")
    return out


def _stage_geometry(col: _Collector, data: Mapping[str, Any], tables, i: int, where: str,
                    diameter_m: float | None, airframe_mass_kg: float | None) -> StageGeometryDef | None:
    """[stage.geometry] of motor stage `i` (None when not given or faulty)."""
    g = tables[i].geometry
    if g is None:
        return None
    is_top = i == len(tables) - 1
    needs_tr = False
    if not is_top and diameter_m is not None:
        try:
            above = to_si(tables[i + 1].diameter, "length")
        except ValueError:  # reported with the stage above
            above = diameter_m
        needs_tr = abs(above - diameter_m) > 1e-9
    return parse_geometry(col, where, g, is_top=is_top, needs_transition=needs_tr,
                          airframe_mass_kg=airframe_mass_kg)


def _fits(stage: MotorStageDef, motor: Motor) -> bool:
    """Same rule as `sizing.optimize.hobby.StackStage.fits`: allowed list, mount diameter within 0.5 mm."""
    if stage.allowed_motors is not None and motor.name not in stage.allowed_motors:
        return False
    if stage.motor_diameter_m is not None and motor.diameter_m is not None:
        return abs(motor.diameter_m - stage.motor_diameter_m) <= 5e-4
    return True
