"""Every error and warning the package raises.

Message pattern: *where: what must be what. Got value. How to fix.*
Message templates are module constants so tests can match them exactly.
"""

from __future__ import annotations

from collections.abc import Sequence

__all__ = [
    "SizingError",
    "ProblemDefinitionError",
    "FieldError",
    "InfeasibleProblemError",
    "StudyDefinitionError",
    "SizingConvergenceWarning",
    "DesignReviewWarning",
    "MSG_STRUCTURAL_COEFFICIENT",
    "MSG_ISP_OR_VE_REQUIRED",
    "MSG_ISP_AND_VE",
    "MSG_POSITIVE",
    "MSG_UNKNOWN_KEY",
    "MSG_MISSING_KEY",
    "MSG_WRONG_UNIT",
    "MSG_TOML_SYNTAX",
    "MSG_TARGET_UNREACHABLE",
    "MSG_UNKNOWN_METHOD",
]

MSG_STRUCTURAL_COEFFICIENT = "must be in (0, 1)"
MSG_ISP_OR_VE_REQUIRED = "isp or exhaust_velocity is required"
MSG_ISP_AND_VE = "give isp or exhaust_velocity, not both"
MSG_POSITIVE = "must be > 0"
MSG_UNKNOWN_KEY = "unknown key"
MSG_MISSING_KEY = "required key is missing"
MSG_WRONG_UNIT = "has the wrong dimension"
MSG_TOML_SYNTAX = "is not valid TOML"
MSG_TARGET_UNREACHABLE = "is beyond the most these stages can deliver"
MSG_UNKNOWN_METHOD = "unknown method"


class SizingError(Exception):
    """Base class of every error raised by this package."""


class FieldError(SizingError, ValueError):
    """One bad field: where it is, what was given and what is allowed."""

    def __init__(self, field: str, message: str, value: object = None) -> None:
        self.field = field
        self.message = message
        self.value = value
        text = f"{field}: {message}"
        if value is not None:
            text += f" Got {value!r}."
        super().__init__(text)

    def __reduce__(self):
        return (type(self), (self.field, self.message, self.value))


class ProblemDefinitionError(SizingError, ValueError):
    """A problem (or study) file that cannot be used, with one line per fault.

    `fault_sources` names the file of each fault when they come from more than one
    (a design file and the ``--dispersions`` file whose table replaces its own);
    by default every fault is `source`'s.
    """

    def __init__(self, source: str, faults: Sequence[str], fault_sources: Sequence[str] | None = None) -> None:
        self.source = str(source)
        self.faults = tuple(faults)
        n = len(self.faults)
        self.fault_sources = (self.source,) * n if fault_sources is None else tuple(map(str, fault_sources))
        if len(self.fault_sources) != n:
            raise ValueError(f"fault_sources: one file per fault ({n}). Got {len(self.fault_sources)}.")
        files = list(dict.fromkeys(self.fault_sources))
        if n == 1:
            text = f"{self.fault_sources[0]}: {self.faults[0]}"
        elif files == [self.source]:
            text = f"{self.source} has {n} errors\n" + "\n".join(
                f"  {f}" for f in self.faults
            )
        else:
            text = f"{' and '.join(files)} have {n} errors\n" + "\n".join(
                f"  {s}: {f}" for s, f in zip(self.fault_sources, self.faults)
            )
        super().__init__(text)

    def __reduce__(self):
        return (type(self), (self.source, self.faults, self.fault_sources))


class StudyDefinitionError(ProblemDefinitionError):
    """A study file that cannot be used."""


class InfeasibleProblemError(SizingError, ValueError):
    """A well-formed problem with no solution; `best` names the best reachable value."""

    def __init__(self, message: str, best: dict[str, float] | None = None) -> None:
        self.message = message
        self.best = dict(best or {})
        super().__init__(message)

    def __reduce__(self):
        return (type(self), (self.message, self.best))


class SizingConvergenceWarning(UserWarning):
    """A solver stopped without meeting its tolerance; the result has success=False."""


class DesignReviewWarning(UserWarning):
    """Something a design reviewer would flag (low thrust-to-weight, slow rail exit, ...)."""


class StudyOutputConflictError(SizingError, ValueError):
    """A study output folder that holds results of a different study file."""

    def __init__(self, folder: str, message: str) -> None:
        self.folder = str(folder)
        self.message = message
        super().__init__(f"{self.folder}: {message}")

    def __reduce__(self):
        return (type(self), (self.folder, self.message))


__all__ += ["StudyOutputConflictError"]


class CannotLiftOffError(FieldError):
    """A hobby candidate (motor stack or water stage) whose thrust cannot lift it off or off the rail."""


class FlightTimeCapError(FieldError):
    """A hobby candidate whose flight could last longer than the simulated-time cap."""


__all__ += ["CannotLiftOffError", "FlightTimeCapError"]
