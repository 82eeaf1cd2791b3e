"""Observed temporal order by self-convergence of the drag history on a fixed mesh (common practice).

The expected orders (1 for Euler, 2 for BDF2) are common knowledge; the accepted bands are project choices."""

import numpy as np
import pytest

from wakeyard.solver import load
from wakeyard.solver.case import Case
from wakeyard.solver.transient import Stepper

END = 0.4


@pytest.fixture(scope="module")
def case():
    # smooth start from rest: the inflow ramps up over the whole run (Re 20 at full speed)
    # the 2D-1 benchmark cylinder and fluid (Schäfer & Turek 1996) in a channel shortened to 1.0
    spec = load(
        {
            "bodies": [{"shape": "circle", "center": [0.2, 0.2], "radius": 0.05}],
            "channel": {"length": 1.0, "height": 0.41},
            "mesh": {"preset": "coarse", "scale": 2.0},
            "fluid": {"density": 1.0, "viscosity": 1e-3},
            "inflow": {"peak_velocity": 0.3, "ramp_time": 2 * END},
        }
    )
    return Case.build(spec)


def final_drag(case, scheme, steps):
    stepper = Stepper(case.ns, scheme, END / steps, case.ns.stokes(0.0))
    for _ in range(steps):
        result = stepper.step()
    return case.force_row(stepper.t, result.x, result.convection, result.dudt)[3]


@pytest.mark.parametrize(
    ("scheme", "low", "high"), [("euler-imex", 0.8, 1.3), ("bdf2-imex", 1.8, 2.6), ("bdf2-implicit", 1.8, 2.6)]
)
def test_observed_order(case, scheme, low, high):
    values = np.array([final_drag(case, scheme, n) for n in (40, 80, 160, 320)])
    diffs = np.abs(np.diff(values))
    orders = np.log2(diffs[:-1] / diffs[1:])
    assert low <= orders[-1] <= high, (values, orders)
