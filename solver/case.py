"""Everything a spec needs before the first solve: mesh, spaces, operator, force and probe functionals."""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np
import scipy.sparse as sp

from . import _polygons, meshing
from .ale import Law, MeshMotion, MovingBody, MovingNavierStokes
from .boundary import body_dofs, channel_conditions
from .forces import BodyForces
from .motion import SpringMount
from .navier_stokes import NavierStokes
from .output import force_columns
from .probes import probe_matrix
from .spec import JobSpec
from .spring import SpringBody, SpringCoupling
from .taylor_hood import TaylorHood


@dataclass
class Case:
    spec: JobSpec
    mesh: meshing.ChannelMesh
    th: TaylorHood
    ns: NavierStokes
    forces: BodyForces
    coefficient_scale: dict[str, float]
    pressure_probes: sp.csr_matrix | None
    velocity_probes: sp.csr_matrix | None
    velocity_found: np.ndarray
    timings: dict[str, float] = field(default_factory=dict)
    unavailable: dict[str, str] = field(default_factory=dict)
    springs: SpringCoupling | None = None

    @classmethod
    def build(cls, spec: JobSpec) -> Case:
        t0 = time.perf_counter()
        cm = meshing.build(spec)
        t1 = time.perf_counter()
        th = TaylorHood(cm.mesh, spec.elements)
        surfaces = body_dofs(th, cm, spec)
        conditions = channel_conditions(th, cm, spec)
        rho, U = spec.fluid.density, spec.reference_velocity()
        moving, springs = [], []
        for i, b in enumerate(spec.bodies):
            law: Law
            if isinstance(b.mount, SpringMount):
                law = SpringBody(
                    b.name, b.mount, rho * _polygons.area(b.outline()), b.mount.frequency(U, spec.reference_length(i))
                )
                springs.append(law)
            elif b.mount is not None:
                law = b.mount
            else:
                continue
            moving.append(MovingBody(b.name, surfaces[b.name], law))
        if moving:
            ns: NavierStokes = MovingNavierStokes(th, spec.viscosity(), conditions, MeshMotion(th, moving))
        else:
            ns = NavierStokes(th, spec.viscosity(), conditions)
        forces = BodyForces(ns, surfaces, rho)
        scale = {b.name: 2.0 / (rho * U**2 * spec.reference_length(i)) for i, b in enumerate(spec.bodies)}
        unavailable: dict[str, str] = {}
        pressure = None
        if spec.probes.pressure_drop:
            points = np.array(spec.probes.pressure_drop).T
            matrix, found = probe_matrix(th.pressure, cm.parent, points)
            if found.all():
                pressure = matrix
            else:
                unavailable["pressure_drop"] = _outside(points[:, ~found])
        velocity, velocity_found = None, np.zeros(len(spec.probes.velocity), dtype=bool)
        if spec.probes.velocity:
            points = np.array(spec.probes.velocity).T
            matrix, velocity_found = probe_matrix(th.velocity, cm.parent, points)
            velocity = matrix[velocity_found] if velocity_found.any() else None
            for k in np.nonzero(~velocity_found)[0]:
                unavailable[f"velocity_probes.{k}"] = _outside(points[:, [k]])
        t2 = time.perf_counter()
        return cls(
            spec,
            cm,
            th,
            ns,
            forces,
            scale,
            pressure,
            velocity,
            velocity_found,
            {"mesh": t1 - t0, "setup": t2 - t1},
            unavailable,
            SpringCoupling(springs, forces) if springs else None,
        )

    @property
    def cells(self) -> int:
        return int(self.mesh.mesh.t.shape[1])

    def force_row(self, t: float, x: np.ndarray, convection: np.ndarray, dudt: np.ndarray | None) -> list[float]:
        """One forces.csv row: time, per body Fx, Fy, cD, cL, the pressure drop, probe velocities."""
        row = [t]
        for name, (fx, fy) in self.forces.evaluate(x, convection, dudt).items():
            c = self.coefficient_scale[name]
            row += [fx, fy, c * fx, c * fy]
        if self.pressure_probes is not None:
            pa, pb = self.pressure_probes @ self.th.split(x)[2]
            row.append(self.spec.fluid.density * float(pa - pb))
        if self.velocity_probes is not None:
            ux, uy, _ = self.th.split(x)
            row += np.ravel(np.c_[self.velocity_probes @ ux, self.velocity_probes @ uy]).tolist()
        return row

    def columns(self) -> list[str]:
        """forces.csv header; a probe point outside the fluid has no columns (summary.json says why)."""
        return force_columns(
            [b.name for b in self.spec.bodies],
            self.pressure_probes is not None,
            [int(k) + 1 for k in np.nonzero(self.velocity_found)[0]],
        )

    @property
    def motion(self) -> MeshMotion | None:
        """How the mesh moves, or None when every body is fixed."""
        return self.ns.motion if isinstance(self.ns, MovingNavierStokes) else None

    def motion_columns(self) -> list[str]:
        """forces.csv's displacement columns (m), two per moving body, after all the others."""
        motion = self.motion
        return [f"{b.name}_{axis}" for b in (motion.bodies if motion else []) for axis in ("dx", "dy")]

    def motion_row(self, t: float) -> list[float]:
        """The moving bodies' displacements at time ``t``, in the order of :meth:`motion_columns`."""
        motion = self.motion
        if motion is None:
            return []
        return [float(v) for k in range(len(motion.bodies)) for v in motion.displacement(k, t)]

    def velocity_probe_values(self, row: list[float]) -> list[list[float] | None]:
        """Probe velocities ``[ux, uy]`` from a forces row, ``None`` for a point outside the fluid."""
        found = int(self.velocity_found.sum())
        values = iter(np.reshape(row[len(row) - 2 * found :], (-1, 2)).tolist() if found else [])
        return [next(values) if ok else None for ok in self.velocity_found]

    def cfl(self, x: np.ndarray, dt: float) -> float:
        """Largest |u - w| dt / h over the cells, h the cell's shortest edge (as meshed) divided by the velocity
        degree, w the mesh velocity (zero unless bodies move: the flow is carried across the cells by u - w)."""
        if isinstance(self.ns, MovingNavierStokes):
            x = x - self.ns.mesh_velocity
        ux, uy, _ = self.th.split(x)
        speed = np.hypot(ux, uy)[self.th.velocity.element_dofs].max(axis=0)
        return float((speed * self._inverse_cell_size).max() * dt)

    @cached_property
    def _inverse_cell_size(self) -> np.ndarray:
        mesh = self.mesh.parent
        p = mesh.p[:, mesh.t]
        edges = np.linalg.norm(p - np.roll(p, 1, axis=1), axis=0).min(axis=0)
        return (2 if self.spec.elements == "P2P1" else 3) / edges


def _outside(points: np.ndarray) -> str:
    where = ", ".join(f"({x:g}, {y:g})" for x, y in points.T)
    return f"probe point {where} is not in the fluid (inside a body or off the mesh): no value"
