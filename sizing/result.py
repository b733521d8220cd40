"""Result objects returned by `solve`: the same fields whatever the method."""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field
from enum import StrEnum
from typing import Any, Mapping

__all__ = ["Status", "StageResult", "ConstraintReport", "SizingResult", "CAUTION", "finite_json"]

#: Printed with every report and table export.
CAUTION = (
    "Preliminary estimates only, not flight clearance. Follow local law, the applicable "
    "safety code, range and aviation rules, and licensed engineering practice."
)


class Status(StrEnum):
    OPTIMAL = "optimal"
    INFEASIBLE = "infeasible"
    MAX_ITERATIONS = "max_iterations"
    SOLVER_ERROR = "solver_error"


@dataclass(frozen=True, slots=True)
class StageResult:
    """One stage of the sized stack (bottom stage first in `SizingResult.stages`).

    Attributes
    ----------
    ignition_mass_kg : float
        Mass of this stage plus everything above it at its ignition [kg].
    stage_mass_kg : float
        Structural plus propellant mass of this stage alone [kg].
    mass_ratio : float
        Ignition mass / burnout mass of this stage's sub-rocket [-].
    payload_ratio : float
        Mass above this stage / ignition mass [-].
    delta_v_share : float
        This stage's share of the total ideal delta-v [-].
    """

    name: str
    isp_s: float
    exhaust_velocity_m_s: float
    structural_coefficient: float
    ignition_mass_kg: float
    stage_mass_kg: float
    propellant_mass_kg: float
    structural_mass_kg: float
    burnout_mass_kg: float
    mass_ratio: float
    payload_ratio: float
    delta_v_m_s: float
    delta_v_share: float
    contributes: bool = True
    # stage model (present when the stage names a propellant; see sizing.physics.stage_model)
    propellant: str | None = None
    fuel_mass_kg: float | None = None
    oxidiser_mass_kg: float | None = None
    fuel_volume_m3: float | None = None
    oxidiser_volume_m3: float | None = None
    fuel_tank_length_m: float | None = None
    oxidiser_tank_length_m: float | None = None
    stage_length_m: float | None = None
    diameter_m: float | None = None
    length_to_diameter: float | None = None
    engine_count: int | None = None
    engine_mass_kg: float | None = None
    thrust_vac_n: float | None = None
    thrust_to_weight: float | None = None
    burn_time_s: float | None = None
    gravity_loss_m_s: float | None = None
    mass_breakdown_kg: Mapping[str, float] | None = None


@dataclass(frozen=True, slots=True)
class ConstraintReport:
    """A design limit, its value at the optimum and what it costs.

    `sensitivity` is d(objective quantity)/d(limit), from the dual value of
    the convex program, in `sensitivity_unit` (e.g. "kg gross mass per -" for
    a mass-ratio limit when minimising gross mass). It is zero for a limit
    that does not bind.
    """

    name: str
    limit: float
    value: float
    unit: str
    binding: bool
    sensitivity: float
    sensitivity_unit: str


@dataclass(frozen=True, slots=True)
class SizingResult:
    """Outcome of `solve`. Read `success` and `message` first.

    Trade factors (`trade_factors`) are changes in gross mass at fixed payload
    and ideal delta-v, evaluated at the optimum: keys are
    ``gross_mass_per_payload_kg`` [kg/kg], ``gross_mass_per_delta_v_kg_per_m_s``
    and per stage ``stages[name]`` with ``per_structural_kg`` [kg/kg],
    ``per_isp_s`` [kg/s] and ``per_0_01_structural_coefficient`` [kg].
    """

    status: Status
    success: bool
    message: str
    problem_name: str
    solve_for: str
    method: str
    n_iterations: int
    gross_mass_kg: float
    payload_mass_kg: float
    delta_v_m_s: float
    stages: tuple[StageResult, ...]
    trade_factors: Mapping[str, Any] = field(default_factory=dict)
    constraints: tuple[ConstraintReport, ...] = ()
    violations: Mapping[str, float] = field(default_factory=dict)
    warnings: tuple[str, ...] = ()
    best: Mapping[str, float] = field(default_factory=dict)
    flight: Mapping[str, Any] | None = None

    @property
    def payload_fraction(self) -> float:
        """Payload mass / gross mass [-]."""
        if not (self.gross_mass_kg > 0):
            return math.nan
        return self.payload_mass_kg / self.gross_mass_kg

    def stage(self, name: str) -> StageResult:
        """The stage called `name`."""
        for s in self.stages:
            if s.name == name:
                return s
        raise KeyError(f"no stage named {name!r}; stages are {[s.name for s in self.stages]}")

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready dictionary with SI-suffixed keys (bottom stage first)."""
        out: dict[str, Any] = {
            "problem": self.problem_name,
            "status": str(self.status),
            "success": self.success,
            "message": self.message,
            "solve_for": self.solve_for,
            "method": self.method,
            "n_iterations": self.n_iterations,
            "gross_mass_kg": self.gross_mass_kg,
            "payload_mass_kg": self.payload_mass_kg,
            "delta_v_m_s": self.delta_v_m_s,
            "payload_fraction": self.payload_fraction,
            "stages": [asdict(s) for s in self.stages],
            "trade_factors": _plain(self.trade_factors),
            "constraints": [asdict(c) for c in self.constraints],
            "violations": dict(self.violations),
            "warnings": list(self.warnings),
            "caution": CAUTION,
        }
        if self.best:
            out["best"] = dict(self.best)
        if self.flight is not None:
            out.update(_plain(self.flight))
        return finite_json(out)

    def to_frame(self):
        """One row per stage, columns named by their unit-suffixed field names."""
        import pandas as pd

        rows = []
        for s in self.stages:
            row = asdict(s)
            items = row.pop("mass_breakdown_kg", None) or {}
            row.update({f"{k}_mass_kg": v for k, v in items.items()})  # flat: one column per mass item
            rows.append(row)
        frame = pd.DataFrame(rows)
        if not frame.empty:
            frame = frame.set_index("name")
        return frame


def _plain(obj: Any) -> Any:
    if isinstance(obj, Mapping):
        return {str(k): _plain(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_plain(v) for v in obj]
    if hasattr(obj, "item") and callable(obj.item):
        try:
            return obj.item()
        except (ValueError, TypeError):
            return obj.tolist()
    return obj


def finite_json(obj: Any) -> Any:
    """Replace NaN/inf with None (recursively) so the JSON is standard."""
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    if isinstance(obj, dict):
        return {k: finite_json(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [finite_json(v) for v in obj]
    return obj
