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


def newton(
    ns: NavierStokes,
    x0: np.ndarray,
    tol: float = 1e-8,
    max_iterations: int = 30,
    on_iteration: Callable[[int, float], None] | None = None,
) -> tuple[np.ndarray, int, float]:
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


def solve_steady(
    ns: NavierStokes,
    tol: float = 1e-8,
    max_iterations: int = 30,
    on_iteration: Callable[[int, float], None] | None = None,
    t: float = 0.0,
) -> tuple[np.ndarray, NewtonReport]:
    """Stationary flow with the boundary data at time ``t``: plain Newton from Stokes, else continuation in Re.

    Continuation first finds a viscosity, up to 256 times the target, at which
    Newton converges from Stokes, then walks back to the target; a step that
    fails is retried shorter (the Reynolds-number ratio per step is square-rooted).
    ``continuation_steps`` lists the fractions of the target Reynolds number solved on the way.
    """
    target = ns.viscosity
    try:
        x, its, res = newton(ns, ns.stokes(t), tol, max_iterations, on_iteration)
        return x, NewtonReport(its, res, [])
    except Diverged:
        pass
    for k in range(1, 9):
        easier = NavierStokes(ns.th, target * 2.0**k, ns.dirichlet)
        try:
            x, total, _ = newton(easier, easier.stokes(t), tol, max_iterations)
            break
        except Diverged:
            continue
    else:
        raise Diverged(
            "Newton did not converge even at 1/256 of the Reynolds number; "
            "the flow may have no stable steady state: try a transient analysis"
        )
    nu_ok, factor, steps = target * 2.0**k, 2.0, [2.0**-k]
    while nu_ok > target:
        nu = max(target, nu_ok / factor)
        try:
            problem = ns if nu == target else NavierStokes(ns.th, nu, ns.dirichlet)
            x_new, its, res = newton(problem, x, tol, max_iterations, on_iteration if nu == target else None)
        except Diverged:
            factor = factor**0.5
            if factor < 1.01:
                raise Diverged(
                    f"continuation stalled at {target / nu_ok:.3g} of the target Reynolds number; "
                    "the flow may have no steady state there: try a transient analysis"
                ) from None
            continue
        x, nu_ok, total = x_new, nu, total + its
        steps.append(target / nu)
    return x, NewtonReport(total, res, steps)
