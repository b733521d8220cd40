"""Pydantic models mirroring the TOML problem file, key for key.

Values are kept as written (a number, taken as SI, or a string with a unit);
`sizing.problem.load` converts them to SI and builds the frozen model.
Every table forbids unknown keys, so a misspelt key is an error.
"""

from __future__ import annotations

from typing import Literal, Union

from pydantic import BaseModel, ConfigDict, Field, StrictFloat, StrictInt, StrictStr

__all__ = ["MissionTable", "StageTable", "SolverTable", "LaunchTable", "ProblemFile", "Quantity"]

#: A plain number (SI) or a string with its unit, e.g. "11000 lb".
Quantity = Union[StrictFloat, StrictInt, StrictStr]


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


class MissionTable(_Strict):
    """[mission]: what the vehicle must do. Give two of payload, target and gross mass."""

    name: str | None = None
    payload_mass: Quantity | None = None  # kg
    delta_v: Quantity | None = None  # m/s, ideal (loss-free)
    gross_mass: Quantity | None = None  # kg, for maximum payload / maximum delta-v
    apogee: Quantity | None = None  # m above the launch site (flight issue)
    orbit_altitude: Quantity | None = None  # m, circular orbit (flight issue)
    inclination: Quantity | None = None  # deg
    solve_for: Literal["gross_mass", "payload_mass", "delta_v"] | None = None
    max_gross_mass: Quantity | None = None  # kg, cap
    standard_gravity: Quantity | None = None  # m/s^2, g0 used to turn Isp into exhaust velocity
    target_tolerance: Quantity | None = None  # m: apogee error, or error of the far apsis altitude for orbits
    max_acceleration: Quantity | None = None  # m/s^2, review limit
    notes: str | None = None


class StageTable(_Strict):
    """[[stage]]: one stage, bottom (first to burn) first."""

    name: str | None = None
    isp: Quantity | None = None  # s (vacuum)
    exhaust_velocity: Quantity | None = None  # m/s (vacuum)
    structural_coefficient: Quantity | None = None  # - , m_s / (m_s + m_p)
    min_mass_ratio: Quantity | None = None
    max_mass_ratio: Quantity | None = None
    min_delta_v_share: Quantity | None = None  # fraction of total ideal delta-v
    max_delta_v_share: Quantity | None = None
    max_ignition_mass: Quantity | None = None  # kg
    # flight properties (used by apogee / orbit targets and `sizing fly`)
    isp_sea_level: Quantity | None = None  # s
    thrust_to_weight: Quantity | None = None  # - at ignition
    thrust: Quantity | None = None  # N (vacuum); alternative to thrust_to_weight
    diameter: Quantity | None = None  # m
    nozzle_exit_area: Quantity | None = None  # m^2
    drag_mach: list[Quantity] | None = None  # -
    drag_cd: list[Quantity] | None = None  # -
    coast_before_ignition: Quantity | None = None  # s
    # masses of a design under review (`sizing fly`)
    propellant_mass: Quantity | None = None  # kg
    structural_mass: Quantity | None = None  # kg
    cost_per_dry_kg: Quantity | None = None  # currency per kg, for studies
    cost_fixed: Quantity | None = None  # currency per stage, for studies


class SolverTable(_Strict):
    """[solver]: how to solve."""

    method: Literal["auto", "lagrange", "cvxpy", "slsqp"] = "auto"
    max_iterations: int | None = Field(default=None, gt=0)
    tolerance: float | None = Field(default=None, gt=0)


class LaunchTable(_Strict):
    """[launch]: the launch site and ascent profile (flight issue)."""

    altitude: Quantity | None = None  # m
    latitude: Quantity | None = None  # deg
    azimuth: Quantity | None = None  # deg
    rail_length: Quantity | None = None  # m
    rail_angle: Quantity | None = None  # deg from vertical
    profile: Literal["vertical", "gravity_turn"] | None = None
    pitch_kick: Quantity | None = None  # deg
    vertical_rise_time: Quantity | None = None  # s
    staging_delay: Quantity | None = None  # s
    payload_diameter: Quantity | None = None  # m


class ProblemFile(_Strict):
    """The whole problem file."""

    mission: MissionTable
    stage: list[StageTable] = Field(min_length=1)
    solver: SolverTable = SolverTable()
    launch: LaunchTable | None = None
