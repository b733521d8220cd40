"""Airframe geometry, static stability (Barrowman) and mass properties of a stack.

A stack is described stage by stage (bottom first, like every `Vehicle`):
each `StageAirframe` is a run of axisymmetric `Section` pieces from its
forward to its aft end (the top stage starts with the nose cone), an optional
`FinSet`, its fixed masses (airframe parts, the spent motor case) and the
propellant of its motor. Every position is measured aft from the nose tip of
the whole stack, so a stage keeps its positions after the stages below it have
separated.

Normal force and centre of pressure (Barrowman 1967)
----------------------------------------------------
J. S. Barrowman, *The Practical Calculation of the Aerodynamic
Characteristics of Slender Finned Vehicles*, M.S. thesis, The Catholic
University of America, Washington DC, March 1967 (and J. S. & J. A.
Barrowman, "The theoretical prediction of the center of pressure", NARAM-8
technical report, 1966, whose printed equations are what this follows). The
method is valid subsonically at small angles of attack; body lift is
neglected. Coefficients are per radian and referred to the area
A_ref = pi d_ref^2 / 4 of the largest diameter of the configuration.

* Body of revolution between stations with areas A_fore and A_aft
  (slender-body theory): (C_N_alpha) = 2 (A_aft - A_fore) / A_ref, acting at
  x = (x_aft A_aft - x_fore A_fore - V) / (A_aft - A_fore), V the section's
  volume. For a nose (A_fore = 0) this is x = L - V / A_base: 2/3 L for a
  cone, 0.466 L for a slender tangent ogive (the values printed by
  Barrowman); for a conical transition it is Barrowman's
  x_T = x_P + (L_T / 3) [1 + (1 - d_F/d_R) / (1 - (d_F/d_R)^2)]. A tube adds
  nothing; a boattail (A_aft < A_fore) gives a negative normal force.
* Fin set of n fins, span s, root chord c_r, tip chord c_t, midchord line
  length l_m, on a body of radius r_t:
  (C_N_alpha)_F = K_fb 4 n (s/d_ref)^2 / (1 + sqrt(1 + (2 l_m / (c_r + c_t))^2)),
  with the fin-body interference K_fb = 1 + r_t / (s + r_t), acting at
  x_F = x_B + x_R (c_r + 2 c_t) / (3 (c_r + c_t))
        + (1/6) [c_r + c_t - c_r c_t / (c_r + c_t)]
  (x_B the root leading edge, x_R the sweep distance of the tip leading edge).
  Subsonic compressibility enters through the lifting-surface form of the
  same expression, (C_N_alpha) per fin pair = 2 pi A (A_fin/A_ref) /
  (2 + sqrt(4 + A^2 (beta^2 + tan^2 Gamma_c))), A = 2 s^2 / A_fin,
  beta = sqrt(1 - M^2), Gamma_c the midchord sweep (Helmbold-Diederich form,
  as in USAF DATCOM sec. 4.1.3.2; from memory), which is Barrowman's at
  M = 0; a set of n fins carries n/2 times a pair (Barrowman; exact for 3 and
  4 fins, optimistic for more).
* Total: C_N_alpha = sum of the parts; x_cp = sum(C_N_alpha_i x_i) / C_N_alpha.

Above Mach 0.8 the method is outside its range: `Configuration` holds the
Mach 0.8 values there (said in its docstring).

Mass properties: the centre of gravity is sum(m_i x_i) / sum(m_i) over point
masses; a motor's propellant sits at the motor's middle while it burns (a
grain burning from the core outwards keeps its centroid in place; common
practice, no source). The pitch moment of inertia about the centre of
gravity adds m L^2 / 12 for every mass spread over a length L (uniform rod).

Static margin = (x_cp - x_cg) / d_ref [calibers]. A margin of at least one
caliber at rail exit is the common rule (common practice, no source).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from sizing.errors import FieldError
from sizing.physics.vehicle import _check_positive

__all__ = [
    "NOSE_SHAPES",
    "MACH_LIMIT_BARROWMAN",
    "SUBSONIC_MACH_GRID",
    "Section",
    "FinSet",
    "PointMass",
    "StageAirframe",
    "Stack",
    "ComponentAero",
    "Configuration",
    "nose_cone",
    "body_tube",
    "transition",
    "stage_fore_positions_m",
    "component_aero",
    "configuration",
    "centre_of_gravity",
    "static_margin_calibers",
    "nose_ballast_for_margin_kg",
]

#: Nose-cone shapes known to `Section` (radius functions in `Section.radius_m`).
NOSE_SHAPES: tuple[str, ...] = ("conical", "ogive", "parabolic", "elliptical", "von_karman")
#: Highest Mach number of the subsonic Barrowman method used here [-].
MACH_LIMIT_BARROWMAN = 0.8
#: Mach numbers at which `configuration` tabulates C_N_alpha and x_cp [-].
SUBSONIC_MACH_GRID: tuple[float, ...] = (0.0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8)

_N_PROFILE = 800  # frustums per section for volumes and wetted areas (cosine spacing)


def _pos(value, name: str, *, zero_ok: bool = False) -> float:
    """A finite number > 0 (>= 0 with `zero_ok`), else FieldError naming the field."""
    return _check_positive(value, name, allow_zero=zero_ok)


# ---------------------------------------------------------------- geometry
@dataclass(frozen=True, slots=True)
class Section:
    """One axisymmetric piece of the outer surface: a nose cone, a tube or a conical transition.

    Parameters
    ----------
    kind : {"nose", "tube", "transition"}
    length_m : float
        Axial length [m], > 0 (a transition may be 0: an abrupt step).
    fore_diameter_m, aft_diameter_m : float
        Diameters at the forward and aft ends [m]; a nose has fore 0, a tube
        equal ends.
    shape : str
        Nose profile, one of `NOSE_SHAPES` (tangent ogive for ``"ogive"``,
        parabola K = 1 for ``"parabolic"``, Haack series C = 0 for
        ``"von_karman"``); ignored for tubes and transitions.
    """

    kind: str
    length_m: float
    fore_diameter_m: float
    aft_diameter_m: float
    shape: str = "conical"

    def __post_init__(self) -> None:
        if self.kind not in ("nose", "tube", "transition"):
            raise FieldError("section.kind", "must be 'nose', 'tube' or 'transition'.", self.kind)
        object.__setattr__(self, "length_m", _pos(self.length_m, f"{self.kind}.length",
                                                  zero_ok=self.kind == "transition"))
        object.__setattr__(self, "aft_diameter_m", _pos(self.aft_diameter_m, f"{self.kind}.aft_diameter"))
        object.__setattr__(self, "fore_diameter_m", _pos(self.fore_diameter_m, f"{self.kind}.fore_diameter",
                                                         zero_ok=self.kind == "nose"))
        if self.kind == "nose":
            if self.shape not in NOSE_SHAPES:
                raise FieldError("nose.shape", f"must be one of {', '.join(NOSE_SHAPES)}.", self.shape)
            if self.fore_diameter_m != 0.0:
                raise FieldError("nose.fore_diameter", "must be 0 (a nose cone ends in a tip).", self.fore_diameter_m)
        if self.kind == "tube" and self.fore_diameter_m != self.aft_diameter_m:
            raise FieldError("tube.fore_diameter", "must equal the aft diameter.", self.fore_diameter_m)

    def radius_m(self, x_local_m):
        """Radius [m] at a distance from the section's forward end [m] (float or array)."""
        x = np.clip(np.asarray(x_local_m, dtype=float), 0.0, self.length_m)
        R = 0.5 * self.aft_diameter_m
        if self.kind != "nose":
            r0 = 0.5 * self.fore_diameter_m
            r = r0 + (R - r0) * (x / self.length_m if self.length_m > 0 else 1.0)
        else:
            L = self.length_m
            u = x / L
            if self.shape == "conical":
                r = R * u
            elif self.shape == "ogive":
                rho = (R * R + L * L) / (2.0 * R)
                r = np.sqrt(np.maximum(rho * rho - (L - x) ** 2, 0.0)) + R - rho
            elif self.shape == "parabolic":
                r = R * (2.0 * u - u * u)
            elif self.shape == "elliptical":
                r = R * np.sqrt(np.maximum(1.0 - (1.0 - u) ** 2, 0.0))
            else:  # von Karman: Haack series with C = 0
                th = np.arccos(np.clip(1.0 - 2.0 * u, -1.0, 1.0))
                r = R * np.sqrt(np.maximum(th - 0.5 * np.sin(2.0 * th), 0.0) / math.pi)
        return float(r) if np.ndim(x_local_m) == 0 else r

    def _profile(self) -> tuple[np.ndarray, np.ndarray]:
        if self.kind != "nose" or self.length_m == 0:
            x = np.array([0.0, self.length_m])
        else:  # cosine spacing resolves the tip and the base
            x = 0.5 * self.length_m * (1.0 - np.cos(np.linspace(0.0, math.pi, _N_PROFILE + 1)))
        return x, np.asarray(self.radius_m(x))

    @property
    def volume_m3(self) -> float:
        """Enclosed volume [m^3] (sum of frustums along the profile)."""
        x, r = self._profile()
        dx = np.diff(x)
        return float(np.sum(math.pi * dx / 3.0 * (r[:-1] ** 2 + r[:-1] * r[1:] + r[1:] ** 2)))

    @property
    def wetted_area_m2(self) -> float:
        """Lateral (wetted) surface area [m^2] (sum of frustum surfaces along the profile)."""
        x, r = self._profile()
        slant = np.hypot(np.diff(x), np.diff(r))
        return float(np.sum(math.pi * (r[:-1] + r[1:]) * slant))

    @property
    def max_diameter_m(self) -> float:
        """Largest diameter of the section [m]."""
        return max(self.fore_diameter_m, self.aft_diameter_m)


def nose_cone(shape: str, length_m: float, diameter_m: float) -> Section:
    """A nose cone of a named shape (see `NOSE_SHAPES`)."""
    return Section("nose", length_m, 0.0, diameter_m, shape)


def body_tube(length_m: float, diameter_m: float) -> Section:
    """A cylindrical tube."""
    return Section("tube", length_m, diameter_m, diameter_m)


def transition(length_m: float, fore_diameter_m: float, aft_diameter_m: float) -> Section:
    """A conical shoulder (aft wider) or boattail (aft narrower)."""
    return Section("transition", length_m, fore_diameter_m, aft_diameter_m)


@dataclass(frozen=True, slots=True)
class FinSet:
    """A set of identical trapezoidal fins spaced evenly round the body.

    Parameters
    ----------
    count : int
        Number of fins, 2 to 8.
    root_chord_m, tip_chord_m : float
        Chords at the body and at the tip [m]; root > 0, tip >= 0.
    span_m : float
        Semi-span, body surface to tip [m], > 0.
    sweep_m : float
        Axial distance from the root leading edge to the tip leading edge [m]
        (negative: tip ahead of the root).
    thickness_m : float
        Fin thickness [m], >= 0 (drag only).
    offset_m : float
        Distance of the root trailing edge forward of the stage's aft end [m], >= 0.
    """

    count: int
    root_chord_m: float
    tip_chord_m: float
    span_m: float
    sweep_m: float = 0.0
    thickness_m: float = 0.0
    offset_m: float = 0.0

    def __post_init__(self) -> None:
        if isinstance(self.count, bool) or not isinstance(self.count, int) or not 2 <= self.count <= 8:
            raise FieldError("fins.count", "must be a whole number from 2 to 8.", self.count)
        object.__setattr__(self, "root_chord_m", _pos(self.root_chord_m, "fins.root_chord"))
        object.__setattr__(self, "tip_chord_m", _pos(self.tip_chord_m, "fins.tip_chord", zero_ok=True))
        object.__setattr__(self, "span_m", _pos(self.span_m, "fins.span"))
        object.__setattr__(self, "thickness_m", _pos(self.thickness_m, "fins.thickness", zero_ok=True))
        object.__setattr__(self, "offset_m", _pos(self.offset_m, "fins.offset", zero_ok=True))
        sw = float(self.sweep_m)
        if not math.isfinite(sw):
            raise FieldError("fins.sweep", "must be a finite number.", self.sweep_m)
        object.__setattr__(self, "sweep_m", sw)

    @property
    def area_m2(self) -> float:
        """Planform area of one fin, s (c_r + c_t) / 2 [m^2]."""
        return 0.5 * self.span_m * (self.root_chord_m + self.tip_chord_m)

    @property
    def midchord_offset_m(self) -> float:
        """Axial distance from the root midchord to the tip midchord [m]."""
        return self.sweep_m + 0.5 * self.tip_chord_m - 0.5 * self.root_chord_m

    @property
    def midchord_length_m(self) -> float:
        """Length of the midchord line l_m [m]."""
        return math.hypot(self.span_m, self.midchord_offset_m)

    @property
    def mean_aerodynamic_chord_m(self) -> float:
        """Mean aerodynamic chord of a trapezoid, (2/3) c_r (1 + l + l^2) / (1 + l), l = c_t / c_r [m]."""
        lam = self.tip_chord_m / self.root_chord_m
        return 2.0 / 3.0 * self.root_chord_m * (1.0 + lam + lam * lam) / (1.0 + lam)

    def scaled(self, span_factor: float) -> "FinSet":
        """The same fins with span (and sweep) scaled by a factor: a taller fin of the same shape."""
        return FinSet(self.count, self.root_chord_m, self.tip_chord_m, self.span_m * span_factor,
                      self.sweep_m * span_factor, self.thickness_m, self.offset_m)


@dataclass(frozen=True, slots=True)
class PointMass:
    """A mass at a position; spread uniformly over `length_m` for the moment of inertia.

    Parameters
    ----------
    name : str
    mass_kg : float
        [kg], >= 0.
    x_m : float
        Position of its centre [m]: from the stage's forward end in
        `StageAirframe.masses`, from the nose tip in `Stack.nose_masses`.
    length_m : float
        Axial extent [m], >= 0 (0: a point).
    """

    name: str
    mass_kg: float
    x_m: float
    length_m: float = 0.0

    def __post_init__(self) -> None:
        object.__setattr__(self, "mass_kg", _pos(self.mass_kg, f"mass.{self.name}", zero_ok=True))
        x = float(self.x_m)
        if not math.isfinite(x):
            raise FieldError(f"mass.{self.name}.position", "must be a finite number.", self.x_m)
        object.__setattr__(self, "x_m", x)
        object.__setattr__(self, "length_m", _pos(self.length_m, f"mass.{self.name}.length", zero_ok=True))


@dataclass(frozen=True, slots=True)
class StageAirframe:
    """Outer shape and masses of one stage, positions from its forward end.

    Parameters
    ----------
    name : str
    sections : tuple of Section
        Forward to aft, contiguous; only the top stage may start with a nose.
    fins : FinSet or None
    masses : tuple of PointMass
        Fixed masses dropped with the stage (airframe parts, spent motor case) [kg, m].
    propellant_mass_kg : float
        Propellant of the stage's motor [kg], >= 0.
    propellant_x_m : float
        Centre of the propellant (the motor's middle) from the stage's forward end [m].
    propellant_length_m : float
        Length of the grain (the motor length) [m], for the moment of inertia.
    """

    name: str
    sections: tuple[Section, ...]
    fins: FinSet | None = None
    masses: tuple[PointMass, ...] = ()
    propellant_mass_kg: float = 0.0
    propellant_x_m: float = 0.0
    propellant_length_m: float = 0.0

    def __post_init__(self) -> None:
        secs = tuple(self.sections)
        if not secs or not all(isinstance(s, Section) for s in secs):
            raise FieldError(f"stages.{self.name}.geometry", "needs at least one section.", self.sections)
        for a, b in zip(secs, secs[1:]):
            if b.kind == "nose":
                raise FieldError(f"stages.{self.name}.geometry", "a nose cone can only be the first section.")
            if abs(a.aft_diameter_m - b.fore_diameter_m) > 1e-9:
                raise FieldError(f"stages.{self.name}.geometry",
                                 "sections must join: each fore diameter equals the aft diameter before it.",
                                 (a.aft_diameter_m, b.fore_diameter_m))
        object.__setattr__(self, "sections", secs)
        object.__setattr__(self, "masses", tuple(self.masses))
        object.__setattr__(self, "propellant_mass_kg",
                           _pos(self.propellant_mass_kg, f"stages.{self.name}.propellant_mass", zero_ok=True))
        if self.fins is not None and self.fins.offset_m + self.fins.root_chord_m > self.length_m + 1e-12:
            raise FieldError(f"stages.{self.name}.fins",
                             f"root chord plus offset must fit on the stage ({self.length_m:g} m long).",
                             self.fins.offset_m + self.fins.root_chord_m)

    @property
    def length_m(self) -> float:
        """Axial length of the stage [m]."""
        return sum(s.length_m for s in self.sections)

    @property
    def fore_diameter_m(self) -> float:
        """Diameter at the forward end [m] (0 for a nose)."""
        return self.sections[0].fore_diameter_m

    @property
    def aft_diameter_m(self) -> float:
        """Diameter at the aft end (the base when this stage is the lowest) [m]."""
        return self.sections[-1].aft_diameter_m

    @property
    def max_diameter_m(self) -> float:
        return max(s.max_diameter_m for s in self.sections)

    def radius_at_m(self, x_local_m: float) -> float:
        """Radius of the outer surface [m] at a distance from the stage's forward end [m]."""
        x0 = 0.0
        for s in self.sections:
            if x_local_m <= x0 + s.length_m or s is self.sections[-1]:
                return s.radius_m(x_local_m - x0)
            x0 += s.length_m
        return 0.5 * self.aft_diameter_m


@dataclass(frozen=True, slots=True)
class Stack:
    """A stack of stage airframes (bottom first) and the masses carried in the nose.

    Parameters
    ----------
    stages : tuple of StageAirframe
        Bottom first; the top stage begins with the nose cone. Each stage's
        fore diameter equals the aft diameter of the stage above.
    nose_masses : tuple of PointMass
        Payload, ballast and the like, positions from the nose tip [kg, m];
        they ride with the top stage.
    """

    stages: tuple[StageAirframe, ...]
    nose_masses: tuple[PointMass, ...] = ()

    def __post_init__(self) -> None:
        st = tuple(self.stages)
        if not st:
            raise FieldError("stages", "at least one stage is required.", 0)
        if st[-1].sections[0].kind != "nose":
            raise FieldError(f"stages.{st[-1].name}.geometry", "the top stage must begin with the nose cone.")
        for low, up in zip(st, st[1:]):
            if low.sections[0].kind == "nose":
                raise FieldError(f"stages.{low.name}.geometry", "only the top stage may have a nose cone.")
            if abs(low.fore_diameter_m - up.aft_diameter_m) > 1e-9:
                raise FieldError(f"stages.{low.name}.geometry",
                                 f"fore diameter must equal the aft diameter of {up.name} "
                                 f"({up.aft_diameter_m:g} m); add a transition.", low.fore_diameter_m)
        object.__setattr__(self, "stages", st)
        object.__setattr__(self, "nose_masses", tuple(self.nose_masses))

    @property
    def length_m(self) -> float:
        """Nose tip to the aft end of the bottom stage [m]."""
        return sum(s.length_m for s in self.stages)

    def with_nose_masses(self, nose_masses: Sequence[PointMass]) -> "Stack":
        """The same stack with other nose masses (e.g. ballast added)."""
        return Stack(self.stages, tuple(nose_masses))

    def with_fins(self, stage_name: str, fins: FinSet) -> "Stack":
        """The same stack with one stage's fins replaced."""
        st = tuple(StageAirframe(s.name, s.sections, fins, s.masses, s.propellant_mass_kg, s.propellant_x_m,
                                 s.propellant_length_m) if s.name == stage_name else s for s in self.stages)
        return Stack(st, self.nose_masses)


def stage_fore_positions_m(stack: Stack) -> tuple[float, ...]:
    """Forward-end position of every stage from the nose tip [m], bottom stage first."""
    out = [0.0] * len(stack.stages)
    x = 0.0
    for i in range(len(stack.stages) - 1, -1, -1):
        out[i] = x
        x += stack.stages[i].length_m
    return tuple(out)


# ---------------------------------------------------------------- Barrowman
@dataclass(frozen=True, slots=True)
class ComponentAero:
    """Normal-force slope and centre of pressure of one component (Barrowman 1967).

    Attributes
    ----------
    stage, name : str
        Stage and component (``"nose"``, ``"transition 1"``, ``"fins"``).
    cn_alpha_per_rad : float
        Normal-force coefficient slope [1/rad], referred to the configuration's A_ref.
    x_cp_m : float
        Centre of pressure from the nose tip [m].
    """

    stage: str
    name: str
    cn_alpha_per_rad: float
    x_cp_m: float


def _fin_cn_alpha(fins: FinSet, body_radius_m: float, ref_diameter_m: float, mach: float) -> float:
    """Fin-set C_N_alpha with fin-body interference [1/rad] (see module notes)."""
    a_ref = 0.25 * math.pi * ref_diameter_m**2
    area = fins.area_m2
    aspect = 2.0 * fins.span_m**2 / area
    m = min(max(float(mach), 0.0), MACH_LIMIT_BARROWMAN)
    beta2 = 1.0 - m * m
    tan_c = fins.midchord_offset_m / fins.span_m
    pair = 2.0 * math.pi * aspect * (area / a_ref) / (2.0 + math.sqrt(4.0 + aspect**2 * (beta2 + tan_c**2)))
    k_fb = 1.0 + body_radius_m / (fins.span_m + body_radius_m)
    return k_fb * 0.5 * fins.count * pair


def _fin_x_cp(fins: FinSet, x_root_le_m: float) -> float:
    cr, ct, xr = fins.root_chord_m, fins.tip_chord_m, fins.sweep_m
    return (x_root_le_m + xr * (cr + 2.0 * ct) / (3.0 * (cr + ct))
            + (cr + ct - cr * ct / (cr + ct)) / 6.0)


def component_aero(stack: Stack, lowest: int = 0, mach: float = 0.0, *,
                   reference_diameter_m: float | None = None) -> tuple[ComponentAero, ...]:
    """Barrowman normal-force slope and centre of pressure of every component.

    Parameters
    ----------
    stack : Stack
    lowest : int
        Index of the lowest stage still attached (0: the full stack).
    mach : float
        Mach number [-]; clamped to [0, 0.8] (subsonic method).
    reference_diameter_m : float or None
        d_ref [m]; None: the largest diameter of the configuration.

    Returns
    -------
    tuple of ComponentAero
        Components with a non-zero normal force, nose first.

    References
    ----------
    .. [1] J. S. Barrowman, The Practical Calculation of the Aerodynamic
       Characteristics of Slender Finned Vehicles, M.S. thesis, Catholic
       University of America, 1967 (equations as printed in Barrowman &
       Barrowman, NARAM-8, 1966).
    """
    stages = stack.stages[lowest:]
    fore = stage_fore_positions_m(stack)[lowest:]
    d_ref = reference_diameter_m or max(s.max_diameter_m for s in stages)
    a_ref = 0.25 * math.pi * d_ref**2
    out: list[ComponentAero] = []
    for st, x0 in zip(reversed(stages), reversed(fore)):  # nose first
        x = x0
        n_tr = 0
        for sec in st.sections:
            a_f = 0.25 * math.pi * sec.fore_diameter_m**2
            a_a = 0.25 * math.pi * sec.aft_diameter_m**2
            if abs(a_a - a_f) > 1e-15:
                x_cp = ((x + sec.length_m) * a_a - x * a_f - sec.volume_m3) / (a_a - a_f)
                if sec.kind == "nose":
                    name = "nose"
                else:
                    n_tr += 1
                    name = ("shoulder" if a_a > a_f else "boattail") + (f" {n_tr}" if n_tr > 1 else "")
                out.append(ComponentAero(st.name, name, 2.0 * (a_a - a_f) / a_ref, x_cp))
            x += sec.length_m
        if st.fins is not None:
            f = st.fins
            x_le_local = st.length_m - f.offset_m - f.root_chord_m
            r_body = st.radius_at_m(x_le_local + 0.5 * f.root_chord_m)
            out.append(ComponentAero(st.name, "fins", _fin_cn_alpha(f, r_body, d_ref, mach),
                                     _fin_x_cp(f, x0 + x_le_local)))
    return tuple(out)


def _total(parts: Sequence[ComponentAero]) -> tuple[float, float]:
    cn = sum(p.cn_alpha_per_rad for p in parts)
    if cn <= 0:
        return cn, math.nan
    return cn, sum(p.cn_alpha_per_rad * p.x_cp_m for p in parts) / cn


# ---------------------------------------------------------------- mass
def centre_of_gravity(masses: Sequence[PointMass]) -> tuple[float, float]:
    """Total mass [kg] and centre of gravity [m] of point masses (same datum as their x).

    Examples
    --------
    >>> centre_of_gravity([PointMass("a", 1.0, 0.0), PointMass("b", 3.0, 1.0)])
    (4.0, 0.75)
    """
    m = sum(p.mass_kg for p in masses)
    if m <= 0:
        return 0.0, math.nan
    return m, sum(p.mass_kg * p.x_m for p in masses) / m


def static_margin_calibers(x_cp_m: float, x_cg_m: float, reference_diameter_m: float) -> float:
    """Static margin (x_cp - x_cg) / d_ref [calibers]; positive when the CP is aft of the CG."""
    return (x_cp_m - x_cg_m) / reference_diameter_m


@dataclass(frozen=True, slots=True)
class Configuration:
    """What flies while stage `stages[0]` is the lowest one: its aerodynamics and mass properties.

    The lowest stage is the one burning (the stages above have not ignited),
    so the mass properties follow from the current mass alone: the burning
    stage's propellant left is ``mass_kg - burnout_mass_kg``.

    C_N_alpha and x_cp are tabulated on `mach_grid` (subsonic, up to 0.8) and
    interpolated linearly; above the grid the Mach 0.8 values are held (the
    Barrowman method is not valid there).

    Attributes
    ----------
    stages : tuple of str
        Stage names, lowest first.
    reference_diameter_m, reference_area_m2 : float
        d_ref [m] and pi d_ref^2 / 4 [m^2] of the coefficients and the margin.
    length_m : float
        Nose tip to the aft end of the lowest stage [m].
    full_mass_kg, burnout_mass_kg : float
        Mass at ignition and at burnout of the lowest stage [kg].
    components : tuple of ComponentAero
        At Mach 0.
    cn_alpha_x2_table_m2 : tuple of float
        sum over the components of C_N_alpha,i x_i^2 on `mach_grid` [m^2/rad] (x from
        the nose tip): with the first two sums it gives the pitch-damping sum
        sum C_N_alpha,i (x_i - x_cg)^2 about any centre of gravity
        (`pitch_damping_sum_m2`). Empty: taken as C_N_alpha x_cp^2 (all the normal
        force at the centre of pressure, the least damping).
    """

    stages: tuple[str, ...]
    reference_diameter_m: float
    length_m: float
    mach_grid: tuple[float, ...]
    cn_alpha_table: tuple[float, ...]
    x_cp_table_m: tuple[float, ...]
    components: tuple[ComponentAero, ...]
    full_mass_kg: float
    burnout_mass_kg: float
    _dry: tuple[PointMass, ...] = field(repr=False, default=())
    _propellant_x_m: float = field(repr=False, default=0.0)
    _propellant_length_m: float = field(repr=False, default=0.0)
    cn_alpha_x2_table_m2: tuple[float, ...] = ()

    def __post_init__(self) -> None:
        if not self.cn_alpha_x2_table_m2:
            object.__setattr__(self, "cn_alpha_x2_table_m2", tuple(
                c * x * x for c, x in zip(self.cn_alpha_table, self.x_cp_table_m)))

    @property
    def reference_area_m2(self) -> float:
        return 0.25 * math.pi * self.reference_diameter_m**2

    def pitch_damping_sum_m2(self, mach, mass_kg):
        """sum over the components of C_N_alpha,i (x_i - x_cg)^2 [m^2/rad] at a Mach number and mass.

        Expanded as S2 - 2 x_cg S1 + x_cg^2 S0 with S_k = sum C_N_alpha,i x_i^k
        (tabulated against Mach). Times 1/2 rho V A_ref it is the aerodynamic
        pitch-damping moment coefficient C2A of Mandell, Caporaso & Bengen,
        Topics in Advanced Model Rocketry, MIT Press, 1973 (from memory).
        """
        s0 = np.interp(mach, self.mach_grid, self.cn_alpha_table)
        s1 = np.interp(mach, self.mach_grid, np.asarray(self.cn_alpha_table) * np.asarray(self.x_cp_table_m))
        s2 = np.interp(mach, self.mach_grid, self.cn_alpha_x2_table_m2)
        xg = np.asarray(self.x_cg_m(mass_kg))
        v = s2 - 2.0 * xg * s1 + xg * xg * s0
        return float(v) if np.ndim(v) == 0 else v

    def mass_moments(self) -> tuple[float, float, float, float, float]:
        """(m_dry [kg], sum m x [kg m], sum m (x^2 + L^2/12) [kg m^2], x_prop [m], x_prop^2 + L_prop^2/12 [m^2]).

        Moments about the nose tip of the masses without the burning propellant,
        and the burning propellant's centroid and second moment per kg; with
        m_p = m - m_dry, x_cg = (M1 + m_p x_prop) / m and the pitch inertia
        I = J + m_p j_prop - m x_cg^2 (parallel-axis theorem), as
        `x_cg_m` and `pitch_inertia_kg_m2` give. The flight's body-axis mode
        reads these.
        """
        m = sum(p.mass_kg for p in self._dry)
        m1 = sum(p.mass_kg * p.x_m for p in self._dry)
        j = sum(p.mass_kg * (p.x_m**2 + p.length_m**2 / 12.0) for p in self._dry)
        xp = self._propellant_x_m
        return m, m1, j, xp, xp * xp + self._propellant_length_m**2 / 12.0

    def cn_alpha_per_rad(self, mach):
        """Total normal-force coefficient slope C_N_alpha [1/rad] at a Mach number (float or array)."""
        v = np.interp(mach, self.mach_grid, self.cn_alpha_table)
        return float(v) if np.ndim(mach) == 0 else v

    def x_cp_m(self, mach):
        """Centre of pressure from the nose tip [m] at a Mach number (float or array)."""
        v = np.interp(mach, self.mach_grid, self.x_cp_table_m)
        return float(v) if np.ndim(mach) == 0 else v

    def _propellant(self, mass_kg):
        return np.clip(np.asarray(mass_kg, dtype=float) - self.burnout_mass_kg, 0.0,
                       self.full_mass_kg - self.burnout_mass_kg)

    def x_cg_m(self, mass_kg):
        """Centre of gravity from the nose tip [m] at a current mass [kg] (float or array)."""
        m_dry, x_dry = centre_of_gravity(self._dry)
        mp = self._propellant(mass_kg)
        v = (m_dry * x_dry + mp * self._propellant_x_m) / (m_dry + mp)
        return float(v) if np.ndim(mass_kg) == 0 else v

    def static_margin_cal(self, mach, mass_kg):
        """Static margin [calibers] at a Mach number and current mass."""
        return (np.asarray(self.x_cp_m(mach)) - np.asarray(self.x_cg_m(mass_kg))) / self.reference_diameter_m \
            if (np.ndim(mach) or np.ndim(mass_kg)) else \
            static_margin_calibers(self.x_cp_m(mach), self.x_cg_m(mass_kg), self.reference_diameter_m)

    def pitch_inertia_kg_m2(self, mass_kg: float) -> float:
        """Pitch (transverse) moment of inertia about the centre of gravity [kg m^2] at a current mass.

        Sum of m_i ((x_i - x_cg)^2 + L_i^2 / 12) over the masses (parallel-axis
        theorem; each spread as a uniform rod of its length). A rough figure
        for dynamics: the masses' radial extent is neglected.
        """
        mp = float(self._propellant(mass_kg))
        parts = list(self._dry) + [PointMass("propellant", mp, self._propellant_x_m, self._propellant_length_m)]
        xc = self.x_cg_m(mass_kg)
        return float(sum(p.mass_kg * ((p.x_m - xc) ** 2 + p.length_m**2 / 12.0) for p in parts))


def _config_masses(stack: Stack, lowest: int) -> tuple[list[PointMass], float, float, float]:
    """Fixed masses (nose datum) of the configuration, and the burning stage's propellant, its x and length."""
    fore = stage_fore_positions_m(stack)
    dry = list(stack.nose_masses)
    for i in range(lowest, len(stack.stages)):
        st = stack.stages[i]
        dry += [PointMass(f"{st.name} {p.name}", p.mass_kg, fore[i] + p.x_m, p.length_m) for p in st.masses]
        if i > lowest and st.propellant_mass_kg > 0:  # upper stages' motors are still full
            dry.append(PointMass(f"{st.name} propellant", st.propellant_mass_kg, fore[i] + st.propellant_x_m,
                                 st.propellant_length_m))
    low = stack.stages[lowest]
    return dry, low.propellant_mass_kg, fore[lowest] + low.propellant_x_m, low.propellant_length_m


def configuration(stack: Stack, lowest: int = 0, *, mach_grid: Sequence[float] = SUBSONIC_MACH_GRID,
                  reference_diameter_m: float | None = None) -> Configuration:
    """Aerodynamics (Barrowman) and mass properties of the stack from stage `lowest` up.

    Parameters
    ----------
    stack : Stack
    lowest : int
        Index of the lowest attached stage (0: the full stack at liftoff;
        1: the second stage after the first has separated; ...).
    mach_grid : sequence of float
        Mach numbers of the C_N_alpha and x_cp tables [-], increasing, within [0, 0.8].
    reference_diameter_m : float or None
        d_ref [m]; None: the configuration's largest diameter.

    Returns
    -------
    Configuration
    """
    if not 0 <= lowest < len(stack.stages):
        raise FieldError("lowest", f"must be a stage index in [0, {len(stack.stages) - 1}].", lowest)
    grid = tuple(float(m) for m in mach_grid)
    stages = stack.stages[lowest:]
    d_ref = reference_diameter_m or max(s.max_diameter_m for s in stages)
    cn, xcp, cnx2 = [], [], []
    for m in grid:
        parts = component_aero(stack, lowest, m, reference_diameter_m=d_ref)
        c, x = _total(parts)
        cn.append(c)
        xcp.append(x)
        cnx2.append(sum(p.cn_alpha_per_rad * p.x_cp_m**2 for p in parts))
    dry, mp, xp, lp = _config_masses(stack, lowest)
    m_dry = sum(p.mass_kg for p in dry)
    return Configuration(
        stages=tuple(s.name for s in stages), reference_diameter_m=d_ref,
        length_m=sum(s.length_m for s in stages), mach_grid=grid, cn_alpha_table=tuple(cn),
        x_cp_table_m=tuple(xcp), components=component_aero(stack, lowest, 0.0, reference_diameter_m=d_ref),
        full_mass_kg=m_dry + mp, burnout_mass_kg=m_dry, _dry=tuple(dry), _propellant_x_m=xp,
        _propellant_length_m=lp, cn_alpha_x2_table_m2=tuple(cnx2),
    )


def nose_ballast_for_margin_kg(config: Configuration, *, min_margin_cal: float, ballast_x_m: float,
                               mass_kg: float | None = None, mach: float = 0.0) -> float:
    """Least nose ballast [kg] that brings the static margin up to `min_margin_cal`.

    The margin is (x_cp - x_cg(b)) / d with x_cg(b) = (M x_g + b x_b) / (M + b)
    for ballast b at x_b; solving x_cg(b) = x_cp - m_min d for b gives
    b = M (x_g - x_t) / (x_t - x_b), x_t = x_cp - m_min d (lever rule). Returns
    0 when the margin is already met and inf when ballast at `ballast_x_m`
    cannot reach it (x_t at or ahead of the ballast position).

    Parameters
    ----------
    config : Configuration
    min_margin_cal : float
        Required margin [calibers].
    ballast_x_m : float
        Ballast position from the nose tip [m].
    mass_kg : float or None
        Current mass [kg]; None: full (at ignition of the lowest stage, the
        aft-most centre of gravity for a motor at the aft end).
    mach : float
        Mach number of the centre of pressure [-].
    """
    m = config.full_mass_kg if mass_kg is None else float(mass_kg)
    x_g = config.x_cg_m(m)
    x_t = config.x_cp_m(mach) - min_margin_cal * config.reference_diameter_m
    if x_g <= x_t:
        return 0.0
    if x_t <= ballast_x_m:
        return math.inf
    return m * (x_g - x_t) / (x_t - ballast_x_m)
