"""Horizontal wind over the launch site: constant, power law with height, or a table.

A `WindProfile` gives the wind velocity (the velocity of the air over the
ground) at a height above the launch site. Its one method the flight and
descent models call is `WindProfile.velocity_m_s`, which takes a float or a
numpy array of heights and returns the (east, north) components.

Direction convention: `direction_from_deg` is where the wind blows FROM,
clockwise from north (the meteorological convention: a "north wind",
0 deg, blows towards the south). The air then moves towards
direction_from + 180 deg, so

    east  = -V sin(direction_from),
    north = -V cos(direction_from).

Profiles
--------
* ``"constant"``: V(h) = V_ref at every height.
* ``"power_law"``: V(h) = V_ref (h / h_ref)^alpha for h > 0, 0 at the ground,
  optionally held constant above `top_height_m`. The exponent alpha = 1/7 is
  the classic value for neutral stability over open, level terrain (the
  "one-seventh power law"; e.g. Peterson & Hennessey, "On the use of power
  laws for estimates of wind power potential", J. Appl. Meteorol. 17, 1978,
  390-394; from memory). The reference height h_ref = 10 m is the standard
  height of surface wind measurements (WMO guide to meteorological
  instruments, from memory). It is a boundary-layer fit: above a few hundred
  metres real winds follow the weather, not the law; give a table for those.
* ``"table"``: (height, speed, direction) points, components interpolated
  linearly in height, held at the end values outside the table.

Heights below the site (h < 0) are taken as 0.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from sizing.errors import FieldError
from sizing.physics.vehicle import _check_positive

__all__ = [
    "WIND_PROFILES",
    "DEFAULT_WIND_EXPONENT",
    "DEFAULT_WIND_REFERENCE_HEIGHT_M",
    "WindProfile",
    "calm",
]

#: Profile kinds of `WindProfile`.
WIND_PROFILES: tuple[str, ...] = ("constant", "power_law", "table")
#: Power-law exponent for neutral air over open terrain [-] (1/7 law; from memory, see module notes).
DEFAULT_WIND_EXPONENT = 1.0 / 7.0
#: Height of the reference (measured) wind speed [m] (10 m surface-wind standard; from memory).
DEFAULT_WIND_REFERENCE_HEIGHT_M = 10.0


def _finite(value, field_name: str, *, lo_open: bool = False, hi: float | None = None) -> float:
    """A finite number >= 0 (> 0 with `lo_open`; <= `hi` when given), else FieldError naming the field."""
    v = _check_positive(value, field_name, allow_zero=not lo_open)
    if hi is not None and v > hi:
        raise FieldError(field_name, f"must be <= {hi:g}.", value)
    return v


@dataclass(frozen=True, slots=True)
class WindProfile:
    """Horizontal wind as a function of height above the launch site.

    Parameters
    ----------
    kind : {"constant", "power_law", "table"}
    speed_m_s : float
        Reference wind speed [m/s], >= 0 (constant and power law).
    direction_from_deg : float
        Direction the wind blows from, clockwise from north [deg], in [0, 360).
    reference_height_m : float
        Height of `speed_m_s` for the power law [m], > 0; default 10 m.
    exponent : float
        Power-law exponent alpha [-], in (0, 1]; default 1/7.
    top_height_m : float or None
        Power law: the speed is held constant above this height [m]; None: no cap.
    heights_m, speeds_m_s, directions_from_deg : tuple of float
        Table: heights strictly increasing from >= 0 [m], speeds >= 0 [m/s],
        directions (from, clockwise from north) [deg]; same lengths.

    Examples
    --------
    >>> w = WindProfile("constant", speed_m_s=5.0, direction_from_deg=270.0)  # a west wind
    >>> [round(c, 9) + 0.0 for c in w.velocity_m_s(100.0)]   # air moves east
    [5.0, 0.0]
    >>> round(WindProfile("power_law", speed_m_s=4.0).speed_at_m_s(640.0), 3)  # 4 (64)^(1/7)
    7.246
    """

    kind: str = "constant"
    speed_m_s: float = 0.0
    direction_from_deg: float = 0.0
    reference_height_m: float = DEFAULT_WIND_REFERENCE_HEIGHT_M
    exponent: float = DEFAULT_WIND_EXPONENT
    top_height_m: float | None = None
    heights_m: tuple[float, ...] = ()
    speeds_m_s: tuple[float, ...] = ()
    directions_from_deg: tuple[float, ...] = ()

    def __post_init__(self) -> None:
        set_ = lambda k, v: object.__setattr__(self, k, v)  # noqa: E731
        if self.kind not in WIND_PROFILES:
            raise FieldError("wind.profile", f"must be one of {', '.join(WIND_PROFILES)}.", self.kind)
        set_("speed_m_s", _finite(self.speed_m_s, "wind.speed"))
        d = _finite(self.direction_from_deg, "wind.direction")
        if d >= 360.0:
            raise FieldError("wind.direction", "must be in [0, 360) degrees, clockwise from north.", d)
        set_("direction_from_deg", d)
        set_("reference_height_m", _finite(self.reference_height_m, "wind.reference_height", lo_open=True))
        set_("exponent", _finite(self.exponent, "wind.exponent", lo_open=True, hi=1.0))
        if self.top_height_m is not None:
            set_("top_height_m", _finite(self.top_height_m, "wind.top_height", lo_open=True))
        if self.kind == "table":
            h = tuple(_finite(v, "wind.heights") for v in self.heights_m)
            s = tuple(_finite(v, "wind.speeds") for v in self.speeds_m_s)
            dd = tuple(_finite(v, "wind.directions") for v in self.directions_from_deg)
            if len(h) < 1 or not (len(h) == len(s) == len(dd)):
                raise FieldError("wind.table", "needs one or more [height, speed, direction] rows.", self.heights_m)
            if any(b <= a for a, b in zip(h, h[1:])):
                raise FieldError("wind.heights", "must be strictly increasing.", h)
            if any(x >= 360.0 for x in dd):
                raise FieldError("wind.directions", "must be in [0, 360) degrees.", dd)
            set_("heights_m", h)
            set_("speeds_m_s", s)
            set_("directions_from_deg", dd)

    # -- evaluation ---------------------------------------------------------
    def speed_at_m_s(self, altitude_above_site_m):
        """Wind speed |V| [m/s] at a height (float or array) above the site."""
        e, n = self.velocity_m_s(altitude_above_site_m)
        return np.hypot(e, n) if isinstance(e, np.ndarray) else math.hypot(e, n)

    def velocity_m_s(self, altitude_above_site_m):
        """Wind velocity (east, north) [m/s] at a height above the site [m].

        Parameters
        ----------
        altitude_above_site_m : float or numpy.ndarray
            Height above the launch site [m]; negative values count as 0.

        Returns
        -------
        (east, north) : tuple of float, or of numpy.ndarray shaped like the input
            Velocity of the air over the ground [m/s].
        """
        scalar = np.ndim(altitude_above_site_m) == 0
        h = np.maximum(np.asarray(altitude_above_site_m, dtype=float), 0.0)
        if self.kind == "table":
            rad = np.radians(np.asarray(self.directions_from_deg))
            sp = np.asarray(self.speeds_m_s)
            xs = np.asarray(self.heights_m)
            east = np.interp(h, xs, -sp * np.sin(rad))
            north = np.interp(h, xs, -sp * np.cos(rad))
        else:
            if self.kind == "constant":
                speed = np.full_like(h, self.speed_m_s)
            else:
                hh = h if self.top_height_m is None else np.minimum(h, self.top_height_m)
                speed = self.speed_m_s * (hh / self.reference_height_m) ** self.exponent
            rad = math.radians(self.direction_from_deg)
            east = -speed * math.sin(rad)
            north = -speed * math.cos(rad)
        if scalar:
            return float(east), float(north)
        return east, north

    @property
    def is_calm(self) -> bool:
        """True when the wind is zero at every height."""
        if self.kind == "table":
            return not any(self.speeds_m_s)
        return self.speed_m_s == 0.0

    def describe(self) -> str:
        """One line for reports, e.g. ``"power law 4 m/s at 10 m, alpha 0.143, from 270 deg"``."""
        if self.kind == "constant":
            return f"constant {self.speed_m_s:g} m/s from {self.direction_from_deg:g} deg"
        if self.kind == "power_law":
            top = "" if self.top_height_m is None else f", held above {self.top_height_m:g} m"
            return (f"power law {self.speed_m_s:g} m/s at {self.reference_height_m:g} m, alpha "
                    f"{self.exponent:.3g}{top}, from {self.direction_from_deg:g} deg")
        return f"table of {len(self.heights_m)} heights up to {self.heights_m[-1]:g} m"


def calm() -> WindProfile:
    """No wind at any height."""
    return WindProfile("constant", speed_m_s=0.0)
