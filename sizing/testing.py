"""Helpers for tests: reference cases with their published values and sources."""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Mapping

from .problem.load import problem_from_dict, read_toml
from .problem.model import Problem
from .result import SizingResult

__all__ = ["ReferenceCase", "load_reference_case", "assert_result_close", "REFERENCE_DIR"]

#: Where reference problems live: problems/reference/*.toml next to the package.
REFERENCE_DIR = Path(__file__).resolve().parent.parent / "problems" / "reference"


@dataclass(frozen=True)
class ReferenceCase:
    """A problem with published expected values and the citation they come from."""

    name: str
    problem: Problem
    citation: str
    tolerance_rel: float
    expected: Mapping[str, Any] = field(default_factory=dict)


def load_reference_case(name: str, directory: str | Path | None = None) -> ReferenceCase:
    """Load problems/reference/<name>.toml: a problem file plus [source] and [expected]."""
    path = Path(directory or REFERENCE_DIR) / f"{name}.toml"
    data = read_toml(path)
    source = data.pop("source")
    expected = data.pop("expected")
    return ReferenceCase(
        name=name,
        problem=problem_from_dict(data, source=str(path)),
        citation=source["citation"],
        tolerance_rel=float(source.get("tolerance_rel", 1e-6)),
        expected=expected,
    )


def assert_result_close(result: SizingResult, expected: Mapping[str, Any], rel: float) -> None:
    """Compare a result with expected totals and per-stage lists (keys as in SizingResult)."""
    assert result.success, result.message
    for key, want in expected.items():
        if isinstance(want, list):
            got = [getattr(s, key) for s in result.stages]
            assert len(got) == len(want), (key, got, want)
            for g, w in zip(got, want):
                assert math.isclose(g, w, rel_tol=rel), f"{key}: got {got}, expected {want} (rel {rel})"
        elif hasattr(result, key):
            got = getattr(result, key)
            assert math.isclose(got, want, rel_tol=rel), f"{key}: got {got}, expected {want} (rel {rel})"
