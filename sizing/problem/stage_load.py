"""Problem-file keys of the stage model: the propellant and material tables, [stage.structure].

Called by `sizing.problem.load` for each stage; faults go to the same collector, so a
file with several faults gets one line per fault (file, field, value, what is allowed).
"""

from __future__ import annotations

import math
from typing import Any, Mapping

from ..physics.propellants import Propellant, propellant_from_mapping, shipped_propellants
from ..physics.stage_model import MASS_ITEMS, Material, StageMassModel, shipped_materials

__all__ = ["property_tables", "stage_model_fields", "MSG_NOT_IN_PROPELLANT_TABLE", "MSG_NOT_IN_MATERIAL_TABLE",
           "MSG_STRUCTURE_NEEDS_PROPELLANT", "MSG_STRUCTURE_NEEDS_DIAMETER", "MSG_STRUCTURE_AND_COEFFICIENT",
           "MSG_STRUCTURE_NEEDS_THRUST", "MSG_TW_BOUNDS", "MSG_NEEDS_MATERIAL", "MSG_UNKNOWN_ITEM",
           "MSG_KIND_MISMATCH", "MSG_STRUCTURE_FLIGHT", "MSG_ENTRY_MISSING", "MSG_UNKNOWN_LIKE",
           "MSG_LOSS_NEEDS_THRUST"]

MSG_NOT_IN_PROPELLANT_TABLE = "is not in the propellant table"
MSG_NOT_IN_MATERIAL_TABLE = "is not in the material table"
MSG_STRUCTURE_NEEDS_PROPELLANT = "a [stage.structure] table needs the stage's propellant (a name in the propellant table)"
MSG_STRUCTURE_NEEDS_DIAMETER = "a [stage.structure] table needs the stage's diameter (m)"
MSG_STRUCTURE_AND_COEFFICIENT = "give structural_coefficient or a [stage.structure] table, not both"
MSG_STRUCTURE_NEEDS_THRUST = ("a stage with engines needs thrust_to_weight, thrust, or min_thrust_to_weight "
                              "(and optionally max_thrust_to_weight) for its engine mass")
MSG_TW_BOUNDS = "min_thrust_to_weight and max_thrust_to_weight replace thrust_to_weight and thrust; give one form"
MSG_NEEDS_MATERIAL = "needs structure.material (a name in the material table) for pressure-vessel sizing"
MSG_UNKNOWN_ITEM = "is not a mass item"
MSG_KIND_MISMATCH = "does not fit the propellant's kind"
MSG_STRUCTURE_FLIGHT = ("with an apogee or orbit target a [stage.structure] stage needs a fixed thrust_to_weight "
                        "(thrust-to-weight as a design variable, min/max_thrust_to_weight, is on the ideal "
                        "delta-v path only)")
MSG_ENTRY_MISSING = "required key is missing (or give like = \"NAME\" of a shipped entry)"
MSG_UNKNOWN_LIKE = "is not a shipped propellant"
MSG_LOSS_NEEDS_THRUST = "the gravity-loss estimate needs the burn time: give thrust_to_weight, thrust or min_thrust_to_weight"

# (key, unit kind, lower bound, lower open) of a propellant-table entry's numbers
_ENTRY_NUMBERS = (("fuel_density", "density", 0.0, True), ("oxidiser_density", "density", 0.0, True),
                  ("fuel_temperature", "temperature", 0.0, True), ("oxidiser_temperature", "temperature", 0.0, True),
                  ("mixture_ratio", "dimensionless", 0.0, False), ("chamber_pressure", "pressure", 0.0, True),
                  ("expansion_ratio", "dimensionless", 1.0, True), ("isp_vac", "time", 0.0, True),
                  ("isp_sea_level", "time", 0.0, True), ("characteristic_velocity", "velocity", 0.0, True),
                  ("gamma", "dimensionless", 1.0, True))

#: Tank regressions and insulation of Akin 2016 (see sizing.physics.stage_model.MERS).
_LH2_TANK_KG_M3 = 9.0911
_OTHER_TANK_KG_M3 = 12.158
_LH2_INSULATION_KG_M2 = 2.88
_CRYO_INSULATION_KG_M2 = 1.123
_CRYOGENIC_BELOW_K = 150.0  # a liquid stored below this needs insulation (common practice, no source)


def property_tables(col, pf) -> tuple[dict[str, Propellant], dict[str, Material]]:
    """Shipped propellant and material tables with the file's own entries added or replacing."""
    props = shipped_propellants()
    shipped = dict(props)
    for name, entry in (pf.propellant_table or {}).items():
        where = f"propellant_table.{name}"
        values: dict[str, Any] = {k: getattr(entry, k) for k in ("kind", "description", "fuel", "oxidiser", "source")
                                  if getattr(entry, k) is not None}
        for key, kind, lo, lo_open in _ENTRY_NUMBERS:
            v = col.quantity(f"{where}.{key}", getattr(entry, key), kind, lo=lo, lo_open=lo_open)
            if v is not None:
                values[key] = v
        base = None
        if entry.like is not None:
            base = shipped.get(entry.like)
            if base is None:
                col.fault(f"{where}.like: {MSG_UNKNOWN_LIKE}. Got {entry.like!r}. "
                          f"Allowed: {', '.join(sorted(shipped))}.")
                continue
        try:
            props[name] = propellant_from_mapping(name, values, base)
        except KeyError as exc:
            for key in str(exc).strip("'").split(", "):
                col.fault(f"{where}.{key}: {MSG_ENTRY_MISSING}.")
            continue
        p = props[name]
        if p.kind != "solid" and (p.oxidiser_density_kg_m3 is None or p.mixture_ratio <= 0):
            col.fault(f"{where}: a {p.kind} propellant needs oxidiser_density and mixture_ratio > 0.")
            props.pop(name)
    mats = shipped_materials()
    for name, entry in (pf.material_table or {}).items():
        where = f"material_table.{name}"
        rho = col.quantity(f"{where}.density", entry.density, "density", lo=0.0)
        sy = col.quantity(f"{where}.yield_strength", entry.yield_strength, "pressure", lo=0.0)
        su = col.quantity(f"{where}.ultimate_strength", entry.ultimate_strength, "pressure", lo=0.0)
        if None not in (rho, sy, su):
            mats[name] = Material(name, rho, sy, su, entry.description or "", entry.source or "")  # type: ignore[arg-type]
    return props, mats


def _q(col, where: str, table, key: str, kind: str, default, **bounds):
    v = col.quantity(f"{where}.{key}", getattr(table, key), kind, **bounds)
    return default if v is None else v


def stage_model_fields(col, where: str, st, *, index: int, n_stages: int, propellants: Mapping[str, Propellant],
                       materials: Mapping[str, Material], dia: float | None, tw: float | None,
                       thrust: float | None, has_eps: bool, flight_target: bool) -> dict[str, Any]:
    """StageDef keyword arguments of the stage model, plus ``isp_s``/``isp_sea_level_s`` from the table.

    Faults go to `col`; the returned mapping then may lack ``mass_model``.
    """
    out: dict[str, Any] = {}
    prop = None
    if st.propellant is not None:
        prop = propellants.get(st.propellant)
        if prop is None:
            col.fault(f"{where}.propellant: {MSG_NOT_IN_PROPELLANT_TABLE}. Got {st.propellant!r}. Allowed: "
                      f"{', '.join(sorted(propellants))} (or add [propellant_table.{st.propellant}]).")
    out["propellant"] = prop
    if st.engine_count is not None and st.engine_count < 1:
        col.fault(f"{where}.engine_count: must be >= 1. Got {st.engine_count!r}.")
    out["engine_count"] = st.engine_count
    pc = col.quantity(f"{where}.chamber_pressure", st.chamber_pressure, "pressure", lo=0.0)
    eps = col.quantity(f"{where}.expansion_ratio", st.expansion_ratio, "dimensionless", lo=1.0)
    out["chamber_pressure_pa"], out["expansion_ratio"] = pc, eps
    twmin = col.quantity(f"{where}.min_thrust_to_weight", st.min_thrust_to_weight, "dimensionless", lo=0.0)
    twmax = col.quantity(f"{where}.max_thrust_to_weight", st.max_thrust_to_weight, "dimensionless", lo=0.0)
    if (twmin is not None or twmax is not None) and (tw is not None or thrust is not None):
        col.fault(f"{where}: {MSG_TW_BOUNDS}.")
    if twmax is not None and twmin is None:
        col.fault(f"{where}.max_thrust_to_weight: needs min_thrust_to_weight too. Got {st.max_thrust_to_weight!r}.")
    if twmin is not None and twmax is not None and twmin > twmax:
        col.fault(f"{where}.min_thrust_to_weight: must be <= max_thrust_to_weight ({twmax:g}). "
                  f"Got {st.min_thrust_to_weight!r}.")
    if index == 0 and twmin is not None and twmin <= 1.0:
        col.fault(f"{where}.min_thrust_to_weight: the first stage must lift off, so it must be > 1. "
                  f"Got {st.min_thrust_to_weight!r}.")
    out["min_thrust_to_weight"], out["max_thrust_to_weight"] = twmin, twmax
    out["gravity_loss_factor"] = col.quantity(f"{where}.gravity_loss_factor", st.gravity_loss_factor,
                                              "dimensionless", lo=0.0, hi=1.0, lo_open=False, hi_open=False)
    if out["gravity_loss_factor"] and tw is None and thrust is None and twmin is None:
        col.fault(f"{where}.gravity_loss_factor: {MSG_LOSS_NEEDS_THRUST}. Got {st.gravity_loss_factor!r}.")
    if prop is not None and st.isp is None and st.exhaust_velocity is None:
        isp_vac, isp_sl = prop.isp_at(expansion_ratio=eps, chamber_pressure_pa=pc)
        out["isp_s"] = isp_vac
        if st.isp_sea_level is None and isp_sl > 0:
            out["isp_sea_level_s"] = isp_sl
    if st.structure is not None:
        model = _structure_model(col, where, st, prop, index=index, n_stages=n_stages, materials=materials,
                                 dia=dia, pc=pc, eps=eps, has_thrust=tw is not None or thrust is not None or twmin is not None,
                                 has_eps=has_eps, flight_target=flight_target)
        if model is not None:
            out["mass_model"] = model
    return out


def _structure_model(col, where: str, st, prop: Propellant | None, *, index: int, n_stages: int,
                     materials: Mapping[str, Material], dia: float | None, pc: float | None, eps: float | None,
                     has_thrust: bool, has_eps: bool, flight_target: bool) -> StageMassModel | None:
    """The [stage.structure] table as a `StageMassModel` (None when a fault prevents building it)."""
    s = st.structure
    if has_eps:
        col.fault(f"{where}: {MSG_STRUCTURE_AND_COEFFICIENT}.")
    if flight_target and (st.min_thrust_to_weight is not None or st.thrust_to_weight is None):
        col.fault(f"{where}.structure: {MSG_STRUCTURE_FLIGHT}.")
    if st.propellant is None:
        col.fault(f"{where}.structure: {MSG_STRUCTURE_NEEDS_PROPELLANT}.")
    if dia is None:
        col.fault(f"{where}.structure: {MSG_STRUCTURE_NEEDS_DIAMETER}.")
    w = f"{where}.structure"
    kind = s.kind or (prop.kind if prop is not None else "liquid")
    if prop is not None and ((kind in ("liquid", "hybrid")) != (prop.kind in ("liquid", "hybrid"))):
        col.fault(f"{w}.kind: {MSG_KIND_MISMATCH} ({prop.kind}). Got {kind!r}.")
    has_engines = kind in ("liquid", "hybrid")
    if has_engines and not has_thrust:
        col.fault(f"{where}: {MSG_STRUCTURE_NEEDS_THRUST}.")
    method = s.tank or "per_volume"
    material = None
    if s.material is not None:
        material = materials.get(s.material)
        if material is None:
            col.fault(f"{w}.material: {MSG_NOT_IN_MATERIAL_TABLE}. Got {s.material!r}. Allowed: "
                      f"{', '.join(sorted(materials))} (or add [material_table.{s.material}]).")
    elif method == "pressure_vessel" or kind == "solid":
        what = "a solid motor case" if kind == "solid" else "tank = 'pressure_vessel'"
        col.fault(f"{w}: {what} {MSG_NEEDS_MATERIAL}.")
    fixed: dict[str, float] = {}
    for item, value in (s.fixed or {}).items():
        if item not in MASS_ITEMS:
            col.fault(f"{w}.fixed.{item}: {MSG_UNKNOWN_ITEM}. Allowed: {', '.join(MASS_ITEMS)}.")
            continue
        v = col.quantity(f"{w}.fixed.{item}", value, "mass", lo=0.0, lo_open=False)
        if v is not None:
            fixed[item] = v
    fuel_lh2 = prop is not None and prop.fuel == "liquid hydrogen"

    def cryo(t: float | None) -> bool:
        return t is not None and t < _CRYOGENIC_BELOW_K

    ins_f = (_LH2_INSULATION_KG_M2 if fuel_lh2 else _CRYO_INSULATION_KG_M2
             if prop is not None and cryo(prop.fuel_temperature_k) else 0.0)
    ins_o = _CRYO_INSULATION_KG_M2 if prop is not None and cryo(prop.oxidiser_temperature_k) else 0.0
    d_for = dia if dia is not None else 1.0
    kw = dict(
        kind=kind,
        engine_count=st.engine_count or 1,
        chamber_pressure_pa=pc, expansion_ratio=eps,
        ullage_fraction=_q(col, w, s, "ullage", "dimensionless", 0.03, lo=0.0, hi=1.0, lo_open=False),
        dome_aspect=_q(col, w, s, "dome_aspect", "dimensionless", 1.0 / math.sqrt(2.0), lo=0.0, hi=1.0,
                       hi_open=False),
        tank_method=method,
        fuel_tank_mass_per_volume_kg_m3=_q(col, w, s, "fuel_tank_mass_per_volume", "density",
                                           _LH2_TANK_KG_M3 if fuel_lh2 else _OTHER_TANK_KG_M3, lo=0.0, lo_open=False),
        oxidiser_tank_mass_per_volume_kg_m3=_q(col, w, s, "oxidiser_tank_mass_per_volume", "density",
                                               _OTHER_TANK_KG_M3, lo=0.0, lo_open=False),
        tank_pressure_pa=_q(col, w, s, "tank_pressure", "pressure", 3.0e5, lo=0.0),
        material=material,
        safety_factor=_q(col, w, s, "safety_factor", "dimensionless", 2.0, lo=1.0, lo_open=False),
        min_wall_thickness_m=_q(col, w, s, "min_wall_thickness", "length", 1.0e-3, lo=0.0),
        fuel_insulation_kg_m2=_q(col, w, s, "fuel_insulation", "mass_per_area", ins_f, lo=0.0, lo_open=False),
        oxidiser_insulation_kg_m2=_q(col, w, s, "oxidiser_insulation", "mass_per_area", ins_o, lo=0.0, lo_open=False),
        engine_thrust_to_weight=col.quantity(f"{w}.engine_thrust_to_weight", s.engine_thrust_to_weight,
                                             "dimensionless", lo=0.0),
        # an interstage of half a diameter above every stage but the top one (common practice, no source)
        interstage_length_m=_q(col, w, s, "interstage_length", "length",
                               0.5 * d_for if index < n_stages - 1 else 0.0, lo=0.0, lo_open=False),
        extra_length_m=_q(col, w, s, "extra_length", "length", 0.0, lo=0.0, lo_open=False),
        loading_fraction=_q(col, w, s, "loading_fraction", "dimensionless", 0.85, lo=0.0, hi=1.0, hi_open=False),
        tube_mass_per_length_kg_m=_q(col, w, s, "tube_mass_per_length", "mass_per_length", 0.0, lo=0.0,
                                     lo_open=False),
        use_avionics_mer=s.avionics if s.avionics is not None else kind != "hobby",
        fixed=fixed,
    )
    if prop is not None and dia is not None and (material is not None or (method == "per_volume" and kind != "solid")):
        return StageMassModel(propellant=prop, diameter_m=dia, **kw)
    return None
