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

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from .errors import Diverged
from .linear import ConstrainedSolver, RepeatedSolver
from .navier_stokes import NavierStokes

SCHEMES = ("euler-imex", "bdf2-imex", "bdf2-implicit")
CFL_LIMIT = 1.0  # explicit convection: largest CFL number of a step (common practice: at most 1)
MAX_SPLIT = 64  # a fixed step split into more parts than this is a mistake in the spec, not a case to grind through


def bdf2_coefficients(ratio: float) -> tuple[float, float, float]:
    """BDF2 weights ``(a0, a1, a2)`` of ``u_{n+1}, u_n, u_{n-1}`` (over the new step), ``ratio = h_new / h_old``.

    The quadratic through the three levels, differentiated at the new time: second order for any ratio.

    Examples
    --------
    >>> bdf2_coefficients(1.0)
    (1.5, -2.0, 0.5)
    """
    return (1 + 2 * ratio) / (1 + ratio), -(1 + ratio), ratio**2 / (1 + ratio)


@dataclass
class StepStatistics:
    """Accepted and rejected steps, their sizes, and the linear-algebra work, for the summary."""

    accepted: int = 0
    rejected: int = 0
    smallest: float = np.inf
    largest: float = 0.0
    total: float = 0.0
    factorisations: int = 0
    solves: int = 0

    def record(self, h: float) -> None:
        self.accepted += 1
        self.smallest, self.largest, self.total = min(self.smallest, h), max(self.largest, h), self.total + h

    def summary(self) -> dict[str, float | int | None]:
        steps = max(self.accepted, 1)
        return {
            "accepted": self.accepted,
            "rejected": self.rejected,
            "smallest": self.smallest if self.accepted else None,
            "largest": self.largest if self.accepted else None,
            "mean": self.total / steps if self.accepted else None,
            "factorisations": self.factorisations,
            "solves_per_step": self.solves / steps,
        }

    def state(self) -> dict[str, np.ndarray]:
        return {
            "stat_counts": np.array([self.accepted, self.rejected, self.factorisations, self.solves]),
            "stat_sizes": np.array([self.smallest, self.largest, self.total]),
        }

    def restore(self, state: dict[str, np.ndarray]) -> None:
        self.accepted, self.rejected, self.factorisations, self.solves = (int(v) for v in state["stat_counts"])
        self.smallest, self.largest, self.total = (float(v) for v in state["stat_sizes"])


@dataclass
class StepResult:
    """What the force functional needs from one step."""

    x: np.ndarray
    convection: np.ndarray
    dudt: np.ndarray


class Stepper:
    """Advance ``x`` from ``t`` by ``dt`` with one of :data:`SCHEMES`.

    With explicit convection (the IMEX schemes) a step whose CFL number, computed by ``cfl(x, dt)`` from the
    current (healthy) velocity, would exceed :data:`CFL_LIMIT` is split into halves, quarters ...: the step
    stays stable and the scheme keeps its order (variable-step BDF2 weights).

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
        cfl: Callable[[np.ndarray, float], float] | None = None,
    ):
        if scheme not in SCHEMES:
            raise ValueError(f"unknown scheme {scheme!r}; choose one of {SCHEMES}")
        self.ns, self.scheme, self.dt, self.cfl = ns, scheme, dt, cfl
        self.x, self.x_old = x0.copy(), x0.copy()
        self.t, self.n, self.previous_dt = 0.0, 0, dt
        th = ns.th
        zero = sp.csr_matrix((th.npr, th.npr))
        self.mass = sp.block_diag([th.mass, th.mass, zero], format="csr")
        self.stats = StepStatistics()
        self.factoriser = RepeatedSolver(ns.free) if scheme == "bdf2-implicit" else None
        self.solvers: dict[float, ConstrainedSolver] = {}  # by the mass matrix's factor, for split steps

    def step(self, t_end: float = np.inf) -> StepResult:
        """One step of ``dt``, split when explicit convection would break the CFL limit (``t_end`` is not used).

        Raises
        ------
        Diverged
            When even :data:`MAX_SPLIT` parts would break it: the step asked for is far too long for the
            scheme, and the advice is computed from the current, healthy velocity.
        """
        dt = self.dt
        if self.cfl is not None and self.scheme != "bdf2-implicit":
            cfl = self.cfl(self.x, dt)
            if cfl > CFL_LIMIT * MAX_SPLIT:
                raise Diverged(
                    f"explicit convection at t = {self.t:.6g} s (step {self.n}): CFL number {cfl:.3g} with "
                    f"analysis.time_step = {dt:.3g}, over {MAX_SPLIT} times the stable limit {CFL_LIMIT}; "
                    f"try analysis.time_step = {dt * 0.5 * CFL_LIMIT / cfl:.3g} or the default scheme bdf2-adaptive"
                )
            while cfl > CFL_LIMIT:
                dt, cfl = dt / 2, cfl / 2
        return self._advance(dt)

    def _advance(self, dt: float) -> StepResult:
        ns = self.ns
        t_new = self.t + dt
        bc = ns.dirichlet.values(t_new)
        if self.scheme == "euler-imex":
            a0, history = 1.0, self.x / dt
            extrapolated = self.x
        else:
            ratio = dt / self.previous_dt if self.n else 1.0  # the start doubles as the older level: BE of 2/3 dt
            a0, a1, a2 = bdf2_coefficients(ratio)
            history = -(a1 * self.x + a2 * self.x_old) / dt
            extrapolated = (1 + ratio) * self.x - ratio * self.x_old
        alpha = a0 / dt
        if self.scheme == "bdf2-implicit":
            x_new = self._implicit(alpha, self.mass @ history, bc, extrapolated)
            conv = ns.convection(x_new, advecting=extrapolated)
        else:
            conv = ns.convection(extrapolated)
            x_new = self._solver(alpha).solve(self.mass @ history - conv, bc)
            self.stats.solves += 1
        dudt = alpha * x_new - history
        self.x_old, self.x = self.x, x_new
        self.t, self.n, self.previous_dt = t_new, self.n + 1, dt
        self.stats.record(dt)
        return StepResult(x_new, conv, dudt)

    def _solver(self, alpha: float) -> ConstrainedSolver:
        if alpha not in self.solvers:
            if len(self.solvers) >= 4:
                self.solvers.pop(next(iter(self.solvers)))
            self.solvers[alpha] = ConstrainedSolver(alpha * self.mass + self.ns.stokes_matrix, self.ns.free)
            self.stats.factorisations += 1
        return self.solvers[alpha]

    def _implicit(self, alpha: float, rhs: np.ndarray, bc: np.ndarray, advecting: np.ndarray) -> np.ndarray:
        ns = self.ns
        assert self.factoriser is not None, "made for the implicit scheme"
        A = ns.th.saddle_point(alpha * ns.th.mass + ns.oseen_blocks(advecting))
        self.factoriser.factor(A)
        self.stats.factorisations += 1
        self.stats.solves += 1
        x = bc.copy()
        x[ns.free] = self.factoriser.solve_free((rhs - A @ bc)[ns.free])
        return x

    def renew_factorisation(self) -> None:
        """Nothing to renew: a fixed-step matrix depends on the step alone."""

    def state(self) -> dict[str, np.ndarray]:
        """Everything a resumed run needs to repeat this one exactly (arrays, for a checkpoint file)."""
        return {
            "levels": np.array([self.x, self.x_old]),
            "clock": np.array([self.t, self.previous_dt]),
            "step": np.array(self.n),
            **self.stats.state(),
        }

    def restore(self, state: dict[str, np.ndarray]) -> None:
        self.x, self.x_old = (np.array(v) for v in state["levels"])
        self.t, self.previous_dt = (float(v) for v in state["clock"])
        self.n = int(state["step"])
        self.stats.restore(state)
