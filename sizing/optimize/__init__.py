"""Optimizers: `solve` for one problem, `solve_batch` for many."""

from .api import METHODS, solve
from .batch import BatchResult, solve_batch

__all__ = ["solve", "solve_batch", "BatchResult", "METHODS"]
