"""Steering programme of an ascent (what the flight flies; the optimiser in `sizing.optimize.ascent` sets it)."""

from __future__ import annotations

import math
from dataclasses import dataclass

from sizing.errors import FieldError

__all__ = ["AscentProfile", "InsertionBurn", "STEERING_LAWS"]

#: Upper-stage steering laws of `AscentProfile.steering`.
STEERING_LAWS = ("linear_tangent", "pitch_rate", "gravity_turn", "table")


@dataclass(frozen=True, slots=True)
class InsertionBurn:
    """Coast and insertion (circularisation) burn by the last stage, at the end of an ascent.

    Parameters
    ----------
    coast_s : float
        Coast from the previous cut-off to ignition of the insertion burn [s], >= 0.
    pitch_deg : float
        Fixed pitch of the insertion burn above the local horizontal [deg], in
        the ascent's steering plane.
    propellant_kg : float, optional
        Propellant of the insertion burn [kg]: the last stage burns the rest
        first, cuts off, coasts and restarts. None: the whole last stage (a
        kick stage) is the insertion burn, and `coast_s` replaces its
        `coast_before_ignition_s`.
    """

    coast_s: float
    pitch_deg: float = 0.0
    propellant_kg: float | None = None

    def __post_init__(self) -> None:
        if not (math.isfinite(self.coast_s) and self.coast_s >= 0):
            raise FieldError("insertion.coast_s", "must be >= 0.", self.coast_s)
        if not -89 < self.pitch_deg < 89:
            raise FieldError("insertion.pitch_deg", "must be in (-89, 89).", self.pitch_deg)
        if self.propellant_kg is not None and not (math.isfinite(self.propellant_kg) and self.propellant_kg > 0):
            raise FieldError("insertion.propellant_kg", "must be > 0.", self.propellant_kg)


@dataclass(frozen=True, slots=True)
class AscentProfile:
    """Steering programme of an ascent: vertical rise, pitch kick, zero-lift turn, then a pitch law.

    Parameters
    ----------
    vertical_rise_s : float
        Time from liftoff with thrust along the local vertical [s], >= 0.
    pitch_kick_deg : float
        Tilt of the thrust from the local vertical towards the launch azimuth
        during the kick [deg], in [0, 90).
    kick_duration_s : float
        Duration of the kick [s], > 0. After it the thrust follows the
        air-relative velocity (zero-lift gravity turn) until the steering law
        takes over.
    steering : str
        Law from ignition of `steer_from_stage` to final burnout:
        ``"linear_tangent"`` (tan of pitch above the local horizontal linear in
        time; Bryson & Ho, Applied Optimal Control, 1975, Sec. 2.7),
        ``"pitch_rate"`` (pitch linear in time), ``"table"`` (pitch
        interpolated linearly in `pitch_table`) or ``"gravity_turn"`` (zero
        lift all the way).
    steer_from_stage : str, optional
        Name of the first steered stage; default the second stage (the only
        stage of a single-stage vehicle, after the kick).
    final_pitch_deg : float
        Pitch above the local horizontal at final burnout [deg] (linear
        tangent, pitch rate).
    initial_pitch_deg : float, optional
        Pitch at steering start [deg]; default the inertial flight-path angle
        there (no jump in thrust direction).
    pitch_table : tuple of (time [s], pitch [deg]) pairs, optional
        The programme of ``steering="table"``: times since liftoff, strictly
        increasing, pitch above the local horizontal in (-90, 90).
    plane_azimuth_deg : float, optional
        Inertial azimuth at the site of a fixed target plane [deg]; the pitch
        law thrusts in that inertial plane.
    hold_inclination_deg : float, optional
        Steer in the plane of an orbit of this inclination through the current
        point (see `sizing.physics.flight.steering`), northbound when
        `ascending`, turned by `yaw_bias_deg`. Overrides `plane_azimuth_deg`.
    ascending : bool
        Northbound (True) or southbound pass, for `hold_inclination_deg`.
    yaw_bias_deg : float
        Added to the inclination-hold azimuth [deg].
    insertion : InsertionBurn, optional
        Coast and insertion burn of the last stage after the ascent burn.
    """

    vertical_rise_s: float = 10.0
    pitch_kick_deg: float = 2.0
    kick_duration_s: float = 10.0
    steering: str = "linear_tangent"
    steer_from_stage: str | None = None
    final_pitch_deg: float = 0.0
    initial_pitch_deg: float | None = None
    pitch_table: tuple[tuple[float, float], ...] | None = None
    plane_azimuth_deg: float | None = None
    hold_inclination_deg: float | None = None
    ascending: bool = True
    yaw_bias_deg: float = 0.0
    insertion: InsertionBurn | None = None

    def __post_init__(self) -> None:
        if self.steering not in STEERING_LAWS:
            raise FieldError("profile.steering", f"must be one of {', '.join(map(repr, STEERING_LAWS))}.",
                             self.steering)
        if not self.vertical_rise_s >= 0:
            raise FieldError("profile.vertical_rise_s", "must be >= 0.", self.vertical_rise_s)
        if not self.kick_duration_s > 0:
            raise FieldError("profile.kick_duration_s", "must be > 0.", self.kick_duration_s)
        if not 0 <= self.pitch_kick_deg < 90:
            raise FieldError("profile.pitch_kick_deg", "must be in [0, 90).", self.pitch_kick_deg)
        if self.initial_pitch_deg is not None and not -89 < self.initial_pitch_deg < 89:
            raise FieldError("profile.initial_pitch_deg", "must be in (-89, 89).", self.initial_pitch_deg)
        if not -89 < self.final_pitch_deg < 89:
            raise FieldError("profile.final_pitch_deg", "must be in (-89, 89).", self.final_pitch_deg)
        if self.steering == "table":
            table = self.pitch_table
            if not table or len(table) < 2:
                raise FieldError("profile.pitch_table", "needs >= 2 (time_s, pitch_deg) rows for steering 'table'.",
                                 table)
            try:
                rows = tuple((float(t), float(p)) for t, p in table)
            except (TypeError, ValueError):
                raise FieldError("profile.pitch_table", "must hold (time_s, pitch_deg) pairs of numbers.",
                                 table) from None
            if not all(math.isfinite(t) and math.isfinite(p) for t, p in rows):
                raise FieldError("profile.pitch_table", "must hold finite numbers.", table)
            if any(b[0] <= a[0] for a, b in zip(rows, rows[1:])):
                raise FieldError("profile.pitch_table", "times must be strictly increasing.", table)
            if any(not -90 < p < 90 for _, p in rows):
                raise FieldError("profile.pitch_table", "pitch must be in (-90, 90) deg.", table)
            object.__setattr__(self, "pitch_table", rows)
        if self.hold_inclination_deg is not None and not 0 <= self.hold_inclination_deg <= 180:
            raise FieldError("profile.hold_inclination_deg", "must be in [0, 180].", self.hold_inclination_deg)
