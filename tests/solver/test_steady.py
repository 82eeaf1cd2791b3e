"""Steady Newton solves: continuation in the Reynolds number when plain Newton from Stokes fails."""

import numpy as np
import pytest

from wakeyard.solver import Diverged, load
from wakeyard.solver.case import Case
from wakeyard.solver.steady import newton, solve_steady


@pytest.fixture(scope="module")
def case_re150():
    # the 2D-1 benchmark channel and cylinder (Schäfer & Turek 1996) at Re 150, where no steady flow is stable
    spec = load(
        {
            "channel": {"length": 2.2, "height": 0.41},
            "bodies": [{"shape": "circle", "center": [0.2, 0.2], "radius": 0.05}],
            "mesh": {"preset": "coarse", "scale": 2.0},
            "fluid": {"reynolds": 150},
            "inflow": {"peak_velocity": 1.5},
        }
    )
    return Case.build(spec)


def test_plain_newton_from_stokes_fails_at_re150(case_re150):
    with pytest.raises(Diverged):
        newton(case_re150.ns, case_re150.ns.stokes())


def test_continuation_reaches_the_target(case_re150):
    x, report = solve_steady(case_re150.ns)
    assert report.continuation_steps[0] < 1.0 and report.continuation_steps[-1] == 1.0
    residual = case_re150.ns.steady_residual(x)[case_re150.ns.free]
    assert np.linalg.norm(residual) < 1e-10
    ux = case_re150.th.split(x)[0]
    assert ux.min() < 0  # a recirculation zone behind the cylinder
