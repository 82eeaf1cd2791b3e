"""The solver's exceptions: one flat hierarchy so callers catch what they can act on."""

from __future__ import annotations


class WakeyardError(Exception):
    """Base class of every error the solver raises on purpose."""


class SpecError(WakeyardError):
    """The job spec is invalid; ``problems`` lists ``(field path, message)`` pairs."""

    def __init__(self, problems: list[tuple[str, str]]):
        self.problems = problems
        super().__init__("; ".join(f"{field}: {message}" for field, message in problems))


class RunFailed(WakeyardError):
    """A valid case could not be computed to the end."""


class Diverged(RunFailed):
    """The discrete solution blew up or the nonlinear iteration did not converge."""


class WallTimeExceeded(RunFailed):
    """The run took longer than its wall-time limit."""


class Cancelled(RunFailed):
    """Someone asked the run to stop."""


class InternalError(RunFailed):
    """An unexpected exception inside a run; ``stage`` names the part of the run it came from."""

    def __init__(self, stage: str, message: str):
        self.stage = stage
        super().__init__(f"{stage} failed: {message}")
