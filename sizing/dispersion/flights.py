"""Fly sampled variants of a case in compiled batches and reduce each flight to its figures.

`fly_samples` is the case function the study engines run in their workers
(`sizing.study.engines`): it receives a chunk of sample ids, draws their input
values (`sampling.draw`, reproducible by id), builds each variant
(`DispersionCase.vary`), flies them `SUB_BATCH` at a time through
`sizing.physics.flight.fly_many` and streams one outcome per sample.

Sample statuses: ``ok`` (flown to the end: apogee, or final burnout of an
ascent), ``failed`` (the vehicle could not lift off, fell back before final
burnout or ran out of simulated time; it does not meet the target) and
``invalid`` (the sampled values make no vehicle, e.g. a negative mass; the
spread of the input is too wide; counted as not meeting the target).
"""

from __future__ import annotations

import json
import math
import time
from dataclasses import replace
from typing import Any, Callable, Sequence

import numpy as np

from ..errors import FieldError
from ..physics.flight import fly_many
from ..physics.gravity import time_to_apoapsis_s
from ..physics.recovery import descend
from .case import DispersionCase, Variant, orbit_energy_shortfall_m_s
from .sampling import draw

__all__ = ["SUB_BATCH", "fly_samples", "fly_variants", "flight_figures", "METRIC_UNITS", "METRIC_LABELS"]

#: Flights per compiled call inside a worker (results stream back after each).
SUB_BATCH = 64

#: Unit of every figure a sample can carry.
METRIC_UNITS = {
    "apogee_above_site_m": "m", "time_to_apogee_s": "s", "rail_exit_speed_m_s": "m/s",
    "apogee_east_m": "m", "apogee_north_m": "m", "max_dynamic_pressure_pa": "Pa", "max_acceleration_m_s2": "m/s^2",
    "ideal_delta_v_m_s": "m/s", "gross_mass_kg": "kg", "perigee_altitude_m": "m", "apogee_altitude_m": "m",
    "insertion_speed_m_s": "m/s", "insertion_altitude_m": "m", "inclination_deg": "deg", "eccentricity": "-",
    "delta_v_shortfall_m_s": "m/s", "reserve_delta_v_m_s": "m/s", "final_mass_kg": "kg", "landing_east_m": "m",
    "landing_north_m": "m", "landing_distance_m": "m", "descent_time_s": "s", "target_margin": "",
}
#: Words for the figures (tables and the report).
METRIC_LABELS = {
    "apogee_above_site_m": "apogee above the site", "time_to_apogee_s": "time to apogee",
    "rail_exit_speed_m_s": "rail-exit speed", "apogee_east_m": "apogee position east of the site",
    "apogee_north_m": "apogee position north of the site", "max_dynamic_pressure_pa": "max dynamic pressure (max-q)",
    "max_acceleration_m_s2": "max acceleration", "ideal_delta_v_m_s": "ideal delta-v flown",
    "gross_mass_kg": "gross mass", "perigee_altitude_m": "perigee altitude", "apogee_altitude_m": "apogee altitude",
    "insertion_speed_m_s": "insertion speed (inertial)", "insertion_altitude_m": "insertion altitude",
    "inclination_deg": "inclination", "eccentricity": "eccentricity",
    "delta_v_shortfall_m_s": "speed short of the target orbit's energy",
    "reserve_delta_v_m_s": "delta-v of the carried reserve", "final_mass_kg": "mass at final burnout",
    "landing_east_m": "landing point east of the site", "landing_north_m": "landing point north of the site",
    "landing_distance_m": "landing distance from the site", "descent_time_s": "descent time",
    "target_margin": "margin over the target",
}



def _ground_offset(case: DispersionCase, fr) -> tuple[float, float]:
    """(east, north) of the flight's end point from the site [m] (chord; vertical flights)."""
    y = np.asarray(fr.final_state[:3], dtype=float)
    if case.fly_options.get("earth", "round") == "flat":
        return float(y[0]), float(y[1])
    lat = math.radians(case.site.latitude_deg)
    from ..units import R_EARTH_EQ_M

    r = R_EARTH_EQ_M + case.site.altitude_m
    d = y - np.array([r * math.cos(lat), 0.0, r * math.sin(lat)])
    return float(d[1]), float(-math.sin(lat) * d[0] + math.cos(lat) * d[2])


def _landing(case: DispersionCase, var: Variant, fr, apex_h: float, east: float, north: float) -> dict[str, float]:
    """Landing point of the top stage under its recovery, drifting in the sampled wind (hobby cases)."""
    from ..optimize.hobby_safety import _canopies

    _, rec = case.descent
    top = var.vehicle.stages[-1]
    mass = var.vehicle.payload_mass_kg + top.structural_mass_kg
    _, legs = _canopies(mass, rec, case.site.altitude_m)
    legs = [(r, c, apex_h if math.isinf(h) else h) for r, c, h in legs]
    if rec.device == "dual" and rec.main_deploy_height_m >= apex_h:
        legs = legs[1:]
    d = descend(mass, legs, site_altitude_m=case.site.altitude_m, wind=var.descent_wind)
    e, n = east + d.drift_east_m, north + d.drift_north_m
    return {"landing_east_m": e, "landing_north_m": n, "landing_distance_m": math.hypot(e, n),
            "descent_time_s": d.time_s}


def flight_figures(case: DispersionCase, var: Variant, fr) -> tuple[str, str, dict[str, float]]:
    """(status, message, figures) of one flown sample; figures are SI, keys in `METRIC_UNITS`."""
    n_st = len(var.vehicle.stages)
    out: dict[str, float] = {
        "max_dynamic_pressure_pa": fr.max_dynamic_pressure_pa, "max_acceleration_m_s2": fr.max_acceleration_m_s2,
        "ideal_delta_v_m_s": fr.ideal_delta_v_m_s, "gross_mass_kg": var.vehicle.gross_mass_kg,
    }
    status, msg = "ok", ""
    if len(fr.burnouts) < n_st or fr.terminated_by == "time_limit":
        status, msg = "failed", f"ended at {fr.terminated_by} after {len(fr.burnouts)} of {n_st} burnouts"
    if case.profile == "vertical":
        apex = fr.apogee_m - var.site.altitude_m
        east, north = _ground_offset(case, fr)
        out.update(apogee_above_site_m=apex, time_to_apogee_s=fr.time_to_apogee_s,
                   rail_exit_speed_m_s=fr.rail_exit_speed_m_s, apogee_east_m=east, apogee_north_m=north)
        if fr.terminated_by != "apogee":
            status, msg = "failed", msg or f"ended at {fr.terminated_by} before apogee"
        if case.descent is not None and status == "ok" and apex > 0:
            out.update(_landing(case, var, fr, apex, east, north))
        if case.target_kind == "apogee":
            out["target_margin"] = apex - case.target["apogee_above_site_m"]
    else:
        o = fr.orbit
        out.update(perigee_altitude_m=o.perigee_alt_m, apogee_altitude_m=o.apogee_alt_m,
                   insertion_speed_m_s=o.speed_m_s, insertion_altitude_m=o.altitude_m,
                   inclination_deg=o.inclination_deg, eccentricity=o.eccentricity,
                   final_mass_kg=float(fr.final_state[6]))
        if case.target_kind == "orbit":
            from ..units import R_EARTH_EQ_M

            t = case.target
            short = orbit_energy_shortfall_m_s(R_EARTH_EQ_M + o.altitude_m, o.speed_m_s,
                                               R_EARTH_EQ_M + t["perigee_altitude_m"],
                                               R_EARTH_EQ_M + t["apogee_altitude_m"])
            m_f = float(fr.final_state[6])
            res = case.extra_top_mass_kg
            c = var.vehicle.stages[-1].exhaust_velocity_vac_m_s
            reserve_dv = c * math.log(m_f / (m_f - res)) if 0 < res < m_f else 0.0
            out.update(delta_v_shortfall_m_s=short, reserve_delta_v_m_s=reserve_dv,
                       target_margin=reserve_dv - short)
    return status, msg, {k: float(v) for k, v in out.items()}


def fly_variants(case: DispersionCase, variants: Sequence[Variant]) -> list:
    """Flight results of the variants (one compiled call; one by one if a vehicle cannot lift off).

    An entry is a FlightResult or the FieldError that refused its vehicle. An
    ascent with an insertion coast is flown twice: the second time each sample
    ignites its insertion burn at its own apoapsis (`_apsis_timed`).
    """
    if not variants:
        return []
    profiles = [case.ascent] * len(variants) if case.ascent is not None else None
    flown = _fly_batch(case, variants, profiles)
    if case.ascent is None or case.ascent.insertion is None:
        return flown
    return _apsis_timed(case, variants, flown)


def _fly_batch(case: DispersionCase, variants: Sequence[Variant], profiles) -> list:
    opts = dict(case.fly_options)
    try:
        return list(fly_many([v.vehicle for v in variants], [v.site for v in variants], profiles=profiles,
                             winds=[v.wind for v in variants], **opts))
    except FieldError:
        pass
    out: list = []
    for k, v in enumerate(variants):
        try:
            out.extend(fly_many([v.vehicle], [v.site], profiles=[profiles[k]] if profiles else None,
                                winds=[v.wind], **opts))
        except FieldError as exc:
            out.append(exc)
    return out


def apsis_lead_s(case: DispersionCase) -> float | None:
    """Lead of the design's insertion ignition on the apoapsis of its nominal transfer orbit [s]
    (coast minus the two-body time from the coast start to apoapsis); None without an insertion coast
    or when the nominal flight does not reach it."""
    if case.ascent is None or case.ascent.insertion is None:
        return None
    nominal = _fly_batch(case, [Variant(case.vehicle, case.site, None, None, case.payload_mass_kg)],
                         [case.ascent])[0]
    if isinstance(nominal, FieldError) or nominal.coast_start_state is None:
        return None
    return case.ascent.insertion.coast_s - time_to_apoapsis_s(nominal.coast_start_state)


def apsis_timed_ascent(ascent, coast_start_state, lead_s: float):
    """The ascent programme with its insertion coast ending `lead_s` before the apoapsis of the transfer
    orbit through `coast_start_state` (two-body time); None when that orbit has no apoapsis."""
    t_apo = time_to_apoapsis_s(coast_start_state)
    if not math.isfinite(t_apo):
        return None
    return replace(ascent, insertion=replace(ascent.insertion, coast_s=max(0.0, t_apo + lead_s)))


def _apsis_timed(case: DispersionCase, variants: Sequence[Variant], flown: list) -> list:
    """Re-fly each sample with its insertion coast moved by its own change of time to apoapsis.

    The design's coast ends `lead` seconds from the apoapsis of its nominal
    transfer orbit (the optimiser centres the finite burn); a dispersed sample
    keeps that lead from the apoapsis of its own transfer orbit (two-body time
    from its coast-start state, `sizing.physics.gravity.time_to_apoapsis_s`).
    This is the one piece of guidance the fixed programme gets: an apsis-timed
    restart, as a vehicle with navigation flies it (common practice, no source).
    Without it a half-orbit coast turns a 1 % change of the transfer period into
    an ignition half a minute off the apsis.
    """
    lead = apsis_lead_s(case)
    if lead is None:
        return flown
    redo, profiles = [], []
    for k, fr in enumerate(flown):
        if isinstance(fr, FieldError) or fr.coast_start_state is None:
            continue
        ascent = apsis_timed_ascent(case.ascent, fr.coast_start_state, lead)
        if ascent is not None:
            redo.append(k)
            profiles.append(ascent)
    again = _fly_batch(case, [variants[k] for k in redo], profiles) if redo else []
    out = list(flown)
    for k, fr in zip(redo, again):
        out[k] = fr
    return out


def _outcome(case_id: int, status: str, message: str, metrics: dict, inputs: dict, elapsed: float) -> dict:
    return {"case_id": case_id, "key": f"sample {case_id}", "status": status, "message": message,
            "metrics": metrics, "result": None, "elapsed_s": elapsed,
            "inputs_json": json.dumps({k: (v if math.isfinite(v) else None) for k, v in inputs.items()},
                                      separators=(",", ":"))}


def fly_samples(cases: Sequence[dict], ctx: DispersionCase, *, on_result: Callable[[dict], None] | None = None,
                on_start: Callable[[int], None] | None = None) -> list[dict]:
    """Fly the samples of a chunk (``case_id`` = sample id); the engines' case function.

    Returns the outcomes (and streams each to `on_result`): status, message,
    metrics (SI figures, see `METRIC_UNITS`) and the sampled inputs.
    """
    ids = np.array([int(c["case_id"]) for c in cases], dtype=np.int64)
    values = draw(ctx.spec, ctx.marginals, ids)
    names = ctx.spec.names
    outcomes: list[dict] = []
    for lo in range(0, ids.size, SUB_BATCH):
        t0 = time.perf_counter()
        part = range(lo, min(lo + SUB_BATCH, ids.size))
        if on_start is not None:
            on_start(int(ids[lo]))
        variants: list[Variant | FieldError] = []
        for j in part:
            try:
                variants.append(ctx.vary(values[j]))
            except FieldError as exc:
                variants.append(exc)
        flyable = [v for v in variants if isinstance(v, Variant)]
        flown = iter(fly_variants(ctx, flyable))
        dt = (time.perf_counter() - t0) / max(1, len(part))
        for j, v in zip(part, variants):
            inputs = dict(zip(names, values[j].tolist()))
            if not isinstance(v, Variant):
                o = _outcome(int(ids[j]), "invalid", f"sampled values make no vehicle: {v}", {}, inputs, dt)
            else:
                fr = next(flown)
                if isinstance(fr, FieldError):
                    o = _outcome(int(ids[j]), "failed", f"cannot fly: {fr}", {}, inputs, dt)
                else:
                    status, msg, figs = flight_figures(ctx, v, fr)
                    o = _outcome(int(ids[j]), status, msg, figs, inputs, dt)
            outcomes.append(o)
            if on_result is not None:
                on_result(o)
    return outcomes


def fly_nominal(case: DispersionCase) -> dict[str, Any]:
    """Figures of the undispersed flight (every input at its nominal value)."""
    row = np.array([m.nominal for m in case.marginals])
    var = case.vary(row) if case.marginals else None
    if var is None:
        from .case import _kernel_wind

        var = Variant(case.vehicle, case.site, _kernel_wind(case.wind), case.wind, case.payload_mass_kg)
    fr = fly_variants(case, [var])[0]
    if isinstance(fr, FieldError):
        raise fr
    status, msg, figs = flight_figures(case, var, fr)
    return {"status": status, "message": msg, "metrics": figs, "warnings": list(fr.warnings)}
