"""Solid (or any pre-made) rocket motors: impulse class, thrust curve, motor lists.

A `Motor` is what a hobby or student team buys: total impulse, propellant and
loaded mass, burn time and a thrust-versus-time table (or only an average
thrust). This module classifies it by total impulse, checks that the table
and the stated numbers agree, turns it into a flight stage and reads motor
lists from TOML files.

Impulse classes
---------------
Letter classification of total impulse used by the hobby trade, as set out in
NFPA 1125 (Code for the Manufacture of Model Rocket and High Power Rocket
Motors) and used by the national hobby associations: class A covers
(1.25, 2.5] N s and each following letter doubles the upper bound,
upper(k-th letter after A) = 2.5 * 2**k N s. Below A come 1/2A (0.625, 1.25],
1/4A (0.3125, 0.625] and "micro" (0, 0.3125] N s. The A-O bounds were read in
secondary sources (reference pages derived from Wikipedia's "model rocket
motor classification") that attribute them to NFPA 1125 and the NAR; that
NFPA 1125 is the formal source, and the 1/4A and micro bounds, are from memory.

Thrust-curve convention
-----------------------
A thrust table is a sequence of (t_s, thrust_N) points, linearly interpolated,
with strictly increasing times, the first point at t = 0 s with zero thrust and
the last point with zero thrust; the burn time is the time of the last point.
A motor given only by its average thrust gets a trapezoid of the same total
impulse (see `Motor.thrust_table`). Propellant is taken to burn in proportion
to the impulse delivered (constant effective exhaust velocity), so the
remaining propellant mass is m_p (1 - I(t)/I_total).

All quantities are SI inside the code.
"""

from __future__ import annotations

import math
import tomllib
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from sizing.errors import FieldError, ProblemDefinitionError
from sizing.physics.vehicle import DragCurve, FlightStage
from sizing.units import G0_M_S2, to_si

__all__ = [
    "IMPULSE_CLASS_A_UPPER_N_S",
    "IMPULSE_CLASSES",
    "MSG_CURVE_IMPULSE",
    "MSG_CURVE_SHAPE",
    "MSG_PROPELLANT_MASS",
    "MSG_BURN_TIME",
    "MSG_IMPULSE_RANGE",
    "Motor",
    "impulse_class",
    "impulse_class_bounds",
    "impulse_class_index",
    "integrate_thrust",
    "motor_flight_stage",
    "load_motors",
    "parse_motors",
]

#: Upper bound of class A total impulse [N s] (NFPA 1125 letter classification).
IMPULSE_CLASS_A_UPPER_N_S = 2.5
#: Class names from the smallest; index 3 is "A". Letters run to Z.
IMPULSE_CLASSES: tuple[str, ...] = ("micro", "1/4A", "1/2A") + tuple(
    chr(c) for c in range(ord("A"), ord("Z") + 1)
)
_INDEX_A = 3

MSG_CURVE_IMPULSE = "total impulse integrated from the thrust table must be within 1% of the stated total impulse"
MSG_CURVE_SHAPE = (
    "must be [t_s, thrust_N] points with strictly increasing times, starting at "
    "[0, 0] and ending at zero thrust, thrust >= 0"
)
MSG_PROPELLANT_MASS = "must be > 0 and less than the loaded mass"
MSG_BURN_TIME = "must equal the time of the last thrust-table point within 1%"
MSG_IMPULSE_RANGE = "must be > 0 and at most the upper bound of class Z"
MSG_AVERAGE_THRUST = "must equal total impulse / burn time within 1%"

_CURVE_TOL = 0.01


# ---------------------------------------------------------------- classes
def impulse_class_index(total_impulse_n_s: float) -> int:
    """Position of the impulse class in `IMPULSE_CLASSES` (0 = micro, 3 = A).

    Parameters
    ----------
    total_impulse_n_s : float
        Total impulse [N s], in (0, 2.5 * 2**25].

    Returns
    -------
    int
        Index into `IMPULSE_CLASSES`.

    References
    ----------
    .. [1] NFPA 1125, Code for the Manufacture of Model Rocket and High Power
       Rocket Motors, motor classification table (from memory that it is the
       formal source; bounds as tabulated on Wikipedia-derived reference pages).
    """
    x = float(total_impulse_n_s)
    top = IMPULSE_CLASS_A_UPPER_N_S * 2.0 ** (len(IMPULSE_CLASSES) - 1 - _INDEX_A)
    if not (x > 0.0 and x <= top):  # also rejects NaN
        raise FieldError("total_impulse", f"{MSG_IMPULSE_RANGE} ({top:g} N s).", x)
    # Bounds are exact binary multiples of 2.5, so compare exactly.
    k = 0
    upper = IMPULSE_CLASS_A_UPPER_N_S * 2.0 ** (-_INDEX_A)  # upper bound of "micro"
    while x > upper:
        upper *= 2.0
        k += 1
    return k


def impulse_class(total_impulse_n_s: float) -> str:
    """Letter class of a motor's total impulse (NFPA 1125 letter classification).

    Each class doubles the upper bound of the previous one: A is (1.25, 2.5] N s,
    B (2.5, 5], C (5, 10], ... O (20480, 40960]; below A come 1/2A, 1/4A and
    micro. Upper bounds are inclusive.

    Parameters
    ----------
    total_impulse_n_s : float
        Total impulse [N s], > 0.

    Returns
    -------
    str
        ``"micro"``, ``"1/4A"``, ``"1/2A"`` or a letter ``"A"`` .. ``"Z"``.

    References
    ----------
    .. [1] NFPA 1125 motor classification, as reproduced in secondary sources
       (Wikipedia-derived pages, found for 1/2A-O; micro and 1/4A from memory).

    Examples
    --------
    >>> impulse_class(2.5), impulse_class(2.51), impulse_class(40.0), impulse_class(1.0)
    ('A', 'B', 'E', '1/2A')
    """
    return IMPULSE_CLASSES[impulse_class_index(total_impulse_n_s)]


def impulse_class_bounds(name: str) -> tuple[float, float]:
    """Lower (exclusive) and upper (inclusive) total impulse of a class [N s].

    Examples
    --------
    >>> impulse_class_bounds("D")
    (10.0, 20.0)
    >>> impulse_class_bounds("micro")
    (0.0, 0.3125)
    """
    try:
        k = IMPULSE_CLASSES.index(name.strip().upper() if len(name.strip()) == 1 else name.strip())
    except ValueError:
        raise ValueError(
            f"unknown impulse class {name!r}. Choose one of: micro, 1/4A, 1/2A, A .. Z."
        ) from None
    upper = IMPULSE_CLASS_A_UPPER_N_S * 2.0 ** (k - _INDEX_A)
    lower = 0.0 if k == 0 else upper / 2.0
    return lower, upper


# ---------------------------------------------------------------- curves
def integrate_thrust(times_s: Sequence[float], thrust_n: Sequence[float]) -> np.ndarray:
    """Cumulative impulse of a piecewise-linear thrust table (trapezoidal rule).

    The trapezoidal rule is exact for a linearly interpolated table.

    Returns
    -------
    numpy.ndarray
        I(t_k) [N s] at every table time, starting at 0.
    """
    t = np.asarray(times_s, dtype=float)
    f = np.asarray(thrust_n, dtype=float)
    out = np.zeros_like(t)
    if t.size > 1:
        out[1:] = np.cumsum(0.5 * (f[1:] + f[:-1]) * np.diff(t))
    return out


def _check_curve(curve: object, field_name: str) -> tuple[tuple[float, float], ...]:
    try:
        pts = tuple((float(p[0]), float(p[1])) for p in curve)  # type: ignore[union-attr]
        if any(len(p) != 2 for p in curve):  # type: ignore[union-attr]
            raise ValueError
    except (TypeError, ValueError, IndexError):
        raise FieldError(field_name, MSG_CURVE_SHAPE + ".", _short(curve)) from None
    if len(pts) < 3:
        raise FieldError(field_name, MSG_CURVE_SHAPE + "; at least 3 points.", _short(curve))
    t = np.array([p[0] for p in pts])
    f = np.array([p[1] for p in pts])
    ok = (
        np.all(np.isfinite(t))
        and np.all(np.isfinite(f))
        and t[0] == 0.0
        and f[0] == 0.0
        and f[-1] == 0.0
        and np.all(np.diff(t) > 0.0)
        and np.all(f >= 0.0)
        and np.any(f > 0.0)
    )
    if not ok:
        raise FieldError(field_name, MSG_CURVE_SHAPE + ".", _short(curve))
    return pts


def _short(value: object, limit: int = 60) -> object:
    text = repr(value)
    return value if len(text) <= limit else text[: limit - 3] + "..."


# ---------------------------------------------------------------- Motor
@dataclass(frozen=True, slots=True)
class Motor:
    """A pre-made rocket motor, SI units.

    Attributes
    ----------
    name : str
        Name the user gives it; unique within a motor list.
    total_impulse_n_s : float
        Stated total impulse [N s], > 0.
    propellant_mass_kg : float
        Propellant mass [kg], in (0, loaded_mass_kg).
    loaded_mass_kg : float
        Mass of the motor ready to fly [kg]; its burnt-out mass is
        loaded - propellant.
    burn_time_s : float
        Thrust duration [s], > 0. With a thrust table it must equal the time
        of the last point within 1%.
    thrust_curve : tuple of (t_s, thrust_N) or None
        Thrust table, see the module docstring for the convention. Its
        integral must be within 1% of `total_impulse_n_s`.
    maker : str
        Maker name (free text).
    diameter_m : float or None
        Motor case diameter [m]; used to match motor mounts.
    length_m : float or None
        Motor case length [m] (informative).
    cost : float or None
        Price in the user's currency; used by cheapest-stack searches.
    delay_s : float or None
        Ejection delay after burnout [s] (informative).

    Notes
    -----
    Derived: `average_thrust_n` = I / t_b; `effective_isp_s` = I / (m_p g0)
    (definition of specific impulse, Sutton & Biblarz, Rocket Propulsion
    Elements, 9th ed., eq. 2-5); `impulse_class`; `designation`.
    """

    name: str
    total_impulse_n_s: float
    propellant_mass_kg: float
    loaded_mass_kg: float
    burn_time_s: float
    thrust_curve: tuple[tuple[float, float], ...] | None = None
    maker: str = ""
    diameter_m: float | None = None
    length_m: float | None = None
    cost: float | None = None
    delay_s: float | None = None
    _cum_impulse: tuple[float, ...] = field(default=(), init=False, repr=False, compare=False)

    def __post_init__(self) -> None:
        if not isinstance(self.name, str) or not self.name.strip():
            raise FieldError("name", "must be a non-empty string.", self.name)
        for fname in ("total_impulse_n_s", "propellant_mass_kg", "loaded_mass_kg", "burn_time_s"):
            v = getattr(self, fname)
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or v <= 0:
                raise FieldError(_key(fname), "must be a finite number > 0.", v)
            object.__setattr__(self, fname, float(v))
        impulse_class_index(self.total_impulse_n_s)  # range check
        if self.propellant_mass_kg >= self.loaded_mass_kg:
            raise FieldError("propellant_mass", MSG_PROPELLANT_MASS + f" ({self.loaded_mass_kg:g} kg).",
                             self.propellant_mass_kg)
        for fname in ("diameter_m", "length_m", "cost", "delay_s"):
            v = getattr(self, fname)
            if v is None:
                continue
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or v < 0 \
                    or (v == 0 and fname in ("diameter_m", "length_m")):
                raise FieldError(_key(fname), "must be a finite number >= 0 (> 0 for sizes).", v)
            object.__setattr__(self, fname, float(v))
        if self.thrust_curve is not None:
            pts = _check_curve(self.thrust_curve, "thrust")
            object.__setattr__(self, "thrust_curve", pts)
            t = [p[0] for p in pts]
            cum = integrate_thrust(t, [p[1] for p in pts])
            i_curve = float(cum[-1])
            if abs(i_curve - self.total_impulse_n_s) > _CURVE_TOL * self.total_impulse_n_s:
                raise FieldError(
                    "thrust",
                    f"{MSG_CURVE_IMPULSE} ({self.total_impulse_n_s:g} N s); the table gives "
                    f"{i_curve:.4g} N s. Fix the table or total_impulse.",
                )
            if abs(t[-1] - self.burn_time_s) > _CURVE_TOL * t[-1]:
                raise FieldError("burn_time", f"{MSG_BURN_TIME} ({t[-1]:g} s).", self.burn_time_s)
            object.__setattr__(self, "_cum_impulse", tuple(float(c) for c in cum))

    # -- derived ----------------------------------------------------------
    @property
    def average_thrust_n(self) -> float:
        """Average thrust I / t_b [N]."""
        return self.total_impulse_n_s / self.burn_time_s

    @property
    def effective_isp_s(self) -> float:
        """Effective specific impulse I / (m_p g0) [s] (Sutton & Biblarz 9th ed., eq. 2-5)."""
        return self.total_impulse_n_s / (self.propellant_mass_kg * G0_M_S2)

    @property
    def burnout_mass_kg(self) -> float:
        """Mass of the spent motor, loaded - propellant [kg]."""
        return self.loaded_mass_kg - self.propellant_mass_kg

    @property
    def impulse_class(self) -> str:
        """Letter class of the total impulse (NFPA 1125 classification)."""
        return impulse_class(self.total_impulse_n_s)

    @property
    def class_fraction(self) -> float:
        """Where the impulse sits within its class: 0 at the lower bound, 1 at the upper [-]."""
        lo, hi = impulse_class_bounds(self.impulse_class)
        return (self.total_impulse_n_s - lo) / (hi - lo)

    @property
    def peak_thrust_n(self) -> float:
        """Largest thrust of the table (the trapezoid's plateau without one) [N]."""
        return float(max(f for _, f in self.thrust_table()))

    @property
    def designation(self) -> str:
        """Short label of this project's own design.

        ``<class>/<total impulse N s>/<average thrust N>/<burn time s>``, e.g.
        ``"E/29.4Ns/14.7N/2.00s"``, with the delay appended as ``+5s`` when given.

        Examples
        --------
        >>> Motor("x", 29.4, 0.02, 0.05, 2.0).designation
        'E/29.4Ns/14.7N/2.00s'
        """
        text = (
            f"{self.impulse_class}/{_fmt(self.total_impulse_n_s)}Ns/"
            f"{_fmt(self.average_thrust_n)}N/{self.burn_time_s:.2f}s"
        )
        if self.delay_s is not None:
            text += f"+{self.delay_s:g}s"
        return text

    # -- curves -----------------------------------------------------------
    def thrust_table(self) -> tuple[tuple[float, float], ...]:
        """Thrust table (t_s, thrust_N) used in flight.

        The stated table when there is one. Otherwise a trapezoid with ramps of
        r = min(0.02 s, 0.05 t_b) at both ends and a plateau
        F = I / (t_b - r), so its integral is exactly the total impulse.
        """
        if self.thrust_curve is not None:
            return self.thrust_curve
        tb = self.burn_time_s
        r = min(0.02, 0.05 * tb)
        f = self.total_impulse_n_s / (tb - r)
        return ((0.0, 0.0), (r, f), (tb - r, f), (tb, 0.0))

    def propellant_mass_table(self) -> tuple[tuple[float, float], ...]:
        """Remaining propellant (t_s, kg) at the thrust-table times.

        Propellant burns in proportion to impulse delivered (constant effective
        exhaust velocity): m(t) = m_p (1 - I(t) / I_table).
        """
        table = self.thrust_table()
        t = [p[0] for p in table]
        cum = np.asarray(self._cum_impulse) if self._cum_impulse else integrate_thrust(t, [p[1] for p in table])
        rem = self.propellant_mass_kg * (1.0 - cum / cum[-1])
        rem[-1] = 0.0
        return tuple((float(a), float(max(b, 0.0))) for a, b in zip(t, rem))


def _fmt(x: float) -> str:
    """Three significant figures without exponent for typical motor numbers."""
    if x >= 100:
        return f"{x:.0f}"
    if x >= 10:
        return f"{x:.1f}"
    return f"{x:.2f}"


def _key(fname: str) -> str:
    """TOML key of a dataclass field: the field name without its unit suffix."""
    for suffix in ("_n_s", "_kg", "_s", "_m", "_n"):
        if fname.endswith(suffix):
            return fname[: -len(suffix)]
    return fname


# ---------------------------------------------------------------- flight stage
def motor_flight_stage(
    motor: Motor,
    *,
    name: str,
    airframe_mass_kg: float,
    diameter_m: float,
    ballast_mass_kg: float = 0.0,
    drag: DragCurve | None = None,
    coast_before_ignition_s: float = 0.0,
) -> FlightStage:
    """A flight stage made of a motor plus its airframe and ballast.

    The stage's structural mass is airframe + ballast + spent motor case; its
    propellant follows `Motor.propellant_mass_table` and its thrust
    `Motor.thrust_table`, taken as measured at sea level (no back-pressure
    correction: nozzle exit area 0). The stage's `isp_vac_s` is the motor's
    effective Isp, I / (m_p g0).

    Parameters
    ----------
    motor : Motor
    name : str
        Stage name (e.g. ``"booster"``).
    airframe_mass_kg : float
        Body, fins, recovery gear and coupler of this stage, without the motor [kg], >= 0.
    diameter_m : float
        Body diameter for the drag reference area [m], > 0.
    ballast_mass_kg : float
        Extra mass carried by this stage and dropped with it [kg], >= 0.
    drag : sizing.physics.vehicle.DragCurve or None
        C_D(Mach) while this stage is the lowest; None takes
        `DragCurve.default_slender_body`.
    coast_before_ignition_s : float
        Coast between the previous event and ignition [s], >= 0.

    Returns
    -------
    sizing.physics.vehicle.FlightStage
    """
    for fname, v in (("airframe_mass_kg", airframe_mass_kg), ("ballast_mass_kg", ballast_mass_kg)):
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or v < 0:
            raise FieldError(f"stages.{name}.{fname}", "must be a finite number >= 0.", v)
    thrust = motor.thrust_table()
    prop = motor.propellant_mass_table()
    return FlightStage(
        name,
        motor.propellant_mass_kg,
        float(airframe_mass_kg) + float(ballast_mass_kg) + motor.burnout_mass_kg,
        motor.effective_isp_s,
        diameter_m=diameter_m,
        thrust_curve=(tuple(p[0] for p in thrust), tuple(p[1] for p in thrust)),
        propellant_mass_curve=(tuple(p[0] for p in prop), tuple(p[1] for p in prop)),
        nozzle_exit_area_m2=0.0,
        drag=DragCurve.default_slender_body() if drag is None else drag,
        coast_before_ignition_s=coast_before_ignition_s,
    )


# ---------------------------------------------------------------- TOML
_REQUIRED = ("name", "total_impulse", "propellant_mass", "loaded_mass")
_KINDS: dict[str, str] = {
    "total_impulse": "impulse",
    "propellant_mass": "mass",
    "loaded_mass": "mass",
    "burn_time": "time",
    "average_thrust": "force",
    "diameter": "length",
    "length": "length",
    "delay": "time",
}
_ALLOWED = frozenset(_KINDS) | {"name", "maker", "thrust", "cost"}


def load_motors(path: str | Path) -> tuple[Motor, ...]:
    """Read a motor list from a TOML file (see docs/hobby.md for the format).

    Parameters
    ----------
    path : str or pathlib.Path
        File with ``[[motor]]`` tables.

    Returns
    -------
    tuple of Motor
        In file order.

    Raises
    ------
    ProblemDefinitionError
        One line per fault: ``motor[2] (name).field: what is allowed. Got value.``
    """
    source = str(path)
    try:
        text = Path(path).read_text(encoding="utf-8")
    except OSError as exc:
        raise ProblemDefinitionError(source, [f"cannot be read ({exc.strerror})."]) from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ProblemDefinitionError(source, [f"is not valid TOML: {str(exc).rstrip('.')}."]) from None
    return parse_motors(data, source=source)


def parse_motors(data: Mapping[str, object], *, source: str = "<motors>") -> tuple[Motor, ...]:
    """Build motors from parsed TOML data ``{"maker": ..., "motor": [{...}, ...]}``.

    A top-level ``maker`` string is the default maker of every motor.
    Plain numbers are SI (N s, kg, s, N, m); strings carry their unit and are
    converted with `sizing.units.to_si`. ``thrust`` is a list of
    ``[t_s, thrust_N]`` pairs of plain numbers. ``burn_time`` may be left out
    when a thrust table is given (it is then the last table time) or when
    ``average_thrust`` is given (it is then total_impulse / average_thrust).

    Raises
    ------
    ProblemDefinitionError
        Listing every fault found.
    """
    faults: list[str] = []
    unknown_top = sorted(set(data) - {"motor", "maker", "title", "note"})
    for k in unknown_top:
        faults.append(f"{k}: unknown key. Allowed at the top: maker, title, note, [[motor]].")
    default_maker = data.get("maker", "")
    if not isinstance(default_maker, str):
        faults.append(f"maker: must be a string. Got {default_maker!r}.")
        default_maker = ""
    tables = data.get("motor")
    if not isinstance(tables, list) or not tables:
        faults.append("motor: at least one [[motor]] table is required.")
        raise ProblemDefinitionError(source, faults)
    motors: list[Motor] = []
    seen: dict[str, int] = {}
    for i, tab in enumerate(tables, start=1):
        where = f"motor[{i}]"
        if not isinstance(tab, dict):
            faults.append(f"{where}: must be a [[motor]] table. Got {tab!r}.")
            continue
        if isinstance(tab.get("name"), str):
            where += f" ({tab['name']})"
        n_before = len(faults)
        for k in sorted(set(tab) - _ALLOWED):
            faults.append(f"{where}.{k}: unknown key. Allowed: {', '.join(sorted(_ALLOWED))}.")
        for k in _REQUIRED:
            if k not in tab:
                faults.append(f"{where}.{k}: required key is missing.")
        vals: dict[str, float] = {}
        for k, kind in _KINDS.items():
            if k in tab:
                try:
                    vals[k] = to_si(tab[k], kind)
                except ValueError as exc:
                    faults.append(f"{where}.{k}: {exc}")
        cost = tab.get("cost")
        if cost is not None and (isinstance(cost, bool) or not isinstance(cost, (int, float))):
            faults.append(f"{where}.cost: must be a plain number (price). Got {cost!r}.")
        maker = tab.get("maker", default_maker)
        if not isinstance(maker, str):
            faults.append(f"{where}.maker: must be a string. Got {maker!r}.")
        if len(faults) > n_before:
            continue
        burn = vals.get("burn_time")
        thrust = tab.get("thrust")
        if burn is None and thrust is not None:
            try:
                burn = float(thrust[-1][0])
            except (TypeError, IndexError, ValueError, KeyError):
                faults.append(f"{where}.thrust: {MSG_CURVE_SHAPE}. Got {_short(thrust)!r}.")
                continue
        avg = vals.get("average_thrust")
        if thrust is None and burn is None and avg is None:
            faults.append(f"{where}.burn_time: required key is missing (or give thrust or average_thrust).")
            continue
        if burn is None:
            if avg <= 0:
                faults.append(f"{where}.average_thrust: must be > 0. Got {tab['average_thrust']!r}.")
                continue
            burn = vals["total_impulse"] / avg
        elif avg is not None and burn > 0 and abs(vals["total_impulse"] / burn - avg) > _CURVE_TOL * avg:
            faults.append(
                f"{where}.average_thrust: {MSG_AVERAGE_THRUST} "
                f"({vals['total_impulse'] / burn:.4g} N). Got {tab['average_thrust']!r}."
            )
            continue
        try:
            m = Motor(
                name=tab["name"],
                total_impulse_n_s=vals["total_impulse"],
                propellant_mass_kg=vals["propellant_mass"],
                loaded_mass_kg=vals["loaded_mass"],
                burn_time_s=burn,
                thrust_curve=None if thrust is None else thrust,
                maker=maker,
                diameter_m=vals.get("diameter"),
                length_m=vals.get("length"),
                cost=None if cost is None else float(cost),
                delay_s=vals.get("delay"),
            )
        except FieldError as exc:
            faults.append(f"{where}.{exc}")
            continue
        if m.name in seen:
            faults.append(f"{where}.name: must be unique; motor[{seen[m.name]}] has the same name. Got {m.name!r}.")
            continue
        seen[m.name] = i
        motors.append(m)
    if faults:
        raise ProblemDefinitionError(source, faults)
    return tuple(motors)
