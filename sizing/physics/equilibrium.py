"""Rocket performance by chemical equilibrium (optional: needs Cantera from PyPI).

Ideal rocket with shifting equilibrium: the propellants burn adiabatically at
the chamber pressure (equilibrium at constant enthalpy and pressure) and expand
isentropically through the nozzle, the composition staying in equilibrium at
every pressure. The throat is where the mass flux rho*v peaks; the exit
pressure is the one whose mass flux gives the stated area ratio.

This is the method of NASA's equilibrium codes and of the theoretical tables
in G. P. Sutton, O. Biblarz, Rocket Propulsion Elements, 9th ed., 2017, ch. 5
(Sec. 5.2, "shifting equilibrium"); here the equilibrium solver is Cantera's
(Goodwin et al., https://cantera.org) with the GRI-Mech 3.0 species set, which
holds the H/C/O/N products of the propellants in `REACTANTS`.

Cantera is imported only when a function here is called; the rest of the package
does not need it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Mapping

__all__ = ["REACTANTS", "EquilibriumPerformance", "equilibrium_performance", "has_cantera"]

#: Reactants at their storage state: elements per formula unit, molar mass [g/mol],
#: enthalpy of formation of the liquid at its storage temperature [J/mol].
#: Enthalpies are those of the NASA Glenn thermodynamic database (McBride, Zehe,
#: Gordon, NASA TP-2002-211556) for the condensed reactants, from memory.
REACTANTS: Mapping[str, Mapping[str, object]] = {
    "liquid hydrogen": {"elements": {"H": 2}, "molar_mass_g_mol": 2.01588, "hf_j_mol": -9012.0,
                        "temperature_k": 20.27},
    "liquid oxygen": {"elements": {"O": 2}, "molar_mass_g_mol": 31.9988, "hf_j_mol": -12979.0,
                      "temperature_k": 90.17},
    "liquid methane": {"elements": {"C": 1, "H": 4}, "molar_mass_g_mol": 16.04246,
                       "hf_j_mol": -89233.0, "temperature_k": 111.64},
    # RP-1 as the formula unit CH1.9423 of the NASA database
    "rp-1": {"elements": {"C": 1, "H": 1.9423}, "molar_mass_g_mol": 13.9687, "hf_j_mol": -24717.7,
             "temperature_k": 298.15},
    "mmh": {"elements": {"C": 1, "H": 6, "N": 2}, "molar_mass_g_mol": 46.0717, "hf_j_mol": 54200.0,
            "temperature_k": 298.15},
    "n2o4": {"elements": {"N": 2, "O": 4}, "molar_mass_g_mol": 92.011, "hf_j_mol": -19564.0,
             "temperature_k": 298.15},
}

_G0 = 9.80665
_P_SEA_LEVEL_PA = 101325.0


@dataclass(frozen=True, slots=True)
class EquilibriumPerformance:
    """Ideal (shifting equilibrium) performance of one propellant point.

    Attributes
    ----------
    chamber_temperature_k : float
        Adiabatic flame temperature [K].
    characteristic_velocity_m_s : float
        c* = p_c A_t / mdot [m/s].
    expansion_ratio : float
        A_e / A_t [-].
    exit_pressure_pa : float
        [Pa].
    isp_vac_s, isp_sea_level_s : float
        Vacuum and sea-level (101 325 Pa) specific impulse of this nozzle [s].
    """

    chamber_temperature_k: float
    characteristic_velocity_m_s: float
    expansion_ratio: float
    exit_pressure_pa: float
    isp_vac_s: float
    isp_sea_level_s: float


def has_cantera() -> bool:
    """True when Cantera can be imported."""
    try:
        import cantera  # noqa: F401
    except ImportError:
        return False
    return True


def _mixture_moles(fuel: str, oxidiser: str, mixture_ratio: float) -> tuple[dict[str, float], float]:
    """Element moles per kg of mixture and the mixture's enthalpy [J/kg]."""
    elements: dict[str, float] = {}
    h = 0.0
    for name, mass_share in ((fuel, 1.0 / (1.0 + mixture_ratio)),
                             (oxidiser, mixture_ratio / (1.0 + mixture_ratio))):
        r = REACTANTS[name]
        mol = mass_share * 1000.0 / float(r["molar_mass_g_mol"])  # mol per kg of mixture
        h += mol * float(r["hf_j_mol"])
        for el, n in r["elements"].items():  # type: ignore[union-attr]
            elements[el] = elements.get(el, 0.0) + mol * float(n)
    return elements, h


def _species_for(elements: Mapping[str, float]) -> dict[str, float]:
    """Species moles with the given element moles (any split will do: it is equilibrated)."""
    c, h, o, n = (elements.get(k, 0.0) for k in ("C", "H", "O", "N"))
    # carbon as C2H2 and CH4 in the proportions that use up C and H, the rest as H2, O2, N2
    x: dict[str, float] = {}
    if c > 0:
        # a C2H2 + b CH4: 2a + b = c, 2a + 4b = h  (h >= c, which holds for every fuel here)
        b = max((h - c) / 3.0, 0.0)
        a = max((c - b) / 2.0, 0.0)
        b = c - 2.0 * a
        x["C2H2"], x["CH4"] = a, b
        h_left = h - 2.0 * a - 4.0 * b
    else:
        h_left = h
    if h_left > 1e-15:
        x["H2"] = h_left / 2.0
    if o > 0:
        x["O2"] = o / 2.0
    if n > 0:
        x["N2"] = n / 2.0
    return x


def equilibrium_performance(fuel: str, oxidiser: str, mixture_ratio: float, *,
                            chamber_pressure_pa: float, expansion_ratio: float | None = None,
                            exit_pressure_pa: float | None = None) -> EquilibriumPerformance:
    """Ideal shifting-equilibrium performance of a bipropellant (Cantera).

    Parameters
    ----------
    fuel, oxidiser : str
        Names in `REACTANTS`.
    mixture_ratio : float
        Oxidiser-to-fuel mass ratio [-], > 0.
    chamber_pressure_pa : float
        [Pa], > 0.
    expansion_ratio : float, optional
        Nozzle area ratio A_e/A_t [-], > 1. Give this or `exit_pressure_pa`.
    exit_pressure_pa : float, optional
        Exit pressure [Pa] (e.g. 101 325 for the sea-level optimum nozzle).

    Returns
    -------
    EquilibriumPerformance

    Notes
    -----
    Chamber: equilibrium at the reactants' enthalpy and p_c. Nozzle: isentropic,
    shifting equilibrium; v = sqrt(2 (h_c - h)); throat at the peak of rho v;
    thrust per mass flow v_e + (p_e - p_a) A_e / mdot with A_e / mdot = 1/(rho_e v_e).

    References
    ----------
    .. [1] G. P. Sutton, O. Biblarz, Rocket Propulsion Elements, 9th ed., 2017, Sec. 5.2
       and eqs. 3-16 (exhaust velocity), 3-29 (thrust), 3-32 (c*).
    .. [2] D. G. Goodwin et al., Cantera, https://cantera.org (equilibrium solver).
    """
    import cantera as ct
    import numpy as np
    from scipy.optimize import brentq, minimize_scalar

    if (expansion_ratio is None) == (exit_pressure_pa is None):
        raise ValueError("give expansion_ratio or exit_pressure_pa")
    pc = float(chamber_pressure_pa)
    elements, h_mix = _mixture_moles(fuel, oxidiser, float(mixture_ratio))
    gas = ct.Solution("gri30.yaml")
    gas.TPX = 3000.0, pc, _species_for(elements)
    gas.equilibrate("TP")
    gas.HP = h_mix, pc
    gas.equilibrate("HP")
    t_c, s_c, h_c = gas.T, gas.s, gas.h

    def expand(p: float) -> tuple[float, float]:
        gas.SP = s_c, p
        gas.equilibrate("SP")
        return math.sqrt(max(2.0 * (h_c - gas.h), 0.0)), gas.density

    def neg_flux(log_p: float) -> float:
        v, rho = expand(math.exp(log_p))
        return -v * rho

    opt = minimize_scalar(neg_flux, bounds=(math.log(0.3 * pc), math.log(0.9 * pc)), method="bounded",
                          options={"xatol": 1e-7})
    g_t = -float(opt.fun)
    if exit_pressure_pa is None:
        target = float(expansion_ratio)  # type: ignore[arg-type]
        hi = float(np.log(math.exp(opt.x) * 0.999))

        def area_gap(log_p: float) -> float:
            v, rho = expand(math.exp(log_p))
            return g_t / (rho * v) - target

        log_pe = brentq(area_gap, math.log(pc * 1e-7), hi, xtol=1e-12)
        p_e = math.exp(log_pe)
    else:
        p_e = float(exit_pressure_pa)
    v_e, rho_e = expand(p_e)
    eps = g_t / (rho_e * v_e)
    a_per_flow = 1.0 / (rho_e * v_e)
    return EquilibriumPerformance(
        chamber_temperature_k=float(t_c),
        characteristic_velocity_m_s=pc / g_t,
        expansion_ratio=float(eps),
        exit_pressure_pa=p_e,
        isp_vac_s=(v_e + p_e * a_per_flow) / _G0,
        isp_sea_level_s=(v_e + (p_e - _P_SEA_LEVEL_PA) * a_per_flow) / _G0,
    )
