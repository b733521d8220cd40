"""Pydantic models mirroring the TOML problem file, key for key.

Values are kept as written (a number, taken as SI, or a string with a unit);
`sizing.problem.load` converts them to SI and builds the frozen model.
Every table forbids unknown keys, so a misspelt key is an error.
"""

from __future__ import annotations

from typing import Any, Literal, Union

from pydantic import BaseModel, ConfigDict, Field, StrictFloat, StrictInt, StrictStr

__all__ = ["MissionTable", "StageTable", "SolverTable", "LaunchTable", "ProblemFile", "Quantity",
           "StructureTable", "PropellantEntryTable", "MaterialEntryTable"]

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
    max_acceleration: Quantity | None = None  # m/s^2, path limit (flight targets) and review limit
    orbit_apogee: Quantity | None = None  # m, apogee altitude of an elliptical orbit (orbit_altitude = perigee)
    insertion: Literal["coast", "kick_stage", "direct"] | None = None
    max_dynamic_pressure: Quantity | None = None  # Pa, path limit
    max_pitch_rate: Quantity | None = None  # deg/s, path limit of the steering programme
    min_transfer_perigee: Quantity | None = None  # m, lowest perigee of a coasting transfer orbit
    transfer: Literal["lightest", "short_coast", "low_transfer"] | None = None  # starting designs tried
    notes: str | None = None


class StructureTable(_Strict):
    """[stage.structure]: the stage mass model (structural mass from propellant mass and thrust)."""

    kind: Literal["liquid", "solid", "hybrid", "hobby"] | None = None  # default: the propellant's kind
    ullage: Quantity | None = None  # - , tank volume above the propellant
    dome_aspect: Quantity | None = None  # - , head depth / radius
    tank: Literal["per_volume", "pressure_vessel"] | None = None
    fuel_tank_mass_per_volume: Quantity | None = None  # kg/m^3
    oxidiser_tank_mass_per_volume: Quantity | None = None  # kg/m^3
    tank_pressure: Quantity | None = None  # Pa, MEOP of liquid tanks
    material: StrictStr | None = None  # name in the material table
    safety_factor: Quantity | None = None  # - , burst / MEOP
    min_wall_thickness: Quantity | None = None  # m
    fuel_insulation: Quantity | None = None  # kg/m^2
    oxidiser_insulation: Quantity | None = None  # kg/m^2
    engine_thrust_to_weight: Quantity | None = None  # - , per engine
    interstage_length: Quantity | None = None  # m
    extra_length: Quantity | None = None  # m
    loading_fraction: Quantity | None = None  # - , solid grain / case volume
    tube_mass_per_length: Quantity | None = None  # kg/m
    avionics: bool | None = None  # use the avionics and wiring MERs
    fixed: dict[str, Quantity] | None = None  # item -> kg


class PropellantEntryTable(_Strict):
    """[propellant_table.NAME]: a propellant added to (or replacing) the shipped table."""

    like: StrictStr | None = None  # start from this shipped entry
    kind: Literal["liquid", "solid", "hybrid"] | None = None
    description: str | None = None
    fuel: str | None = None
    oxidiser: str | None = None
    fuel_density: Quantity | None = None  # kg/m^3
    oxidiser_density: Quantity | None = None  # kg/m^3
    fuel_temperature: Quantity | None = None  # K
    oxidiser_temperature: Quantity | None = None  # K
    mixture_ratio: Quantity | None = None  # - , oxidiser / fuel
    chamber_pressure: Quantity | None = None  # Pa
    expansion_ratio: Quantity | None = None  # -
    isp_vac: Quantity | None = None  # s
    isp_sea_level: Quantity | None = None  # s
    characteristic_velocity: Quantity | None = None  # m/s
    gamma: Quantity | None = None  # -
    source: str | None = None


class MaterialEntryTable(_Strict):
    """[material_table.NAME]: a structural material added to (or replacing) the shipped table."""

    description: str | None = None
    density: Quantity  # kg/m^3
    yield_strength: Quantity  # Pa
    ultimate_strength: Quantity  # Pa
    source: str | None = None


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
    # stage model (propellant table, tanks, engines, structure)
    propellant: StrictStr | None = None  # name in the propellant table
    engine_count: StrictInt | None = None
    chamber_pressure: Quantity | None = None  # Pa
    expansion_ratio: Quantity | None = None  # -
    min_thrust_to_weight: Quantity | None = None  # - , T/W as a design variable
    max_thrust_to_weight: Quantity | None = None  # -
    gravity_loss_factor: Quantity | None = None  # - , mean sine of the flight-path angle in the burn
    structure: StructureTable | None = None


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


class SteeringTable(_Strict):
    """[steering]: how the ascent is steered; a design file carries the optimised programme."""

    nodes_per_stage: StrictInt | None = Field(default=None, ge=2, le=20)
    kick_duration: Quantity | None = None  # s
    pitch_kick: Quantity | None = None  # deg (design files; [launch] pitch_kick is the same)
    vertical_rise_time: Quantity | None = None  # s
    pitch_table: list[list[Quantity]] | None = None  # [[time s, pitch deg], ...] from liftoff
    steer_from_stage: StrictStr | None = None
    hold_inclination: Quantity | None = None  # deg
    ascending: bool | None = None
    yaw_bias: Quantity | None = None  # deg
    insertion_coast: Quantity | None = None  # s
    insertion_pitch: Quantity | None = None  # deg
    insertion_propellant: Quantity | None = None  # kg, restart burn of the last stage (absent: kick stage)


class ProblemFile(_Strict):
    """The whole problem file."""

    mission: MissionTable
    stage: list[StageTable] = Field(min_length=1)
    solver: SolverTable = SolverTable()
    launch: LaunchTable | None = None
    steering: SteeringTable | None = None
    propellant_table: dict[str, PropellantEntryTable] | None = None
    material_table: dict[str, MaterialEntryTable] | None = None
    dispersions: dict[str, Any] | None = None  # validated by sizing.problem.dispersions
