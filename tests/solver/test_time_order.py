"""Observed temporal order by self-convergence of the drag history on a fixed mesh (common practice).

The expected orders (1 for Euler, 2 for BDF2) are common knowledge; the accepted bands are project choices."""

import numpy as np
import pytest

from wakeyard.solver.transient import Stepper

from .conftest import RAMP_END as END


def final_drag(case, scheme, steps):
    stepper = Stepper(case.ns, scheme, END / steps, case.ns.stokes(0.0))
    for _ in range(steps):
        result = stepper.step()
    return case.force_row(stepper.t, result.x, result.convection, result.dudt)[3]


@pytest.mark.parametrize(
    ("scheme", "low", "high"), [("euler-imex", 0.8, 1.3), ("bdf2-imex", 1.8, 2.6), ("bdf2-implicit", 1.8, 2.6)]
)
def test_observed_order(ramped_cylinder, scheme, low, high):
    values = np.array([final_drag(ramped_cylinder, scheme, n) for n in (40, 80, 160, 320)])
    diffs = np.abs(np.diff(values))
    orders = np.log2(diffs[:-1] / diffs[1:])
    assert low <= orders[-1] <= high, (values, orders)
