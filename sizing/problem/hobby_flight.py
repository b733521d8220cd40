"""Flight-safety keys of hobby motor problems: stage geometry, recovery, wind, stability rules.

Read by `sizing.problem.hobby`: ``[stage.geometry]`` and ``[stage.recovery]``
under a motor ``[[stage]]``, the wind keys of ``[launch]``, the payload and
ballast positions of ``[mission]`` and the stability keys of ``[hobby]``.
Everything is validated here, with one line per fault (file, field, value,
what is allowed) collected by the loader's `_Collector`, and converted to the
frozen SI definitions below. docs/hobby.md lists every key with its unit.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Literal, Sequence, Union

from pydantic import BaseModel, ConfigDict, StrictFloat, StrictInt, StrictStr

from ..errors import FieldError
from ..physics.airframe import NOSE_SHAPES
from ..physics.recovery import (
    DEFAULT_DROGUE_DESCENT_RATE_M_S,
    DEFAULT_MAIN_DEPLOY_HEIGHT_M,
    DEFAULT_MAIN_DESCENT_RATE_M_S,
    RECOVERY_DEVICES,
)
from ..physics.wind import DEFAULT_WIND_EXPONENT, DEFAULT_WIND_REFERENCE_HEIGHT_M, WIND_PROFILES, WindProfile

__all__ = [
    "StageGeometryTable",
    "RecoveryTable",
    "PartDef",
    "StageGeometryDef",
    "RecoveryDef",
    "DEFAULT_MIN_STATIC_MARGIN_CAL",
    "STABILITY_FIXES",
    "MSG_GEOMETRY_ALL_OR_NONE",
    "MSG_NOSE_TOP_ONLY",
    "MSG_NOSE_REQUIRED",
    "MSG_TRANSITION_REQUIRED",
    "MSG_FIN_KEYS",
    "MSG_PARTS_MASS",
    "MSG_MOTOR_LENGTH",
    "MSG_BOATTAIL_KEYS",
    "MSG_DUAL_ONLY",
    "MSG_MAIN_BELOW_APOGEE",
    "MSG_WIND_TABLE",
    "MSG_GEOMETRY_NEEDED",
    "WIND_KEYS",
    "parse_geometry",
    "parse_recovery",
    "parse_wind",
]

#: Minimum static margin at rail exit [calibers] (common practice, no source).
DEFAULT_MIN_STATIC_MARGIN_CAL = 1.0
#: How the motor-stack search may restore a margin: nose ballast, or reject only.
STABILITY_FIXES: tuple[str, ...] = ("ballast", "none")

MSG_GEOMETRY_ALL_OR_NONE = "give [stage.geometry] for every stage or for none"
MSG_NOSE_TOP_ONLY = "only the top stage carries the nose cone"
MSG_NOSE_REQUIRED = "the top stage needs nose_shape and nose_length"
MSG_TRANSITION_REQUIRED = "is required where this stage is wider or narrower than the stage above"
MSG_FIN_KEYS = "fin_count, fin_root_chord, fin_tip_chord, fin_span and fin_thickness go together"
MSG_PARTS_MASS = "part masses must add up to at most the stage's airframe_mass"
MSG_MOTOR_LENGTH = "needs the length of every motor that fits this stage (for the centre of gravity)"
MSG_BOATTAIL_KEYS = "boattail_length and boattail_diameter go together"
MSG_DUAL_ONLY = "applies to device = 'dual' only"
MSG_MAIN_BELOW_APOGEE = "must be > 0 m above the site"
MSG_WIND_TABLE = "must be [[height m, speed m/s, direction from deg], ...] with heights increasing"
MSG_GEOMETRY_NEEDED = "needs [stage.geometry] on every stage (stability needs the airframe)"

Quantity = Union[StrictFloat, StrictInt, StrictStr]

#: Wind keys of [launch] (plain numbers SI, strings with units).
WIND_KEYS = ("wind_speed", "wind_direction", "wind_profile", "wind_reference_height", "wind_exponent",
             "wind_table")


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


class StageGeometryTable(_Strict):
    """[stage.geometry]: outer shape and mass layout of one motor stage."""

    nose_shape: Literal["conical", "ogive", "parabolic", "elliptical", "von_karman"] | None = None
    nose_length: Quantity | None = None          # m, top stage only
    body_length: Quantity                        # m, tube at the stage diameter
    transition_length: Quantity | None = None    # m, fore end, from the stage above's diameter
    boattail_length: Quantity | None = None      # m, aft end
    boattail_diameter: Quantity | None = None    # m, aft diameter of the boattail
    airframe_cg: Quantity | None = None          # m from the stage's fore end; default mid-length
    fin_count: StrictInt | None = None
    fin_root_chord: Quantity | None = None       # m
    fin_tip_chord: Quantity | None = None        # m
    fin_span: Quantity | None = None             # m, body surface to tip
    fin_sweep: Quantity | None = None            # m, root LE to tip LE, axial; default 0
    fin_thickness: Quantity | None = None        # m
    fin_offset: Quantity | None = None           # m, root TE forward of the stage's aft end; default 0
    parts: list[dict[str, Any]] | None = None    # [{name, mass, position}], a breakdown of airframe_mass


class RecoveryTable(_Strict):
    """[stage.recovery]: how the stage comes down."""

    device: Literal["parachute", "streamer", "dual"] | None = None
    descent_rate: Quantity | None = None          # m/s under the main (or only) canopy at the site
    canopy_cd: Quantity | None = None             # -, on the nominal area
    drogue_descent_rate: Quantity | None = None   # m/s, dual
    drogue_cd: Quantity | None = None             # -, dual
    main_deploy_height: Quantity | None = None    # m above the site, dual


@dataclass(frozen=True, slots=True)
class PartDef:
    """A named part of a stage's airframe mass at a position from the stage's fore end [kg, m]."""

    name: str
    mass_kg: float
    position_m: float


@dataclass(frozen=True, slots=True)
class StageGeometryDef:
    """Geometry of one motor stage, SI. Lengths [m]; positions from the stage's fore end [m]."""

    body_length_m: float
    nose_shape: str | None = None
    nose_length_m: float | None = None
    transition_length_m: float | None = None
    boattail_length_m: float | None = None
    boattail_diameter_m: float | None = None
    airframe_cg_m: float | None = None
    fin_count: int | None = None
    fin_root_chord_m: float | None = None
    fin_tip_chord_m: float | None = None
    fin_span_m: float | None = None
    fin_sweep_m: float = 0.0
    fin_thickness_m: float | None = None
    fin_offset_m: float = 0.0
    parts: tuple[PartDef, ...] = ()

    @property
    def length_m(self) -> float:
        """Stage length: nose + transition + body + boattail [m]."""
        return sum(v or 0.0 for v in (self.nose_length_m, self.transition_length_m, self.body_length_m,
                                      self.boattail_length_m))


@dataclass(frozen=True, slots=True)
class RecoveryDef:
    """Recovery of one stage, SI. `given` is False when the stage had no [stage.recovery] table."""

    device: str = "parachute"
    descent_rate_m_s: float = DEFAULT_MAIN_DESCENT_RATE_M_S
    canopy_cd: float | None = None
    drogue_descent_rate_m_s: float = DEFAULT_DROGUE_DESCENT_RATE_M_S
    drogue_cd: float | None = None
    main_deploy_height_m: float = DEFAULT_MAIN_DEPLOY_HEIGHT_M
    given: bool = False


_FIN_REQUIRED = ("fin_count", "fin_root_chord", "fin_tip_chord", "fin_span", "fin_thickness")


def parse_geometry(col, where: str, g: StageGeometryTable, *, is_top: bool, needs_transition: bool,
                   airframe_mass_kg: float | None) -> StageGeometryDef | None:
    """Check and convert one [stage.geometry] table; faults go to `col` (a loader `_Collector`)."""
    n0 = len(col.faults)
    w = f"{where}.geometry"
    q = col.quantity
    if g.nose_shape is not None or g.nose_length is not None:
        if not is_top:
            col.fault(f"{w}.nose_length: {MSG_NOSE_TOP_ONLY}. Got nose_shape = {g.nose_shape!r}, "
                      f"nose_length = {g.nose_length!r}.")
        elif g.nose_shape is None or g.nose_length is None:
            col.fault(f"{w}: {MSG_NOSE_REQUIRED}. Got nose_shape = {g.nose_shape!r}, nose_length = {g.nose_length!r}.")
    elif is_top:
        col.fault(f"{w}: {MSG_NOSE_REQUIRED} (shapes: {', '.join(NOSE_SHAPES)}). Got neither.")
    nose_l = q(f"{w}.nose_length", g.nose_length, "length", lo=0.0)
    body = q(f"{w}.body_length", g.body_length, "length", lo=0.0)
    tr = q(f"{w}.transition_length", g.transition_length, "length", lo=0.0, lo_open=False)
    if needs_transition and g.transition_length is None:
        col.fault(f"{w}.transition_length: {MSG_TRANSITION_REQUIRED} (0 for an abrupt step). Got none.")
    if is_top and g.transition_length is not None:
        col.fault(f"{w}.transition_length: the top stage has the nose at its fore end; leave it out. "
                  f"Got {g.transition_length!r}.")
    bl = q(f"{w}.boattail_length", g.boattail_length, "length", lo=0.0)
    bd = q(f"{w}.boattail_diameter", g.boattail_diameter, "length", lo=0.0)
    if (g.boattail_length is None) != (g.boattail_diameter is None):
        col.fault(f"{w}: {MSG_BOATTAIL_KEYS}. Got boattail_length = {g.boattail_length!r}, "
                  f"boattail_diameter = {g.boattail_diameter!r}.")
    cg = q(f"{w}.airframe_cg", g.airframe_cg, "length", lo=0.0, lo_open=False)
    fin_given = [k for k in _FIN_REQUIRED + ("fin_sweep", "fin_offset") if getattr(g, k) is not None]
    if fin_given and any(getattr(g, k) is None for k in _FIN_REQUIRED):
        missing = [k for k in _FIN_REQUIRED if getattr(g, k) is None]
        col.fault(f"{w}: {MSG_FIN_KEYS}; missing {', '.join(missing)}. Got {', '.join(fin_given)}.")
    if g.fin_count is not None and not 2 <= g.fin_count <= 8:
        col.fault(f"{w}.fin_count: must be a whole number from 2 to 8. Got {g.fin_count!r}.")
    fr = q(f"{w}.fin_root_chord", g.fin_root_chord, "length", lo=0.0)
    ft = q(f"{w}.fin_tip_chord", g.fin_tip_chord, "length", lo=0.0, lo_open=False)
    fs = q(f"{w}.fin_span", g.fin_span, "length", lo=0.0)
    fw = q(f"{w}.fin_sweep", g.fin_sweep, "length")
    fth = q(f"{w}.fin_thickness", g.fin_thickness, "length", lo=0.0, lo_open=False)
    fo = q(f"{w}.fin_offset", g.fin_offset, "length", lo=0.0, lo_open=False)
    parts = _parts(col, w, g.parts, airframe_mass_kg)
    if len(col.faults) > n0:
        return None
    out = StageGeometryDef(
        body_length_m=body, nose_shape=g.nose_shape, nose_length_m=nose_l, transition_length_m=tr,
        boattail_length_m=bl, boattail_diameter_m=bd, airframe_cg_m=cg, fin_count=g.fin_count,
        fin_root_chord_m=fr, fin_tip_chord_m=ft, fin_span_m=fs, fin_sweep_m=fw or 0.0, fin_thickness_m=fth,
        fin_offset_m=fo or 0.0, parts=parts,
    )
    if cg is not None and cg > out.length_m:
        col.fault(f"{w}.airframe_cg: must lie on the stage (0 to {out.length_m:g} m from its fore end). Got {g.airframe_cg!r}.")
        return None
    if fr is not None and (fo or 0.0) + fr > out.length_m:
        col.fault(f"{w}.fin_root_chord: root chord plus fin_offset must fit on the stage ({out.length_m:g} m). "
                  f"Got {g.fin_root_chord!r}.")
        return None
    return out


def _parts(col, w: str, raw: Sequence[dict[str, Any]] | None, airframe_mass_kg: float | None) -> tuple[PartDef, ...]:
    if not raw:
        return ()
    out = []
    for k, p in enumerate(raw, start=1):
        wp = f"{w}.parts[{k}]"
        extra = sorted(set(p) - {"name", "mass", "position"})
        if extra:
            col.fault(f"{wp}.{extra[0]}: unknown key. Allowed: name, mass, position.")
            continue
        if "mass" not in p or "position" not in p:
            col.fault(f"{wp}: mass and position are required. Got {p!r}.")
            continue
        name = p.get("name", f"part {k}")
        if not isinstance(name, str):
            col.fault(f"{wp}.name: must be a string. Got {name!r}.")
            continue
        m = col.quantity(f"{wp}.mass", p["mass"], "mass", lo=0.0, lo_open=False)
        x = col.quantity(f"{wp}.position", p["position"], "length", lo=0.0, lo_open=False)
        if m is not None and x is not None:
            out.append(PartDef(name, m, x))
    total = sum(p.mass_kg for p in out)
    if airframe_mass_kg is not None and total > airframe_mass_kg * (1 + 1e-9):
        col.fault(f"{w}.parts: {MSG_PARTS_MASS} ({airframe_mass_kg * 1000:g} g). Got {total * 1000:g} g.")
    return tuple(out)


def parse_recovery(col, where: str, r: RecoveryTable | None) -> RecoveryDef:
    """Check and convert one [stage.recovery] table (None: a default single parachute)."""
    if r is None:
        return RecoveryDef()
    w = f"{where}.recovery"
    q = col.quantity
    device = r.device or "parachute"
    if device != "dual":
        for k in ("drogue_descent_rate", "drogue_cd", "main_deploy_height"):
            if getattr(r, k) is not None:
                col.fault(f"{w}.{k}: {MSG_DUAL_ONLY}. Got {getattr(r, k)!r} with device = {device!r}.")
    rate = q(f"{w}.descent_rate", r.descent_rate, "velocity", lo=0.0)
    cd = q(f"{w}.canopy_cd", r.canopy_cd, "dimensionless", lo=0.0, hi=3.0, hi_open=False)
    drate = q(f"{w}.drogue_descent_rate", r.drogue_descent_rate, "velocity", lo=0.0)
    dcd = q(f"{w}.drogue_cd", r.drogue_cd, "dimensionless", lo=0.0, hi=3.0, hi_open=False)
    main_h = q(f"{w}.main_deploy_height", r.main_deploy_height, "length", lo=0.0, allowed=f"{MSG_MAIN_BELOW_APOGEE}")
    if rate is not None and drate is not None and drate <= rate:
        col.fault(f"{w}.drogue_descent_rate: must be faster than descent_rate ({rate:g} m/s). "
                  f"Got {r.drogue_descent_rate!r}.")
    assert device in RECOVERY_DEVICES
    return RecoveryDef(
        device=device, descent_rate_m_s=rate or DEFAULT_MAIN_DESCENT_RATE_M_S, canopy_cd=cd,
        drogue_descent_rate_m_s=drate or DEFAULT_DROGUE_DESCENT_RATE_M_S, drogue_cd=dcd,
        main_deploy_height_m=main_h or DEFAULT_MAIN_DEPLOY_HEIGHT_M, given=True,
    )


def parse_wind(col, launch: Any) -> WindProfile | None:
    """Wind keys of [launch] -> WindProfile (None when no wind key is given)."""
    if launch is None or all(getattr(launch, k, None) is None for k in WIND_KEYS):
        return None
    q = col.quantity
    kind = launch.wind_profile or ("table" if launch.wind_table is not None else "constant")
    n0 = len(col.faults)
    if kind not in WIND_PROFILES:
        col.fault(f"launch.wind_profile: must be one of {', '.join(WIND_PROFILES)}. Got {kind!r}.")
        return None
    speed = q("launch.wind_speed", launch.wind_speed, "velocity", lo=0.0, lo_open=False)
    direction = q("launch.wind_direction", launch.wind_direction, "angle", lo=0.0, hi=360.0, lo_open=False,
                  allowed="must be in [0, 360) degrees, the direction the wind blows from, clockwise from north")
    href = q("launch.wind_reference_height", launch.wind_reference_height, "length", lo=0.0)
    alpha = q("launch.wind_exponent", launch.wind_exponent, "dimensionless", lo=0.0, hi=1.0, hi_open=False)
    if kind == "table":
        if launch.wind_table is None or launch.wind_speed is not None:
            col.fault(f"launch.wind_table: wind_profile = 'table' takes wind_table (and no wind_speed). "
                      f"Got wind_table = {launch.wind_table!r}, wind_speed = {launch.wind_speed!r}.")
            return None
        rows = launch.wind_table
        ok = isinstance(rows, list) and rows and all(
            isinstance(r, list) and len(r) == 3 and all(isinstance(v, (int, float)) and not isinstance(v, bool)
                                                        for v in r) for r in rows)
        if not ok:
            col.fault(f"launch.wind_table: {MSG_WIND_TABLE}. Got {rows!r}.")
            return None
        try:
            return WindProfile("table", heights_m=tuple(r[0] for r in rows), speeds_m_s=tuple(r[1] for r in rows),
                               directions_from_deg=tuple(r[2] for r in rows))
        except FieldError:
            col.fault(f"launch.wind_table: {MSG_WIND_TABLE}. Got {rows!r}.")
            return None
    if launch.wind_table is not None:
        col.fault(f"launch.wind_table: applies to wind_profile = 'table' only. Got wind_profile = {kind!r}.")
    if kind == "constant" and (href is not None or alpha is not None):
        col.fault("launch.wind_exponent: wind_exponent and wind_reference_height apply to wind_profile = "
                  "'power_law' only. Got wind_profile = 'constant'.")
    if len(col.faults) > n0:
        return None
    return WindProfile(kind, speed_m_s=speed or 0.0, direction_from_deg=direction or 0.0,
                       reference_height_m=href or DEFAULT_WIND_REFERENCE_HEIGHT_M,
                       exponent=DEFAULT_WIND_EXPONENT if alpha is None else alpha)
