"""Helpers of the dispersion tests that worker and child processes import (no test functions here)."""

from __future__ import annotations

import os
import time
from pathlib import Path

from sizing.dispersion.flights import fly_samples

HERE = Path(__file__).resolve().parent
ROOT = HERE.parents[1]
HERON = HERE / "data" / "heron_design.toml"
JACKDAW = HERE / "data" / "jackdaw_design.toml"

#: A small [dispersions] table for the heron design (invented demo spreads).
HERON_TABLE = """
[dispersions]
seed = 5
samples = 120
confidence = 0.9

[[dispersions.input]]
quantity = "*.isp"
distribution = "normal"
sigma = "1 %"
truncate = 3

[[dispersions.input]]
quantity = "boost.thrust"
distribution = "uniform"
half_width = "3 %"

[[dispersions.input]]
quantity = "*.drag"
distribution = "normal"
sigma = "5 %"

[[dispersions.input]]
quantity = "payload_mass"
distribution = "uniform"
low = "4.4 kg"
high = "4.6 kg"

[[dispersions.input]]
quantity = "wind.speed"
distribution = "uniform"
low = 0
high = "3 m/s"

[[dispersions.input]]
quantity = "wind.direction"
distribution = "list"
values = [0, 90, 180, 270]

[[dispersions.correlation]]
quantities = ["boost.isp", "sustain.isp"]
coefficient = 0.5
"""


def write_table(folder: Path, text: str = HERON_TABLE, name: str = "table.toml") -> Path:
    p = Path(folder) / name
    p.write_text(text)
    return p


def slow_samples(cases, ctx, on_result=None, on_start=None):
    """`fly_samples` with a pause after every sample (SIZING_TEST_DELAY_S), so a run can be killed midway."""
    delay = float(os.environ.get("SIZING_TEST_DELAY_S", "0"))

    def slow(o):
        time.sleep(delay)
        if on_result is not None:
            on_result(o)

    return fly_samples(cases, ctx, on_result=slow, on_start=on_start)
