"""Trade studies: many sizing runs over axes and choices, stored as they finish.

Public API
----------
load_study(path) -> Study
run_study(study, out, *, engine="local", workers=None, scheduler=None, restart=False, ...) -> StudySummary
load_results(folder) -> StudyResults
pareto_mask(F), non_dominated_ranks(F)
"""

from __future__ import annotations

from .pareto import non_dominated_ranks, pareto_mask, to_minimisation
from .runner import StudyProgress, StudySummary, run_study
from .spec import Case, Study, expand_cases, load_study, study_from_dict

__all__ = [
    "Case",
    "Study",
    "StudyProgress",
    "StudySummary",
    "expand_cases",
    "load_study",
    "study_from_dict",
    "run_study",
    "pareto_mask",
    "non_dominated_ranks",
    "to_minimisation",
]
