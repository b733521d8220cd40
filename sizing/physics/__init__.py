"""Pure physics: rocket equation, staging, atmosphere, gravity, vehicle and flight.

Names are loaded on first use, so that importing the rocket equation or the
staging formulas does not load the compiled flight layer (numba).
"""

from __future__ import annotations

import importlib

_WHERE = {
    "AtmosphereState": "atmosphere", "atmosphere": "atmosphere",
    "OrbitElements": "gravity", "circular_speed_m_s": "gravity", "launch_azimuth_deg": "gravity",
    "orbit_elements": "gravity",
    "AscentProfile": "flight", "FlightResult": "flight", "fly_ascent": "flight", "fly_vertical": "flight",
    "DragCurve": "vehicle", "FlightStage": "vehicle", "FlightStageSpec": "vehicle", "LaunchSite": "vehicle",
    "Vehicle": "vehicle", "build_vehicle": "vehicle",
}

__all__ = list(_WHERE)


def __getattr__(name: str):
    if name in _WHERE:
        return getattr(importlib.import_module(f"sizing.physics.{_WHERE[name]}"), name)
    raise AttributeError(f"module 'sizing.physics' has no attribute {name!r}")
