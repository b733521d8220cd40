"""Propellant table: densities, mixture ratio and Isp at a stated chamber pressure and nozzle.

The shipped table lives in ``sizing/data/propellants.toml``; each value there
carries its source. A problem file may add entries or replace shipped ones
(``[propellant_table.NAME]``, see docs/problem-files.md).

Isp of another nozzle than the tabulated one is rescaled with the ideal-nozzle
thrust coefficient of a single effective ratio of specific heats (frozen,
ideal gas; Sutton & Biblarz 9th ed., eqs. 3-25 and 3-30):

    Isp_vac(eps) = Isp_vac,table * CF_vac(gamma, eps) / CF_vac(gamma, eps_table),
    Isp_sl = Isp_vac - p_sl * eps * c* / (p_c * g0).

The second line is exact for any nozzle (the pressure-thrust term); the first is
an approximation whose error against shifting equilibrium is checked in the tests.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, field, replace
from importlib import resources
from typing import Any, Mapping

from scipy.optimize import brentq

__all__ = ["Propellant", "shipped_propellants", "propellant_from_mapping", "PROPELLANT_KEYS",
           "PROPELLANT_KINDS", "thrust_coefficient_vac", "exit_pressure_ratio", "P_SEA_LEVEL_PA"]

P_SEA_LEVEL_PA = 101325.0
_G0 = 9.80665

#: Kinds of propellant: a liquid bipropellant, a solid grain, a hybrid (liquid oxidiser, solid fuel).
PROPELLANT_KINDS = ("liquid", "solid", "hybrid")

#: Keys of a table entry: (key, unit, required).
PROPELLANT_KEYS: tuple[tuple[str, str, bool], ...] = (
    ("kind", "text", True),
    ("description", "text", False),
    ("fuel", "text", False),
    ("oxidiser", "text", False),
    ("fuel_density", "kg/m^3", True),
    ("oxidiser_density", "kg/m^3", False),
    ("fuel_temperature", "K", False),
    ("oxidiser_temperature", "K", False),
    ("mixture_ratio", "-", False),
    ("chamber_pressure", "Pa", True),
    ("expansion_ratio", "-", True),
    ("isp_vac", "s", True),
    ("isp_sea_level", "s", True),
    ("characteristic_velocity", "m/s", True),
    ("gamma", "-", True),
    ("source", "text", False),
)


@dataclass(frozen=True, slots=True)
class Propellant:
    """One propellant combination at its tabulated design point (SI).

    Attributes
    ----------
    name : str
    kind : {"liquid", "solid", "hybrid"}
    fuel_density_kg_m3 : float
        Fuel (or solid grain) density [kg/m^3].
    oxidiser_density_kg_m3 : float or None
        Oxidiser density [kg/m^3]; None for a solid.
    mixture_ratio : float
        Oxidiser-to-fuel mass ratio [-]; 0 for a solid.
    chamber_pressure_pa, expansion_ratio : float
        The design point of the tabulated Isp [Pa, -].
    isp_vac_s, isp_sea_level_s : float
        Specific impulse at that point [s].
    characteristic_velocity_m_s : float
        c* [m/s].
    gamma : float
        Effective ratio of specific heats used to rescale Isp to another nozzle [-].
    source : str
        Where the values come from.
    """

    name: str
    kind: str
    fuel_density_kg_m3: float
    chamber_pressure_pa: float
    expansion_ratio: float
    isp_vac_s: float
    isp_sea_level_s: float
    characteristic_velocity_m_s: float
    gamma: float
    oxidiser_density_kg_m3: float | None = None
    mixture_ratio: float = 0.0
    fuel: str = ""
    oxidiser: str = ""
    fuel_temperature_k: float | None = None
    oxidiser_temperature_k: float | None = None
    description: str = ""
    source: str = ""
    extra: Mapping[str, Any] = field(default_factory=dict, compare=False, repr=False)

    @property
    def fuel_fraction(self) -> float:
        """Fuel share of the propellant mass, 1/(1 + r) [-]."""
        return 1.0 / (1.0 + self.mixture_ratio)

    @property
    def bulk_density_kg_m3(self) -> float:
        """Mass of propellant per unit of tank volume (no ullage) [kg/m^3].

        rho = (1 + r) / (r/rho_ox + 1/rho_f).

        References
        ----------
        .. [1] G. P. Sutton, O. Biblarz, Rocket Propulsion Elements, 9th ed., 2017, eq. 7-2
           (average specific gravity of a bipropellant; equation number from memory).
        """
        if self.oxidiser_density_kg_m3 is None or self.mixture_ratio == 0.0:
            return self.fuel_density_kg_m3
        r = self.mixture_ratio
        return (1.0 + r) / (r / self.oxidiser_density_kg_m3 + 1.0 / self.fuel_density_kg_m3)

    def isp_at(self, *, expansion_ratio: float | None = None,
               chamber_pressure_pa: float | None = None) -> tuple[float, float]:
        """Vacuum and sea-level Isp [s] of a nozzle of area ratio `expansion_ratio` at `chamber_pressure_pa`.

        Rescaled from the tabulated point by the ideal thrust coefficient (module docstring);
        c* is taken as independent of chamber pressure (Sutton & Biblarz 9th ed., Sec. 5.2:
        it changes by about 1 % per doubling of p_c; from memory).

        References
        ----------
        .. [1] G. P. Sutton, O. Biblarz, Rocket Propulsion Elements, 9th ed., 2017, eqs. 3-25, 3-30.
        """
        eps = self.expansion_ratio if expansion_ratio is None else float(expansion_ratio)
        pc = self.chamber_pressure_pa if chamber_pressure_pa is None else float(chamber_pressure_pa)
        if eps == self.expansion_ratio:
            isp_vac = self.isp_vac_s
        else:
            isp_vac = self.isp_vac_s * (thrust_coefficient_vac(self.gamma, eps)
                                        / thrust_coefficient_vac(self.gamma, self.expansion_ratio))
        isp_sl = isp_vac - P_SEA_LEVEL_PA * eps * self.characteristic_velocity_m_s / (pc * _G0)
        return isp_vac, isp_sl


def exit_pressure_ratio(gamma: float, expansion_ratio: float) -> float:
    """p_e/p_c of an ideal supersonic nozzle of area ratio eps (root of Sutton eq. 3-25).

    1/eps = ((g+1)/2)^(1/(g-1)) (p_e/p_c)^(1/g) sqrt((g+1)/(g-1) (1 - (p_e/p_c)^((g-1)/g))).

    References
    ----------
    .. [1] G. P. Sutton, O. Biblarz, Rocket Propulsion Elements, 9th ed., 2017, eq. 3-25.
    """
    g = float(gamma)

    def inv_area(x: float) -> float:
        return (((g + 1) / 2) ** (1 / (g - 1)) * x ** (1 / g)
                * math.sqrt((g + 1) / (g - 1) * (1 - x ** ((g - 1) / g))))

    x_throat = (2 / (g + 1)) ** (g / (g - 1))
    return brentq(lambda x: inv_area(x) - 1.0 / expansion_ratio, 1e-12, x_throat * (1 - 1e-12), xtol=1e-15)


def thrust_coefficient_vac(gamma: float, expansion_ratio: float) -> float:
    """Ideal vacuum thrust coefficient C_F of a nozzle (Sutton eq. 3-30 with p_a = 0).

    C_F = sqrt(2 g^2/(g-1) (2/(g+1))^((g+1)/(g-1)) (1 - x^((g-1)/g))) + x eps, x = p_e/p_c.

    References
    ----------
    .. [1] G. P. Sutton, O. Biblarz, Rocket Propulsion Elements, 9th ed., 2017, eq. 3-30.
    """
    g = float(gamma)
    x = exit_pressure_ratio(g, expansion_ratio)
    mom = math.sqrt(2 * g * g / (g - 1) * (2 / (g + 1)) ** ((g + 1) / (g - 1)) * (1 - x ** ((g - 1) / g)))
    return mom + x * expansion_ratio


_SI_KEYS = {"fuel_density": "fuel_density_kg_m3", "oxidiser_density": "oxidiser_density_kg_m3",
            "fuel_temperature": "fuel_temperature_k", "oxidiser_temperature": "oxidiser_temperature_k",
            "chamber_pressure": "chamber_pressure_pa", "isp_vac": "isp_vac_s",
            "isp_sea_level": "isp_sea_level_s", "characteristic_velocity": "characteristic_velocity_m_s"}


def propellant_from_mapping(name: str, values: Mapping[str, Any],
                            base: Propellant | None = None) -> Propellant:
    """Build a `Propellant` from SI values keyed as in the TOML table (`PROPELLANT_KEYS`).

    With `base`, only the given keys replace the base entry's values.
    Raises KeyError for a required key that is missing (the loader reports it first).
    """
    kw: dict[str, Any] = {}
    for key, _unit, _req in PROPELLANT_KEYS:
        if key in values and values[key] is not None:
            kw[_SI_KEYS.get(key, key)] = values[key]
    if base is not None:
        return replace(base, name=name, **kw)
    missing = [k for k, _u, req in PROPELLANT_KEYS if req and _SI_KEYS.get(k, k) not in kw]
    if missing:
        raise KeyError(", ".join(missing))
    return Propellant(name=name, **kw)


def shipped_propellants() -> dict[str, Propellant]:
    """The shipped propellant table (``sizing/data/propellants.toml``), by name."""
    text = resources.files("sizing").joinpath("data/propellants.toml").read_text(encoding="utf-8")
    data = tomllib.loads(text)
    return {name: propellant_from_mapping(name, {k: v for k, v in entry.items()
                                                 if not k.endswith("_source")})
            for name, entry in data.items()}
