"""Recovery: canopy and streamer size, descent time and wind drift, ejection timing.

Descent under a canopy is quasi-steady: the canopy reaches its terminal
speed within a second or two, so at every height drag equals weight,

    m g = 1/2 rho(h) v^2 C_D S   =>   v(h) = sqrt(2 m g / (rho(h) C_D S))

(the drag equation, e.g. T. W. Knacke, *Parachute Recovery Systems Design
Manual*, NWC TP 6575, 1991, ch. 5; rho from the US Standard Atmosphere
1976). The descent time is the integral of dh / v(h) and the drift the
integral of w(h) dh / v(h) with w the horizontal wind; in a constant wind
the drift is w times the descent time. The payload drifts with the air
(no glide), which is how a round canopy or a streamer behaves.

Defaults (each an input):

* canopy C_D = 0.8 on the nominal (flat) area pi D0^2 / 4 of a round canopy
  (Knacke 1991, table 5-1, gives about 0.75-0.80 for flat circular canopies;
  from memory);
* streamer C_D = 0.15 on its area, length = 10 x width (common practice, no
  source; streamer drag varies widely with material and flutter);
* target descent rate 5 m/s under the main canopy (about 16 ft/s) and
  25 m/s under a drogue (about 80 ft/s); main deployment 150 m above the
  site (about 500 ft) (all common practice, no source).

Ejection timing: a motor's ejection charge fires `delay_s` after burnout.
`ejection_check` compares it with the coast time from burnout to apogee,
flags deployment more than `DEPLOY_TOLERANCE_S` before or after apogee
(common practice, no source), gives the speed at deployment and recommends
the delay closest to the coast time in whole seconds. Before apogee the speed
comes from the flown history; after it the rocket falls, nose down, with the
closed form of a fall with quadratic drag, v = v_t tanh(g t / v_t),
v_t = sqrt(2 m g / (rho C_D A)) (density held at the apogee value; e.g.
Marion & Thornton, Classical Dynamics of Particles and Systems, 5th ed.,
sec. 2.4, from memory). A lower stage's coast after separation uses the
closed form of a vertical coast with quadratic drag at constant density:
t_a = (v_t / g) atan(v0 / v_t), h_a = (v_t^2 / (2 g)) ln(1 + v0^2 / v_t^2),
v(t) = v_t tan(atan(v0 / v_t) - g t / v_t) (same source).

Preliminary estimates only; follow the applicable hobby safety code, range
rules and local aviation law for recovery and landing areas.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from sizing.errors import FieldError
from sizing.physics.atmosphere import pressure_density_sound_speed
from sizing.physics.wind import WindProfile, calm
from sizing.units import G0_M_S2

__all__ = [
    "DEFAULT_CANOPY_CD",
    "DEFAULT_STREAMER_CD",
    "STREAMER_ASPECT_RATIO",
    "DEFAULT_MAIN_DESCENT_RATE_M_S",
    "DEFAULT_DROGUE_DESCENT_RATE_M_S",
    "DEFAULT_MAIN_DEPLOY_HEIGHT_M",
    "DEPLOY_TOLERANCE_S",
    "RECOVERY_DEVICES",
    "Canopy",
    "DescentLeg",
    "Descent",
    "CoastApogee",
    "EjectionCheck",
    "air_density_kg_m3",
    "drag_area_for_descent_rate_m2",
    "descent_rate_m_s",
    "size_canopy",
    "descend",
    "coast_to_apogee",
    "fall_speed_m_s",
    "ejection_check",
]

#: Round canopy drag coefficient on the nominal area [-] (Knacke 1991 table 5-1 range 0.75-0.80; from memory).
DEFAULT_CANOPY_CD = 0.8
#: Streamer drag coefficient on its area [-] (common practice, no source).
DEFAULT_STREAMER_CD = 0.15
#: Streamer length / width [-] (common practice, no source).
STREAMER_ASPECT_RATIO = 10.0
#: Target descent rate under the main canopy [m/s] (about 16 ft/s; common practice, no source).
DEFAULT_MAIN_DESCENT_RATE_M_S = 5.0
#: Target descent rate under a drogue [m/s] (about 80 ft/s; common practice, no source).
DEFAULT_DROGUE_DESCENT_RATE_M_S = 25.0
#: Main-canopy deployment height above the site in dual deployment [m] (about 500 ft; common practice, no source).
DEFAULT_MAIN_DEPLOY_HEIGHT_M = 150.0
#: Deployment more than this before or after apogee is flagged [s] (common practice, no source).
DEPLOY_TOLERANCE_S = 2.0
#: Recovery arrangements.
RECOVERY_DEVICES: tuple[str, ...] = ("parachute", "streamer", "dual")

_N_STEPS = 400  # trapezoid points per descent leg (the integrands are smooth in h)


def air_density_kg_m3(altitude_m):
    """Air density [kg/m^3] at altitudes above mean sea level [m] (US Standard Atmosphere 1976)."""
    if np.ndim(altitude_m) == 0:
        return pressure_density_sound_speed(float(altitude_m))[1]
    return np.array([pressure_density_sound_speed(float(z))[1] for z in np.ravel(altitude_m)]).reshape(
        np.shape(altitude_m))


def drag_area_for_descent_rate_m2(mass_kg: float, descent_rate_m_s: float, density_kg_m3: float) -> float:
    """Drag area C_D S [m^2] that holds a mass at a steady descent rate (drag equation, m g = q C_D S).

    Examples
    --------
    >>> round(drag_area_for_descent_rate_m2(1.0, 5.0, 1.225), 5)  # 2 * 9.80665 / (1.225 * 25)
    0.64043
    """
    for name, v in (("mass", mass_kg), ("descent_rate", descent_rate_m_s), ("density", density_kg_m3)):
        if not (isinstance(v, (int, float)) and math.isfinite(v) and v > 0):
            raise FieldError(f"recovery.{name}", "must be > 0.", v)
    return 2.0 * mass_kg * G0_M_S2 / (density_kg_m3 * descent_rate_m_s**2)


def descent_rate_m_s(mass_kg: float, drag_area_m2: float, density_kg_m3):
    """Steady descent rate sqrt(2 m g / (rho C_D S)) [m/s] (float or array of densities)."""
    return np.sqrt(2.0 * mass_kg * G0_M_S2 / (np.asarray(density_kg_m3) * drag_area_m2)) \
        if np.ndim(density_kg_m3) else math.sqrt(2.0 * mass_kg * G0_M_S2 / (density_kg_m3 * drag_area_m2))


@dataclass(frozen=True, slots=True)
class Canopy:
    """A sized parachute or streamer.

    Attributes
    ----------
    kind : {"parachute", "streamer"}
    role : {"main", "drogue", "single"}
    cd : float
        Drag coefficient on `area_m2` [-].
    area_m2 : float
        Nominal canopy area pi D0^2 / 4, or streamer length x width [m^2].
    diameter_m : float or None
        Nominal diameter D0 [m] (parachutes).
    length_m, width_m : float or None
        Streamer size [m].
    target_rate_m_s : float
        Descent rate it was sized for [m/s], at `sizing_altitude_m` [m above MSL].
    """

    kind: str
    role: str
    cd: float
    area_m2: float
    diameter_m: float | None
    length_m: float | None
    width_m: float | None
    target_rate_m_s: float
    sizing_altitude_m: float

    @property
    def drag_area_m2(self) -> float:
        """C_D S [m^2]."""
        return self.cd * self.area_m2


def size_canopy(mass_kg: float, descent_rate_m_s: float, *, kind: str = "parachute", role: str = "single",
                cd: float | None = None, altitude_m: float = 0.0) -> Canopy:
    """Parachute or streamer that holds `mass_kg` at `descent_rate_m_s` at `altitude_m`.

    Parameters
    ----------
    mass_kg : float
        Mass hanging under it [kg], > 0.
    descent_rate_m_s : float
        Target steady descent rate [m/s], > 0.
    kind : {"parachute", "streamer"}
    role : {"single", "main", "drogue"}
    cd : float or None
        Drag coefficient on the nominal area [-]; None: `DEFAULT_CANOPY_CD`
        (parachute) or `DEFAULT_STREAMER_CD` (streamer).
    altitude_m : float
        Where the rate must hold [m above MSL] (the landing site for a main).

    Returns
    -------
    Canopy
        S = 2 m g / (rho v^2 C_D); D0 = sqrt(4 S / pi); a streamer of aspect
        ratio `STREAMER_ASPECT_RATIO` has width sqrt(S / AR).
    """
    if kind not in ("parachute", "streamer"):
        raise FieldError("recovery.device", "must be 'parachute' or 'streamer'.", kind)
    c = (DEFAULT_CANOPY_CD if kind == "parachute" else DEFAULT_STREAMER_CD) if cd is None else float(cd)
    if not (math.isfinite(c) and c > 0):
        raise FieldError("recovery.cd", "must be > 0.", cd)
    rho = air_density_kg_m3(altitude_m)
    area = drag_area_for_descent_rate_m2(mass_kg, descent_rate_m_s, rho) / c
    if kind == "parachute":
        return Canopy(kind, role, c, area, math.sqrt(4.0 * area / math.pi), None, None, descent_rate_m_s, altitude_m)
    w = math.sqrt(area / STREAMER_ASPECT_RATIO)
    return Canopy(kind, role, c, area, None, STREAMER_ASPECT_RATIO * w, w, descent_rate_m_s, altitude_m)


@dataclass(frozen=True, slots=True)
class DescentLeg:
    """One leg of a descent under one drag area."""

    role: str
    top_height_m: float        # above the site
    bottom_height_m: float     # above the site
    time_s: float
    drift_east_m: float
    drift_north_m: float
    rate_top_m_s: float
    rate_bottom_m_s: float


@dataclass(frozen=True, slots=True)
class Descent:
    """Descent from deployment to the ground: legs, time, drift and landing rate."""

    legs: tuple[DescentLeg, ...]
    time_s: float
    drift_east_m: float
    drift_north_m: float
    landing_rate_m_s: float

    @property
    def drift_m(self) -> float:
        """Horizontal drift distance [m]."""
        return math.hypot(self.drift_east_m, self.drift_north_m)


def descend(mass_kg: float, legs: Sequence[tuple[str, float, float]], *, site_altitude_m: float = 0.0,
            wind: WindProfile | None = None) -> Descent:
    """Quasi-steady descent through one or more legs (drogue, then main), with wind drift.

    Parameters
    ----------
    mass_kg : float
        Descending mass [kg], > 0.
    legs : sequence of (role, drag_area_m2, top_height_m)
        Top first; each leg runs from its top height above the site down to
        the next leg's top (the last to the ground). E.g. dual deployment:
        ``[("drogue", CdS_d, apogee), ("main", CdS_m, 150.0)]``.
    site_altitude_m : float
        Launch-site altitude [m above MSL].
    wind : WindProfile or None
        None: calm.

    Returns
    -------
    Descent
        Time = sum of integral dh / v(h); drift = integral w(h) dh / v(h) (trapezoid rule,
        `_N_STEPS` points per leg).
    """
    wind = calm() if wind is None else wind
    if not legs:
        raise FieldError("recovery", "needs at least one descent leg.", legs)
    out = []
    tops = [float(l[2]) for l in legs]
    for k, (role, cds, top) in enumerate(legs):
        bottom = tops[k + 1] if k + 1 < len(legs) else 0.0
        top = float(top)
        if top <= bottom:
            continue
        h = np.linspace(bottom, top, _N_STEPS)
        v = descent_rate_m_s(mass_kg, cds, air_density_kg_m3(h + site_altitude_m))
        e, n = wind.velocity_m_s(h)
        inv = 1.0 / v
        t = float(np.trapezoid(inv, h))
        out.append(DescentLeg(role, top, bottom, t, float(np.trapezoid(e * inv, h)),
                              float(np.trapezoid(n * inv, h)), float(v[-1]), float(v[0])))
    if not out:
        raise FieldError("recovery", "the deployment height must be above the site.", tops[0])
    return Descent(tuple(out), sum(l.time_s for l in out), sum(l.drift_east_m for l in out),
                   sum(l.drift_north_m for l in out), out[-1].rate_bottom_m_s)


@dataclass(frozen=True, slots=True)
class CoastApogee:
    """Vertical coast with quadratic drag at constant density (closed form)."""

    time_to_apogee_s: float     # from the start of the coast
    height_gain_m: float
    terminal_speed_m_s: float

    def speed_m_s(self, t_since_start_s: float, v0_m_s: float) -> float:
        """Upward speed [m/s] at a time after the start of the coast (before apogee)."""
        vt = self.terminal_speed_m_s
        return vt * math.tan(math.atan(v0_m_s / vt) - G0_M_S2 * t_since_start_s / vt)


def coast_to_apogee(speed_m_s: float, mass_kg: float, drag_area_m2: float, density_kg_m3: float) -> CoastApogee:
    """Closed-form vertical coast with drag 1/2 rho v^2 C_D A and constant g0 and rho.

    t_a = (v_t/g) atan(v0/v_t), h_a = (v_t^2/(2g)) ln(1 + v0^2/v_t^2),
    v_t = sqrt(m g / k), k = rho C_D A / 2 (see module notes).

    Examples
    --------
    Without drag the limits are v0/g and v0^2/(2g):

    >>> c = coast_to_apogee(50.0, 1.0, 1e-12, 1.2)
    >>> round(c.time_to_apogee_s, 4), round(c.height_gain_m, 2)
    (5.0986, 127.46)
    """
    k = 0.5 * density_kg_m3 * drag_area_m2
    vt = math.sqrt(mass_kg * G0_M_S2 / k)
    g = G0_M_S2
    return CoastApogee(vt / g * math.atan(speed_m_s / vt), vt * vt / (2 * g) * math.log1p((speed_m_s / vt) ** 2), vt)


def fall_speed_m_s(t_since_apogee_s: float, mass_kg: float, drag_area_m2: float, density_kg_m3: float) -> float:
    """Speed [m/s] of a body falling from rest for a time, with quadratic drag: v_t tanh(g t / v_t)."""
    vt = math.sqrt(2.0 * mass_kg * G0_M_S2 / (density_kg_m3 * drag_area_m2))
    return vt * math.tanh(G0_M_S2 * max(t_since_apogee_s, 0.0) / vt)


@dataclass(frozen=True, slots=True)
class EjectionCheck:
    """Motor delay against the coast to apogee of one stage.

    Attributes
    ----------
    stage : str
    delay_s : float or None
        The motor's ejection delay after burnout [s]; None: no delay (no motor ejection).
    burnout_time_s, apogee_time_s : float
        Since liftoff [s].
    coast_to_apogee_s : float
        apogee - burnout [s].
    deploy_offset_s : float
        Deployment time - apogee time [s] (negative: early).
    speed_at_deploy_m_s : float
        Speed of the stage when the charge fires [m/s].
    verdict : {"early", "late", "ok", "no delay"}
    recommended_delay_s : float
        Coast time rounded to whole seconds [s].
    """

    stage: str
    delay_s: float | None
    burnout_time_s: float
    apogee_time_s: float
    coast_to_apogee_s: float
    deploy_offset_s: float
    speed_at_deploy_m_s: float
    verdict: str
    recommended_delay_s: float


def ejection_check(stage: str, delay_s: float | None, *, burnout_time_s: float, apogee_time_s: float,
                   speed_before_apogee, fall_speed, tolerance_s: float = DEPLOY_TOLERANCE_S) -> EjectionCheck:
    """Compare a motor's ejection delay with the time from burnout to apogee.

    Parameters
    ----------
    stage : str
    delay_s : float or None
        Ejection delay after burnout [s]; None: nothing to check (verdict "no delay").
    burnout_time_s, apogee_time_s : float
        Since liftoff [s].
    speed_before_apogee : callable
        t [s since liftoff] -> speed [m/s], valid from burnout to apogee.
    fall_speed : callable
        tau [s after apogee] -> speed [m/s].
    tolerance_s : float
        Deployment within this of apogee is "ok" [s] (common practice, no source).

    Returns
    -------
    EjectionCheck
    """
    coast = apogee_time_s - burnout_time_s
    rec = float(max(round(coast), 0))
    if delay_s is None:
        return EjectionCheck(stage, None, burnout_time_s, apogee_time_s, coast, math.nan, math.nan, "no delay", rec)
    t_dep = burnout_time_s + delay_s
    off = t_dep - apogee_time_s
    speed = float(speed_before_apogee(t_dep)) if off < 0 else float(fall_speed(off))
    verdict = "early" if off < -tolerance_s else "late" if off > tolerance_s else "ok"
    return EjectionCheck(stage, float(delay_s), burnout_time_s, apogee_time_s, coast, off, speed, verdict, rec)
