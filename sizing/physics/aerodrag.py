"""Zero-lift drag of a finned body from its geometry: a component build-up C_D(Mach) table.

Method: the component build-up for slender finned rockets (skin friction of
body and fins with Hoerner's form factors, fin-body interference, base drag)
as laid out by S. Box, C. M. Bishop and H. Hunt, "Estimating the dynamic and
aerodynamic parameters of passively controlled high power rockets for flight
simulation", University of Cambridge, 2009, after S. F. Hoerner,
*Fluid-Dynamic Drag*, 1965 (ch. 3 base drag, ch. 6 streamlined bodies); with
the Mach-dependent base and nose wave drag correlations of E. L. Fleeman,
*Tactical Missile Design*, 2nd ed., AIAA, 2006, ch. 2. The equations below
are written from memory of these sources, not copied from them; treat the
result as a preliminary estimate (check-values.md section 5 gives the ranges
a finned hobby rocket falls in).

All coefficients refer to A_ref = pi d_ref^2 / 4 and are power-off (coasting).

* Skin friction of a flat plate at Reynolds number Re = rho V l / mu
  (mu by Sutherland's law, US Standard Atmosphere 1976 eq. 51, at the launch
  site): laminar Blasius C_f = 1.328 / sqrt(Re) below Re = 5e5, above it the
  Prandtl-Schlichting mixed-boundary-layer law
  C_f = 0.455 / (log10 Re)^2.58 - 1700/Re (H. Schlichting, *Boundary-Layer
  Theory*, 7th ed., ch. 21, transition at Re = 5e5; valid to Re = 1e9; from
  memory). Incompressible at every Mach number (above Mach 1
  this overstates friction by some 10-20 %, from memory).
* Body: C_D,fb = C_f(Re_L) (1 + 60 / (L/d)^3 + 0.0025 L/d) S_wet / A_ref
  (Hoerner's form factor of a body of revolution of fineness L/d), S_wet the
  wetted surface of every section.
* Fins: C_D,f = C_f(Re_mac) (1 + 2 t/c) 2 n A_fin / A_ref (both faces,
  Hoerner's thickness factor); interference with the body:
  C_D,i = C_f(Re_mac) (1 + 2 t/c) 2 n c_r r_t / A_ref (the planform hidden
  inside the body, as in Box et al.).
* Base (coasting): C_D,b = (0.12 + 0.13 M^2) A_base / A_ref for M < 1 and
  (0.25 / M) A_base / A_ref above (Fleeman).
* Nose wave drag (M >= 1): (1.586 + 1.834 / M^2) [atan(0.5 / (l_N/d_N))]^1.69
  A_N / A_ref (Fleeman; for a sharp nose of fineness l_N/d_N).
* Fin wave drag (M >= 1.2): thin double-wedge section in linear supersonic
  theory, c_d = 4 (t/c)^2 / sqrt(M^2 - 1) per unit planform (Ackeret; J. D.
  Anderson, *Modern Compressible Flow*, 3rd ed., ch. 4), times n A_fin / A_ref.
* Transonic: the nose wave drag rises linearly from 0 at Mach 0.8 to its
  Mach 1 value and the fin wave drag from 0 at Mach 0.8 to its Mach 1.2 value
  (a project choice bridging the correlations, no source).

Left out (say so when it matters): shoulder wave drag, launch lugs and rail
buttons, surface roughness, blunt fin edges, the base-drag relief of a motor
plume during the burn.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

from sizing.physics.airframe import Stack
from sizing.physics.atmosphere import GAMMA_AIR, pressure_density_sound_speed
from sizing.physics.vehicle import DragCurve

__all__ = [
    "BUILDUP_MACH_GRID",
    "RE_TRANSITION",
    "DragBreakdown",
    "skin_friction_coefficient",
    "air_viscosity_pa_s",
    "drag_breakdown",
    "drag_curve_from_geometry",
]

#: Mach numbers of the C_D table built from geometry [-].
BUILDUP_MACH_GRID: tuple[float, ...] = (0.0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8, 0.9, 1.0, 1.1, 1.2, 1.5,
                                        2.0, 2.5, 3.0)
#: Transition Reynolds number of the flat-plate friction law [-] (Schlichting, from memory).
RE_TRANSITION = 5.0e5
#: Lowest Mach number at which friction is evaluated (the table's Mach 0 point holds this value) [-].
_MACH_FLOOR = 0.05
_R_AIR_J_KG_K = 287.053  # specific gas constant of air, USSA 1976 (R*/M0)


def air_viscosity_pa_s(temperature_k: float) -> float:
    """Dynamic viscosity of air [Pa s], Sutherland's law (US Standard Atmosphere 1976, eq. 51).

    mu = beta T^1.5 / (T + S), beta = 1.458e-6 kg/(m s K^0.5), S = 110.4 K.

    Examples
    --------
    >>> round(air_viscosity_pa_s(288.15) * 1e5, 4)  # USSA 1976 table: 1.7894e-5 Pa s at sea level
    1.7894
    """
    t = float(temperature_k)
    return 1.458e-6 * t**1.5 / (t + 110.4)


def skin_friction_coefficient(reynolds: float) -> float:
    """Mean flat-plate skin-friction coefficient C_f [-] at a Reynolds number.

    Laminar (Blasius) 1.328 / sqrt(Re) below `RE_TRANSITION`; above it
    0.455 / (log10 Re)^2.58 - 1700 / Re (Prandtl-Schlichting, transition at
    5e5; Schlichting, Boundary-Layer Theory, 7th ed., ch. 21; from memory).

    Examples
    --------
    >>> round(skin_friction_coefficient(1.0e5), 6)  # Blasius: 1.328 / 316.23
    0.0042
    """
    re = float(reynolds)
    if re <= 0:
        raise ValueError(f"reynolds: must be > 0. Got {reynolds!r}.")
    if re < RE_TRANSITION:
        return 1.328 / math.sqrt(re)
    return 0.455 / math.log10(re) ** 2.58 - 1700.0 / re


@dataclass(frozen=True, slots=True)
class DragBreakdown:
    """Zero-lift drag coefficients of one configuration at one Mach number [-], referred to A_ref."""

    mach: float
    body_friction: float
    fin_friction: float
    interference: float
    base: float
    nose_wave: float
    fin_wave: float

    @property
    def total(self) -> float:
        """Sum of the parts [-]."""
        return (self.body_friction + self.fin_friction + self.interference + self.base + self.nose_wave
                + self.fin_wave)


def _geometry(stack: Stack, lowest: int):
    stages = stack.stages[lowest:]
    length = sum(s.length_m for s in stages)
    d_max = max(s.max_diameter_m for s in stages)
    wetted = sum(sec.wetted_area_m2 for s in stages for sec in s.sections)
    nose = stages[-1].sections[0]
    fins = []
    for st in stages:
        if st.fins is not None:
            f = st.fins
            r_t = st.radius_at_m(st.length_m - f.offset_m - 0.5 * f.root_chord_m)
            fins.append((f, r_t))
    return length, d_max, wetted, nose, fins, stages[0].aft_diameter_m


def drag_breakdown(stack: Stack, lowest: int, mach: float, *, site_altitude_m: float = 0.0,
                   reference_diameter_m: float | None = None) -> DragBreakdown:
    """Component build-up of the zero-lift drag of the stack from stage `lowest` up at one Mach number.

    Parameters
    ----------
    stack : Stack
    lowest : int
        Lowest attached stage (0: the full stack).
    mach : float
        Mach number [-], >= 0.
    site_altitude_m : float
        Altitude of the air for the Reynolds number [m above MSL] (US Standard Atmosphere 1976).
    reference_diameter_m : float or None
        d_ref [m]; None: the configuration's largest diameter.

    Returns
    -------
    DragBreakdown

    References
    ----------
    See the module notes (Box, Bishop & Hunt 2009; Hoerner 1965; Fleeman 2006; Schlichting).
    """
    length, d_max, wetted, nose, fins, d_base = _geometry(stack, lowest)
    d_ref = reference_diameter_m or d_max
    a_ref = 0.25 * math.pi * d_ref**2
    _p, rho, a = pressure_density_sound_speed(site_altitude_m)
    t_k = a * a / (GAMMA_AIR * _R_AIR_J_KG_K)
    nu = air_viscosity_pa_s(t_k) / rho
    m = max(float(mach), 0.0)
    v = max(m, _MACH_FLOOR) * a
    fineness = length / d_max
    cf_body = skin_friction_coefficient(v * length / nu)
    body = cf_body * (1.0 + 60.0 / fineness**3 + 0.0025 * fineness) * wetted / a_ref
    fin_f = inter = fin_w = 0.0
    for f, r_t in fins:
        mac = f.mean_aerodynamic_chord_m
        cf = skin_friction_coefficient(v * mac / nu)
        tc = f.thickness_m / mac
        fin_f += cf * (1.0 + 2.0 * tc) * 2.0 * f.count * f.area_m2 / a_ref
        inter += cf * (1.0 + 2.0 * tc) * 2.0 * f.count * f.root_chord_m * r_t / a_ref
        wave12 = 4.0 * tc * tc / math.sqrt(1.2**2 - 1.0)
        if m >= 1.2:
            cdw = 4.0 * tc * tc / math.sqrt(m * m - 1.0)
        elif m > 0.8:
            cdw = wave12 * (m - 0.8) / 0.4
        else:
            cdw = 0.0
        fin_w += cdw * f.count * f.area_m2 / a_ref
    a_base = 0.25 * math.pi * d_base**2
    base = (0.12 + 0.13 * m * m if m < 1.0 else 0.25 / m) * a_base / a_ref
    d_n = nose.aft_diameter_m
    k_nose = math.atan(0.5 / (nose.length_m / d_n)) ** 1.69 * (d_n / d_ref) ** 2

    def wave(mm: float) -> float:
        return (1.586 + 1.834 / (mm * mm)) * k_nose

    if m >= 1.0:
        nose_w = wave(m)
    elif m > 0.8:
        nose_w = wave(1.0) * (m - 0.8) / 0.2
    else:
        nose_w = 0.0
    return DragBreakdown(m, body, fin_f, inter, base, nose_w, fin_w)


def drag_curve_from_geometry(stack: Stack, lowest: int = 0, *, site_altitude_m: float = 0.0,
                             reference_diameter_m: float | None = None,
                             mach_grid: Sequence[float] = BUILDUP_MACH_GRID) -> DragCurve:
    """C_D(Mach) table of the stack from stage `lowest` up, for `sizing.physics.vehicle.DragCurve`.

    Parameters
    ----------
    stack : Stack
    lowest : int
    site_altitude_m : float
        Altitude for the Reynolds number [m above MSL].
    reference_diameter_m : float or None
        d_ref [m] of the coefficients; give the vehicle's reference diameter
        (its largest remaining diameter) so the table matches
        `Vehicle.reference_area_m2`. None: the configuration's largest diameter.
    mach_grid : sequence of float
        Table Mach numbers, strictly increasing from 0.

    Returns
    -------
    DragCurve
    """
    cd = [drag_breakdown(stack, lowest, m, site_altitude_m=site_altitude_m,
                         reference_diameter_m=reference_diameter_m).total for m in mach_grid]
    return DragCurve(tuple(float(m) for m in mach_grid), tuple(cd))

