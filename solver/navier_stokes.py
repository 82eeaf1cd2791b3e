"""The discrete incompressible Navier-Stokes operator: residuals, Jacobians, the Stokes start.

All quantities are per unit density (kinematic); forces are scaled by the density
where they are reported.
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from .boundary import Dirichlet
from .linear import RepeatedSolver
from .taylor_hood import TaylorHood


class NavierStokes:
    """One mesh, one viscosity, one set of Dirichlet unknowns.

    Parameters
    ----------
    th
        The Taylor-Hood spaces and their constant matrices.
    viscosity
        Kinematic viscosity.
    dirichlet
        Prescribed unknowns. A problem without an outflow boundary must also
        prescribe one pressure unknown, since pressure is then fixed only up to a constant.
    """

    def __init__(self, th: TaylorHood, viscosity: float, dirichlet: Dirichlet):
        self.th = th
        self.viscosity = viscosity
        self.dirichlet = dirichlet
        self.free = np.setdiff1d(np.arange(th.ndofs), dirichlet.dofs)
        self.stokes_matrix = th.saddle_point(viscosity * th.stiffness).tocsr()  # row-wise: faster products
        self.geometry_version = 0  # counts mesh moves, so precomputed functionals know when to refresh

    @property
    def moves(self) -> bool:
        """Whether the mesh moves (then :meth:`move_to` must be called before each stage)."""
        return False

    def move_to(self, t: float, again: bool = False) -> None:
        """Put the mesh where it is at time ``t``: a fixed mesh stays."""

    def stokes(self, t: float = 0.0) -> np.ndarray:
        """The Stokes solution with the boundary data at time ``t`` (the usual start)."""
        x = self.dirichlet.values(t)
        lu = RepeatedSolver(self.free)
        lu.factor(self.stokes_matrix)
        x[self.free] = lu.solve_free(-(self.stokes_matrix @ x)[self.free])
        lu.close()
        return x

    def convection(self, x: np.ndarray, advecting: np.ndarray | None = None) -> np.ndarray:
        """Full-length vector of the convection term (zero in the pressure rows)."""
        ux, uy, _ = self.th.split(x)
        ax, ay = (ux, uy) if advecting is None else self.th.split(advecting)[:2]
        cx, cy = self.th.quadrature.convection(ux, uy, ax, ay)
        return np.concatenate([cx, cy, np.zeros(self.th.npr)])

    def steady_residual(self, x: np.ndarray) -> np.ndarray:
        """Residual of the stationary equations, full length (rows of fixed unknowns included)."""
        return self.stokes_matrix @ x + self.convection(x)

    def oseen_blocks(self, advecting: np.ndarray) -> sp.spmatrix:
        """Scalar block of ``nu*K + (a . grad)``: convection linearised about a given velocity."""
        ax, ay, _ = self.th.split(advecting)
        return self.viscosity * self.th.stiffness + self.th.quadrature.advection_matrix(ax, ay)

    def jacobian(self, x: np.ndarray, shift: sp.spmatrix | None = None) -> sp.csc_matrix:
        """Newton matrix of the stationary residual at ``x`` (plus ``shift`` on the velocity blocks)."""
        q = self.th.quadrature
        ux, uy, _ = self.th.split(x)
        diag = self.oseen_blocks(x)
        if shift is not None:
            diag = diag + shift
        gx, gy = [(q.ddx @ u, q.ddy @ u) for u in (ux, uy)]
        blocks = [
            [diag + q.reaction_matrix(gx[0]), q.reaction_matrix(gx[1])],
            [q.reaction_matrix(gy[0]), diag + q.reaction_matrix(gy[1])],
        ]
        return self.th.saddle_point(blocks)
