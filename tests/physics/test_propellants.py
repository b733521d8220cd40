"""Propellant table: densities against CoolProp, nozzle relations, equilibrium Isp against Cantera."""

from __future__ import annotations

import math

import pytest

from sizing.physics.propellants import (
    P_SEA_LEVEL_PA,
    exit_pressure_ratio,
    shipped_propellants,
    thrust_coefficient_vac,
)

TABLE = shipped_propellants()
PC_1000_PSIA = 6.894757e6


@pytest.mark.parametrize("name, which, fluid", [
    ("lox-lh2", "oxidiser", "Oxygen"),
    ("lox-lh2", "fuel", "ParaHydrogen"),
    ("lox-ch4", "fuel", "Methane"),
    ("n2o-htpb", "oxidiser", "NitrousOxide"),
])
def test_propellant_density_matches_coolprop(name, which, fluid):
    """Saturated-liquid densities at the table's stated temperature, CoolProp PropsSI (general PyPI library)."""
    cp = pytest.importorskip("CoolProp.CoolProp")
    p = TABLE[name]
    t = getattr(p, f"{which}_temperature_k")
    rho = getattr(p, f"{which}_density_kg_m3")
    assert rho == pytest.approx(cp.PropsSI("D", "T", t, "Q", 0, fluid), rel=1e-3)


def test_bulk_density_hand_check():
    """rho = (1 + r)/(r/rho_o + 1/rho_f): r = 5.5, 1141.2 and 70.83 kg/m^3 give 343.2 kg/m^3 (by hand)."""
    assert TABLE["lox-lh2"].bulk_density_kg_m3 == pytest.approx(6.5 / (5.5 / 1141.2 + 1 / 70.83), rel=1e-12)
    assert TABLE["lox-lh2"].bulk_density_kg_m3 == pytest.approx(343.2, abs=0.05)


def test_exit_pressure_ratio_matches_isentropic_table():
    """NACA Report 1135 (1953), isentropic flow table, gamma = 1.4: M = 2 has A/A* = 1.6875, p/p0 = 0.1278."""
    assert exit_pressure_ratio(1.4, 1.6875) == pytest.approx(0.1278, abs=1e-4)


def test_thrust_coefficient_tends_to_its_limit():
    """Sutton & Biblarz 9th ed. eq. 3-30: C_F -> sqrt(2g^2/(g-1) (2/(g+1))^((g+1)/(g-1))) for eps -> inf."""
    g = 1.4
    limit = math.sqrt(2 * g * g / (g - 1) * (2 / (g + 1)) ** ((g + 1) / (g - 1)))
    assert limit == pytest.approx(1.8116, abs=1e-4)  # by hand: sqrt(9.8 x 0.33490)
    assert thrust_coefficient_vac(g, 1e6) == pytest.approx(limit, rel=2e-3)
    assert thrust_coefficient_vac(g, 10.0) < thrust_coefficient_vac(g, 50.0) < limit


def test_sea_level_isp_is_vacuum_less_pressure_term():
    """Isp_sl = Isp_vac - p_a eps c*/(p_c g0) (Sutton eq. 3-30 with p_a): exact at the tabulated nozzle."""
    for p in TABLE.values():
        vac, sl = p.isp_at()
        assert vac == p.isp_vac_s
        assert sl == pytest.approx(p.isp_sea_level_s, abs=0.6), p.name
        assert sl == pytest.approx(vac - P_SEA_LEVEL_PA * p.expansion_ratio * p.characteristic_velocity_m_s
                                   / (p.chamber_pressure_pa * 9.80665), rel=1e-12)


def test_every_entry_names_its_source():
    for p in TABLE.values():
        assert p.source, p.name
        assert p.isp_sea_level_s < p.isp_vac_s


def test_higher_chamber_pressure_raises_sea_level_isp_only():
    p = TABLE["lox-ch4"]
    v1, s1 = p.isp_at(chamber_pressure_pa=5e6)
    v2, s2 = p.isp_at(chamber_pressure_pa=10e6)
    assert v1 == v2 and s2 > s1


# --- chemical equilibrium (Cantera, optional) --------------------------------------------------
#: Sutton & Biblarz, Rocket Propulsion Elements, 9th ed., Table 5-5 (shifting equilibrium,
#: p_c = 1000 psia, expansion to 1 atm): (fuel, oxidiser, mixture ratio, T1 [K], Isp [s]). From memory.
SUTTON_TABLE_5_5 = (
    ("liquid hydrogen", "liquid oxygen", 4.13, 2999.0, 391.0),
    ("liquid methane", "liquid oxygen", 3.20, 3526.0, 311.0),
    ("rp-1", "liquid oxygen", 2.56, 3676.0, 300.0),
    ("mmh", "n2o4", 2.17, 3398.0, 289.0),
)


@pytest.mark.parametrize("fuel, ox, r, t1, isp", SUTTON_TABLE_5_5, ids=[r[0] for r in SUTTON_TABLE_5_5])
def test_equilibrium_matches_sutton_table(fuel, ox, r, t1, isp):
    """Cantera shifting equilibrium vs Sutton & Biblarz 9th ed. Table 5-5 (from memory): T1 and Isp within 1 %."""
    pytest.importorskip("cantera")
    from sizing.physics.equilibrium import equilibrium_performance

    perf = equilibrium_performance(fuel, ox, r, chamber_pressure_pa=PC_1000_PSIA, exit_pressure_pa=101325.0)
    assert perf.chamber_temperature_k == pytest.approx(t1, rel=5e-3)
    assert perf.isp_sea_level_s == pytest.approx(isp, rel=1e-2)


@pytest.mark.parametrize("name", ["lox-lh2", "lox-ch4", "lox-rp1", "n2o4-mmh"])
def test_table_isp_reproduced_by_equilibrium(name):
    """The shipped liquid entries are Cantera shifting-equilibrium values (as their source says)."""
    pytest.importorskip("cantera")
    from sizing.physics.equilibrium import equilibrium_performance

    p = TABLE[name]
    perf = equilibrium_performance(p.fuel, p.oxidiser, p.mixture_ratio, chamber_pressure_pa=p.chamber_pressure_pa,
                                   exit_pressure_pa=101325.0)
    assert perf.isp_vac_s == pytest.approx(p.isp_vac_s, rel=2e-4)
    assert perf.isp_sea_level_s == pytest.approx(p.isp_sea_level_s, rel=2e-4)
    assert perf.characteristic_velocity_m_s == pytest.approx(p.characteristic_velocity_m_s, rel=2e-4)
    assert perf.expansion_ratio == pytest.approx(p.expansion_ratio, rel=1e-3)


def test_rescaled_vacuum_isp_close_to_equilibrium():
    """The ideal-nozzle rescaling of the table agrees with Cantera at area ratio 120 within 0.3 %."""
    pytest.importorskip("cantera")
    from sizing.physics.equilibrium import equilibrium_performance

    p = TABLE["lox-lh2"]
    perf = equilibrium_performance(p.fuel, p.oxidiser, p.mixture_ratio, chamber_pressure_pa=p.chamber_pressure_pa,
                                   expansion_ratio=120.0)
    assert p.isp_at(expansion_ratio=120.0)[0] == pytest.approx(perf.isp_vac_s, rel=3e-3)
