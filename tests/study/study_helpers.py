"""Shared study fixtures and fault-injecting case functions for the study tests.

The case functions are module-level so worker processes (forked, spawned or
Dask) can import them; their faults are configured through environment
variables, which child processes inherit.
"""

from __future__ import annotations

import copy
import os
import time
from pathlib import Path

from sizing.study.evaluate import evaluate_case, evaluate_cases

#: Curtis, Orbital Mechanics for Engineering Students, 3rd ed., Example 11.6 inputs
#: (g0 = 9.81 m/s^2 as in the book; example number and inputs from memory, reproduced by
#: computation -- tabulated in the project's shared check values, sec. 1.1).
CURTIS_11_6 = {
    "mission": {"name": "Curtis Example 11.6", "payload_mass": 5000.0, "delta_v": 10000.0,
                "standard_gravity": 9.81},
    "stage": [
        {"name": "first", "isp": 400.0, "structural_coefficient": 0.10},
        {"name": "second", "isp": 350.0, "structural_coefficient": 0.15},
        {"name": "third", "isp": 300.0, "structural_coefficient": 0.20},
    ],
}


def small_study(**over) -> dict:
    """A small ideal delta-v study on the Curtis 11.6 stack (varied payload and delta-v)."""
    data = {
        "study": {"name": "unit study", "vehicle": "test stack"},
        "base": copy.deepcopy(CURTIS_11_6),
        "axis": [
            {"field": "mission.payload_mass", "values": [4000.0, 5000.0, 6000.0]},
            {"field": "mission.delta_v", "start": 9000.0, "stop": 10000.0, "num": 3},
        ],
        "objective": [{"metric": "gross_mass_kg"}, {"metric": "payload_mass_kg"}],
    }
    for k, v in over.items():
        data[k] = v
    return data


def slow_cases(cases, ctx, on_result=None, on_start=None):
    """`evaluate_cases` one by one with a pause per case (SIGKILL tests need time to hit)."""
    delay = float(os.environ.get("SIZING_TEST_DELAY_S", "0.004"))
    out = []
    for case in cases:
        if on_start is not None:
            on_start(case["case_id"])
        time.sleep(delay)
        o = evaluate_case(case, ctx)
        out.append(o)
        if on_result is not None:
            on_result(o)
    return out


def dying_cases(cases, ctx, on_result=None, on_start=None):
    """Kill the worker process on chosen cases.

    SIZING_TEST_DIE_ONCE: case ids that kill their worker the first time only
    (a marker file in SIZING_TEST_FAULT_DIR remembers it); SIZING_TEST_DIE_ALWAYS:
    case ids that kill their worker every time.
    """
    once = {int(x) for x in os.environ.get("SIZING_TEST_DIE_ONCE", "").split(",") if x}
    always = {int(x) for x in os.environ.get("SIZING_TEST_DIE_ALWAYS", "").split(",") if x}
    fault_dir = Path(os.environ.get("SIZING_TEST_FAULT_DIR", "."))
    out = []
    for case in cases:
        cid = case["case_id"]
        if on_start is not None:
            on_start(cid)
        if cid in always:
            os._exit(3)
        marker = fault_dir / f"died-{cid}"
        if cid in once and not marker.exists():
            marker.write_text("x")
            os._exit(3)
        o = evaluate_case(case, ctx)
        out.append(o)
        if on_result is not None:
            on_result(o)
    return out


__all__ = ["CURTIS_11_6", "small_study", "slow_cases", "dying_cases", "evaluate_cases"]
