"""Hypothesis strategies for valid sizing inputs."""

from __future__ import annotations

import math

from hypothesis import assume
from hypothesis import strategies as st

from sizing.physics.staging import max_ideal_delta_v
from sizing.problem.load import problem_from_dict


@st.composite
def stage_sets(draw, min_stages: int = 1, max_stages: int = 4):
    """(exhaust velocities [m/s], structural coefficients [-]) of 1-4 stages."""
    n = draw(st.integers(min_stages, max_stages))
    c = [draw(st.floats(1500.0, 4500.0)) for _ in range(n)]
    eps = [draw(st.floats(0.04, 0.4)) for _ in range(n)]
    return c, eps


@st.composite
def ideal_problems(draw, min_stages: int = 1, max_stages: int = 4):
    """A minimum-gross-mass Problem with a reachable ideal delta-v target."""
    c, eps = draw(stage_sets(min_stages, max_stages))
    dv_max = max_ideal_delta_v(c, eps)
    frac = draw(st.floats(0.05, 0.85))
    dv = frac * dv_max
    assume(dv > 10.0)
    payload = draw(st.floats(1.0, 1e4))
    data = {
        "mission": {"payload_mass": payload, "delta_v": dv},
        "stage": [{"name": f"s{i + 1}", "exhaust_velocity": ci, "structural_coefficient": ei}
                  for i, (ci, ei) in enumerate(zip(c, eps))],
    }
    problem = problem_from_dict(data, source="<hypothesis>")
    # keep the growth moderate so the numbers stay well conditioned
    assume(math.isfinite(dv))
    return problem
