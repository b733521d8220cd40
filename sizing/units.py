"""SI constants and the only place where units are converted.

Plain numbers in input files are SI (Isp in seconds). A string such as
``"11000 lb"`` or ``"2.2 km/s"`` is parsed with pint and converted to the SI unit
the field expects; a wrong dimension is an error, and so is a string with no
unit (``"180"``) for a field that has a dimension. pint is imported only when
a string value is met, so plain-number files load fast.
"""

from __future__ import annotations

import math
from functools import lru_cache

__all__ = [
    "G0_M_S2",
    "GM_EARTH_M3_S2",
    "R_EARTH_EQ_M",
    "OMEGA_EARTH_RAD_S",
    "SI_UNITS",
    "MSG_G_IS_GRAMS",
    "MSG_NO_UNIT",
    "UNIT_EXAMPLES",
    "to_si",
    "isp_to_exhaust_velocity",
    "exhaust_velocity_to_isp",
]

#: Standard acceleration of gravity [m/s^2], exact by definition
#: (3rd CGPM 1901; CODATA; also scipy.constants.g).
G0_M_S2 = 9.80665
#: Earth gravitational parameter [m^3/s^2], WGS 84 / IERS Conventions 2010.
GM_EARTH_M3_S2 = 3.986004418e14
#: Earth equatorial radius [m], WGS 84 semi-major axis.
R_EARTH_EQ_M = 6378137.0
#: Earth rotation rate [rad/s], WGS 84 (7.292115e-5 rad/s).
OMEGA_EARTH_RAD_S = 7.292115e-5

#: The SI unit each kind of field is stored in, as pint spells it.
SI_UNITS: dict[str, str] = {
    "mass": "kg",
    "velocity": "m/s",
    "length": "m",
    "time": "s",
    "force": "N",
    "pressure": "Pa",
    "area": "m**2",
    "volume": "m**3",
    "acceleration": "m/s**2",
    "impulse": "N*s",
    "density": "kg/m**3",
    "temperature": "K",
    "mass_per_length": "kg/m",
    "mass_per_area": "kg/m**2",
    "angle": "deg",
    "angular_rate": "deg/s",
    "dimensionless": "",
}


#: An acceleration written with a mass unit, usually "20 g" meant as 20 times standard gravity.
MSG_G_IS_GRAMS = ("{value!r} reads as a mass (g is the gram); for an acceleration in standard gravities "
                  "write '{n} g0' or '{n} gee' (= {si} m/s^2), or give m/s^2.")

#: A string with no unit for a field with a dimension ("180" for a mass): refused, because
#: a string is read as a number with a unit, and the unit the writer meant is unknown.
MSG_NO_UNIT = ("{value!r} has no unit; write a plain number for {plain} ({unit}) "
               "or a number with a unit such as {example!r}.")

#: One written example per kind with a dimension, for `MSG_NO_UNIT` (each converts to its kind).
UNIT_EXAMPLES: dict[str, str] = {
    "mass": "12 kg",
    "velocity": "2.2 km/s",
    "length": "1.3 m",
    "time": "3.5 s",
    "force": "11 kN",
    "pressure": "2 bar",
    "area": "0.05 m^2",
    "volume": "2 L",
    "acceleration": "6 g0",
    "impulse": "640 N*s",
    "density": "1800 kg/m^3",
    "temperature": "90 K",
    "mass_per_length": "0.4 kg/m",
    "mass_per_area": "1.2 kg/m^2",
    "angle": "85 deg",
    "angular_rate": "2 deg/s",
}


def _no_unit_message(value: str, kind: str) -> str:
    """`MSG_NO_UNIT` filled in for `kind` (the SI unit written as in the docs, m^2 not m**2)."""
    unit = SI_UNITS[kind].replace("**", "^")
    plain = "degrees" if kind in ("angle", "angular_rate") else "SI"
    return MSG_NO_UNIT.format(value=value, plain=plain, unit=unit, example=UNIT_EXAMPLES[kind])


def _article(word: str) -> str:
    return "an" if word[:1] in "aeiou" else "a"


def _wrong_dimension(value: str, kind: str) -> str:
    target = SI_UNITS[kind]
    return (f"{value!r} has the wrong dimension; {_article(kind)} {kind} in units such as "
            f"{target or 'a plain number'} is expected.")


@lru_cache(maxsize=1)
def _registry():
    import pint  # local: heavy import, only needed for strings with units

    ureg = pint.UnitRegistry()
    # the trade writes accelerations in multiples of standard gravity: "20 g0" (pint's own
    # spelling, also g_0, g_n) or "20 gee" / "20 gees"
    ureg.define("gee = standard_gravity = _ = gees")
    return ureg


def to_si(value: float | int | str, kind: str) -> float:
    """Convert a number or a "number unit" string to the SI unit of `kind`.

    Parameters
    ----------
    value : float, int or str
        Plain numbers are taken as already SI. Strings are parsed by pint
        and must carry a unit unless `kind` is ``"dimensionless"`` (there
        ``"0.08"`` and ``"8 %"`` are both 0.08).
    kind : str
        A key of `SI_UNITS`, e.g. ``"mass"``.

    Returns
    -------
    float
        The value in SI units (angles in degrees).

    Raises
    ------
    ValueError
        With a one-line message when the string cannot be parsed, has the
        wrong dimension, or has no unit for a `kind` with a dimension.

    Examples
    --------
    >>> round(to_si("2.2 km/s", "velocity"), 6)
    2200.0
    >>> to_si(5.0, "mass")
    5.0
    >>> to_si("8 %", "dimensionless")
    0.08
    """
    if isinstance(value, bool):
        raise ValueError(f"must be a number or a string with a unit. Got {value!r}.")
    if isinstance(value, (int, float)):
        out = float(value)
        if not math.isfinite(out):
            raise ValueError(f"must be a finite number. Got {value!r}.")
        return out
    if not isinstance(value, str):
        raise ValueError(f"must be a number or a string with a unit. Got {value!r}.")
    target = SI_UNITS[kind]
    ureg = _registry()
    try:
        q = ureg.Quantity(value.strip())
    except Exception:
        raise ValueError(
            f"cannot read {value!r} as a quantity; write e.g. \"12 kg\" or a plain SI number."
        ) from None
    if not hasattr(q, "to"):
        q = ureg.Quantity(q)
    if q.dimensionless and target == "":
        return float(q.to("").magnitude)
    if target and q.unitless:
        # a pure number ("180", "1e3") or a number of a dimensionless unit ("8 %"): neither
        # says which unit of a dimensional field was meant
        if q.units == ureg.dimensionless:
            raise ValueError(_no_unit_message(value, kind))
        raise ValueError(_wrong_dimension(value, kind))
    try:
        out = float(q.to(target).magnitude)
    except Exception:
        if kind == "acceleration" and str(q.units) == "gram":
            raise ValueError(MSG_G_IS_GRAMS.format(value=value, n=f"{q.magnitude:g}",
                                                   si=f"{q.magnitude * G0_M_S2:,.4g}")) from None
        raise ValueError(_wrong_dimension(value, kind)) from None
    if not math.isfinite(out):
        raise ValueError(f"must be a finite number. Got {value!r}.")
    return out


def isp_to_exhaust_velocity(isp_s: float, g0_m_s2: float = G0_M_S2) -> float:
    """Effective exhaust velocity c = Isp * g0 [m/s] (definition of specific impulse).

    References
    ----------
    .. [1] G. P. Sutton, O. Biblarz, Rocket Propulsion Elements, 9th ed., 2017, eq. 2-5.
    """
    return isp_s * g0_m_s2


def exhaust_velocity_to_isp(c_m_s: float, g0_m_s2: float = G0_M_S2) -> float:
    """Specific impulse Isp = c / g0 [s]; inverse of `isp_to_exhaust_velocity`."""
    return c_m_s / g0_m_s2
