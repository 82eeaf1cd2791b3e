"""Stationary solutions: Newton's method from the Stokes start, with continuation in the Reynolds number."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from .errors import Diverged
from .linear import RepeatedSolver
from .navier_stokes import NavierStokes


@dataclass
class NewtonReport:
    iterations: int
    residual: float
    continuation_steps: list[float]


def newton(ns: NavierStokes, x0: np.ndarray, tol: float = 1e-8, max_iterations: int = 30,
           on_iteration: Callable[[int, float], None] | None = None) -> tuple[np.ndarray, int, float]:
    """Newton iterations on the stationary equations; ``x0`` must carry the boundary values.

    Converged when the update is below ``tol`` relative to the solution. Raises
    :class:`Diverged` when the residual grows tenfold or the iterations run out.
    """
    x = x0.copy()
    free = ns.free
    first = None
    lu = RepeatedSolver(free)
    try:
        for k in range(1, max_iterations + 1):
            r = ns.steady_residual(x)[free]
            norm = float(np.linalg.norm(r))
            first = first or max(norm, 1e-300)
            if not np.isfinite(norm) or norm > 10 * first:
                raise Diverged(f"Newton iteration diverged at iteration {k} (residual {norm:.3g})")
            lu.factor(ns.jacobian(x))
            dx = lu.solve_free(r)
            x[free] -= dx
            step = float(np.linalg.norm(dx)) / max(float(np.linalg.norm(x)), 1e-300)
            if on_iteration:
                on_iteration(k, step)
            if step < tol:
                return x, k, float(np.linalg.norm(ns.steady_residual(x)[free]))
    finally:
        lu.close()
    raise Diverged(f"Newton did not converge in {max_iterations} iterations (last relative update {step:.3g})")


def solve_steady(ns: NavierStokes, tol: float = 1e-8, max_iterations: int = 30,
                 on_iteration: Callable[[int, float], None] | None = None) -> tuple[np.ndarray, NewtonReport]:
    """Stationary flow: plain Newton from Stokes, else continuation from a smaller Reynolds number.

    Continuation raises the viscosity by factors of two until Newton converges,
    then walks back down to the target, each solve starting from the previous one.
    """
    x0 = ns.stokes()
    try:
        x, its, res = newton(ns, x0, tol, max_iterations, on_iteration)
        return x, NewtonReport(its, res, [])
    except Diverged:
        pass
    ladder = [ns.viscosity * 2.0**k for k in range(1, 9)]
    for start, nu in enumerate(ladder):
        easier = NavierStokes(ns.th, nu, ns.dirichlet)
        try:
            x, _, _ = newton(easier, easier.stokes(), tol, max_iterations)
            break
        except Diverged:
            continue
    else:
        raise Diverged("Newton did not converge even at 1/256 of the Reynolds number; "
                       "the flow may have no stable steady state: try a transient analysis")
    total = 0
    for nu in ladder[:start][::-1]:
        x, its, _ = newton(NavierStokes(ns.th, nu, ns.dirichlet), x, tol, max_iterations)
        total += its
    x, its, res = newton(ns, x, tol, max_iterations, on_iteration)
    return x, NewtonReport(total + its, res, [ns.viscosity / nu for nu in ladder[:start + 1]][::-1])
