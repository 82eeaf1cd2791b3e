"""Room for a spring-mounted body to swing: a warning (not a refusal) when its expected swing would squeeze the
mesh between it and a wall or another body.

A spring-mounted body's amplitude comes out of the run, so the spec cannot check its room the way it checks a
driven body's (:func:`solver.spec._check_motion`). This module assumes a conservative swing instead:

- across the stream (``y``), :data:`CROSS_FLOW_REACH` reference lengths: free cross-flow vibration of a circle in
  laminar flow (Re about 100, low mass and damping) peaks at an amplitude of about 0.6 D at lock-in (Ahn &
  Kallinderis 2006, J. Comput. Phys. 219:671; Prasanth & Mittal 2008, J. Fluid Mech. 594:463; recalled, not read);
- along the stream (``x``), the springs' static give under the drag ``F = C_D rho U^2 L / 2`` with
  :data:`ASSUMED_DRAG_COEFFICIENT` (a laminar circle's drag coefficient is about 1.3 to 2 from Re 20 to 200, common
  practice; more at lower Re and with blockage), and at least :data:`IN_LINE_REACH` reference lengths for the
  in-line swing (a project choice);
- along either free axis, at least the undamped swing from the body's initial displacement and velocity,
  ``sqrt(s0^2 + (v0 / (2 pi f_n))^2)``.

The body then warns when, at those extremes, it keeps less than :data:`solver.spec.KEEP_CLEARANCE` of a gap it has
at rest: the rule the spec applies to driven bodies, beyond which cells may turn over (:class:`solver.ale.MeshTangled`).
"""

from __future__ import annotations

import itertools
import math

import numpy as np

from . import _polygons
from .motion import DrivenMount, SpringMount
from .spec import KEEP_CLEARANCE, JobSpec

CROSS_FLOW_REACH = 0.6  # reference lengths: a circle's peak free-vibration amplitude at Re ~ 100 (recalled)
IN_LINE_REACH = 0.1  # reference lengths: the least reach along the stream assumed (a project choice)
ASSUMED_DRAG_COEFFICIENT = 2.0  # for the springs' static give along the stream (conservative for laminar shedding)
SIDES = ("the inlet", "the lower wall", "the outlet", "the upper wall")

Problems = list[tuple[str, str]]


def expected_reach(spec: JobSpec, i: int) -> np.ndarray:
    """``(reach_x, reach_y)`` the ``i``-th body is assumed to swing to, m (zero for a held axis or no spring)."""
    body, mount = spec.bodies[i], spec.bodies[i].mount
    reach = np.zeros(2)
    if not isinstance(mount, SpringMount):
        return reach
    free = mount.free()
    U, L, rho = spec.reference_velocity(), spec.reference_length(i), spec.fluid.density
    if free[0]:
        stiffness = mount.mass_ratio * rho * _polygons.area(body.outline()) * (2 * math.pi * mount.frequency(U, L)) ** 2
        give = ASSUMED_DRAG_COEFFICIENT * 0.5 * rho * U**2 * L / stiffness
        reach[0] = max(give, IN_LINE_REACH * L)
    if free[1]:
        reach[1] = CROSS_FLOW_REACH * L
    s0, v0 = mount.start()[:2], mount.start()[2:]
    released = np.hypot(s0, v0 / (2 * math.pi * mount.frequency(U, L)))  # a free swing's amplitude from its start
    return np.maximum(reach, released)


def _shifts(spec: JobSpec, i: int) -> list[np.ndarray]:
    """The displacements at which a body's extremes are judged (its drawn position when it does not move)."""
    mount = spec.bodies[i].mount
    if isinstance(mount, DrivenMount):
        return [-mount.amplitude * mount.unit(), mount.amplitude * mount.unit()]
    rx, ry = expected_reach(spec, i)
    return [np.array(p) for p in itertools.product({-rx, rx}, {-ry, ry})]


def _wall_gaps(spec: JobSpec, pts: np.ndarray) -> np.ndarray:
    L, H = spec.channel.length, spec.channel.height
    return np.array([pts[:, 0].min(), pts[:, 1].min(), L - pts[:, 0].max(), H - pts[:, 1].max()])


def room_warnings(spec: JobSpec) -> Problems:
    """``(field, message)`` per spring-mounted body whose assumed swing leaves less than half of a gap at rest."""
    warnings: Problems = []
    outlines = [b.outline() for b in spec.bodies]
    for i, body in enumerate(spec.bodies):
        if not isinstance(body.mount, SpringMount) or not _checkable(spec, i):
            continue
        rx, ry = expected_reach(spec, i)
        assumed = _assumed(rx, ry, spec.reference_length(i))
        rest = _wall_gaps(spec, outlines[i])
        moved = np.min([_wall_gaps(spec, outlines[i] + s) for s in _shifts(spec, i)], axis=0)
        near = [(SIDES[k], rest[k], max(moved[k], 0.0)) for k in range(4) if moved[k] < KEEP_CLEARANCE * rest[k]]
        for j, other in enumerate(spec.bodies):
            if j == i:
                continue
            gap_rest = _polygons.gap(outlines[i], outlines[j])
            gap_moved = min(
                _polygons.gap(outlines[i] + s, outlines[j] + r) for s in _shifts(spec, i) for r in _shifts(spec, j)
            )
            if gap_moved < KEEP_CLEARANCE * gap_rest:
                near.append((other.name, gap_rest, max(gap_moved, 0.0)))
        if near:
            places = " and ".join(f"{moved:.3g} m of {what} ({rest:.3g} m at rest)" for what, rest, moved in near)
            warnings.append(
                (
                    f"bodies.{i}.mount",
                    f"{body.name} may come within {places} if it swings {assumed}: less than {KEEP_CLEARANCE:g} of "
                    "a gap at rest, and the run stops when the mesh cannot follow. Give it more room, or a larger "
                    "mass ratio, more damping or a lower reduced velocity",
                )
            )
    return warnings


def _checkable(spec: JobSpec, i: int) -> bool:
    """A mount whose natural frequency is given one way exactly (the spec reports the others as problems)."""
    mount = spec.bodies[i].mount
    return isinstance(mount, SpringMount) and (mount.reduced_velocity is None) != (mount.natural_frequency is None)


def _assumed(rx: float, ry: float, length: float) -> str:
    parts = []
    if ry:
        parts.append(
            f"{ry:.3g} m across the stream ({CROSS_FLOW_REACH:g} of its reference length: the peak of a circle's free "
            "vibration in laminar flow, about 0.6 D at Re 100, recalled from published simulations)"
        )
    if rx:
        parts.append(
            f"{rx:.3g} m along it ({rx / length:.2g} of its reference length: the springs' give under a drag "
            f"coefficient of {ASSUMED_DRAG_COEFFICIENT:g}, at least {IN_LINE_REACH:g})"
        )
    return " and ".join(parts)
