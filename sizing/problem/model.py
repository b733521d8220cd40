"""Frozen problem objects, all in SI units, as `solve` receives them."""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import StrEnum
from typing import Any, Mapping

__all__ = ["SolveFor", "StageDef", "LaunchDef", "SteeringDef", "Problem"]


class SolveFor(StrEnum):
    """Which quantity the optimizer finds; the other two are given."""

    GROSS_MASS = "gross_mass"  # minimum gross mass for payload and delta-v
    PAYLOAD_MASS = "payload_mass"  # maximum payload for gross mass and delta-v
    DELTA_V = "delta_v"  # maximum delta-v for gross and payload mass


@dataclass(frozen=True, slots=True)
class StageDef:
    """One candidate stage, bottom stage first in `Problem.stages`."""

    name: str
    exhaust_velocity_m_s: float
    isp_s: float
    structural_coefficient: float
    min_mass_ratio: float | None = None
    max_mass_ratio: float | None = None
    min_delta_v_share: float | None = None
    max_delta_v_share: float | None = None
    max_ignition_mass_kg: float | None = None
    isp_sea_level_s: float | None = None
    thrust_to_weight: float | None = None
    thrust_n: float | None = None
    diameter_m: float | None = None
    nozzle_exit_area_m2: float | None = None
    drag_mach: tuple[float, ...] | None = None
    drag_cd: tuple[float, ...] | None = None
    coast_before_ignition_s: float | None = None
    propellant_mass_kg: float | None = None
    structural_mass_kg: float | None = None
    cost_per_dry_kg: float | None = None
    cost_fixed: float | None = None
    # stage model (sizing.physics.propellants / stage_model); None for a fixed structural coefficient
    propellant: Any = None  # sizing.physics.propellants.Propellant
    mass_model: Any = None  # sizing.physics.stage_model.StageMassModel
    engine_count: int | None = None
    chamber_pressure_pa: float | None = None
    expansion_ratio: float | None = None
    min_thrust_to_weight: float | None = None
    max_thrust_to_weight: float | None = None
    gravity_loss_factor: float | None = None

    @property
    def has_mass_model(self) -> bool:
        """True when the structural mass comes from the stage model (structural coefficient is an output)."""
        return self.mass_model is not None

    @property
    def has_constraints(self) -> bool:
        """True when any per-stage limit is set (the constrained solver is needed)."""
        return any(
            v is not None
            for v in (
                self.min_mass_ratio,
                self.max_mass_ratio,
                self.min_delta_v_share,
                self.max_delta_v_share,
                self.max_ignition_mass_kg,
            )
        )


@dataclass(frozen=True, slots=True)
class LaunchDef:
    """Launch site and ascent profile, SI (angles in degrees)."""

    altitude_m: float = 0.0
    latitude_deg: float = 0.0
    azimuth_deg: float | None = None
    rail_length_m: float = 0.0
    rail_angle_deg: float = 0.0
    profile: str | None = None
    pitch_kick_deg: float | None = None
    vertical_rise_time_s: float | None = None
    staging_delay_s: float = 0.0
    payload_diameter_m: float | None = None


@dataclass(frozen=True, slots=True)
class SteeringDef:
    """The [steering] table, SI (angles in degrees). A design file gives the whole programme."""

    nodes_per_stage: int | None = None
    kick_duration_s: float | None = None
    pitch_kick_deg: float | None = None
    vertical_rise_time_s: float | None = None
    pitch_table: tuple[tuple[float, float], ...] | None = None  # (time [s], pitch [deg])
    steer_from_stage: str | None = None
    hold_inclination_deg: float | None = None
    ascending: bool | None = None
    yaw_bias_deg: float | None = None
    insertion_coast_s: float | None = None
    insertion_pitch_deg: float | None = None
    insertion_propellant_kg: float | None = None

    @property
    def is_programme(self) -> bool:
        """True when the file gives a steering programme to fly (a design file)."""
        return self.pitch_table is not None


@dataclass(frozen=True, slots=True)
class Problem:
    """A validated sizing problem in SI units. Build it with `load_problem`.

    Attributes
    ----------
    solve_for : SolveFor
        What is found; the other quantities are given.
    payload_mass_kg, delta_v_m_s, gross_mass_kg : float or None
        Given quantities [kg, m/s, kg]; the one solved for is None.
    apogee_m, orbit_altitude_m : float or None
        Flight targets replacing `delta_v_m_s` [m]: apogee above the launch
        site; orbit (perigee) altitude above the equatorial radius.
    orbit_apogee_m : float or None
        Apogee altitude of an elliptical orbit target [m].
    insertion : str or None
        ``"coast"``, ``"kick_stage"`` or ``"direct"`` (orbit targets).
    max_dynamic_pressure_pa, max_pitch_rate_deg_s, max_acceleration_m_s2 : float or None
        Path limits of flight targets [Pa, deg/s, m/s^2].
    min_transfer_perigee_m : float or None
        Lowest perigee altitude of the transfer orbit an orbit ascent coasts in [m]
        (None: `sizing.optimize.orbit_sizing.MIN_TRANSFER_PERIGEE_M`).
    transfer : str or None
        Starting designs of a coasting orbit insertion: ``"lightest"`` (None),
        ``"short_coast"`` or ``"low_transfer"`` (`sizing.optimize.orbit_sizing.OrbitGoal`).
    steering : SteeringDef
    raw : Mapping
        The structure the problem was validated from (as read from TOML); the
        study layer copies it to make variants. Treat it as read-only.
    """

    name: str
    source: str
    solve_for: SolveFor
    stages: tuple[StageDef, ...]
    payload_mass_kg: float | None = None
    delta_v_m_s: float | None = None
    gross_mass_kg: float | None = None
    apogee_m: float | None = None
    orbit_altitude_m: float | None = None
    inclination_deg: float | None = None
    max_gross_mass_kg: float | None = None
    max_acceleration_m_s2: float | None = None
    target_tolerance_m: float | None = None
    orbit_apogee_m: float | None = None
    insertion: str | None = None
    max_dynamic_pressure_pa: float | None = None
    max_pitch_rate_deg_s: float | None = None
    min_transfer_perigee_m: float | None = None
    transfer: str | None = None
    steering: SteeringDef = field(default_factory=SteeringDef)
    g0_m_s2: float = 9.80665
    method: str = "auto"
    max_iterations: int | None = None
    tolerance: float | None = None
    launch: LaunchDef = field(default_factory=LaunchDef)
    design_masses_given: bool = False
    dispersions: Any = None  # sizing.problem.dispersions.DispersionSpec or None
    raw: Mapping[str, Any] = field(default_factory=dict, compare=False, repr=False)

    @property
    def has_constraints(self) -> bool:
        """True when a cap or per-stage limit is set."""
        return self.max_gross_mass_kg is not None or any(s.has_constraints for s in self.stages)

    @property
    def has_stage_models(self) -> bool:
        """True when any stage has a propellant or a mass model (sized by the stage-model NLP)."""
        return any(s.mass_model is not None or s.propellant is not None for s in self.stages)

    @property
    def is_flight_target(self) -> bool:
        """True when the target is an apogee or an orbit (needs trajectory simulation)."""
        return self.apogee_m is not None or self.orbit_altitude_m is not None

    @property
    def stage_names(self) -> tuple[str, ...]:
        return tuple(s.name for s in self.stages)
