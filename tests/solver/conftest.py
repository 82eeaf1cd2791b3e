"""A case shared by the time-order tests of the fixed and the error-controlled schemes."""

import pytest

from wakeyard.solver import load
from wakeyard.solver.case import Case

RAMP_END = 0.4  # the tests run to here; the inflow is still rising


@pytest.fixture(scope="session")
def ramped_cylinder() -> Case:
    """A smooth start from rest: the inflow ramps up over twice the run (Re 20 at full speed).

    The 2D-1 benchmark cylinder and fluid (Schäfer & Turek 1996) in a channel shortened to 1.0.
    """
    spec = load(
        {
            "bodies": [{"shape": "circle", "center": [0.2, 0.2], "radius": 0.05}],
            "channel": {"length": 1.0, "height": 0.41},
            "mesh": {"preset": "coarse", "scale": 2.0},
            "fluid": {"density": 1.0, "viscosity": 1e-3},
            "inflow": {"peak_velocity": 0.3, "ramp_time": 2 * RAMP_END},
        }
    )
    return Case.build(spec)
