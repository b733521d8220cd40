"""Vehicle description for flight simulation: drag curve, stages, vehicle, launch site.

Everything here is a frozen dataclass in SI units, validated on construction.
Bad values raise `sizing.errors.FieldError(field, message, value)`; the field
names are dotted, e.g. ``"stages.booster.diameter_m"``, so the problem layer can
re-render them with the file name.

Propulsion model of one stage (used by `sizing.physics.flight`):

* constant thrust: vacuum thrust F_vac, mass flow mdot = F_vac / (Isp_vac g0),
  burn time t_b = m_p / mdot;
* thrust curve (solid motors, water stages): F_vac(t) interpolated linearly in a
  (t_s, thrust_N) table; the propellant left follows `propellant_mass_curve` if
  given, otherwise propellant use is proportional to delivered impulse,
  mdot(t) = m_p F(t) / I_total (so the effective exhaust velocity is
  I_total / m_p, and `isp_vac_s` only enters the exit-area estimate);
* back-pressure: F(h) = F_vac - p_a(h) A_e (Sutton & Biblarz, Rocket Propulsion
  Elements, 9th ed., 2017, eq. 2-14), floored at zero. A_e is given, or derived
  from the sea-level and vacuum specific impulses:
  A_e = (Isp_vac - Isp_sl) g0 mdot / p0 with p0 = 101325 Pa. With neither, A_e = 0
  and thrust does not depend on altitude (the usual reading of a hobby-motor
  thrust curve measured at sea level).
"""

from __future__ import annotations

import bisect
import math
from collections.abc import Sequence
from dataclasses import KW_ONLY, dataclass, field

from sizing.errors import FieldError
from sizing.units import G0_M_S2

__all__ = [
    "P0_PA",
    "DragCurve",
    "FlightStage",
    "FlightStageSpec",
    "Vehicle",
    "LaunchSite",
    "build_vehicle",
    "structural_masses",
    "with_model_coefficients",
]

#: Sea-level standard pressure [Pa] (US Standard Atmosphere 1976).
P0_PA = 101325.0


def _tuple(values, field_name: str) -> tuple[float, ...]:
    try:
        out = tuple(float(v) for v in values)
    except (TypeError, ValueError):
        raise FieldError(field_name, "must be a sequence of numbers.", values) from None
    if not all(math.isfinite(v) for v in out):
        raise FieldError(field_name, "must hold finite numbers.", values)
    return out


def _check_increasing(values: tuple[float, ...], field_name: str) -> None:
    for a, b in zip(values, values[1:]):
        if not b > a:
            raise FieldError(field_name, "must be strictly increasing.", values)


def _interp(xs: tuple[float, ...], ys: tuple[float, ...], x: float) -> float:
    """Linear interpolation in a table, clamped to the end values."""
    if x <= xs[0]:
        return ys[0]
    if x >= xs[-1]:
        return ys[-1]
    i = bisect.bisect_right(xs, x)
    x0, x1 = xs[i - 1], xs[i]
    y0 = ys[i - 1]
    return y0 + (ys[i] - y0) * (x - x0) / (x1 - x0)


def _check_positive(value, field_name: str, *, allow_zero: bool = False) -> float:
    """A finite number > 0 (>= 0 with `allow_zero`), else FieldError naming the field."""
    if isinstance(value, bool):
        raise FieldError(field_name, "must be a number.", value)
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise FieldError(field_name, "must be a number.", value) from None
    if not math.isfinite(v) or (v < 0 if allow_zero else v <= 0):
        raise FieldError(field_name, "must be >= 0." if allow_zero else "must be > 0.", value)
    return v


@dataclass(frozen=True, slots=True)
class DragCurve:
    """Zero-lift drag coefficient as a function of Mach number.

    C_D is referred to the reference area pi d^2 / 4 of the largest diameter
    still attached. Between table points C_D is interpolated linearly; outside
    the table it is held at the end values.

    Parameters
    ----------
    mach : tuple of float
        Mach numbers [-], >= 0 and strictly increasing.
    cd : tuple of float
        Drag coefficients [-], > 0, same length as `mach`.
    """

    mach: tuple[float, ...]
    cd: tuple[float, ...]

    def __post_init__(self) -> None:
        mach = _tuple(self.mach, "drag.mach")
        cd = _tuple(self.cd, "drag.cd")
        if len(mach) == 0:
            raise FieldError("drag.mach", "needs at least one point.", self.mach)
        if len(mach) != len(cd):
            raise FieldError(
                "drag.cd", f"must have as many values as drag.mach ({len(mach)}).", self.cd
            )
        if mach[0] < 0:
            raise FieldError("drag.mach", "must be >= 0.", self.mach)
        _check_increasing(mach, "drag.mach")
        if any(c <= 0 for c in cd):
            raise FieldError("drag.cd", "every value must be > 0.", self.cd)
        object.__setattr__(self, "mach", mach)
        object.__setattr__(self, "cd", cd)

    def cd_at(self, mach: float) -> float:
        """Drag coefficient [-] at a Mach number (linear interpolation, clamped)."""
        return _interp(self.mach, self.cd, mach)

    @classmethod
    def constant(cls, cd: float) -> "DragCurve":
        """A Mach-independent drag coefficient."""
        return cls((0.0,), (float(cd),))

    @classmethod
    def default_slender_body(cls) -> "DragCurve":
        """Default C_D(Mach) for a slender finned body of revolution (power off).

        The shape follows the component build-up of Fleeman's correlations
        (E. L. Fleeman, Tactical Missile Design, 2nd ed., AIAA, 2006, Ch. 2):
        base drag 0.12 + 0.13 M^2 below Mach 1 and 0.25/M above it, supersonic
        nose wave drag (1.586 + 1.834/M^2)[atan(0.5/(l_N/d))]^1.69 for a nose of
        l_N/d = 3, plus about 0.1 for skin friction and fins. The table values
        are rounded and were assembled FROM MEMORY of those correlations, not
        read off the book; they sit inside the ranges of
        shared/reference/check-values.md section 5 (subsonic 0.30, transonic
        peak 0.55 at Mach 1.1, i.e. 1.8x subsonic, falling to 0.40 at Mach 2 and
        0.32 at Mach 3). Use a measured or computed table for anything past
        preliminary sizing.
        """
        return cls(
            (0.0, 0.5, 0.8, 0.9, 1.0, 1.1, 1.2, 1.5, 2.0, 3.0, 5.0, 10.0),
            (0.30, 0.30, 0.32, 0.38, 0.50, 0.55, 0.54, 0.48, 0.40, 0.32, 0.25, 0.22),
        )


def _default_drag() -> DragCurve:
    return DragCurve.default_slender_body()


@dataclass(frozen=True, slots=True)
class FlightStage:
    """One stage with known masses and propulsion, as flown by the simulator.

    Parameters
    ----------
    name : str
        Stage name given by the user (``"booster"``).
    propellant_mass_kg : float
        Usable propellant [kg], > 0.
    structural_mass_kg : float
        Everything of the stage that is dropped at staging except propellant [kg], >= 0.
    isp_vac_s : float
        Vacuum specific impulse [s], > 0.
    thrust_vac_n : float, optional
        Constant vacuum thrust [N], > 0. Required unless `thrust_curve` is given.
    isp_sl_s : float, optional
        Sea-level specific impulse [s], in (0, isp_vac_s]; gives the nozzle exit
        area when `nozzle_exit_area_m2` is not given.
    nozzle_exit_area_m2 : float, optional
        Total nozzle exit area [m^2], >= 0.
    thrust_curve : (tuple of float, tuple of float), optional
        (time since ignition [s], vacuum thrust [N]); times strictly increasing
        from 0, thrust >= 0. Burn time is the last time.
    propellant_mass_curve : (tuple of float, tuple of float), optional
        (time since ignition [s], propellant remaining [kg]); non-increasing,
        from `propellant_mass_kg` to 0. Only with `thrust_curve`.
    diameter_m : float
        Outer diameter [m], > 0 (keyword-only).
    drag : DragCurve
        C_D(Mach) of the stack while this stage is the lowest one.
    coast_before_ignition_s : float
        Coast between the previous event (liftoff or staging) and ignition [s], >= 0.
    g0_m_s2 : float
        Standard gravity used to turn Isp into exhaust velocity [m/s^2].
    """

    name: str
    propellant_mass_kg: float
    structural_mass_kg: float
    isp_vac_s: float
    _: KW_ONLY
    diameter_m: float
    thrust_vac_n: float | None = None
    isp_sl_s: float | None = None
    nozzle_exit_area_m2: float | None = None
    thrust_curve: tuple[tuple[float, ...], tuple[float, ...]] | None = None
    propellant_mass_curve: tuple[tuple[float, ...], tuple[float, ...]] | None = None
    drag: DragCurve = field(default_factory=_default_drag)
    coast_before_ignition_s: float = 0.0
    g0_m_s2: float = G0_M_S2

    def __post_init__(self) -> None:
        p = f"stages.{self.name}."
        set_ = lambda k, v: object.__setattr__(self, k, v)  # noqa: E731
        set_("propellant_mass_kg", _check_positive(self.propellant_mass_kg, p + "propellant_mass_kg"))
        set_(
            "structural_mass_kg",
            _check_positive(self.structural_mass_kg, p + "structural_mass_kg", allow_zero=True),
        )
        set_("isp_vac_s", _check_positive(self.isp_vac_s, p + "isp_vac_s"))
        set_("diameter_m", _check_positive(self.diameter_m, p + "diameter_m"))
        set_("g0_m_s2", _check_positive(self.g0_m_s2, p + "g0_m_s2"))
        set_(
            "coast_before_ignition_s",
            _check_positive(self.coast_before_ignition_s, p + "coast_before_ignition_s", allow_zero=True),
        )
        if not isinstance(self.drag, DragCurve):
            raise FieldError(p + "drag", "must be a DragCurve.", self.drag)
        if self.isp_sl_s is not None:
            v = _check_positive(self.isp_sl_s, p + "isp_sl_s")
            if v > self.isp_vac_s:
                raise FieldError(
                    p + "isp_sl_s", f"must be <= isp_vac_s ({self.isp_vac_s:g} s).", self.isp_sl_s
                )
            set_("isp_sl_s", v)
        if self.nozzle_exit_area_m2 is not None:
            set_(
                "nozzle_exit_area_m2",
                _check_positive(self.nozzle_exit_area_m2, p + "nozzle_exit_area_m2", allow_zero=True),
            )
        if self.thrust_curve is None:
            if self.thrust_vac_n is None:
                raise FieldError(p + "thrust_vac_n", "thrust_vac_n or thrust_curve is required.")
            set_("thrust_vac_n", _check_positive(self.thrust_vac_n, p + "thrust_vac_n"))
            if self.propellant_mass_curve is not None:
                raise FieldError(
                    p + "propellant_mass_curve", "is only allowed together with thrust_curve."
                )
        else:
            if self.thrust_vac_n is not None:
                raise FieldError(p + "thrust_vac_n", "give thrust_vac_n or thrust_curve, not both.")
            try:
                ts, fs = self.thrust_curve
            except (TypeError, ValueError):
                raise FieldError(
                    p + "thrust_curve", "must be a pair (times_s, thrust_n).", self.thrust_curve
                ) from None
            ts = _tuple(ts, p + "thrust_curve")
            fs = _tuple(fs, p + "thrust_curve")
            if len(ts) < 2 or len(ts) != len(fs):
                raise FieldError(
                    p + "thrust_curve", "needs >= 2 points and equal-length columns.", self.thrust_curve
                )
            if ts[0] != 0.0:
                raise FieldError(p + "thrust_curve", "times must start at 0 s.", ts[0])
            _check_increasing(ts, p + "thrust_curve")
            if any(f < 0 for f in fs) or not any(f > 0 for f in fs):
                raise FieldError(p + "thrust_curve", "thrust must be >= 0 and not all zero.", fs)
            set_("thrust_curve", (ts, fs))
            if self.propellant_mass_curve is not None:
                try:
                    tm, mm = self.propellant_mass_curve
                except (TypeError, ValueError):
                    raise FieldError(
                        p + "propellant_mass_curve",
                        "must be a pair (times_s, propellant_kg).",
                        self.propellant_mass_curve,
                    ) from None
                tm = _tuple(tm, p + "propellant_mass_curve")
                mm = _tuple(mm, p + "propellant_mass_curve")
                if len(tm) < 2 or len(tm) != len(mm):
                    raise FieldError(
                        p + "propellant_mass_curve",
                        "needs >= 2 points and equal-length columns.",
                        self.propellant_mass_curve,
                    )
                _check_increasing(tm, p + "propellant_mass_curve")
                if tm[0] != 0.0:
                    raise FieldError(p + "propellant_mass_curve", "times must start at 0 s.", tm[0])
                if any(b > a for a, b in zip(mm, mm[1:])):
                    raise FieldError(p + "propellant_mass_curve", "must not increase.", mm)
                tol = 1e-6 * self.propellant_mass_kg
                if abs(mm[0] - self.propellant_mass_kg) > tol or abs(mm[-1]) > tol:
                    raise FieldError(
                        p + "propellant_mass_curve",
                        f"must run from propellant_mass_kg ({self.propellant_mass_kg:g}) to 0.",
                        (mm[0], mm[-1]),
                    )
                set_("propellant_mass_curve", (tm, mm))

    # -- derived quantities -------------------------------------------------
    @property
    def stage_mass_kg(self) -> float:
        """Propellant plus structure [kg]."""
        return self.propellant_mass_kg + self.structural_mass_kg

    @property
    def structural_coefficient(self) -> float:
        """m_s / (m_s + m_p) [-]."""
        return self.structural_mass_kg / self.stage_mass_kg

    @property
    def total_impulse_vac_n_s(self) -> float:
        """Vacuum total impulse [N s] (trapezoid rule on a thrust curve)."""
        if self.thrust_curve is None:
            return self.thrust_vac_n * self.burn_time_s
        ts, fs = self.thrust_curve
        return sum(0.5 * (fs[i] + fs[i + 1]) * (ts[i + 1] - ts[i]) for i in range(len(ts) - 1))

    @property
    def exhaust_velocity_vac_m_s(self) -> float:
        """Effective vacuum exhaust velocity [m/s]: Isp_vac g0, or I_total/m_p for a curve."""
        if self.thrust_curve is not None and self.propellant_mass_curve is None:
            return self.total_impulse_vac_n_s / self.propellant_mass_kg
        return self.isp_vac_s * self.g0_m_s2

    @property
    def mass_flow_kg_s(self) -> float:
        """Mean propellant mass flow [kg/s] (constant for a constant-thrust stage)."""
        if self.thrust_curve is None:
            return self.thrust_vac_n / (self.isp_vac_s * self.g0_m_s2)
        return self.propellant_mass_kg / self.burn_time_s

    @property
    def burn_time_s(self) -> float:
        """Burn time [s]: m_p / mdot, or the last time of the thrust curve."""
        if self.thrust_curve is None:
            return self.propellant_mass_kg * self.isp_vac_s * self.g0_m_s2 / self.thrust_vac_n
        return self.thrust_curve[0][-1]

    @property
    def exit_area_m2(self) -> float:
        """Nozzle exit area [m^2]: given, or (Isp_vac - Isp_sl) g0 mdot / p0, or 0."""
        if self.nozzle_exit_area_m2 is not None:
            return self.nozzle_exit_area_m2
        if self.isp_sl_s is not None:
            return (self.isp_vac_s - self.isp_sl_s) * self.g0_m_s2 * self.mass_flow_kg_s / P0_PA
        return 0.0

    @property
    def reference_area_m2(self) -> float:
        """pi d^2 / 4 of this stage [m^2]."""
        return 0.25 * math.pi * self.diameter_m**2

    def thrust_vac_at(self, t_since_ignition_s: float) -> float:
        """Vacuum thrust [N] at a time since ignition; 0 outside the burn."""
        if t_since_ignition_s < 0 or t_since_ignition_s > self.burn_time_s:
            return 0.0
        if self.thrust_curve is None:
            return self.thrust_vac_n
        return _interp(self.thrust_curve[0], self.thrust_curve[1], t_since_ignition_s)

    def thrust_at(self, t_since_ignition_s: float, ambient_pressure_pa: float) -> float:
        """Delivered thrust F_vac - p_a A_e [N], floored at 0 (Sutton & Biblarz eq. 2-14)."""
        f = self.thrust_vac_at(t_since_ignition_s)
        if f <= 0.0:
            return 0.0
        return max(0.0, f - ambient_pressure_pa * self.exit_area_m2)


@dataclass(frozen=True, slots=True)
class Vehicle:
    """A stack of stages (bottom first) and a payload.

    Parameters
    ----------
    stages : tuple of FlightStage
        Bottom stage first; at least one.
    payload_mass_kg : float
        Payload (everything above the top stage) [kg], >= 0.
    payload_diameter_m : float, optional
        Payload fairing diameter [m]; counts for the reference area.
    staging_delay_s : float
        Coast between burnout of one stage and the next event [s], >= 0.
    """

    stages: tuple[FlightStage, ...]
    payload_mass_kg: float
    payload_diameter_m: float | None = None
    staging_delay_s: float = 0.0

    def __post_init__(self) -> None:
        stages = tuple(self.stages)
        if not stages or not all(isinstance(s, FlightStage) for s in stages):
            raise FieldError("stages", "must be one or more FlightStage objects.", self.stages)
        names = [s.name for s in stages]
        if len(set(names)) != len(names):
            raise FieldError("stages", "stage names must be unique.", names)
        object.__setattr__(self, "stages", stages)
        object.__setattr__(
            self,
            "payload_mass_kg",
            _check_positive(self.payload_mass_kg, "payload_mass_kg", allow_zero=True),
        )
        object.__setattr__(
            self,
            "staging_delay_s",
            _check_positive(self.staging_delay_s, "staging_delay_s", allow_zero=True),
        )
        if self.payload_diameter_m is not None:
            object.__setattr__(
                self,
                "payload_diameter_m",
                _check_positive(self.payload_diameter_m, "payload_diameter_m"),
            )

    @property
    def gross_mass_kg(self) -> float:
        """Liftoff mass [kg]."""
        return self.payload_mass_kg + sum(s.stage_mass_kg for s in self.stages)

    def ignition_mass_kg(self, index: int) -> float:
        """Mass at ignition of stage `index` (it and everything above) [kg]."""
        return self.payload_mass_kg + sum(s.stage_mass_kg for s in self.stages[index:])

    def reference_area_m2(self, index: int) -> float:
        """Drag reference area while stage `index` is the lowest [m^2]: largest remaining diameter."""
        d = max(s.diameter_m for s in self.stages[index:])
        if self.payload_diameter_m is not None:
            d = max(d, self.payload_diameter_m)
        return 0.25 * math.pi * d * d


@dataclass(frozen=True, slots=True)
class LaunchSite:
    """Launch site and launcher.

    Parameters
    ----------
    altitude_m : float
        Site altitude above mean sea level [m], >= -610 (US Standard Atmosphere 1976 range).
    latitude_deg : float
        Geodetic latitude, taken as geocentric [deg], in [-90, 90].
    azimuth_deg : float
        Launch azimuth, clockwise from north [deg], in [0, 360).
    rail_length_m : float
        Length of travel on the launch rail [m], >= 0.
    rail_angle_deg : float
        Rail tilt from the vertical, towards the azimuth [deg], in [0, 90).
    """

    altitude_m: float = 0.0
    latitude_deg: float = 0.0
    azimuth_deg: float = 90.0
    rail_length_m: float = 0.0
    rail_angle_deg: float = 0.0

    def __post_init__(self) -> None:
        def chk(name, lo, hi, lo_open=False, hi_open=False):
            v = getattr(self, name)
            try:
                f = float(v)
            except (TypeError, ValueError):
                raise FieldError(f"site.{name}", "must be a number.", v) from None
            bad = (
                not math.isfinite(f)
                or (f <= lo if lo_open else f < lo)
                or (f >= hi if hi_open else f > hi)
            )
            if bad:
                lb = "(" if lo_open else "["
                rb = ")" if hi_open else "]"
                raise FieldError(f"site.{name}", f"must be in {lb}{lo:g}, {hi:g}{rb}.", v)
            object.__setattr__(self, name, f)

        chk("altitude_m", -610.0, 1.0e5)
        chk("latitude_deg", -90.0, 90.0)
        chk("azimuth_deg", 0.0, 360.0, hi_open=True)
        chk("rail_length_m", 0.0, 1.0e4)
        chk("rail_angle_deg", 0.0, 90.0, hi_open=True)


@dataclass(frozen=True, slots=True)
class FlightStageSpec:
    """A stage without masses: what sizing chooses the propellant mass for.

    Parameters
    ----------
    name : str
        Stage name.
    isp_vac_s : float
        Vacuum specific impulse [s], > 0.
    structural_coefficient : float
        eps = m_s / (m_s + m_p) [-], in (0, 1).
    thrust_to_weight : float
        Thrust-to-weight ratio at ignition [-], > 0 (> 1 for the first stage).
        First stage: sea-level thrust F_sl = F_vac - p0 A_e over liftoff weight
        m0 g0. Upper stages: vacuum thrust over m_ignition g0.
    diameter_m : float
        Outer diameter [m], > 0.
    isp_sl_s : float, optional
        Sea-level specific impulse [s]; sets the exit area (back-pressure loss).
    drag : DragCurve
        C_D(Mach) while this stage is the lowest.
    coast_before_ignition_s : float
        Coast before ignition [s], >= 0.
    g0_m_s2 : float
        Standard gravity for Isp and weight [m/s^2].
    mass_model : object, optional
        A stage mass model with ``structural_mass_kg(propellant_mass_kg,
        thrust_vac_n)`` (`sizing.physics.stage_model.StageMassModel`): the
        structural mass follows from the propellant and the thrust, and
        `structural_coefficient` is only the starting value of the sizing.
    """

    name: str
    isp_vac_s: float
    structural_coefficient: float
    thrust_to_weight: float
    _: KW_ONLY
    diameter_m: float
    isp_sl_s: float | None = None
    drag: DragCurve = field(default_factory=_default_drag)
    coast_before_ignition_s: float = 0.0
    g0_m_s2: float = G0_M_S2
    mass_model: object | None = None

    def __post_init__(self) -> None:
        p = f"stages.{self.name}."
        object.__setattr__(self, "isp_vac_s", _check_positive(self.isp_vac_s, p + "isp_vac_s"))
        e = float(self.structural_coefficient)
        if not 0.0 < e < 1.0:
            raise FieldError(p + "structural_coefficient", "must be in (0, 1).", self.structural_coefficient)
        object.__setattr__(self, "structural_coefficient", e)
        object.__setattr__(
            self, "thrust_to_weight", _check_positive(self.thrust_to_weight, p + "thrust_to_weight")
        )
        object.__setattr__(self, "diameter_m", _check_positive(self.diameter_m, p + "diameter_m"))
        if self.isp_sl_s is not None:
            v = _check_positive(self.isp_sl_s, p + "isp_sl_s")
            if v > self.isp_vac_s:
                raise FieldError(p + "isp_sl_s", f"must be <= isp_vac_s ({self.isp_vac_s:g} s).", v)
            object.__setattr__(self, "isp_sl_s", v)
        object.__setattr__(
            self,
            "coast_before_ignition_s",
            _check_positive(self.coast_before_ignition_s, p + "coast_before_ignition_s", allow_zero=True),
        )

    @property
    def exhaust_velocity_vac_m_s(self) -> float:
        """Isp_vac g0 [m/s]."""
        return self.isp_vac_s * self.g0_m_s2


def structural_masses(specs: Sequence[FlightStageSpec], propellant_mass_kg: Sequence[float],
                      payload_mass_kg: float) -> list[float]:
    """Structural mass of each stage [kg]: eps/(1 - eps) m_p, or the stage's mass model at its thrust.

    A mass model's structure depends on the vacuum thrust, which `build_vehicle`
    sets from thrust-to-weight at ignition and so from the structure itself;
    working from the top stage down, each stage is solved by fixed-point
    iteration (the structure's sensitivity to thrust is small, so it converges
    in a few steps).
    """
    specs = tuple(specs)
    mp = [float(x) for x in propellant_mass_kg]
    ms = [0.0] * len(specs)
    above = float(payload_mass_kg)
    for i in range(len(specs) - 1, -1, -1):
        s = specs[i]
        if s.mass_model is None:
            ms[i] = s.structural_coefficient / (1.0 - s.structural_coefficient) * mp[i]
        else:
            k = s.thrust_to_weight * s.g0_m_s2 * (s.isp_vac_s / s.isp_sl_s if (i == 0 and s.isp_sl_s) else 1.0)
            m = s.structural_coefficient / (1.0 - s.structural_coefficient) * mp[i]
            for _ in range(30):
                new = float(s.mass_model.structural_mass_kg(mp[i], k * (above + mp[i] + m)))
                if abs(new - m) <= 1e-10 * max(1.0, new):
                    m = new
                    break
                m = new
            ms[i] = m
        above += mp[i] + ms[i]
    return ms


def with_model_coefficients(specs: Sequence[FlightStageSpec], propellant_mass_kg: Sequence[float],
                            payload_mass_kg: float) -> tuple[FlightStageSpec, ...]:
    """The specs with each mass-model stage's structural coefficient set to its value at these masses.

    eps = m_s / (m_s + m_p) with m_s from `structural_masses`; the sizers use
    it for their starting split (Lagrange line, gravity-loss estimate), while
    the flown masses always come from the model.
    """
    from dataclasses import replace

    specs = tuple(specs)
    ms = structural_masses(specs, propellant_mass_kg, payload_mass_kg)
    out = []
    for s, mp, m in zip(specs, propellant_mass_kg, ms):
        if s.mass_model is not None and mp > 0.0:
            s = replace(s, structural_coefficient=min(max(m / (m + float(mp)), 0.005), 0.95))
        out.append(s)
    return tuple(out)


def build_vehicle(
    specs: Sequence[FlightStageSpec],
    propellant_mass_kg: Sequence[float],
    structural_mass_kg: Sequence[float],
    payload_mass_kg: float,
    *,
    payload_diameter_m: float | None = None,
    staging_delay_s: float = 0.0,
) -> Vehicle:
    """Vehicle from stage specs and masses, thrust set by thrust-to-weight at ignition.

    First stage: F_sl = (T/W) m0 g0 with the sea-level thrust F_sl; since
    p0 A_e = F_vac (1 - Isp_sl/Isp_vac) for the derived exit area,
    F_vac = F_sl Isp_vac / Isp_sl. Upper stages: F_vac = (T/W) m_ign g0.

    Raises
    ------
    FieldError
        First-stage thrust-to-weight <= 1 (the vehicle would not lift off), or
        mismatched list lengths.
    """
    specs = tuple(specs)
    mp = [float(x) for x in propellant_mass_kg]
    ms = [float(x) for x in structural_mass_kg]
    if not (len(specs) == len(mp) == len(ms)) or not specs:
        raise FieldError(
            "stages", "specs, propellant and structural masses need one entry per stage.", len(specs)
        )
    first = specs[0]
    if first.thrust_to_weight <= 1.0:
        raise FieldError(
            f"stages.{first.name}.thrust_to_weight",
            "must be > 1 at liftoff (the vehicle must lift itself).",
            first.thrust_to_weight,
        )
    stages = []
    above = float(payload_mass_kg)
    ign = [0.0] * len(specs)
    for i in range(len(specs) - 1, -1, -1):
        above += mp[i] + ms[i]
        ign[i] = above
    for i, s in enumerate(specs):
        weight_n = ign[i] * s.g0_m_s2
        f = s.thrust_to_weight * weight_n
        if i == 0 and s.isp_sl_s is not None:
            f *= s.isp_vac_s / s.isp_sl_s
        stages.append(
            FlightStage(
                s.name,
                mp[i],
                ms[i],
                s.isp_vac_s,
                diameter_m=s.diameter_m,
                thrust_vac_n=f,
                isp_sl_s=s.isp_sl_s,
                drag=s.drag,
                coast_before_ignition_s=s.coast_before_ignition_s,
                g0_m_s2=s.g0_m_s2,
            )
        )
    return Vehicle(tuple(stages), float(payload_mass_kg), payload_diameter_m, staging_delay_s)
