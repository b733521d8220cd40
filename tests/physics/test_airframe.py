"""Tests of sizing.physics.airframe: Barrowman centre of pressure, C_N_alpha, CG and static margin.

No published numerical worked example of the Barrowman equations was at hand; the checks
are the values Barrowman prints (nose 0.666 L for a cone, 0.466 L for an ogive, as
reproduced on the Utah State University MAE 5900 course page "Barrowman Equations for
Computing the Rocket Center of Pressure"), closed-form volumes of the nose shapes,
thin-airfoil and slender-wing limits of the fin term, and hand calculations.
"""

from __future__ import annotations

import math

import pytest
from scipy import integrate

from sizing.errors import FieldError
from sizing.physics.airframe import (
    NOSE_SHAPES,
    FinSet,
    PointMass,
    Stack,
    StageAirframe,
    body_tube,
    centre_of_gravity,
    component_aero,
    configuration,
    nose_ballast_for_margin_kg,
    nose_cone,
    static_margin_calibers,
    transition,
)

D = 0.066


def _nose_cp_fraction(shape: str, fineness: float) -> float:
    n = nose_cone(shape, fineness * D, D)
    st = Stack((StageAirframe("s", (n, body_tube(0.5, D))),))
    (part,) = component_aero(st)
    return part.x_cp_m / n.length_m


def test_nose_cone_cp_matches_barrowman_printed_values():
    """Barrowman (1966/67) as printed on the USU MAE 5900 page: cone 0.666 L_N, ogive 0.466 L_N (slender)."""
    assert _nose_cp_fraction("conical", 3.0) == pytest.approx(2.0 / 3.0, rel=1e-6)
    assert _nose_cp_fraction("ogive", 12.0) == pytest.approx(0.466, abs=1.5e-3)


@pytest.mark.parametrize("shape, fraction", [
    ("conical", 2.0 / 3.0),      # V = A L / 3
    ("parabolic", 7.0 / 15.0),   # V = A L * 8/15 for r = R (2u - u^2)
    ("elliptical", 1.0 / 3.0),   # half ellipsoid V = 2/3 A L
    ("von_karman", 0.5),         # Haack C = 0: V = A L / 2
])
def test_nose_cp_is_slender_body_value_from_closed_form_volume(shape, fraction):
    """Slender-body CP x = L - V/A_base with the shape's closed-form volume (derived, C)."""
    assert _nose_cp_fraction(shape, 4.0) == pytest.approx(fraction, rel=2e-5)


@pytest.mark.parametrize("shape", NOSE_SHAPES)
def test_nose_volume_agrees_with_scipy_quad(shape):
    """Volume by frustums against scipy.integrate.quad of pi r(x)^2 (general-purpose reference)."""
    n = nose_cone(shape, 0.25, D)
    v, _ = integrate.quad(lambda x: math.pi * n.radius_m(x) ** 2, 0.0, n.length_m, limit=200)
    assert n.volume_m3 == pytest.approx(v, rel=1e-5)
    assert nose_cone(shape, 0.25, D).radius_m(0.25) == pytest.approx(D / 2)


def test_transition_cp_matches_barrowman_formula():
    """Barrowman: x_T = x_P + L_T/3 [1 + (1 - dF/dR) / (1 - (dF/dR)^2)], C_N = 2 [(dR/d)^2 - (dF/d)^2]."""
    d_f, d_r, lt = 0.054, 0.066, 0.05
    up = StageAirframe("up", (nose_cone("ogive", 0.2, d_f), body_tube(0.4, d_f)))
    low = StageAirframe("low", (transition(lt, d_f, d_r), body_tube(0.5, d_r)))
    parts = {p.name: p for p in component_aero(Stack((low, up)))}
    k = d_f / d_r
    assert parts["shoulder"].x_cp_m == pytest.approx(0.6 + lt / 3 * (1 + (1 - k) / (1 - k * k)), rel=1e-9)
    assert parts["shoulder"].cn_alpha_per_rad == pytest.approx(2 * (1 - k * k), rel=1e-9)
    assert parts["nose"].cn_alpha_per_rad == pytest.approx(2 * k * k, rel=1e-9)  # nose on the smaller base


def test_boattail_has_negative_normal_force():
    st = StageAirframe("s", (nose_cone("ogive", 0.2, D), body_tube(0.5, D), transition(0.05, D, 0.05)))
    parts = {p.name: p for p in component_aero(Stack((st,)))}
    assert parts["boattail"].cn_alpha_per_rad < 0


def _fin_stack(fins: FinSet) -> Stack:
    return Stack((StageAirframe("s", (nose_cone("ogive", 0.2, D), body_tube(0.6, D)), fins),))


def test_fin_cn_alpha_matches_barrowman_printed_formula_at_mach_0():
    """Barrowman: (C_N)_F = [1 + R/(S+R)] 4N (S/d)^2 / (1 + sqrt(1 + (2 L_F/(C_R + C_T))^2))."""
    f = FinSet(3, 0.10, 0.05, 0.07, 0.05, 0.003)
    cn = component_aero(_fin_stack(f))[-1].cn_alpha_per_rad
    r = D / 2
    lf = math.hypot(f.span_m, f.sweep_m + f.tip_chord_m / 2 - f.root_chord_m / 2)
    expect = (1 + r / (f.span_m + r)) * 4 * 3 * (f.span_m / D) ** 2 / (
        1 + math.sqrt(1 + (2 * lf / (f.root_chord_m + f.tip_chord_m)) ** 2))
    assert cn == pytest.approx(expect, rel=1e-12)


@pytest.mark.parametrize("cr, ct, xr", [(0.1, 0.1, 0.0), (0.12, 0.0, 0.12), (0.1, 0.04, 0.07), (0.08, 0.06, -0.01)])
def test_fin_cp_is_quarter_point_of_mean_aerodynamic_chord(cr, ct, xr):
    """Barrowman's fin CP equals the quarter-MAC point of the trapezoid (aerodynamic centre of
    thin-airfoil theory at c/4, Anderson, Fundamentals of Aerodynamics, sec. 4.7; MAC construction,
    Raymer, Aircraft Design: A Conceptual Approach, fig. 7.5; both from memory)."""
    f = FinSet(4, cr, ct, 0.07, xr)
    x = component_aero(_fin_stack(f))[-1].x_cp_m
    lam = ct / cr
    mac = 2 / 3 * cr * (1 + lam + lam * lam) / (1 + lam)
    y = f.span_m * (1 + 2 * lam) / (3 * (1 + lam))
    x_le = 0.8 - cr + xr * y / f.span_m
    assert x == pytest.approx(x_le + mac / 4, rel=1e-12)


def test_fin_cn_alpha_limits_slender_wing_and_thin_airfoil():
    """A fin pair without interference tends to C_L_alpha = pi A / 2 for small aspect ratio
    (R. T. Jones, NACA Report 835, 1946) and to 2 pi for large (thin-airfoil theory)."""
    from sizing.physics.airframe import _fin_cn_alpha

    def pair(span, chord):
        f = FinSet(2, chord, chord, span)
        a_ref = math.pi * D * D / 4
        return _fin_cn_alpha(f, 0.0, D, 0.0) * a_ref / f.area_m2, 2 * span * span / f.area_m2

    cl, a = pair(0.001, 1.0)
    assert cl == pytest.approx(math.pi * a / 2, rel=1e-3)
    cl, a = pair(100.0, 0.01)
    assert cl == pytest.approx(2 * math.pi, rel=2e-3)


def test_fin_cn_alpha_rises_with_mach_and_is_held_above_the_method_limit():
    c = configuration(_fin_stack(FinSet(3, 0.1, 0.05, 0.07, 0.05)))
    vals = [c.cn_alpha_per_rad(m) for m in (0.0, 0.4, 0.8, 1.5)]
    assert vals[0] < vals[1] < vals[2] == vals[3]


def test_centre_of_gravity_by_hand():
    """Hand calculation: 0.18 kg at 0.10 m, 0.25 kg at 0.42 m, 0.12 kg at 0.79 m ->
    m = 0.55 kg, x = (0.018 + 0.105 + 0.0948) / 0.55 = 0.396 m."""
    m, x = centre_of_gravity([PointMass("a", 0.18, 0.10), PointMass("b", 0.25, 0.42), PointMass("c", 0.12, 0.79)])
    assert m == pytest.approx(0.55)
    assert x == pytest.approx(0.2178 / 0.55, rel=1e-12)


def _two_stage(span_factor: float = 1.0) -> Stack:
    top = StageAirframe("sustainer", (nose_cone("ogive", 0.25, D), body_tube(0.6, D)),
                        FinSet(3, 0.1, 0.05, 0.07 * span_factor, 0.05, 0.003),
                        (PointMass("airframe", 0.25, 0.42), PointMass("case", 0.06, 0.79)), 0.06, 0.79, 0.12)
    boo = StageAirframe("booster", (body_tube(0.5, D),), FinSet(3, 0.12, 0.06, 0.08, 0.06, 0.003),
                        (PointMass("airframe", 0.35, 0.25), PointMass("case", 0.1, 0.42)), 0.12, 0.42, 0.16)
    return Stack((boo, top), (PointMass("payload", 0.18, 0.25),))


def test_configuration_cg_moves_forward_as_an_aft_motor_burns():
    c = configuration(_two_stage())
    assert c.full_mass_kg == pytest.approx(0.18 + 0.25 + 0.06 + 0.06 + 0.35 + 0.1 + 0.12)
    assert c.x_cg_m(c.burnout_mass_kg) < c.x_cg_m(c.full_mass_kg)
    assert c.static_margin_cal(0.0, c.burnout_mass_kg) > c.static_margin_cal(0.0, c.full_mass_kg)
    # hand: full stack CG = sum m x / m, booster positions shifted by the sustainer length 0.85 m
    m_x = 0.18 * 0.25 + 0.25 * 0.42 + 0.06 * 0.79 + 0.06 * 0.79 + 0.35 * 1.10 + 0.1 * 1.27 + 0.12 * 1.27
    assert c.x_cg_m(c.full_mass_kg) == pytest.approx(m_x / c.full_mass_kg, rel=1e-12)


def test_upper_stage_after_separation_keeps_nose_datum():
    full, upper = configuration(_two_stage(), 0), configuration(_two_stage(), 1)
    assert upper.stages == ("sustainer",)
    assert upper.components[0].x_cp_m == pytest.approx(full.components[0].x_cp_m)
    assert upper.x_cp_m(0.0) < full.x_cp_m(0.0)


def test_margin_trends_bigger_fins_and_nose_ballast_raise_the_margin():
    """Trend: a larger fin span moves the CP aft; ballast forward of the CG moves the CG forward."""
    m0 = configuration(_two_stage(1.0), 1).static_margin_cal(0.0, 0.55)
    m1 = configuration(_two_stage(1.5), 1).static_margin_cal(0.0, 0.55)
    assert m1 > m0
    st = _two_stage()
    heavy = st.with_nose_masses(st.nose_masses + (PointMass("ballast", 0.05, 0.1),))
    assert configuration(heavy, 1).static_margin_cal(0.0, 0.60) > m0


def test_nose_ballast_for_margin_meets_the_margin_exactly():
    st = _two_stage(0.5)
    c = configuration(st, 1)
    target = c.static_margin_cal(0.0, c.full_mass_kg) + 0.7
    b = nose_ballast_for_margin_kg(c, min_margin_cal=target, ballast_x_m=0.1)
    assert 0 < b < math.inf
    c2 = configuration(st.with_nose_masses(st.nose_masses + (PointMass("ballast", b, 0.1),)), 1)
    assert c2.static_margin_cal(0.0, c2.full_mass_kg) == pytest.approx(target, abs=1e-9)
    assert nose_ballast_for_margin_kg(c, min_margin_cal=-5.0, ballast_x_m=0.1) == 0.0
    assert nose_ballast_for_margin_kg(c, min_margin_cal=50.0, ballast_x_m=0.1) == math.inf


def test_static_margin_definition():
    assert static_margin_calibers(0.9, 0.8, 0.05) == pytest.approx(2.0)


def test_pitch_inertia_of_two_points_by_hand():
    """Two 1 kg points 1 m apart: I about the CG = 2 * 0.5^2 = 0.5 kg m^2 (parallel-axis theorem)."""
    st = Stack((StageAirframe("s", (nose_cone("conical", 0.2, D), body_tube(1.0, D)),
                              masses=(PointMass("a", 1.0, 0.1), PointMass("b", 1.0, 1.1))),))
    c = configuration(st)
    assert c.pitch_inertia_kg_m2(2.0) == pytest.approx(0.5)


def test_configuration_accepts_arrays():
    import numpy as np

    c = configuration(_two_stage())
    mach = np.array([0.0, 0.3, 0.9])
    assert c.cn_alpha_per_rad(mach).shape == (3,)
    assert c.static_margin_cal(mach, c.full_mass_kg).shape == (3,)


@pytest.mark.parametrize("build, field", [
    (lambda: nose_cone("bullet", 0.2, D), "nose.shape"),
    (lambda: body_tube(0.0, D), "tube.length"),
    (lambda: FinSet(1, 0.1, 0.05, 0.07), "fins.count"),
    (lambda: FinSet(3, 0.0, 0.05, 0.07), "fins.root_chord"),
    (lambda: StageAirframe("s", (body_tube(0.2, D), nose_cone("ogive", 0.2, D))), "stages.s.geometry"),
    (lambda: StageAirframe("s", (body_tube(0.2, D), body_tube(0.2, 0.05))), "stages.s.geometry"),
    (lambda: StageAirframe("s", (body_tube(0.1, D),), FinSet(3, 0.2, 0.05, 0.07)), "stages.s.fins"),
    (lambda: Stack((StageAirframe("s", (body_tube(0.2, D),)),)), "stages.s.geometry"),
    (lambda: Stack((StageAirframe("low", (body_tube(0.2, 0.08),)),
                    StageAirframe("up", (nose_cone("ogive", 0.2, D),)))), "stages.low.geometry"),
])
def test_geometry_errors_name_the_field(build, field):
    with pytest.raises(FieldError) as info:
        build()
    assert info.value.field == field
