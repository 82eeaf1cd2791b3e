"""wakeyard's flow solver: 2D incompressible Navier-Stokes with Taylor-Hood elements.

The public surface is small: :func:`load` checks a job spec, :func:`run`
computes it and writes the result files; errors form one flat hierarchy.
"""

from .errors import Cancelled, Diverged, InternalError, RunFailed, SpecError, WakeyardError, WallTimeExceeded
from .limits import Limits, check_limits
from .run import Progress, run
from .spec import JobSpec, load

__version__ = "0.1.0"

__all__ = [
    "Cancelled",
    "Diverged",
    "InternalError",
    "JobSpec",
    "Limits",
    "Progress",
    "RunFailed",
    "SpecError",
    "WakeyardError",
    "WallTimeExceeded",
    "__version__",
    "check_limits",
    "load",
    "run",
]
