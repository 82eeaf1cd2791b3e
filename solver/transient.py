"""Time steppers from a Stokes start: first-order IMEX, BDF2-IMEX and linearly implicit BDF2.

* ``euler-imex``: backward Euler for viscosity and pressure, convection explicit. One factorisation.
* ``bdf2-imex``: BDF2 with convection extrapolated to second order. One factorisation.
* ``bdf2-implicit``: BDF2 with convection linearised about the extrapolated
  velocity: stable at much larger steps. The matrix changes every step but
  keeps its sparsity pattern, so only the numeric factorisation is redone.

The first BDF2 step reuses the start as the missing older level, which makes
it a backward-Euler step of length 2/3 dt: locally second order, so the
scheme keeps its global order and its single matrix.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from .linear import ConstrainedSolver, RepeatedSolver
from .navier_stokes import NavierStokes

SCHEMES = ("euler-imex", "bdf2-imex", "bdf2-implicit")


@dataclass
class StepResult:
    """What the force functional needs from one step."""

    x: np.ndarray
    convection: np.ndarray
    dudt: np.ndarray


class Stepper:
    """Advance ``x`` from ``t`` by ``dt`` with one of :data:`SCHEMES`.

    Examples
    --------
    >>> from skfem import MeshTri
    >>> from solver.taylor_hood import TaylorHood
    >>> from solver.boundary import Dirichlet
    >>> th = TaylorHood(MeshTri().refined(2))
    >>> wall = th.velocity.get_dofs().all()
    >>> fixed = np.r_[wall, th.nu + wall, 2 * th.nu]
    >>> ns = NavierStokes(th, 1.0, Dirichlet(fixed, np.zeros(th.ndofs), np.zeros(th.ndofs)))
    >>> s = Stepper(ns, "bdf2-imex", 0.01, ns.stokes())
    >>> float(abs(s.step().x).max())
    0.0
    """

    def __init__(
        self,
        ns: NavierStokes,
        scheme: str,
        dt: float,
        x0: np.ndarray,
        t0: float = 0.0,
        x_old: np.ndarray | None = None,
        step: int = 0,
    ):
        if scheme not in SCHEMES:
            raise ValueError(f"unknown scheme {scheme!r}; choose one of {SCHEMES}")
        self.ns, self.scheme, self.dt = ns, scheme, dt
        self.x, self.x_old = x0.copy(), (x0.copy() if x_old is None else x_old.copy())
        self.t, self.n = t0, step
        th = ns.th
        zero = sp.csr_matrix((th.npr, th.npr))
        self.mass = sp.block_diag([th.mass, th.mass, zero], format="csr")
        self.alpha = 1.0 / dt if scheme == "euler-imex" else 1.5 / dt
        self.factorisations = 0
        if scheme == "bdf2-implicit":
            self.factoriser = RepeatedSolver(ns.free)
        else:
            self.solver = ConstrainedSolver(self.alpha * self.mass + ns.stokes_matrix, ns.free)
            self.factorisations = 1

    def step(self) -> StepResult:
        ns, dt = self.ns, self.dt
        t_new = self.t + dt
        bc = ns.dirichlet.values(t_new)
        if self.scheme == "euler-imex":
            history = self.x / dt
            conv = ns.convection(self.x)
            x_new = self.solver.solve(self.mass @ history - conv, bc)
        else:
            history = (4 * self.x - self.x_old) / (2 * dt)
            extrapolated = 2 * self.x - self.x_old
            if self.scheme == "bdf2-imex":
                conv = ns.convection(extrapolated)
                x_new = self.solver.solve(self.mass @ history - conv, bc)
            else:
                x_new = self._implicit(self.mass @ history, bc, extrapolated)
                conv = ns.convection(x_new, advecting=extrapolated)
        dudt = self.alpha * x_new - history
        self.x_old, self.x = self.x, x_new
        self.t, self.n = t_new, self.n + 1
        return StepResult(x_new, conv, dudt)

    def _implicit(self, rhs: np.ndarray, bc: np.ndarray, advecting: np.ndarray) -> np.ndarray:
        ns = self.ns
        A = ns.th.saddle_point(self.alpha * ns.th.mass + ns.oseen_blocks(advecting))
        self.factoriser.factor(A)
        self.factorisations += 1
        x = bc.copy()
        x[ns.free] = self.factoriser.solve_free((rhs - A @ bc)[ns.free])
        return x
