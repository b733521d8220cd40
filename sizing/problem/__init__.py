"""Problem definition layer: TOML schema -> validated, frozen SI model."""

from .load import load_problem, problem_from_dict
from .model import LaunchDef, Problem, SolveFor, StageDef

__all__ = ["load_problem", "problem_from_dict", "Problem", "StageDef", "LaunchDef", "SolveFor"]
