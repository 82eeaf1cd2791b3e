"""Dirichlet data: which unknowns are prescribed and their values over time."""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from .meshing import ChannelMesh
from .spec import JobSpec
from .taylor_hood import TaylorHood


@dataclass
class Dirichlet:
    """Prescribed unknowns ``dofs`` (indices into ``[u_x, u_y, p]``) with values ``steady + factor(t) * unsteady``."""

    dofs: np.ndarray
    steady: np.ndarray
    unsteady: np.ndarray
    factor: Callable[[float], float] = field(default=lambda t: 0.0)

    def values(self, t: float = 0.0) -> np.ndarray:
        """Full-length vector holding the prescribed values (zero elsewhere)."""
        return self.steady + self.factor(t) * self.unsteady


def channel_conditions(th: TaylorHood, cm: ChannelMesh, spec: JobSpec) -> Dirichlet:
    """Inflow profile at x=0, no-slip or slip walls, moving or resting bodies; outflow is free."""
    n = th.nu
    basis = th.velocity
    x = basis.doflocs
    steady = np.zeros(th.ndofs)
    unsteady = np.zeros(th.ndofs)
    fixed: list[np.ndarray] = []

    inlet = basis.get_dofs(cm.facets["inlet"]).all()
    y = x[1, inlet]
    H = spec.channel.height
    peak = spec.inflow.peak()
    profile = peak * 4 * y * (H - y) / H**2 if spec.inflow.profile == "parabolic" else np.full_like(y, peak)
    unsteady[inlet] = profile
    fixed += [inlet, n + inlet]

    walls = basis.get_dofs(cm.facets["walls"]).all()
    if spec.channel.walls == "no-slip":
        unsteady[walls] = 0.0
        fixed += [walls, n + walls]
    else:
        fixed += [n + walls]
    unsteady[n + walls] = 0.0

    for body in spec.bodies:
        dofs = basis.get_dofs(cm.facets[body.name]).all()
        unsteady[dofs] = unsteady[n + dofs] = 0.0
        velocity = body.wall_velocity(x[:, dofs])
        steady[dofs], steady[n + dofs] = velocity
        fixed += [dofs, n + dofs]
    return Dirichlet(np.unique(np.concatenate(fixed)), steady, unsteady, spec.inflow.factor)


def body_dofs(th: TaylorHood, cm: ChannelMesh, spec: JobSpec) -> dict[str, np.ndarray]:
    """Scalar velocity DoFs on each body's surface (for the force functionals)."""
    return {b.name: th.velocity.get_dofs(cm.facets[b.name]).all() for b in spec.bodies}
