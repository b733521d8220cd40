"""Read a TOML problem file, validate it, and build the frozen SI `Problem`.

All faults in a file are collected and raised together as one
`ProblemDefinitionError`, one line per fault: where, what is allowed, what was given.
"""

from __future__ import annotations

import difflib
import math
import tomllib
from pathlib import Path
from typing import Any, Mapping

from pydantic import BaseModel, ValidationError

from ..errors import (
    MSG_ISP_AND_VE,
    MSG_ISP_OR_VE_REQUIRED,
    MSG_MISSING_KEY,
    MSG_STRUCTURAL_COEFFICIENT,
    MSG_TOML_SYNTAX,
    MSG_UNKNOWN_KEY,
    ProblemDefinitionError,
)
from ..units import G0_M_S2, to_si
from .model import LaunchDef, Problem, SolveFor, StageDef, SteeringDef
from .schema import ProblemFile
from .stage_load import property_tables, stage_model_fields

__all__ = ["load_problem", "problem_from_dict", "read_toml", "render_validation_error"]

def _nested_tables(model: type[BaseModel], out: dict[str, type[BaseModel]] | None = None) -> dict[str, type[BaseModel]]:
    """Table name -> schema class for every table nested in `model` (the allowed keys of an unknown-key error)."""
    import typing

    out = {} if out is None else out
    for name, f in model.model_fields.items():
        todo = [f.annotation]
        while todo:
            t = todo.pop()
            if isinstance(t, type) and issubclass(t, BaseModel):
                if name not in out:
                    out[name] = t
                    _nested_tables(t, out)
            else:
                todo.extend(typing.get_args(t))
    return out


_TABLES: dict[str, type[BaseModel]] = _nested_tables(ProblemFile)


def read_toml(path: str | Path) -> dict[str, Any]:
    """Parse a TOML file with the standard library; faults become ProblemDefinitionError."""
    p = Path(path)
    try:
        text = p.read_bytes().decode("utf-8")
    except FileNotFoundError:
        raise ProblemDefinitionError(str(p), ["file not found."]) from None
    except IsADirectoryError:
        raise ProblemDefinitionError(str(p), ["is a directory, not a TOML file."]) from None
    except UnicodeDecodeError:
        raise ProblemDefinitionError(str(p), ["must be UTF-8 text."]) from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ProblemDefinitionError(str(p), [f"{MSG_TOML_SYNTAX}: {exc}."]) from None


def load_problem(path: str | Path) -> Problem:
    """Load and validate a problem file.

    Parameters
    ----------
    path : str or Path
        A TOML file with [mission] and one or more [[stage]] tables.

    Returns
    -------
    Problem
        Frozen, SI units.

    Raises
    ------
    ProblemDefinitionError
        One line per fault, naming the file, the field, the value and what is allowed.
    """
    data = read_toml(path)
    return problem_from_dict(data, source=str(path))


def _stage_label(data: Mapping[str, Any], index: int) -> str:
    label = f"stage[{index + 1}]"
    try:
        name = data["stage"][index].get("name")
    except (KeyError, IndexError, TypeError, AttributeError):
        name = None
    if isinstance(name, str) and name:
        label += f" ({name})"
    return label


def _loc_label(data: Mapping[str, Any], loc: tuple) -> str:
    parts: list[str] = []
    i = 0
    while i < len(loc):
        item = loc[i]
        if item == "stage" and i + 1 < len(loc) and isinstance(loc[i + 1], int):
            parts.append(_stage_label(data, loc[i + 1]))
            i += 2
            continue
        if isinstance(item, int):
            parts[-1:] = [f"{parts[-1] if parts else ''}[{item + 1}]"]
        else:
            parts.append(str(item))
        i += 1
    return ".".join(parts)


def _allowed_keys(loc: tuple) -> list[str]:
    table = None
    for item in loc[:-1]:
        if isinstance(item, str) and item in _TABLES:
            table = _TABLES[item]
    if table is None:
        table = ProblemFile
    return list(table.model_fields)


def render_validation_error(exc: ValidationError, data: Mapping[str, Any]) -> list[str]:
    """Turn a pydantic ValidationError into one line per faulty field."""
    faults: dict[str, str] = {}
    for err in exc.errors():
        loc = tuple(err["loc"])
        # drop the union member tags pydantic appends, keep the field path
        clean = tuple(p for p in loc if not (isinstance(p, str) and ("[" in p or p in (
            "float", "int", "str", "function-after", "constrained-float", "constrained-int"))))
        where = _loc_label(data, clean)
        if where in faults:
            continue
        kind = err["type"]
        if kind == "extra_forbidden":
            key = str(clean[-1])
            allowed = _allowed_keys(clean)
            near = difflib.get_close_matches(key, allowed, n=1)
            hint = f" Did you mean '{near[0]}'?" if near else ""
            faults[where] = (
                f"{where}: {MSG_UNKNOWN_KEY}.{hint} Allowed keys: {', '.join(allowed)}."
            )
        elif kind == "missing":
            faults[where] = f"{where}: {MSG_MISSING_KEY}."
        elif kind == "literal_error":
            ctx = err.get("ctx", {})
            faults[where] = f"{where}: must be one of {ctx.get('expected', '')}. Got {err['input']!r}."
        elif kind in ("too_short",) and clean and clean[-1] == "stage":
            faults[where] = f"{where}: at least one [[stage]] table is required."
        elif kind in ("float_type", "float_parsing", "int_type", "string_type", "int_parsing"):
            faults[where] = (
                f"{where}: must be a number (SI) or a string with a unit. Got {err['input']!r}."
            )
        else:
            msg = err["msg"].rstrip(".")
            faults[where] = f"{where}: {msg}. Got {err.get('input')!r}."
    return list(faults.values())


def _other_file_kind(data: Mapping[str, Any]) -> str | None:
    """A one-line explanation when the file is another kind the project reads, else None."""
    if "hobby" in data:
        return ("is a hobby-stack file (it has a [hobby] table): run `sizing hobby FILE` "
                "(or `sizing solve` / `sizing check`, which hand it over).")
    if "motor" in data and "mission" not in data:
        return ("is a motor list ([[motor]] tables), not a problem: name it in a hobby problem file "
                "([hobby] motors = \"...\").")
    if "study" in data or "axis" in data:
        return "is a study file: run `sizing study FILE --out runs/NAME`."
    if "expected" in data and "source" in data:
        return ("is a reference case with published values ([source], [expected]) read by the tests "
                "through sizing.testing.load_reference_case, not by the command line.")
    return None


class _Collector:
    """Converts fields to SI and collects every fault instead of stopping at the first."""

    def __init__(self) -> None:
        self.faults: list[str] = []

    def quantity(self, where: str, value: Any, kind: str, *, lo: float | None = None,
                 hi: float | None = None, lo_open: bool = True, hi_open: bool = True,
                 allowed: str | None = None) -> float | None:
        if value is None:
            return None
        try:
            v = to_si(value, kind)
        except ValueError as exc:
            self.faults.append(f"{where}: {exc}")
            return None
        bad = (
            (lo is not None and (v <= lo if lo_open else v < lo))
            or (hi is not None and (v >= hi if hi_open else v > hi))
        )
        if bad:
            if allowed is None:
                if lo is not None and hi is not None:
                    allowed = f"must be in {'(' if lo_open else '['}{lo:g}, {hi:g}{')' if hi_open else ']'}"
                elif lo is not None:
                    allowed = f"must be {'>' if lo_open else '>='} {lo:g}"
                else:
                    allowed = f"must be {'<' if hi_open else '<='} {hi:g}"
            self.faults.append(f"{where}: {allowed}. Got {value!r}.")
            return None
        return v

    def fault(self, text: str) -> None:
        self.faults.append(text)


def _flight_fields(col: _Collector, m, st, stage_names: set[str]) -> dict[str, Any]:
    """The flight-target keys of [mission] and the [steering] table (SI), for `Problem`."""
    out: dict[str, Any] = {
        "orbit_apogee_m": col.quantity("mission.orbit_apogee", m.orbit_apogee, "length", lo=0.0),
        "insertion": m.insertion,
        "transfer": m.transfer,
        "max_dynamic_pressure_pa": col.quantity("mission.max_dynamic_pressure", m.max_dynamic_pressure,
                                                "pressure", lo=0.0),
        "max_pitch_rate_deg_s": col.quantity("mission.max_pitch_rate", m.max_pitch_rate, "angular_rate", lo=0.0),
        "min_transfer_perigee_m": col.quantity("mission.min_transfer_perigee", m.min_transfer_perigee, "length",
                                               lo=0.0, lo_open=False),
    }
    if m.orbit_apogee is not None and m.orbit_altitude is None:
        col.fault("mission.orbit_apogee: needs mission.orbit_altitude (the perigee altitude) beside it.")
    if (out["orbit_apogee_m"] is not None and m.orbit_altitude is not None
            and out["orbit_apogee_m"] < to_si_or_nan(m.orbit_altitude, "length")):
        col.fault(f"mission.orbit_apogee: must be >= orbit_altitude (the perigee). Got {m.orbit_apogee!r}.")
    if st is None:
        out["steering"] = SteeringDef()
        return out
    table = None
    if st.pitch_table is not None:
        rows = []
        for k, row in enumerate(st.pitch_table):
            if len(row) != 2:
                col.fault(f"steering.pitch_table[{k + 1}]: must be [time, pitch]. Got {row!r}.")
                continue
            t = col.quantity(f"steering.pitch_table[{k + 1}][1]", row[0], "time", lo=0.0, lo_open=False)
            p = col.quantity(f"steering.pitch_table[{k + 1}][2]", row[1], "angle", lo=-90.0, hi=90.0)
            if t is not None and p is not None:
                rows.append((t, p))
        if any(b[0] <= a[0] for a, b in zip(rows, rows[1:])):
            col.fault("steering.pitch_table: times must be strictly increasing.")
        if len(rows) < 2:
            col.fault("steering.pitch_table: needs at least two [time, pitch] rows.")
        table = tuple(rows)
    if st.steer_from_stage is not None and st.steer_from_stage not in stage_names:
        col.fault(f"steering.steer_from_stage: must name a stage ({', '.join(sorted(stage_names))}). "
                  f"Got {st.steer_from_stage!r}.")
    out["steering"] = SteeringDef(
        nodes_per_stage=st.nodes_per_stage,
        kick_duration_s=col.quantity("steering.kick_duration", st.kick_duration, "time", lo=0.0),
        pitch_kick_deg=col.quantity("steering.pitch_kick", st.pitch_kick, "angle", lo=0.0, hi=45.0, lo_open=False),
        vertical_rise_time_s=col.quantity("steering.vertical_rise_time", st.vertical_rise_time, "time", lo=0.0,
                                          lo_open=False),
        pitch_table=table, steer_from_stage=st.steer_from_stage,
        hold_inclination_deg=col.quantity("steering.hold_inclination", st.hold_inclination, "angle", lo=0.0,
                                          hi=180.0, lo_open=False, hi_open=False),
        ascending=st.ascending,
        yaw_bias_deg=col.quantity("steering.yaw_bias", st.yaw_bias, "angle", lo=-30.0, hi=30.0),
        insertion_coast_s=col.quantity("steering.insertion_coast", st.insertion_coast, "time", lo=0.0,
                                       lo_open=False),
        insertion_pitch_deg=col.quantity("steering.insertion_pitch", st.insertion_pitch, "angle", lo=-89.0,
                                         hi=89.0),
        insertion_propellant_kg=col.quantity("steering.insertion_propellant", st.insertion_propellant, "mass",
                                             lo=0.0),
    )
    return out


def to_si_or_nan(value: Any, kind: str) -> float:
    """SI value of a quantity, or nan when it cannot be read (its own check reports it)."""
    try:
        return to_si(value, kind)
    except ValueError:
        return math.nan


def problem_from_dict(data: Mapping[str, Any], *, source: str = "<dict>") -> Problem:
    """Validate a raw problem structure (as read from TOML) and build the SI `Problem`.

    The study layer varies fields by editing a copy of this structure and
    calling this function again, so all validation lives here.

    Raises
    ------
    ProblemDefinitionError
        One line per fault.
    """
    if not isinstance(data, Mapping):
        raise ProblemDefinitionError(source, ["must be a table of [mission] and [[stage]] tables."])
    kind = _other_file_kind(data)
    if kind:
        raise ProblemDefinitionError(source, [kind])
    try:
        pf = ProblemFile.model_validate(data)
    except ValidationError as exc:
        raise ProblemDefinitionError(source, render_validation_error(exc, data)) from None

    col = _Collector()
    m = pf.mission
    g0 = col.quantity("mission.standard_gravity", m.standard_gravity, "acceleration", lo=0.0)
    g0 = g0 if g0 is not None else G0_M_S2
    payload = col.quantity("mission.payload_mass", m.payload_mass, "mass", lo=0.0)
    dv = col.quantity("mission.delta_v", m.delta_v, "velocity", lo=0.0, lo_open=False)
    gross = col.quantity("mission.gross_mass", m.gross_mass, "mass", lo=0.0)
    apogee = col.quantity("mission.apogee", m.apogee, "length", lo=0.0)
    orbit = col.quantity("mission.orbit_altitude", m.orbit_altitude, "length", lo=0.0)
    incl = col.quantity("mission.inclination", m.inclination, "angle", lo=0.0, hi=180.0,
                        lo_open=False, hi_open=False)
    cap = col.quantity("mission.max_gross_mass", m.max_gross_mass, "mass", lo=0.0)
    tol_m = col.quantity("mission.target_tolerance", m.target_tolerance, "length", lo=0.0)
    amax = col.quantity("mission.max_acceleration", m.max_acceleration, "acceleration", lo=0.0)
    propellants, materials = property_tables(col, pf)

    solve_for, design_gross = _solve_for(col, pf, flight_target=apogee is not None or orbit is not None)
    if gross is None and design_gross is not None:
        gross = design_gross
    if payload is not None and gross is not None and gross <= payload:
        col.fault(f"mission.gross_mass: must be larger than payload_mass ({payload:g} kg). Got {m.gross_mass!r}.")

    stages: list[StageDef] = []
    names: set[str] = set()
    for i, st in enumerate(pf.stage):
        sd = _stage_def(col, data, pf, i, st, g0, names, propellants, materials,
                        flight_target=apogee is not None or orbit is not None)
        if sd is not None:
            stages.append(sd)

    smin_sum = sum(s.min_delta_v_share or 0.0 for s in stages)
    if smin_sum > 1.0 + 1e-12:
        col.fault(f"stage.min_delta_v_share: the shares must add up to at most 1. Got {smin_sum:g}.")

    launch = LaunchDef() if pf.launch is None else _launch_def(col, pf.launch)
    if apogee is not None and apogee <= 0:
        col.fault(f"mission.apogee: must be above the launch site. Got {m.apogee!r}.")

    flight = _flight_fields(col, m, pf.steering, {s.name for s in stages})
    from .dispersions import parse_dispersions

    dispersions, faults = parse_dispersions(pf.dispersions, [s.name for s in stages])
    col.faults.extend(faults)
    if col.faults:
        raise ProblemDefinitionError(source, col.faults)
    assert solve_for is not None
    name = m.name or Path(source).stem
    return Problem(
        name=name, source=source, solve_for=solve_for, stages=tuple(stages),
        payload_mass_kg=payload, delta_v_m_s=dv, gross_mass_kg=gross, apogee_m=apogee,
        orbit_altitude_m=orbit, inclination_deg=incl, max_gross_mass_kg=cap,
        max_acceleration_m_s2=amax, target_tolerance_m=tol_m, g0_m_s2=g0, **flight,
        method=pf.solver.method, max_iterations=pf.solver.max_iterations,
        tolerance=pf.solver.tolerance, launch=launch, raw=data, dispersions=dispersions,
        design_masses_given=all(st.propellant_mass is not None and st.structural_mass is not None
                                for st in pf.stage),
    )


def _solve_for(col: _Collector, pf: ProblemFile, *, flight_target: bool) -> tuple[SolveFor | None, float | None]:
    """What the problem solves for (the one of payload, gross mass and target not given), and the gross mass
    of a design under review (every stage gives its masses) [kg] or None."""
    m = pf.mission
    targets = [k for k, v in (("delta_v", m.delta_v), ("apogee", m.apogee),
                              ("orbit_altitude", m.orbit_altitude)) if v is not None]
    if len(targets) > 1:
        col.fault(f"mission: give one target of delta_v, apogee, orbit_altitude. Got {', '.join(targets)}.")
    has_target = bool(targets)
    design_gross = None
    if (m.gross_mass is None and m.payload_mass is not None and not has_target
            and all(st.propellant_mass is not None and st.structural_mass is not None for st in pf.stage)):
        try:
            design_gross = to_si(m.payload_mass, "mass") + sum(
                to_si(st.propellant_mass, "mass") + to_si(st.structural_mass, "mass") for st in pf.stage)
        except ValueError:
            design_gross = None  # the per-field checks report it
    given = {"payload_mass": m.payload_mass is not None, "delta_v": has_target,
             "gross_mass": m.gross_mass is not None or design_gross is not None}
    solve_for: SolveFor | None = None
    if m.solve_for is not None:
        solve_for = SolveFor(m.solve_for)
        needed = [k for k in given if k != m.solve_for and not given[k]]
        if needed:
            col.fault(f"mission.solve_for: solving for {m.solve_for} needs {' and '.join(needed)}"
                      f" (a target: delta_v, apogee or orbit_altitude). Got solve_for = {m.solve_for!r}.")
    else:
        missing = [k for k, v in given.items() if not v]
        if len(missing) == 1:
            solve_for = SolveFor(missing[0])
        elif not missing:
            col.fault("mission: payload_mass, gross_mass and a target are all given; "
                      "set mission.solve_for to say which one to find.")
        else:
            col.fault("mission: give two of payload_mass, gross_mass and a target "
                      f"(delta_v, apogee or orbit_altitude). Missing {' and '.join(missing)}.")
    if flight_target and solve_for not in (None, SolveFor.GROSS_MASS, SolveFor.PAYLOAD_MASS):
        col.fault("mission: apogee and orbit_altitude targets solve for gross_mass (give payload_mass) or for "
                  f"payload_mass (give gross_mass). Got solve_for = {str(solve_for)!r}.")
    return solve_for, design_gross


def _exhaust_velocity(col: _Collector, where: str, st, g0: float) -> float | None:
    """Vacuum exhaust velocity [m/s] from isp or exhaust_velocity (None when the propellant table gives it)."""
    if st.isp is None and st.exhaust_velocity is None and st.propellant is None:
        col.fault(f"{where}: {MSG_ISP_OR_VE_REQUIRED}.")
        return None
    if st.isp is not None and st.exhaust_velocity is not None:
        col.fault(f"{where}: {MSG_ISP_AND_VE}. Got isp = {st.isp!r}, exhaust_velocity = {st.exhaust_velocity!r}.")
        return None
    if st.isp is not None:
        isp = col.quantity(f"{where}.isp", st.isp, "time", lo=0.0, allowed="must be > 0 s")
        return None if isp is None else isp * g0
    return col.quantity(f"{where}.exhaust_velocity", st.exhaust_velocity, "velocity", lo=0.0,
                        allowed="must be > 0 m/s")


def _drag_table(col: _Collector, where: str, st) -> tuple[tuple | None, tuple | None]:
    """(Mach numbers, C_D) of a stage's drag table, or (None, None)."""
    if (st.drag_mach is None) != (st.drag_cd is None):
        col.fault(f"{where}: drag_mach and drag_cd go together; give both or neither.")
        return None, None
    if st.drag_mach is None:
        return None, None
    mach_l = [col.quantity(f"{where}.drag_mach[{k + 1}]", v, "dimensionless", lo=0.0, lo_open=False)
              for k, v in enumerate(st.drag_mach)]
    cd_l = [col.quantity(f"{where}.drag_cd[{k + 1}]", v, "dimensionless", lo=0.0)
            for k, v in enumerate(st.drag_cd)]
    if len(mach_l) != len(cd_l) or len(mach_l) < 1:
        col.fault(f"{where}.drag_cd: must have as many entries as drag_mach ({len(mach_l)}). Got {len(cd_l)}.")
    elif None not in mach_l and None not in cd_l:
        if any(b <= a for a, b in zip(mach_l, mach_l[1:])):
            col.fault(f"{where}.drag_mach: must be strictly increasing. Got {list(st.drag_mach)!r}.")
        else:
            return tuple(mach_l), tuple(cd_l)
    return None, None


def _stage_limits(col: _Collector, where: str, st, eps: float | None) -> dict[str, Any]:
    """The per-stage design limits (mass ratio, delta-v share, ignition mass) as StageDef fields."""
    nmin = col.quantity(f"{where}.min_mass_ratio", st.min_mass_ratio, "dimensionless", lo=1.0, lo_open=False)
    nmax = col.quantity(f"{where}.max_mass_ratio", st.max_mass_ratio, "dimensionless", lo=1.0)
    if nmax is not None and eps is not None and nmax >= 1.0 / eps:
        # a mass ratio of 1/eps needs infinite stage mass; the bound is then inactive
        nmax = None
    smin = col.quantity(f"{where}.min_delta_v_share", st.min_delta_v_share, "dimensionless",
                        lo=0.0, hi=1.0, lo_open=False, hi_open=False)
    smax = col.quantity(f"{where}.max_delta_v_share", st.max_delta_v_share, "dimensionless",
                        lo=0.0, hi=1.0, hi_open=False)
    if nmin is not None and nmax is not None and nmin > nmax:
        col.fault(f"{where}.min_mass_ratio: must be <= max_mass_ratio ({nmax:g}). Got {st.min_mass_ratio!r}.")
    if smin is not None and smax is not None and smin > smax:
        col.fault(f"{where}.min_delta_v_share: must be <= max_delta_v_share ({smax:g}). Got {st.min_delta_v_share!r}.")
    mig = col.quantity(f"{where}.max_ignition_mass", st.max_ignition_mass, "mass", lo=0.0)
    return dict(min_mass_ratio=nmin, max_mass_ratio=nmax, min_delta_v_share=smin, max_delta_v_share=smax,
                max_ignition_mass_kg=mig)


def _stage_def(col: _Collector, data, pf: ProblemFile, i: int, st, g0: float, names: set[str], propellants,
               materials, *, flight_target: bool) -> StageDef | None:
    """One [[stage]] table checked and converted to SI (None when a fault leaves it incomplete)."""
    where = _stage_label(data, i)
    name = st.name if st.name else f"stage {i + 1}"
    if name in names:
        col.fault(f"{where}.name: stage names must be unique. Got {name!r} twice.")
    names.add(name)
    c = _exhaust_velocity(col, where, st, g0)
    if st.structure is not None:
        eps = math.nan  # an output of the stage mass model
    elif st.structural_coefficient is None:
        col.fault(f"{where}.structural_coefficient: {MSG_MISSING_KEY}; it is m_s/(m_s+m_p), in (0, 1).")
        eps = None
    else:
        eps = col.quantity(f"{where}.structural_coefficient", st.structural_coefficient,
                           "dimensionless", lo=0.0, hi=1.0, allowed=MSG_STRUCTURAL_COEFFICIENT)
    limits = _stage_limits(col, where, st, eps)
    isp_sl = col.quantity(f"{where}.isp_sea_level", st.isp_sea_level, "time", lo=0.0)
    if isp_sl is not None and c is not None and isp_sl * g0 > c * (1 + 1e-12):
        col.fault(f"{where}.isp_sea_level: must not exceed the vacuum Isp ({c / g0:.1f} s). Got {st.isp_sea_level!r}.")
    tw = col.quantity(f"{where}.thrust_to_weight", st.thrust_to_weight, "dimensionless", lo=0.0)
    thrust = col.quantity(f"{where}.thrust", st.thrust, "force", lo=0.0)
    if tw is not None and thrust is not None:
        col.fault(f"{where}: give thrust_to_weight or thrust, not both.")
    if i == 0 and tw is not None and tw <= 1.0:
        col.fault(f"{where}.thrust_to_weight: the first stage must lift off, so it must be > 1. Got {st.thrust_to_weight!r}.")
    dia = col.quantity(f"{where}.diameter", st.diameter, "length", lo=0.0)
    ae = col.quantity(f"{where}.nozzle_exit_area", st.nozzle_exit_area, "area", lo=0.0)
    mach, cd = _drag_table(col, where, st)
    coast = col.quantity(f"{where}.coast_before_ignition", st.coast_before_ignition, "time", lo=0.0, lo_open=False)
    mp = col.quantity(f"{where}.propellant_mass", st.propellant_mass, "mass", lo=0.0)
    ms = col.quantity(f"{where}.structural_mass", st.structural_mass, "mass", lo=0.0)
    cpk = col.quantity(f"{where}.cost_per_dry_kg", st.cost_per_dry_kg, "dimensionless", lo=0.0, lo_open=False)
    cfx = col.quantity(f"{where}.cost_fixed", st.cost_fixed, "dimensionless", lo=0.0, lo_open=False)
    extras = stage_model_fields(
        col, where, st, index=i, n_stages=len(pf.stage), propellants=propellants, materials=materials,
        dia=dia, tw=tw, thrust=thrust, has_eps=st.structural_coefficient is not None, flight_target=flight_target)
    table_isp = extras.pop("isp_s", None)
    if c is None and table_isp is not None and st.isp is None and st.exhaust_velocity is None:
        c = table_isp * g0
    table_isp_sl = extras.pop("isp_sea_level_s", None)
    if isp_sl is None:
        isp_sl = table_isp_sl
    if c is None or eps is None:
        return None
    return StageDef(
        name=name, exhaust_velocity_m_s=c, isp_s=c / g0, structural_coefficient=eps, **limits,
        isp_sea_level_s=isp_sl, thrust_to_weight=tw, thrust_n=thrust, diameter_m=dia, nozzle_exit_area_m2=ae,
        drag_mach=mach, drag_cd=cd, coast_before_ignition_s=coast,
        propellant_mass_kg=mp, structural_mass_kg=ms, cost_per_dry_kg=cpk, cost_fixed=cfx, **extras,
    )


def _launch_def(col: _Collector, L) -> LaunchDef:
    """The [launch] table in SI."""
    return LaunchDef(
        altitude_m=col.quantity("launch.altitude", L.altitude, "length", lo=-500.0, hi=10000.0,
                                lo_open=False, hi_open=False) or 0.0,
        latitude_deg=col.quantity("launch.latitude", L.latitude, "angle", lo=-90.0, hi=90.0,
                                  lo_open=False, hi_open=False) or 0.0,
        azimuth_deg=col.quantity("launch.azimuth", L.azimuth, "angle", lo=0.0, hi=360.0, lo_open=False),
        rail_length_m=col.quantity("launch.rail_length", L.rail_length, "length", lo=0.0, lo_open=False) or 0.0,
        rail_angle_deg=col.quantity("launch.rail_angle", L.rail_angle, "angle", lo=0.0, hi=30.0,
                                    lo_open=False, hi_open=False,
                                    allowed="must be in [0, 30] degrees from vertical "
                                            "(hobby safety codes keep launchers within 30 degrees)") or 0.0,
        profile=L.profile,
        pitch_kick_deg=col.quantity("launch.pitch_kick", L.pitch_kick, "angle", lo=0.0, hi=45.0, lo_open=False),
        vertical_rise_time_s=col.quantity("launch.vertical_rise_time", L.vertical_rise_time, "time", lo=0.0),
        staging_delay_s=col.quantity("launch.staging_delay", L.staging_delay, "time", lo=0.0,
                                     lo_open=False) or 0.0,
        payload_diameter_m=col.quantity("launch.payload_diameter", L.payload_diameter, "length", lo=0.0),
    )

