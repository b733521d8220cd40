"""Stage mass model: tanks, engines and structure from propellant mass, thrust and diameter.

A `StageMassModel` turns a stage's propellant mass m_p [kg] and vacuum thrust
T [N] into its structural (inert) mass, smoothly, for floats or numpy arrays:

    geometry   diameter -> tank volumes (with ullage) -> tank and stage lengths, L/D;
    tanks      mass per unit volume (regressions) or thin-wall pressure vessels
               (hoop stress, material, safety factor, minimum gauge);
    engines    from thrust and engine thrust-to-weight, or a thrust MER, per engine
               (so clustering costs the per-engine fixed mass and gimbals);
    structure  thrust structure, interstage, avionics and wiring MERs;
    solids     the motor case as a pressure vessel at chamber pressure;
    hobby      airframe tube mass per unit length.

Every item may be replaced by a fixed mass (`fixed`). `MERS` lists each mass
estimating relationship with its source and the range where it was fitted.

The structural coefficient m_s/(m_s + m_p) is an output of this model, no longer an input.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, field
from importlib import resources
from typing import Any, Mapping

import numpy as np

from .propellants import Propellant

__all__ = ["Material", "shipped_materials", "StageMassModel", "StageGeometry", "MASS_ITEMS", "MERS",
           "STAGE_KINDS", "TANK_METHODS", "dome_volume_m3", "dome_area_m2", "tank_length_m",
           "cylinder_wall_thickness_m", "head_wall_thickness_m", "pressure_vessel_mass_kg"]

_G0 = 9.80665

#: Named items of the mass breakdown, in report order [kg].
MASS_ITEMS = ("tanks", "insulation", "engines", "thrust_structure", "interstage", "airframe",
              "avionics", "wiring", "other")
STAGE_KINDS = ("liquid", "solid", "hybrid", "hobby")
TANK_METHODS = ("per_volume", "pressure_vessel")
#: Share of a stage's structure above which avionics and wiring from the MERs get a review note
#: (common practice, no source).
AVIONICS_SHARE_NOTE = 0.25

#: Each mass estimating relationship: (item, formula, source, fitted range).
MERS: tuple[tuple[str, str, str, str], ...] = (
    ("tanks (LH2)", "9.0911 kg/m^3 x tank volume",
     "D. Akin, ENAE 791 'Mass Estimating Relations', Univ. of Maryland, 2016, slide 5 (course notes found online; values as printed there)",
     "tank volumes about 10-1,500 m^3 (the slide's regression data)"),
    ("tanks (LOX, RP-1, methane, storables)", "12.158 kg/m^3 x tank volume",
     "Akin 2016, slide 5 (found; LOX fit, RP-1 tanks plotted with it)", "as above"),
    ("insulation", "2.88 kg/m^2 (LH2), 1.123 kg/m^2 (LOX and other cryogens) x tank wall area",
     "Akin 2016, MER slides (from memory)", "not recorded"),
    ("engines", "7.81e-4 T + 3.37e-5 T sqrt(eps) + 59 kg per engine (T per engine [N])",
     "Akin 2016 after R. Rohrschneider, Georgia Tech MS thesis, 2002 (from memory; the project's "
     "check values record 7.81e-3, also from memory; 7.81e-4 gives engine T/W 50-100, as real engines)",
     "large pump-fed liquid engines (range not recorded)"),
    ("gimbals", "237.8 (T/p_c)^0.9375 kg per engine (T [N], p_c [Pa])", "Akin 2016 (from memory)",
     "not recorded"),
    ("thrust_structure", "2.55e-4 T kg (T [N])", "Akin 2016 (from memory)", "not recorded"),
    ("interstage", "4.95 A^1.15 kg (A = pi D L lateral area [m^2])",
     "Akin 2016, fairings and shrouds MER (from memory)", "not recorded"),
    ("avionics", "10 M^0.361 kg (M = loaded stage mass [kg])", "Akin 2016 (from memory)",
     "launch vehicles; below 1,000 kg a review note is given (common practice, no source)"),
    ("wiring", "1.058 sqrt(M) L^0.25 kg (M [kg], L stage length [m])", "Akin 2016 (from memory)",
     "as avionics"),
)


@dataclass(frozen=True, slots=True)
class Material:
    """A structural material [kg/m^3, Pa]."""

    name: str
    density_kg_m3: float
    yield_strength_pa: float
    ultimate_strength_pa: float
    description: str = ""
    source: str = ""


def shipped_materials() -> dict[str, Material]:
    """The shipped material table (``sizing/data/materials.toml``), by name."""
    text = resources.files("sizing").joinpath("data/materials.toml").read_text(encoding="utf-8")
    return {k: Material(name=k, density_kg_m3=float(v["density"]),
                        yield_strength_pa=float(v["yield_strength"]),
                        ultimate_strength_pa=float(v["ultimate_strength"]),
                        description=v.get("description", ""), source=v.get("source", ""))
            for k, v in tomllib.loads(text).items()}


# --------------------------------------------------------------------------- geometry
def dome_volume_m3(radius_m, aspect):
    """Volume of one ellipsoidal tank head (half spheroid of depth k R) [m^3]: (2/3) pi R^3 k.

    References
    ----------
    .. [1] Any calculus text: volume of a spheroid (4/3) pi a^2 c, halved.
    """
    return 2.0 / 3.0 * math.pi * np.asarray(radius_m, dtype=float) ** 3 * aspect


def dome_area_m2(radius_m, aspect):
    """Surface area of one ellipsoidal head (half an oblate spheroid, depth k R <= R) [m^2].

    S/2 = pi R^2 (1 + (1 - e^2)/e artanh e), e^2 = 1 - k^2; 2 pi R^2 for a hemisphere.

    References
    ----------
    .. [1] Surface area of an oblate spheroid, e.g. CRC Standard Mathematical Tables, 31st ed., Sec. 4.
    """
    r2 = np.asarray(radius_m, dtype=float) ** 2
    if aspect >= 1.0 - 1e-12:
        return 2.0 * math.pi * r2
    e = math.sqrt(1.0 - aspect * aspect)
    return math.pi * r2 * (1.0 + (1.0 - e * e) / e * math.atanh(e))


def tank_length_m(volume_m3, diameter_m: float, aspect: float):
    """(cylinder length, overall length) [m] of a tank of `volume_m3` with two ellipsoidal heads.

    L_cyl = (V - 2 V_head)/(pi R^2); negative when the volume is smaller than the two heads
    (a smooth extension: the model then warns that the diameter is too large).
    """
    r = 0.5 * diameter_m
    v = np.asarray(volume_m3, dtype=float)
    l_cyl = (v - 2.0 * dome_volume_m3(r, aspect)) / (math.pi * r * r)
    return l_cyl, l_cyl + 2.0 * aspect * r


def cylinder_wall_thickness_m(pressure_pa, radius_m, allowable_stress_pa):
    """Thin-wall cylinder thickness from hoop stress: t = p r / sigma [m].

    References
    ----------
    .. [1] R. C. Hibbeler, Mechanics of Materials, 10th ed., 2017, Sec. 8.1 (thin-walled pressure
       vessels, sigma_1 = p r / t); any mechanics of materials text.
    """
    return pressure_pa * radius_m / allowable_stress_pa


def head_wall_thickness_m(pressure_pa, radius_m, allowable_stress_pa, aspect: float):
    """Thin-wall ellipsoidal head thickness t = p D K / (2 sigma), K = (2 + 1/k^2)/6 [m].

    K = 1/2 for a hemisphere, where this is the thin-wall sphere p r/(2 sigma).

    References
    ----------
    .. [1] ASME Boiler and Pressure Vessel Code, Sec. VIII Div. 1, UG-32 and Appendix 1-4
       (ellipsoidal heads, factor K), from memory; sphere: Hibbeler, Sec. 8.1.
    """
    k_factor = (2.0 + 1.0 / (aspect * aspect)) / 6.0
    return pressure_pa * 2.0 * radius_m * k_factor / (2.0 * allowable_stress_pa)


def _smooth_max(a, b, width):
    """max(a, b) rounded over `width` so the mass stays differentiable at the minimum gauge."""
    return 0.5 * (a + b + np.sqrt((a - b) ** 2 + width * width))


def pressure_vessel_mass_kg(volume_m3, diameter_m: float, aspect: float, pressure_pa: float,
                            material: Material, safety_factor: float, min_wall_thickness_m: float):
    """Wall mass of a cylindrical pressure vessel with two ellipsoidal heads [kg].

    Walls are sized on ultimate strength: sigma_allow = sigma_u / safety factor (burst at
    safety factor x MEOP), thickness at least the minimum gauge.

    References
    ----------
    .. [1] Hibbeler, Mechanics of Materials, 10th ed., Sec. 8.1; ASME VIII-1 UG-32 (from memory).
    """
    r = 0.5 * diameter_m
    sigma = material.ultimate_strength_pa / safety_factor
    w = 0.05 * min_wall_thickness_m
    t_c = _smooth_max(cylinder_wall_thickness_m(pressure_pa, r, sigma), min_wall_thickness_m, w)
    t_h = _smooth_max(head_wall_thickness_m(pressure_pa, r, sigma, aspect), min_wall_thickness_m, w)
    l_cyl, _ = tank_length_m(volume_m3, diameter_m, aspect)
    return material.density_kg_m3 * (math.pi * diameter_m * l_cyl * t_c + 2.0 * dome_area_m2(r, aspect) * t_h)


# --------------------------------------------------------------------------- the model
@dataclass(frozen=True, slots=True)
class StageGeometry:
    """Propellant split, tank volumes and lengths of one stage (arrays like the inputs).

    Volumes include ullage. For a solid stage the "fuel" is the grain and the fuel tank
    is the motor case.
    """

    fuel_mass_kg: Any
    oxidiser_mass_kg: Any
    fuel_volume_m3: Any
    oxidiser_volume_m3: Any
    fuel_tank_length_m: Any
    oxidiser_tank_length_m: Any
    fuel_tank_cylinder_length_m: Any
    oxidiser_tank_cylinder_length_m: Any
    stage_length_m: Any
    length_to_diameter: Any


@dataclass(frozen=True, slots=True)
class StageMassModel:
    """Structural mass of one stage as a smooth function of propellant mass and thrust.

    Attributes
    ----------
    propellant : Propellant
    diameter_m : float
        Tank (stage) outer diameter [m].
    kind : {"liquid", "solid", "hybrid", "hobby"}
    engine_count : int
    chamber_pressure_pa, expansion_ratio : float
        Engine design point [Pa, -] (gimbal MER, engine MER, solid case pressure).
    ullage_fraction : float
        Tank volume above the propellant volume [-] (default 3 %, common practice, no source).
    dome_aspect : float
        Head depth / radius of the tank heads [-] (1 hemispherical; default 1/sqrt(2)).
    tank_method : {"per_volume", "pressure_vessel"}
    fuel_tank_mass_per_volume_kg_m3, oxidiser_tank_mass_per_volume_kg_m3 : float
        Tank regressions [kg/m^3] (defaults: Akin 2016, see `MERS`).
    tank_pressure_pa : float
        Maximum expected operating pressure of the liquid tanks [Pa] (pressure vessels).
    material : Material or None
        Wall material of pressure-vessel tanks and solid cases.
    safety_factor : float
        Burst pressure / MEOP [-] (default 2: student competition rule "burst >= 2 x MEOP").
    min_wall_thickness_m : float
        Minimum gauge [m].
    fuel_insulation_kg_m2, oxidiser_insulation_kg_m2 : float
        Insulation mass per tank wall area [kg/m^2].
    engine_thrust_to_weight : float or None
        Engine vacuum thrust / engine weight at g0 [-]; None uses the engine MER.
    interstage_length_m, extra_length_m : float
        Interstage above this stage; engine bay and skirts [m].
    loading_fraction : float
        Solid grain volume / case volume [-].
    tube_mass_per_length_kg_m : float
        Hobby airframe tube [kg/m].
    use_avionics_mer : bool
        Add the avionics and wiring MERs.
    fixed : mapping
        Item name (`MASS_ITEMS`) -> fixed mass [kg] replacing the model of that item.
    """

    propellant: Propellant
    diameter_m: float
    kind: str = "liquid"
    engine_count: int = 1
    chamber_pressure_pa: float | None = None
    expansion_ratio: float | None = None
    ullage_fraction: float = 0.03
    dome_aspect: float = 1.0 / math.sqrt(2.0)
    tank_method: str = "per_volume"
    fuel_tank_mass_per_volume_kg_m3: float = 12.158
    oxidiser_tank_mass_per_volume_kg_m3: float = 12.158
    tank_pressure_pa: float = 3.0e5
    material: Material | None = None
    safety_factor: float = 2.0
    min_wall_thickness_m: float = 1.0e-3
    fuel_insulation_kg_m2: float = 0.0
    oxidiser_insulation_kg_m2: float = 0.0
    engine_thrust_to_weight: float | None = None
    interstage_length_m: float = 0.0
    extra_length_m: float = 0.0
    loading_fraction: float = 0.85
    tube_mass_per_length_kg_m: float = 0.0
    use_avionics_mer: bool = True
    fixed: Mapping[str, float] = field(default_factory=dict)

    # ---------------------------------------------------------------- geometry
    @property
    def pc_pa(self) -> float:
        return self.chamber_pressure_pa if self.chamber_pressure_pa is not None else self.propellant.chamber_pressure_pa

    @property
    def eps(self) -> float:
        return self.expansion_ratio if self.expansion_ratio is not None else self.propellant.expansion_ratio

    @property
    def _is_grain(self) -> bool:
        return self.kind in ("solid", "hobby")

    def geometry(self, propellant_mass_kg) -> StageGeometry:
        """Tank volumes (with ullage or the solid loading fraction) and lengths."""
        mp = np.asarray(propellant_mass_kg, dtype=float)
        p = self.propellant
        if self._is_grain:
            mf, mo = mp, np.zeros_like(mp)
            vf = mp / p.fuel_density_kg_m3 / self.loading_fraction
            vo = np.zeros_like(mp)
        else:
            mf = mp * p.fuel_fraction
            mo = mp - mf
            vf = mf / p.fuel_density_kg_m3 * (1.0 + self.ullage_fraction)
            vo = mo / p.oxidiser_density_kg_m3 * (1.0 + self.ullage_fraction) if p.oxidiser_density_kg_m3 else 0.0 * mp
        cf, lf = tank_length_m(vf, self.diameter_m, self.dome_aspect)
        if self._is_grain:
            co, lo = np.zeros_like(mp), np.zeros_like(mp)
        else:
            co, lo = tank_length_m(vo, self.diameter_m, self.dome_aspect)
        length = lf + lo + self.interstage_length_m + self.extra_length_m
        return StageGeometry(mf, mo, vf, vo, lf, lo, cf, co, length, length / self.diameter_m)

    # ---------------------------------------------------------------- items
    def _explicit_items(self, mp, thrust, geo: StageGeometry) -> dict[str, Any]:
        """Every item except avionics and wiring (which depend on the stage mass itself)."""
        zero = 0.0 * mp
        r = 0.5 * self.diameter_m
        items: dict[str, Any] = {k: zero for k in MASS_ITEMS}
        # tanks / motor case
        if self._is_grain or self.tank_method == "pressure_vessel":
            mat = self.material
            if mat is not None:
                pf = self.pc_pa if self._is_grain or self.kind == "hybrid" else self.tank_pressure_pa
                tanks = pressure_vessel_mass_kg(geo.fuel_volume_m3, self.diameter_m, self.dome_aspect, pf, mat,
                                                self.safety_factor, self.min_wall_thickness_m)
                if not self._is_grain:
                    tanks = tanks + pressure_vessel_mass_kg(
                        geo.oxidiser_volume_m3, self.diameter_m, self.dome_aspect, self.tank_pressure_pa, mat,
                        self.safety_factor, self.min_wall_thickness_m)
                items["tanks"] = tanks
        else:
            items["tanks"] = (self.fuel_tank_mass_per_volume_kg_m3 * geo.fuel_volume_m3
                              + self.oxidiser_tank_mass_per_volume_kg_m3 * geo.oxidiser_volume_m3)
        if not self._is_grain:
            head = 2.0 * dome_area_m2(r, self.dome_aspect)
            area_f = math.pi * self.diameter_m * geo.fuel_tank_cylinder_length_m + head
            area_o = math.pi * self.diameter_m * geo.oxidiser_tank_cylinder_length_m + head
            items["insulation"] = self.fuel_insulation_kg_m2 * area_f + self.oxidiser_insulation_kg_m2 * area_o
        # engines (liquid and hybrid; a solid's nozzle is a fixed item)
        t = np.asarray(thrust, dtype=float) + zero
        if not self._is_grain:
            n = self.engine_count
            te = t / n
            if self.engine_thrust_to_weight is not None:
                eng = t / (_G0 * self.engine_thrust_to_weight)
            else:
                eng = n * (7.81e-4 * te + 3.37e-5 * te * math.sqrt(self.eps) + 59.0)
            gimbal = n * 237.8 * (te / self.pc_pa) ** 0.9375
            items["engines"] = eng + gimbal
            items["thrust_structure"] = 2.55e-4 * t
        if self.interstage_length_m > 0:
            items["interstage"] = zero + 4.95 * (math.pi * self.diameter_m * self.interstage_length_m) ** 1.15
        if self.tube_mass_per_length_kg_m > 0:
            items["airframe"] = self.tube_mass_per_length_kg_m * geo.stage_length_m
        for k, v in self.fixed.items():
            items[k] = zero + v
        return items

    def _implicit(self, stage_mass, length):
        """Avionics and wiring MERs of a loaded stage mass M [kg] and length L [m], and dM derivative."""
        zero = 0.0 * stage_mass
        if not self.use_avionics_mer:
            return zero, zero, zero
        m = np.maximum(stage_mass, 1e-9)
        lq = np.maximum(length, 1e-9) ** 0.25
        av = zero + self.fixed["avionics"] if "avionics" in self.fixed else 10.0 * m ** 0.361
        dav = zero if "avionics" in self.fixed else 3.61 * m ** (0.361 - 1.0)
        wi = zero + self.fixed["wiring"] if "wiring" in self.fixed else 1.058 * np.sqrt(m) * lq
        dwi = zero if "wiring" in self.fixed else 0.529 * lq / np.sqrt(m)
        return av, wi, dav + dwi

    def _solve(self, propellant_mass_kg, thrust_vac_n):
        mp = np.asarray(propellant_mass_kg, dtype=float)
        geo = self.geometry(mp)
        items = self._explicit_items(mp, thrust_vac_n, geo)
        explicit = sum(items[k] for k in MASS_ITEMS if k not in ("avionics", "wiring"))
        s = np.asarray(explicit, dtype=float).copy()
        # s = E + g(m_p + s): Newton's method (g' < 1 over the MERs' range), a fixed number of
        # steps so that s is a smooth function of the inputs (no data-dependent stopping)
        if self.use_avionics_mer:
            for _ in range(5):  # quadratic convergence from s = E: 0.3 -> 1e-2 -> 1e-5 -> 1e-11
                av, wi, dg = self._implicit(mp + s, geo.stage_length_m)
                s = s - (s - explicit - av - wi) / (1.0 - np.minimum(dg, 0.9))
        av, wi, _ = self._implicit(mp + s, geo.stage_length_m)
        items["avionics"], items["wiring"] = av, wi
        return s, items, geo

    # ---------------------------------------------------------------- public
    def structural_mass_kg(self, propellant_mass_kg, thrust_vac_n):
        """Structural (inert) mass [kg] for propellant mass [kg] and vacuum thrust [N].

        Floats give a float; arrays broadcast.
        """
        s, _items, _geo = self._solve(propellant_mass_kg, thrust_vac_n)
        return float(s) if np.ndim(s) == 0 else s

    def d_structural_mass_d_propellant(self, propellant_mass_kg, thrust_vac_n):
        """d m_s / d m_p [-], by a central difference of relative step 1e-6."""
        mp = np.asarray(propellant_mass_kg, dtype=float)
        h = 1e-6 * np.maximum(np.abs(mp), 1.0)
        d = (self.structural_mass_kg(mp + h, thrust_vac_n) - self.structural_mass_kg(mp - h, thrust_vac_n)) / (2 * h)
        return float(d) if np.ndim(d) == 0 else d

    def d_structural_mass_d_thrust(self, propellant_mass_kg, thrust_vac_n):
        """d m_s / d T [kg/N], by a central difference of relative step 1e-6."""
        t = np.asarray(thrust_vac_n, dtype=float)
        h = 1e-6 * np.maximum(np.abs(t), 1.0)
        d = (self.structural_mass_kg(propellant_mass_kg, t + h)
             - self.structural_mass_kg(propellant_mass_kg, t - h)) / (2 * h)
        return float(d) if np.ndim(d) == 0 else d

    def breakdown(self, propellant_mass_kg, thrust_vac_n) -> dict[str, Any]:
        """Named mass items [kg] (`MASS_ITEMS`) summing to the structural mass."""
        _s, items, _geo = self._solve(propellant_mass_kg, thrust_vac_n)
        return {k: (float(v) if np.ndim(v) == 0 else v) for k, v in items.items()}

    def structural_coefficient(self, propellant_mass_kg, thrust_vac_n):
        """m_s / (m_s + m_p) [-] at this design: an output of the model."""
        s = self.structural_mass_kg(propellant_mass_kg, thrust_vac_n)
        return s / (s + np.asarray(propellant_mass_kg, dtype=float))

    def review_notes(self, propellant_mass_kg: float, thrust_vac_n: float) -> list[str]:
        """Things a reviewer should see at one design point (MER ranges, odd geometry)."""
        s, items, geo = self._solve(propellant_mass_kg, thrust_vac_n)
        notes = []
        for which, lc in (("fuel tank", geo.fuel_tank_cylinder_length_m),
                          ("oxidiser tank", geo.oxidiser_tank_cylinder_length_m)):
            if which == "oxidiser tank" and self._is_grain:
                continue
            if float(lc) < 0:
                notes.append(f"{which}: its volume is smaller than its two heads at {self.diameter_m:g} m "
                             "diameter (negative cylinder length); choose a smaller diameter.")
        if self.use_avionics_mer and float(s + propellant_mass_kg) < 1000.0:
            notes.append("avionics and wiring MERs are fitted to launch vehicles; this stage is below "
                         "1,000 kg, so override [stage.structure.fixed] avionics and wiring.")
        elif self.use_avionics_mer and not {"avionics", "wiring"} <= set(self.fixed):
            share = float(items["avionics"] + items["wiring"]) / float(s)
            if share > AVIONICS_SHARE_NOTE:
                notes.append(f"avionics and wiring (MERs) are {100 * share:.0f} % of this stage's structure (above "
                             f"{100 * AVIONICS_SHARE_NOTE:.0f} %, common practice, no source): the launch-vehicle "
                             "MERs overstate them for a small stage; give [stage.structure.fixed] avionics and "
                             "wiring from the team's own estimate.")
        if self.tank_method == "per_volume" and not self._is_grain:
            v = float(geo.fuel_volume_m3 + geo.oxidiser_volume_m3)
            if v < 10.0:
                notes.append(f"tank mass per volume regressions are fitted to 10-1,500 m^3 tanks; these "
                             f"hold {v:.3g} m^3 (consider tank = 'pressure_vessel').")
        per_engine = float(thrust_vac_n) / self.engine_count
        if (not self._is_grain and self.engine_thrust_to_weight is None and "engines" not in self.fixed
                and per_engine < 50e3):
            notes.append(f"engine MER is fitted to large pump-fed engines; {per_engine / 1e3:,.3g} kN per engine "
                         "is small for it (below 50 kN, common practice, no source): give "
                         "[stage.structure] engine_thrust_to_weight.")
        if float(geo.length_to_diameter) > 20:
            notes.append(f"stage length-to-diameter {float(geo.length_to_diameter):.1f} is slender "
                         "(above 20); check bending loads or choose a larger diameter.")
        return notes
