"""Moving meshes for moving bodies: the arbitrary Lagrangian-Eulerian (ALE) form of the equations.

Mesh motion. Each moving body k has a shape function phi_k: the harmonic extension (Laplace's equation on the
undeformed mesh, solved once) of 1 on that body's surface and 0 on every other boundary. A node at ``X`` sits at
``X + sum_k s_k(t) phi_k(X) e_k`` with ``s_k`` the body's displacement along its direction ``e_k``, so the mesh
velocity is ``sum_k s_k'(t) phi_k e_k``: both are exact at every time a stage asks for, the body keeps its shape
(phi = 1 on all its nodes, the curved edges' middle nodes included) and the outer boundaries stay put (phi = 0).
A harmonic function has no interior extremes, so 0 <= phi <= 1 and neighbouring nodes move by similar amounts;
for displacements small against the gaps between boundaries (the spec asks for at least half of each gap to
remain) no cell turns over. Laplace smoothing of the displacement is common practice for moving meshes.

Equations. Nodal values follow the moving nodes, so the time derivative the BDF2 formula takes of the nodal values
is the derivative at a fixed reference point ``X``; in this non-conservative ALE form the momentum equation reads
``du/dt|_X + ((u - w) . grad) u + grad p - nu laplace u = 0`` with ``w`` the mesh velocity, every spatial term
assembled on the mesh where it is at the new time level (see e.g. Donea, Huerta, Ponthot & Rodriguez-Ferran,
"Arbitrary Lagrangian-Eulerian methods", Encyclopedia of Computational Mechanics, 2004, section 3). A uniform
flow has no gradient, so it stays uniform under any mesh motion (the test of the geometric conservation law), and
the BDF2 formula keeps its order because the mesh positions and velocities are exact, not differenced.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Protocol

import numpy as np
from skfem import MeshTri2, condense, solve

from .boundary import Dirichlet
from .errors import RunFailed
from .navier_stokes import NavierStokes
from .taylor_hood import TaylorHood


class Law(Protocol):
    """Where a moving body is: its displacement and velocity ``(x, y)`` at a stage's time."""

    def offset(self, t: float) -> np.ndarray: ...

    def rate(self, t: float) -> np.ndarray: ...


@dataclass
class MovingBody:
    """One body that moves: its surface's velocity DoFs and its law of motion (a driven mount, a spring body)."""

    name: str
    dofs: np.ndarray
    law: Law


class MeshTangled(RunFailed):
    """A body moved so far that cells of the mesh following it turned over: the flow there cannot be computed."""


class MeshMotion:
    """Node positions and mesh velocities of a mesh whose bodies move by their mounts."""

    def __init__(self, th: TaylorHood, bodies: list[MovingBody]):
        if th.elements != "P2P1":
            raise ValueError("moving meshes are built for P2P1 elements")
        self.bodies = bodies
        mesh = th.mesh
        self.reference = mesh
        self.curved = isinstance(mesh, MeshTri2)
        self.nodes = (mesh.doflocs if self.curved else mesh.p).copy()
        self.start = th.velocity.doflocs.copy()  # where the velocity DoFs were meshed
        self.orientation = np.sign(_signed_areas(self.nodes, mesh.t))  # a cell that flips it has turned over
        boundary = th.velocity.get_dofs(mesh.boundary_facets()).all()
        self.shapes = [self._harmonic(th, boundary, b.dofs) for b in bodies]

    @staticmethod
    def _harmonic(th: TaylorHood, boundary: np.ndarray, body: np.ndarray) -> np.ndarray:
        """phi on the velocity DoFs: harmonic, 1 on ``body``, 0 on the other boundaries.

        On a straight mesh only the vertices carry geometry: the edge values are set to their vertices' mean, so
        ``phi`` is the (piecewise linear) velocity of the mesh's points.
        """
        phi = np.zeros(th.nu)
        phi[body] = 1.0
        phi = solve(*condense(th.stiffness, x=phi, D=boundary))
        if not isinstance(th.mesh, MeshTri2):
            edges = th.velocity.facet_dofs[0]
            phi[edges] = phi[th.velocity.nodal_dofs[0][th.mesh.facets]].mean(axis=0)
        return np.clip(phi, 0.0, 1.0)

    def _node_values(self, phi: np.ndarray) -> np.ndarray:
        """phi at the mesh's geometry nodes (all of them on a curved mesh, the vertices on a straight one)."""
        return phi if self.curved else phi[: self.nodes.shape[1]]

    def mesh_at(self, t: float):
        """The mesh with every node where it is at time ``t``; :class:`MeshTangled` once a cell turns over."""
        nodes = self.nodes.copy()
        for body, phi in zip(self.bodies, self.shapes):
            nodes += np.outer(body.law.offset(t), self._node_values(phi))
        mesh = self.reference
        if (_signed_areas(nodes, mesh.t) * self.orientation <= 0).any():
            moved = ", ".join(f"{b.name} by ({d[0]:.3g}, {d[1]:.3g}) m" for b in self.bodies for d in [b.law.offset(t)])
            raise MeshTangled(
                f"at t = {t:.6g} s the moving bodies ({moved}) came so close to a wall or another body that the "
                "mesh cannot follow (cells turned over): give the body more room, or a stiffer or more damped mount"
            )
        return MeshTri2(nodes, mesh.t) if self.curved else type(mesh)(nodes, mesh.t)

    def velocity_at(self, t: float) -> tuple[np.ndarray, np.ndarray]:
        """The mesh velocity ``(w_x, w_y)`` on the velocity DoFs at time ``t``."""
        w = np.zeros((2, len(self.shapes[0]) if self.shapes else 0))
        for body, phi in zip(self.bodies, self.shapes):
            w += np.outer(body.law.rate(t), phi)
        return w[0], w[1]

    def displacement(self, body: int, t: float) -> np.ndarray:
        """``(dx, dy)`` of a moving body from its meshed position, m."""
        return self.bodies[body].law.offset(t)


def _signed_areas(nodes: np.ndarray, cells: np.ndarray) -> np.ndarray:
    """Twice the signed area of each cell's vertex triangle (the vertices are the first nodes of a curved mesh)."""
    a, b, c = (nodes[:, cells[k]] for k in range(3))
    return (b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0])


@dataclass
class MovingDirichlet(Dirichlet):
    """Prescribed values plus each moving body's velocity on its surface (no-slip on a moving wall)."""

    motions: list[tuple[np.ndarray, np.ndarray, Callable[[float], np.ndarray]]] = field(default_factory=list)

    def values(self, t: float = 0.0) -> np.ndarray:
        x = super().values(t)
        for along_x, along_y, rate in self.motions:
            vx, vy = rate(t)
            x += vx * along_x + vy * along_y
        return x


def moving_conditions(th: TaylorHood, fixed: Dirichlet, bodies: list[MovingBody]) -> MovingDirichlet:
    """``fixed`` with each moving body's surface velocity added along its direction."""
    motions: list[tuple[np.ndarray, np.ndarray, Callable[[float], np.ndarray]]] = []
    for body in bodies:
        along_x, along_y = np.zeros(th.ndofs), np.zeros(th.ndofs)
        along_x[body.dofs], along_y[th.nu + body.dofs] = 1.0, 1.0
        motions.append((along_x, along_y, body.law.rate))
    return MovingDirichlet(fixed.dofs, fixed.steady, fixed.unsteady, fixed.factor, motions)


class MovingNavierStokes(NavierStokes):
    """The operator on a moving mesh: reassembled where the mesh is, convection by the relative velocity ``u - w``.

    The stepper calls :meth:`move_to` with each stage's time before it builds that stage's equations.
    """

    def __init__(self, th: TaylorHood, viscosity: float, dirichlet: Dirichlet, motion: MeshMotion):
        super().__init__(th, viscosity, moving_conditions(th, dirichlet, motion.bodies))
        self.motion = motion
        self.mesh_time: float | None = None
        self.mesh_velocity = np.zeros(th.ndofs)
        self.move_to(0.0)

    @property
    def moves(self) -> bool:
        return True

    def move_to(self, t: float, again: bool = False) -> None:
        """Move the mesh to time ``t``; ``again`` even when it is there already (a spring body's new guess)."""
        if t == self.mesh_time and not again:
            return
        self.th.move(self.motion.mesh_at(t))
        self.stokes_matrix = self.th.saddle_point(self.viscosity * self.th.stiffness).tocsr()
        wx, wy = self.motion.velocity_at(t)
        self.mesh_velocity = np.concatenate([wx, wy, np.zeros(self.th.npr)])
        self.mesh_time = t
        self.geometry_version += 1

    def convection(self, x: np.ndarray, advecting: np.ndarray | None = None) -> np.ndarray:
        return super().convection(x, (x if advecting is None else advecting) - self.mesh_velocity)

    def oseen_blocks(self, advecting: np.ndarray):
        return super().oseen_blocks(advecting - self.mesh_velocity)

    def jacobian(self, x, shift=None):
        raise NotImplementedError("a moving mesh has no steady state: moving bodies need a transient analysis")
