"""Study files: strict schema, loading, and expansion into cases.

A study file (TOML) names a base problem, the axes that vary its fields, the
discrete choices (number of stages, propellant per stage), the objectives and
the constraints. `load_study` validates all of it before any numerics and
raises `StudyDefinitionError` with one line per fault: the file, the dotted
field, the value and what is allowed. `expand_cases` turns a study into its
list of cases; each case is the base problem's raw TOML structure, edited, so
that `sizing.problem.load.problem_from_dict` keeps all problem validation.

See docs/studies.md for every key and its unit.
"""

from __future__ import annotations

import copy
import difflib
import hashlib
import itertools
import json
import math
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal, Mapping

from pydantic import BaseModel, ConfigDict, Field, ValidationError, model_validator

from ..errors import ProblemDefinitionError, StudyDefinitionError
from ..units import to_si

__all__ = [
    "Study",
    "Case",
    "Objective",
    "Bound",
    "StudyFile",
    "CORE_METRICS",
    "FIELD_UNITS",
    "METRIC_SENSES",
    "MSG_AXIS_FORM",
    "MSG_UNKNOWN_STAGE",
    "MSG_FIELD_PATH",
    "MSG_UNKNOWN_PROPELLANT",
    "MSG_SAMPLED_NEEDS_METHOD",
    "unknown_metric_text",
    "load_study",
    "study_from_dict",
    "expand_cases",
    "apply_case",
]

MSG_AXIS_FORM = "give exactly one of: values = [...]; start, stop, num; low, high"
MSG_UNKNOWN_STAGE = "no stage of that name in the base problem"
MSG_FIELD_PATH = ("must be 'TABLE.key', 'stage.NAME.key' or 'stage.NAME.structure.key' "
                  "(NAME may be '*' for every stage)")
MSG_UNKNOWN_PROPELLANT = "is not in the [propellants] table"
MSG_SAMPLED_NEEDS_METHOD = "low/high axes need [study].design = 'lhs' or 'sobol', or levels = n for 'grid'"

#: Metrics every successful case has, with the sense an objective takes by default.
CORE_METRICS: dict[str, str] = {
    "gross_mass_kg": "min",
    "payload_mass_kg": "max",
    "delta_v_m_s": "max",
    "dry_mass_kg": "min",
    "propellant_mass_kg": "min",
    "n_stages": "min",
    "cost": "min",
    "payload_fraction": "max",
}
#: Flight metrics known to come from flight-aware results (apogee / orbit targets).
FLIGHT_METRICS: dict[str, str] = {
    "max_acceleration_m_s2": "min",
    "max_dynamic_pressure_pa": "min",
    "liftoff_thrust_to_weight": "max",
    "apogee_m": "max",
    "losses_total_m_s": "min",
    "rail_exit_speed_m_s": "max",
}
METRIC_SENSES: dict[str, str] = {**CORE_METRICS, **FLIGHT_METRICS}

_ALLOWED_TABLES = ("mission", "stage", "launch", "solver")

#: SI unit of each problem-file key an axis may vary (axis values are in this unit).
FIELD_UNITS = {
    "payload_mass": "kg", "delta_v": "m/s", "gross_mass": "kg", "apogee": "m",
    "orbit_altitude": "m", "inclination": "deg", "max_gross_mass": "kg",
    "max_acceleration": "m/s^2", "standard_gravity": "m/s^2", "isp": "s", "isp_sea_level": "s",
    "exhaust_velocity": "m/s", "structural_coefficient": "-", "thrust_to_weight": "-",
    "thrust": "N", "diameter": "m", "nozzle_exit_area": "m^2", "coast_before_ignition": "s",
    "max_ignition_mass": "kg", "min_mass_ratio": "-", "max_mass_ratio": "-",
    "min_delta_v_share": "-", "max_delta_v_share": "-", "propellant_mass": "kg",
    "structural_mass": "kg", "altitude": "m", "latitude": "deg", "azimuth": "deg",
    "rail_length": "m", "rail_angle": "deg", "pitch_kick": "deg", "vertical_rise_time": "s",
    "staging_delay": "s", "payload_diameter": "m", "stage_count": "-",
    "max_iterations": "-", "tolerance": "-",
    "propellant": "name", "engine_count": "-", "chamber_pressure": "Pa", "expansion_ratio": "-",
    "min_thrust_to_weight": "-", "max_thrust_to_weight": "-", "gravity_loss_factor": "-",
    "material": "name", "tank_pressure": "Pa", "interstage_length": "m", "extra_length": "m",
}


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


Scalar = float | int | str


class StudyTable(_Strict):
    """[study]: name, sampling design and solver choice."""

    name: str = "study"
    vehicle: str | None = None
    description: str | None = None
    design: Literal["grid", "lhs", "sobol"] = "grid"
    samples: int | None = Field(default=None, gt=0, le=1_000_000)
    seed: int = 0
    solver: Literal["auto", "batch", "each"] = "auto"
    method: Literal["auto", "lagrange", "cvxpy", "slsqp"] = "auto"


class AxisTable(_Strict):
    """[[axis]]: one problem field varied over levels or a sampled interval."""

    field: str
    label: str | None = None
    values: list[Scalar] | None = Field(default=None, min_length=1)
    start: float | None = None
    stop: float | None = None
    num: int | None = Field(default=None, ge=1, le=100_000)
    low: float | None = None
    high: float | None = None
    scale: Literal["linear", "log"] = "linear"
    levels: int | None = Field(default=None, ge=1, le=100_000)

    @model_validator(mode="after")
    def _one_form(self) -> "AxisTable":
        forms = [
            self.values is not None,
            any(v is not None for v in (self.start, self.stop, self.num)),
            any(v is not None for v in (self.low, self.high)),
        ]
        if sum(forms) != 1:
            raise ValueError(MSG_AXIS_FORM)
        if forms[1] and None in (self.start, self.stop, self.num):
            raise ValueError("start, stop and num go together; give all three")
        if forms[2]:
            if None in (self.low, self.high):
                raise ValueError("low and high go together; give both")
            if not self.low < self.high:  # type: ignore[operator]
                raise ValueError(f"low must be < high. Got low = {self.low}, high = {self.high}")
        if (self.scale == "log") and (forms[0] or (forms[2] and self.low <= 0)  # type: ignore[operator]
                                      or (forms[1] and min(self.start, self.stop) <= 0)):  # type: ignore[type-var]
            raise ValueError("scale = 'log' needs a range or low/high above 0")
        if self.levels is not None and not forms[2]:
            raise ValueError("levels applies to low/high axes only")
        return self

    @property
    def is_sampled(self) -> bool:
        return self.low is not None


class PropellantTable(_Strict):
    """[propellants.NAME]: one propellant option a stage may take."""

    isp: Scalar | None = None
    exhaust_velocity: Scalar | None = None
    structural_coefficient: Scalar
    isp_sea_level: Scalar | None = None
    cost_per_dry_kg: float | None = Field(default=None, ge=0)
    cost_per_propellant_kg: float | None = Field(default=None, ge=0)
    description: str | None = None

    @model_validator(mode="after")
    def _isp_or_ve(self) -> "PropellantTable":
        if (self.isp is None) == (self.exhaust_velocity is None):
            raise ValueError("give exactly one of isp (s) or exhaust_velocity (m/s)")
        return self


class ChoicesTable(_Strict):
    """[choices]: discrete choices crossed with the axes."""

    stage_count: list[int] | None = Field(default=None, min_length=1)
    propellant: dict[str, list[str]] = Field(default_factory=dict)


class ObjectiveTable(_Strict):
    """[[objective]]: a metric to minimise or maximise."""

    metric: str
    sense: Literal["min", "max"] | None = None
    label: str | None = None


class CostTable(_Strict):
    """[cost]: the cost model, in a currency unit the user names."""

    unit: str = "cost units"
    per_dry_kg: float = Field(default=0.0, ge=0)
    per_stage: float = Field(default=0.0, ge=0)
    per_propellant_kg: float = Field(default=0.0, ge=0)


class BoundTable(_Strict):
    """[[constraints.bound]]: a limit on any metric."""

    metric: str
    min: float | None = None
    max: float | None = None

    @model_validator(mode="after")
    def _some(self) -> "BoundTable":
        if self.min is None and self.max is None:
            raise ValueError("give min, max or both")
        return self


class ConstraintsTable(_Strict):
    """[constraints]: limits a design must meet to count as feasible."""

    max_gross_mass: Scalar | None = None
    max_acceleration: Scalar | None = None
    min_liftoff_thrust_to_weight: float | None = Field(default=None, gt=0)
    bound: list[BoundTable] = Field(default_factory=list)


class BaseTable(_Strict):
    """[base]: the base problem, a path or inline problem tables."""

    model_config = ConfigDict(extra="allow", frozen=True)
    problem: str | None = None


class StudyFile(_Strict):
    """The whole study file."""

    study: StudyTable = StudyTable()
    base: BaseTable
    axis: list[AxisTable] = Field(default_factory=list)
    propellants: dict[str, PropellantTable] = Field(default_factory=dict)
    choices: ChoicesTable = ChoicesTable()
    objective: list[ObjectiveTable] = Field(min_length=1, max_length=3)
    cost: CostTable | None = None
    constraints: ConstraintsTable = ConstraintsTable()


@dataclass(frozen=True, slots=True)
class Objective:
    """A resolved objective: metric name, 'min' or 'max', and a display label."""

    metric: str
    sense: str
    label: str


@dataclass(frozen=True, slots=True)
class Bound:
    """A resolved constraint on a metric (SI): min_value <= metric <= max_value."""

    metric: str
    min_value: float | None
    max_value: float | None
    label: str


@dataclass(frozen=True)
class Case:
    """One point of the study.

    Attributes
    ----------
    case_id : int
        Position in the expansion order, stable for a given study file.
    key : str
        Hash of `inputs`; the same inputs always give the same key.
    inputs : dict
        Axis label or choice name -> value (None where it does not apply).
    problem : dict or None
        The raw problem structure for `problem_from_dict` (None when expanded
        with ``with_problems=False``; workers then build it with `apply_case`).
    """

    case_id: int
    key: str
    inputs: dict[str, Any]
    problem: dict[str, Any] | None = field(default=None, repr=False)


@dataclass(frozen=True)
class Study:
    """A validated study.

    Attributes
    ----------
    source : str
        Path of the study file (or "<dict>").
    spec : StudyFile
        The validated file.
    base : dict
        Raw base problem structure.
    objectives, bounds : tuple
        Resolved objectives and constraints.
    fingerprint : str
        sha256 of the parsed study and base problem content: a changed study
        file has a different fingerprint; comments and spacing do not count.
    """

    source: str
    spec: StudyFile
    base: dict[str, Any]
    objectives: tuple[Objective, ...]
    bounds: tuple[Bound, ...]
    fingerprint: str
    raw: dict[str, Any] = field(repr=False)

    @property
    def name(self) -> str:
        return self.spec.study.name

    @property
    def cost_unit(self) -> str:
        return self.spec.cost.unit if self.spec.cost else "cost units"


def _loc(loc: tuple) -> str:
    out = ""
    for item in loc:
        if isinstance(item, int):
            out += f"[{item + 1}]"
        else:
            out += ("." if out else "") + str(item)
    return out


_MODELS: dict[str, type[BaseModel]] = {
    "study": StudyTable, "axis": AxisTable, "propellants": PropellantTable,
    "choices": ChoicesTable, "objective": ObjectiveTable, "cost": CostTable,
    "constraints": ConstraintsTable, "bound": BoundTable,
}


#: The validation library's error kinds, in the project's words ("must be ...").
_KIND_WORDS = {
    "float_parsing": "must be a number", "float_type": "must be a number",
    "int_parsing": "must be a whole number", "int_type": "must be a whole number",
    "int_from_float": "must be a whole number", "string_type": "must be text (a quoted string)",
    "list_type": "must be a list [...]", "bool_type": "must be true or false",
    "bool_parsing": "must be true or false", "dict_type": "must be a table",
    "model_type": "must be a table", "model_attributes_type": "must be a table",
    "finite_number": "must be a finite number",
}
_BOUND_WORDS = {"greater_than": ("gt", ">"), "greater_than_equal": ("ge", ">="),
                "less_than": ("lt", "<"), "less_than_equal": ("le", "<=")}
_AXIS_NUMBERS = ("start", "stop", "low", "high")


def _axis_field(data: Mapping[str, Any] | None, index: int) -> str | None:
    try:
        f = data["axis"][index]["field"]  # type: ignore[index]
    except (KeyError, IndexError, TypeError):
        return None
    return f if isinstance(f, str) else None


def _render(exc: ValidationError, data: Mapping[str, Any] | None = None) -> list[str]:
    faults: dict[str, str] = {}
    for err in exc.errors():
        loc = tuple(p for p in err["loc"] if not (isinstance(p, str) and (
            "[" in p or p in ("float", "int", "str", "function-after"))))
        where = _loc(loc) or "file"
        if where in faults:
            continue
        kind = err["type"]
        got = err.get("input")
        if kind == "extra_forbidden":
            key = str(loc[-1])
            model: type[BaseModel] = StudyFile
            for p in loc[:-1]:
                if isinstance(p, str) and p in _MODELS:
                    model = _MODELS[p]
            allowed = list(model.model_fields)
            near = difflib.get_close_matches(key, allowed, n=1)
            hint = f" Did you mean '{near[0]}'?" if near else ""
            faults[where] = f"{where}: unknown key.{hint} Allowed keys: {', '.join(allowed)}."
        elif kind == "missing":
            faults[where] = f"{where}: required key is missing."
        elif kind == "literal_error":
            faults[where] = f"{where}: must be one of {err['ctx']['expected']}. Got {got!r}."
        elif kind == "value_error":
            msg = str(err["ctx"].get("error", err["msg"])).rstrip(".")
            faults[where] = f"{where}: {msg}."
        elif kind in _KIND_WORDS:
            words = _KIND_WORDS[kind]
            if (len(loc) == 3 and loc[0] == "axis" and isinstance(loc[1], int)
                    and loc[2] in _AXIS_NUMBERS):
                fld = _axis_field(data, loc[1])
                unit = FIELD_UNITS.get(fld.rsplit(".", 1)[-1]) if fld else None
                words += (f" in the field's SI unit ({unit} for {fld})" if unit
                          else " in the field's SI unit")
                words += "; unit strings such as '4 kg' are allowed in values = [...] only"
            faults[where] = f"{where}: {words}. Got {got!r}."
        elif kind in _BOUND_WORDS:
            key, op = _BOUND_WORDS[kind]
            faults[where] = f"{where}: must be {op} {err['ctx'][key]}. Got {got!r}."
        elif kind in ("too_short", "too_long"):
            n = err["ctx"].get("min_length" if kind == "too_short" else "max_length")
            words = f"needs at least {n}" if kind == "too_short" else f"allows at most {n}"
            faults[where] = f"{where}: {words} entries. Got {err['ctx'].get('actual_length')}."
        else:
            msg = err["msg"].rstrip(".")
            faults[where] = f"{where}: {msg}. Got {got!r}."
    return list(faults.values())


def _canonical(obj: Any) -> str:
    return json.dumps(obj, sort_keys=True, separators=(",", ":"), default=str)


def load_study(path: str | Path) -> Study:
    """Read and validate a study file.

    Parameters
    ----------
    path : str or Path
        TOML study file. A relative ``[base].problem`` path is taken
        relative to the study file's folder.

    Returns
    -------
    Study

    Raises
    ------
    StudyDefinitionError
        One line per fault: file, dotted field, value, what is allowed.
    """
    p = Path(path)
    try:
        text = p.read_bytes().decode("utf-8")
    except FileNotFoundError:
        raise StudyDefinitionError(str(p), ["file not found."]) from None
    except IsADirectoryError:
        raise StudyDefinitionError(str(p), ["is a directory, not a TOML study file."]) from None
    except UnicodeDecodeError:
        raise StudyDefinitionError(str(p), ["must be UTF-8 text."]) from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise StudyDefinitionError(str(p), [f"is not valid TOML: {exc}."]) from None
    return study_from_dict(data, source=str(p), base_dir=p.parent)


def study_from_dict(data: Mapping[str, Any], *, source: str = "<dict>",
                    base_dir: str | Path | None = None) -> Study:
    """Validate a raw study structure (as read from TOML) and build a `Study`.

    The checks run in a fixed order (base problem, propellant choices,
    propellant table, stage counts, axes, sampling design, objectives,
    constraints) and every fault is collected, so the error names them all
    at once, in that order.

    Parameters
    ----------
    data : mapping
        The parsed study file.
    source : str
        Named in error messages.
    base_dir : str or Path, optional
        Folder against which ``[base].problem`` is resolved (default: cwd).

    Raises
    ------
    StudyDefinitionError
    """
    try:
        spec = StudyFile.model_validate(data)
    except ValidationError as exc:
        raise StudyDefinitionError(source, _render(exc, data)) from None
    faults: list[str] = []
    base, base_text = _read_base(spec, source=source, base_dir=base_dir, faults=faults)
    stages = base.get("stage") if isinstance(base.get("stage"), list) else []
    stage_names = [s.get("name") if isinstance(s, dict) else None for s in stages]
    _check_propellant_choices(spec, stage_names, faults)
    _check_propellant_table(spec, faults)
    _check_stage_counts(spec, len(stages), faults)
    _check_axes(spec, stage_names, faults)
    _check_sampling_design(spec, faults)
    objectives = _resolve_objectives(spec, stages, faults)
    bounds = _resolve_bounds(spec.constraints, faults)
    if faults:
        raise StudyDefinitionError(source, faults)
    raw = copy.deepcopy(dict(data))
    fp = hashlib.sha256(_canonical({"study": raw, "base": base_text}).encode()).hexdigest()
    return Study(source=source, spec=spec, base=base, objectives=tuple(objectives),
                 bounds=tuple(bounds), fingerprint=fp, raw=raw)


def _read_base(spec: StudyFile, *, source: str, base_dir: str | Path | None,
               faults: list[str]) -> tuple[dict[str, Any], str | None]:
    """The base problem's raw structure, from ``[base].problem`` or the inline tables.

    Parameters
    ----------
    spec : StudyFile
        The validated study file.
    source : str
        Study file named in error messages.
    base_dir : str or Path or None
        Folder against which ``[base].problem`` is resolved (None: cwd).
    faults : list of str
        Appended to: giving both a path and inline tables, or neither.

    Returns
    -------
    base : dict
        Raw base problem structure (a copy of the inline tables, or the file read).
    base_text : str or None
        Canonical text of the base file for the fingerprint; None for inline tables.

    Raises
    ------
    StudyDefinitionError
        When the base problem file cannot be read: nothing else can be checked
        without it, so this one line stops the validation.
    """
    inline = dict(spec.base.model_extra or {})
    if spec.base.problem is None:
        if not inline:
            faults.append("base: give problem = \"path/to/problem.toml\" or inline "
                          "[base.mission] and [[base.stage]] tables.")
        return copy.deepcopy(inline), None
    if inline:
        faults.append(f"base: give problem = \"path\" or inline tables, not both. "
                      f"Got problem and {', '.join(sorted(inline))}.")
    ppath = Path(base_dir or ".") / spec.base.problem
    try:
        from ..problem.load import read_toml

        base = read_toml(ppath)
    except ProblemDefinitionError as exc:
        raise StudyDefinitionError(source, [f"base.problem: cannot read {spec.base.problem!r} "
                                            f"(relative to the study file): " + "; ".join(exc.faults)]
                                   ) from None
    return base, _canonical(base)


def _check_propellant_choices(spec: StudyFile, stage_names: list[str | None], faults: list[str]) -> None:
    """``[choices].propellant``: known stages, at least one option each, options in ``[propellants]``."""
    for sname, options in spec.choices.propellant.items():
        if sname not in stage_names:
            faults.append(f"choices.propellant.{sname}: {MSG_UNKNOWN_STAGE}. Got {sname!r}; "
                          f"stages are {', '.join(repr(n) for n in stage_names if n) or 'unnamed'}.")
        if not options:
            faults.append(f"choices.propellant.{sname}: needs at least one propellant name.")
        for opt in options:
            if opt not in spec.propellants:
                faults.append(f"choices.propellant.{sname}: {opt!r} {MSG_UNKNOWN_PROPELLANT} "
                              f"(defined: {', '.join(sorted(spec.propellants)) or 'none'}).")


def _positive_si(value: Any, kind: str, unit_text: str = "") -> float:
    """`value` converted to SI by `sizing.units.to_si`, required > 0.

    Parameters
    ----------
    value : float or str
        A number in SI or a quantity string such as ``"300 s"``.
    kind : str
        Unit kind for `to_si` (``"time"``, ``"velocity"``, ``"mass"``, ...).
    unit_text : str
        Shown after ``must be > 0`` in the message, e.g. ``" s"``.

    Returns
    -------
    float
        The value in SI [unit of `kind`], > 0.

    Raises
    ------
    ValueError
        Wrong dimension or not a quantity (from `to_si`), or <= 0.
    """
    v = to_si(value, kind)
    if v <= 0:
        raise ValueError(f"must be > 0{unit_text}. Got {value!r}.")
    return v


def _check_propellant_table(spec: StudyFile, faults: list[str]) -> None:
    """``[propellants.NAME]``: Isp [s] or exhaust velocity [m/s] > 0, structural coefficient in (0, 1)."""
    for k, prop in spec.propellants.items():
        try:
            if prop.isp is not None:
                _positive_si(prop.isp, "time", " s")
            else:
                _positive_si(prop.exhaust_velocity, "velocity", " m/s")
        except ValueError as exc:
            faults.append(f"propellants.{k}.{'isp' if prop.isp is not None else 'exhaust_velocity'}: {exc}")
        try:
            e = to_si(prop.structural_coefficient, "dimensionless")
            if not 0.0 < e < 1.0:
                raise ValueError(f"must be in (0, 1). Got {prop.structural_coefficient!r}.")
        except ValueError as exc:
            faults.append(f"propellants.{k}.structural_coefficient: {exc}")


def _check_stage_counts(spec: StudyFile, n_stages: int, faults: list[str]) -> None:
    """``[choices].stage_count``: each count k in [1, stages of the base problem] (the first k are used)."""
    if spec.choices.stage_count is None:
        return
    for n in spec.choices.stage_count:
        if not 1 <= n <= n_stages:
            faults.append(f"choices.stage_count: each count must be in [1, {n_stages}] "
                          f"(the base problem defines {n_stages} stages, bottom first; "
                          f"a count k uses the first k). Got {n}.")


def _is_field_path(parts: list[str]) -> bool:
    """True for 'TABLE.key', 'stage.NAME.key' or 'stage.NAME.structure.key' with no empty part."""
    ok = len(parts) == 2 and parts[0] in _ALLOWED_TABLES and parts[0] != "stage"
    ok = ok or (len(parts) == 3 and parts[0] == "stage")
    ok = ok or (len(parts) == 4 and parts[0] == "stage" and parts[2] == "structure")  # stage model keys
    return ok and all(parts)


def _check_axes(spec: StudyFile, stage_names: list[str | None], faults: list[str]) -> None:
    """``[[axis]]``: a valid field path on a known stage, each field once, sampled axes with a design."""
    labels: set[str] = set()
    for i, ax in enumerate(spec.axis):
        where = f"axis[{i + 1}].field"
        parts = ax.field.split(".")
        if not _is_field_path(parts):
            faults.append(f"{where}: {MSG_FIELD_PATH}; TABLE is one of "
                          f"{', '.join(_ALLOWED_TABLES)}. Got {ax.field!r}.")
            continue
        if parts[0] == "stage" and parts[1] != "*" and parts[1] not in stage_names:
            faults.append(f"{where}: {MSG_UNKNOWN_STAGE}. Got {parts[1]!r}; stages are "
                          f"{', '.join(repr(n) for n in stage_names if n) or 'unnamed (give them names)'}.")
        label = ax.label or ax.field
        if label in labels:
            faults.append(f"axis[{i + 1}].label: two axes vary {label!r}; each field once.")
        labels.add(label)
        if ax.is_sampled and spec.study.design == "grid" and ax.levels is None:
            faults.append(f"axis[{i + 1}]: {MSG_SAMPLED_NEEDS_METHOD}. Got low = {ax.low:g}, "
                          f"high = {ax.high:g} with design = 'grid'.")
        _check_axis_unit_strings(ax, i, faults)


def _check_axis_unit_strings(ax: AxisTable, i: int, faults: list[str]) -> None:
    """Strings in ``values = [...]`` of a quantity field read with `to_si` at load, before any case runs
    ("150" with no unit, "150 m" for a mass); numbers and their ranges are the problem loader's, per case."""
    from .labels import si_kind  # local: labels imports this module

    kind = si_kind(ax.field)
    if ax.values is None or kind is None:
        return
    for j, v in enumerate(ax.values):
        if isinstance(v, str):
            try:
                to_si(v, kind)
            except ValueError as exc:
                faults.append(f"axis[{i + 1}].values[{j + 1}] ({ax.field}): {exc}")


def _check_sampling_design(spec: StudyFile, faults: list[str]) -> None:
    """``[study].design`` 'lhs' or 'sobol': needs low/high axes and a number of samples."""
    if spec.study.design == "grid":
        return
    if not any(ax.is_sampled for ax in spec.axis):
        faults.append(f"study.design: {spec.study.design!r} samples the low/high axes, and there "
                      f"are none. Give an axis low/high or use design = 'grid'.")
    if spec.study.samples is None:
        faults.append(f"study.samples: required with design = {spec.study.design!r} "
                      f"(number of points drawn over the low/high axes).")


def _resolve_objectives(spec: StudyFile, stages: list, faults: list[str]) -> list[Objective]:
    """``[[objective]]`` with their senses: each metric once, a known metric or an explicit sense.

    A metric without a known sense gets 'min' after its fault is recorded, so
    the remaining checks still run.
    """
    objectives: list[Objective] = []
    seen: set[str] = set()
    for i, ob in enumerate(spec.objective):
        if ob.metric in seen:
            faults.append(f"objective[{i + 1}].metric: {ob.metric!r} is listed twice.")
        seen.add(ob.metric)
        sense = ob.sense or METRIC_SENSES.get(ob.metric)
        if sense is None:
            faults.append(f"objective[{i + 1}].metric: {unknown_metric_text(ob.metric)} Another "
                          f"numeric result entry needs sense = 'min' or 'max'.")
            sense = "min"
        if ob.metric == "cost" and spec.cost is None and not _base_has_costs(stages):
            faults.append(f"objective[{i + 1}].metric: 'cost' needs a [cost] table (per_dry_kg, "
                          f"per_stage, per_propellant_kg) or cost keys on the stages.")
        objectives.append(Objective(ob.metric, sense, ob.label or ob.metric))
    return objectives


def _resolve_bounds(c: ConstraintsTable, faults: list[str]) -> list[Bound]:
    """``[constraints]`` as `Bound` records in SI.

    In this order: max_gross_mass [kg] and max_acceleration [m/s^2] (each > 0),
    min_liftoff_thrust_to_weight [-], then each ``[[constraints.bound]]`` as given.
    """
    bounds: list[Bound] = []
    for key, metric, kind in (("max_gross_mass", "gross_mass_kg", "mass"),
                              ("max_acceleration", "max_acceleration_m_s2", "acceleration")):
        value = getattr(c, key)
        if value is None:
            continue
        try:
            bounds.append(Bound(metric, None, _positive_si(value, kind), key))
        except ValueError as exc:
            faults.append(f"constraints.{key}: {exc}")
    if c.min_liftoff_thrust_to_weight is not None:
        bounds.append(Bound("liftoff_thrust_to_weight", c.min_liftoff_thrust_to_weight, None,
                            "min_liftoff_thrust_to_weight"))
    for i, b in enumerate(c.bound):
        bounds.append(Bound(b.metric, b.min, b.max, f"bound[{i + 1}] {b.metric}"))
    return bounds


def unknown_metric_text(metric: str, known: Mapping[str, Any] | None = None) -> str:
    """"unknown metric 'costs'; did you mean 'cost'? Known metrics: ..." (one sentence)."""
    names = list(known if known is not None else METRIC_SENSES)
    near = difflib.get_close_matches(metric, names, n=1)
    hint = f"; did you mean {near[0]!r}?" if near else "."
    return f"unknown metric {metric!r}{hint} Known metrics: {', '.join(names)}."


def _base_has_costs(stages: list) -> bool:
    return any(isinstance(s, dict) and ("cost_per_dry_kg" in s or "cost_fixed" in s) for s in stages)


def _axis_levels(ax: AxisTable) -> list[Any] | None:
    """Explicit levels of a non-sampled axis (or a low/high axis on a grid)."""
    import numpy as np

    if ax.values is not None:
        return list(ax.values)
    if ax.start is not None:
        f = np.geomspace if ax.scale == "log" else np.linspace
        return [float(v) for v in f(ax.start, ax.stop, ax.num)]
    if ax.levels is not None:
        f = np.geomspace if ax.scale == "log" else np.linspace
        return [float(v) for v in f(ax.low, ax.high, ax.levels)]
    return None


def _sampled_points(study: Study, axes: list[AxisTable]) -> list[tuple[float, ...]]:
    """Latin hypercube or Sobol points over the low/high axes (scipy.stats.qmc)."""
    import numpy as np
    from scipy.stats import qmc

    s = study.spec.study
    d = len(axes)
    if s.design == "lhs":
        unit = qmc.LatinHypercube(d=d, seed=s.seed).random(s.samples)
    else:
        sampler = qmc.Sobol(d=d, scramble=True, seed=s.seed)
        import warnings

        with warnings.catch_warnings():
            warnings.simplefilter("ignore", UserWarning)  # non-power-of-2 balance warning
            unit = sampler.random(s.samples)
    cols = []
    for j, ax in enumerate(axes):
        u = unit[:, j]
        if ax.scale == "log":
            cols.append(np.exp(np.log(ax.low) + u * (np.log(ax.high) - np.log(ax.low))))
        else:
            cols.append(ax.low + u * (ax.high - ax.low))
    return [tuple(float(c[i]) for c in cols) for i in range(unit.shape[0])]


def _choice_combos(study: Study) -> list[dict[str, Any]]:
    """Every combination of stage count and propellant per stage, deduplicated."""
    spec = study.spec
    stages = study.base.get("stage", [])
    names = [s.get("name") for s in stages]
    counts = spec.choices.stage_count or [None]
    prop_names = list(spec.choices.propellant)
    prop_opts = [spec.choices.propellant[n] for n in prop_names]
    combos: list[dict[str, Any]] = []
    seen: set[str] = set()
    for count in counts:
        present = set(names[: count] if count is not None else names)
        for opts in itertools.product(*prop_opts) if prop_opts else [()]:
            combo: dict[str, Any] = {}
            if count is not None:
                combo["stage_count"] = count
            for sname, opt in zip(prop_names, opts):
                combo[f"propellant.{sname}"] = opt if sname in present else None
            k = _canonical(combo)
            if k not in seen:
                seen.add(k)
                combos.append(combo)
    return combos


def _copy_tree(obj: Any) -> Any:
    """Copy of a TOML structure (dicts, lists, scalars); faster than copy.deepcopy."""
    if isinstance(obj, dict):
        return {k: _copy_tree(v) for k, v in obj.items()}
    if isinstance(obj, list):
        return [_copy_tree(v) for v in obj]
    return obj


def apply_case(study: Study, inputs: Mapping[str, Any]) -> dict[str, Any]:
    """Build a case's raw problem structure: base, then choices, then axes.

    Stage count k keeps the base's first k stages; a propellant choice sets
    the stage's isp (or exhaust_velocity) and structural_coefficient; axes are
    applied last, so an axis on a stage field overrides its propellant.
    """
    spec = study.spec
    data = _copy_tree(study.base)
    count = inputs.get("stage_count")
    if count is not None:
        data["stage"] = data["stage"][: int(count)]
    by_name = {s.get("name"): s for s in data.get("stage", [])}
    for key, value in inputs.items():
        if key.startswith("propellant.") and value is not None:
            st = by_name.get(key.split(".", 1)[1])
            if st is None:
                continue
            prop = spec.propellants[value]
            st.pop("isp", None)
            st.pop("exhaust_velocity", None)
            if prop.isp is not None:
                st["isp"] = prop.isp
            else:
                st["exhaust_velocity"] = prop.exhaust_velocity
            st["structural_coefficient"] = prop.structural_coefficient
            if prop.isp_sea_level is not None:
                st["isp_sea_level"] = prop.isp_sea_level
            if prop.cost_per_dry_kg is not None:
                st["cost_per_dry_kg"] = prop.cost_per_dry_kg
    for ax in spec.axis:
        label = ax.label or ax.field
        value = inputs.get(label)
        if value is None:
            continue
        parts = ax.field.split(".")
        if parts[0] == "stage":
            targets = list(by_name.values()) if parts[1] == "*" else [by_name.get(parts[1])]
            for st in targets:
                if st is not None and len(parts) == 4:  # stage.NAME.structure.KEY
                    st.setdefault(parts[2], {})[parts[3]] = value
                elif st is not None:
                    st[parts[2]] = value
        else:
            data.setdefault(parts[0], {})[parts[1]] = value
    return data


def expand_cases(study: Study, *, with_problems: bool = True) -> list[Case]:
    """All cases of a study in a stable order (choices, then grid levels, then samples).

    Returns
    -------
    list of Case
        Each with a stable `case_id` and `key`; duplicates (e.g. a stage
        propellant choice on a stage a smaller stage count leaves out) are
        dropped.
    """
    spec = study.spec
    names = [s.get("name") for s in study.base.get("stage", [])]
    grid_axes = [ax for ax in spec.axis if not ax.is_sampled or spec.study.design == "grid"]
    samp_axes = [ax for ax in spec.axis if ax.is_sampled and spec.study.design != "grid"]
    grid_levels = [_axis_levels(ax) for ax in grid_axes]
    samples = _sampled_points(study, samp_axes) if samp_axes else [()]
    cases: list[Case] = []
    seen: set[str] = set()
    for combo in _choice_combos(study):
        count = combo.get("stage_count")
        present = set(names[: count] if count is not None else names)
        for levels in itertools.product(*grid_levels):
            for point in samples:
                inputs: dict[str, Any] = dict(combo)
                for ax, v in itertools.chain(zip(grid_axes, levels), zip(samp_axes, point)):
                    parts = ax.field.split(".")
                    applies = not (parts[0] == "stage" and parts[1] != "*" and parts[1] not in present)
                    inputs[ax.label or ax.field] = v if applies else None
                key = hashlib.sha1(_canonical(inputs).encode()).hexdigest()[:20]
                if key in seen:
                    continue
                seen.add(key)
                cases.append(Case(len(cases), key, inputs,
                                  apply_case(study, inputs) if with_problems else None))
    return cases


def _is_finite_number(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)
