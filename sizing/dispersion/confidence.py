"""Sizing to a confidence: the design that meets its target with a required probability.

`sizing solve` calls `solve_with_dispersions` for a flight-target problem with
a ``[dispersions]`` table. Without ``probability`` it sizes as usual and
carries the table into the design file. With it, it sizes in rounds:

1. size the nominal design (`sizing.optimize.api.solve`) for the current
   sizing target;
2. fly the Monte Carlo samples of that design (the same seed every round:
   common random numbers, so the rounds differ by the design only);
3. take the (probability, confidence) order-statistics bound U of the
   deficit against the requirement (`sizing.dispersion.statistics`;
   Hanson & Beard 2012); U <= 0 means the requirement is demonstrated;
4. apogee: raise the sizing apogee by U (the reserve is performance: a
   taller apogee). Orbit: carry a propellant reserve above the last stage,
   unburnt in the nominal flight, grown to give U more delta-v,
   m_res' = (m_f - m_res) (exp(dv' / c) - 1) (rocket equation at final
   burnout), sized as part of the mass the stages lift;

until -tolerance <= U <= 0. This is a practical fixed-point method, chosen
because the reserve barely changes with the design: two to four rounds. Each
round re-sizes with the integrated sizing, so the final design is optimal for
its sizing target, and the reported probability is that of the final design's
own samples.
"""

from __future__ import annotations

import copy
import math
from dataclasses import replace
from typing import Any

import numpy as np

from ..errors import ProblemDefinitionError
from ..result import SizingResult
from . import statistics as S

__all__ = ["solve_with_dispersions", "MAX_ROUNDS", "MSG_CONFIDENCE_TARGET", "MSG_CONFIDENCE_PAYLOAD"]

#: Sizing rounds before giving up.
MAX_ROUNDS = 6
MSG_CONFIDENCE_TARGET = "sizing to a probability needs an apogee or orbit target"
MSG_CONFIDENCE_PAYLOAD = "sizing to a probability for an orbit sizes for minimum gross mass (give payload_mass)"
#: Why an orbit sized to a probability starts from the short coast only (unless mission.transfer says otherwise).
SHORT_COAST_WHY = ("sized from the short-coast start (mission.transfer = \"short_coast\"): the fixed steering "
                   "programme of a low-transfer, long-coast design does not survive dispersions without guidance "
                   "(a sample under 100 m/s short of the nominal ends its ascent below circular speed and coasts down "
                   "instead of up to the target); set mission.transfer to choose otherwise")


def _deficits(case, n: int) -> tuple[np.ndarray, dict[str, Any]]:
    """Deficits of n samples of the case (inf where the flight failed) and the nominal figures."""
    from .flights import fly_nominal, fly_samples

    outs = fly_samples([{"case_id": i} for i in range(n)], case)
    d = np.array([-o["metrics"]["target_margin"] if o["status"] == "ok" else math.inf for o in outs])
    return np.where(np.isnan(d), math.inf, d), fly_nominal(case)


def _with(problem, *, apogee_m: float | None = None, payload_kg: float | None = None):
    """The problem re-read with a sizing apogee or payload; an orbit without a `mission.transfer`
    plan is sized from the short-coast start only (`SHORT_COAST_WHY`)."""
    from ..problem.load import problem_from_dict

    raw = copy.deepcopy(dict(problem.raw))
    raw["mission"] = dict(raw["mission"])
    if apogee_m is not None:
        raw["mission"]["apogee"] = float(apogee_m)
    if payload_kg is not None:
        raw["mission"]["payload_mass"] = float(payload_kg)
    if problem.orbit_altitude_m is not None and problem.transfer is None:
        raw["mission"]["transfer"] = "short_coast"
    return problem_from_dict(raw, source=problem.source)


def _round(problem, sizing, spec, n: int, method):
    """Size `sizing` (a problem), build its case with `spec`, fly n samples: (result, case, U, deficits, nominal)."""
    from ..optimize.api import solve
    from .case import case_from_problem, sized_design

    result = solve(sizing, method=method)
    if not result.success:
        return result, None, math.nan, None, None
    design, _ = sized_design(sizing, result)
    case = case_from_problem(design, spec=spec)
    case = replace(case, target=_requirement(problem, case))
    d, nom = _deficits(case, n)
    b = S.order_statistic_bound(d, spec.probability, spec.confidence)
    return result, case, b["bound"], d, nom


def _step(rounds: list[dict[str, Any]], aim: float) -> float:
    """Change of the sizing apogee that removes the deficit bound: secant on the last two rounds
    (slope clamped to [0.2, 2]: a taller design disperses more), the bound itself in the first."""
    if len(rounds) < 2:
        return aim
    a, b = rounds[-2], rounds[-1]
    dt = b["sizing_target"] - a["sizing_target"]
    slope = -(b["bound"] - a["bound"]) / dt if dt else 1.0
    return aim / min(2.0, max(0.2, slope))


def _requirement(problem, case) -> dict[str, float]:
    if problem.apogee_m is not None:
        return {"apogee_above_site_m": problem.apogee_m}
    return dict(case.target)


def solve_with_dispersions(problem, *, method: str | None = None) -> SizingResult:
    """Size a flight-target problem with a [dispersions] table (see the module notes).

    Returns
    -------
    SizingResult
        The (final) sized design; ``flight["design"]`` carries the ``[dispersions]``
        table and its target stays the requirement; ``flight["confidence"]`` holds
        the rounds, the reserve and the probability of meeting the requirement.
    """
    from ..optimize.api import solve

    spec = problem.dispersions
    if spec.probability is None:
        return _carry_table(problem, solve(problem, method=method), None)
    if not problem.is_flight_target:
        raise ProblemDefinitionError(problem.source, [f"dispersions.probability: {MSG_CONFIDENCE_TARGET}."])
    if problem.orbit_altitude_m is not None and problem.solve_for.value != "gross_mass":
        raise ProblemDefinitionError(problem.source, [f"dispersions.probability: {MSG_CONFIDENCE_PAYLOAD}."])
    n = max(spec.samples, S.samples_needed(spec.probability, spec.confidence))
    apogee = problem.apogee_m is not None
    tol = max(10.0, 1e-3 * problem.apogee_m) if apogee else 2.0
    target = problem.apogee_m if apogee else 0.0  # apogee: sizing target; orbit: reserve propellant [kg]
    rounds: list[dict[str, Any]] = []
    result = case = d = nom = None
    for _ in range(MAX_ROUNDS):
        if apogee:
            sizing, sp = _with(problem, apogee_m=target), replace(spec, reserve_propellant_kg=0.0)
        else:
            sizing = _with(problem, payload_kg=problem.payload_mass_kg + target)
            sp = replace(spec, reserve_propellant_kg=target)
        result, case, u, d, nom = _round(problem, sizing, sp, n, method)
        if case is None:
            return result
        rounds.append({"sizing_target": target, "gross_mass_kg": result.gross_mass_kg, "bound": u,
                       "met": int(np.sum(d <= 0)), "n": n})
        if -tol <= u <= 0.0 or not math.isfinite(u):
            break
        if apogee:
            target += _step(rounds, u + 0.5 * tol)
        else:
            m_f = nom["metrics"]["final_mass_kg"]
            c = case.vehicle.stages[-1].exhaust_velocity_vac_m_s
            dv = nom["metrics"]["reserve_delta_v_m_s"] + u + 0.5 * tol
            target = max(0.0, (m_f - target) * (math.exp(dv / c) - 1.0)) if dv > 0 else 0.0
    met = int(np.sum(d <= 0))
    prob = S.probability_bounds(met, n, spec.confidence)
    info = {
        "probability_required": spec.probability, "confidence": spec.confidence, "samples": n, "seed": spec.seed,
        "rounds": rounds, "probability_of_meeting": prob, "met": met,
        "demonstrated": bool(prob["lower"] >= spec.probability),
        "deficit_bound": rounds[-1]["bound"], "deficit_unit": "m" if apogee else "m/s",
        "method": "order statistics (Hanson & Beard 2012) on Monte Carlo flights; fixed-point rounds",
    }
    if apogee:
        info.update(reserve_m=target - problem.apogee_m, sizing_apogee_m=target)
        what = (f"sized to {target:,.0f} m, a reserve of {target - problem.apogee_m:,.0f} m over the "
                f"{problem.apogee_m:,.0f} m requirement")
    else:
        info.update(reserve_propellant_kg=target)
        what = (f"sized with a propellant reserve of {target:,.4g} kg carried above stage "
                f"{case.vehicle.stages[-1].name!r} (the payload figure includes it)")
    if problem.orbit_altitude_m is not None and problem.transfer is None:
        what += "; " + SHORT_COAST_WHY
    verdict = "meets" if info["demonstrated"] else "does NOT demonstrate"
    msg = (f"{result.message}; {what}: {verdict} probability {spec.probability:g} at {spec.confidence:.0%} "
           f"confidence ({met:,} of {n:,} dispersed flights meet it, lower bound {prob['lower']:.4f}) after "
           f"{len(rounds)} rounds")
    result = _carry_table(problem, result, None if apogee else target)
    flight = dict(result.flight)
    flight["confidence"] = info
    design = dict(flight.get("design") or {})
    if apogee and design:
        design["target"] = dict(design["target"], apogee_above_site_m=problem.apogee_m)
        flight["design"] = design
    return replace(result, message=msg, flight=flight)


def _carry_table(problem, result: SizingResult, reserve_kg: float | None) -> SizingResult:
    """The result with the [dispersions] table (and a carried reserve) in its design record."""
    if not result.flight or not result.flight.get("design"):
        return result
    raw = dict(problem.raw.get("dispersions") or {})
    if reserve_kg is not None:
        raw["reserve_propellant"] = float(reserve_kg)
    flight = dict(result.flight)
    flight["design"] = dict(flight["design"], dispersions=raw)
    return replace(result, flight=flight)
