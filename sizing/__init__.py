"""stagesizer: multistage launch-vehicle sizing.

Load a problem file, solve for the optimal stage mass split, export the
stage mass table. Preliminary estimates only, not flight clearance.

>>> from sizing import load_problem, solve            # doctest: +SKIP
>>> result = solve(load_problem("problems/x.toml"))   # doctest: +SKIP
"""

from .errors import (
    DesignReviewWarning,
    InfeasibleProblemError,
    ProblemDefinitionError,
    SizingConvergenceWarning,
    SizingError,
)
from .optimize.api import solve
from .optimize.batch import BatchResult, solve_batch
from .problem.load import load_problem, problem_from_dict
from .problem.model import Problem, SolveFor
from .result import CAUTION, SizingResult, StageResult, Status

__version__ = "0.1.0"

__all__ = [
    "load_problem",
    "problem_from_dict",
    "solve",
    "solve_batch",
    "BatchResult",
    "Problem",
    "SolveFor",
    "SizingResult",
    "StageResult",
    "Status",
    "CAUTION",
    "SizingError",
    "ProblemDefinitionError",
    "InfeasibleProblemError",
    "SizingConvergenceWarning",
    "DesignReviewWarning",
]
