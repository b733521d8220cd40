"""Pure physics: rocket equation, staging, atmosphere, gravity, vehicle and trajectory."""

from sizing.physics.atmosphere import AtmosphereState, atmosphere
from sizing.physics.gravity import OrbitElements, circular_speed_m_s, launch_azimuth_deg, orbit_elements
from sizing.physics.trajectory import AscentProfile, FlightResult, fly_ascent, fly_vertical
from sizing.physics.vehicle import DragCurve, FlightStage, FlightStageSpec, LaunchSite, Vehicle, build_vehicle

__all__ = [
    "AtmosphereState", "atmosphere",
    "OrbitElements", "circular_speed_m_s", "launch_azimuth_deg", "orbit_elements",
    "AscentProfile", "FlightResult", "fly_ascent", "fly_vertical",
    "DragCurve", "FlightStage", "FlightStageSpec", "LaunchSite", "Vehicle", "build_vehicle",
]
