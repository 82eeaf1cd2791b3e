"""The cell-by-cell convection path against the sparse quadrature operators it replaces in the time loop."""

import numpy as np
import pytest
from skfem import MeshTri2

from wakeyard.solver.taylor_hood import TaylorHood


@pytest.mark.parametrize("elements", ["P2P1", "P3P2"])
def test_cellwise_convection_equals_the_sparse_operators_on_curved_cells(elements):
    th = TaylorHood(MeshTri2.init_circle(2), elements)  # curved cells: the Jacobian varies inside a cell
    q = th.quadrature
    ux, uy, ax, ay = np.random.default_rng(7).standard_normal((4, th.nu))
    a_x, a_y = q.weights * (q.value @ ax), q.weights * (q.value @ ay)
    expected = [q.value.T @ (a_x * (q.ddx @ u) + a_y * (q.ddy @ u)) for u in (ux, uy)]
    for got, want in zip(q.convection(ux, uy, ax, ay), expected):
        assert np.allclose(got, want, rtol=0, atol=1e-13 * np.abs(want).max())


def test_convection_of_a_linear_field_integrates_exactly():
    """(a . grad) u with a = (1, 0) and u = x is 1 everywhere: tested against every basis function it sums
    to the area of the disc (the curved mesh's area, computed by the same quadrature)."""
    th = TaylorHood(MeshTri2.init_circle(2), "P2P1")
    x = th.velocity.doflocs[0]
    cx, _ = th.quadrature.convection(x, x, np.ones(th.nu), np.zeros(th.nu))
    assert cx.sum() == pytest.approx(th.quadrature.weights.sum(), rel=1e-12)
    assert th.quadrature.weights.sum() == pytest.approx(np.pi, rel=1e-3)
