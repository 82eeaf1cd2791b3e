"""Forces on bodies by the volume-integral (weak-residual) method.

The momentum residual tested with a discrete function that is one on a body's
surface and zero on every other boundary equals minus the force the fluid exerts
on that body; it converges much faster than integrating the stress over the
surface. The test function is the sum of the body's surface basis functions, so
each force is a few dot products with vectors precomputed here.

The residual is that of the gradient (pseudo-traction) form the equations are
solved in. On a body in rigid motion the pseudo-traction and the true stress
give the same total force, and adding the transposed-gradient term explicitly
was measured to leave a mesh-independent error of about 1e-5 in cD on the
2D-1 benchmark, so it is left out.

On a moving mesh (:mod:`solver.ale`) the residual is that of the ALE form: the nodal time derivative and
convection by the velocity relative to the mesh add up to the same material derivative, so the same test gives
the force; the products with the matrices are renewed whenever the mesh has moved.
"""

from __future__ import annotations

import numpy as np

from .navier_stokes import NavierStokes


class BodyForces:
    """Evaluate ``(Fx, Fy)`` on every body from a solution and its time derivative."""

    def __init__(self, ns: NavierStokes, body_dofs: dict[str, np.ndarray], density: float):
        self.density = density
        self.ns = ns
        self.names = list(body_dofs)
        self.body_dofs = body_dofs
        self._build()

    def _build(self) -> None:
        """The test functions' products with the current matrices (again whenever the mesh has moved)."""
        ns, th = self.ns, self.ns.th
        n = th.nu
        self.version = ns.geometry_version
        self.tests = []
        for dofs in self.body_dofs.values():
            psi = np.zeros(n)
            psi[dofs] = 1.0
            wx, wy = np.zeros(th.ndofs), np.zeros(th.ndofs)
            wx[dofs], wy[n + dofs] = 1.0, 1.0
            self.tests.append(
                {
                    "wx": wx,
                    "wy": wy,
                    "Sx": ns.stokes_matrix.T @ wx,
                    "Sy": ns.stokes_matrix.T @ wy,
                    "Mw": th.mass.T @ psi,
                }
            )

    def evaluate(
        self, x: np.ndarray, convection: np.ndarray, dudt: np.ndarray | None = None
    ) -> dict[str, tuple[float, float]]:
        """Forces per body.

        ``convection`` is the full-length convection vector the scheme used at
        this step; ``dudt`` the scheme's discrete time derivative (full length,
        or ``None`` for a steady state).
        """
        if self.version != self.ns.geometry_version:
            self._build()
        th = self.ns.th
        out = {}
        for name, w in zip(self.names, self.tests):
            rx = w["Sx"] @ x + w["wx"] @ convection
            ry = w["Sy"] @ x + w["wy"] @ convection
            if dudt is not None:
                vx, vy, _ = th.split(dudt)
                rx += w["Mw"] @ vx
                ry += w["Mw"] @ vy
            out[name] = (-self.density * float(rx), -self.density * float(ry))
        return out
