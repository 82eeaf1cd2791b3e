"""Length of the reversed-flow zone behind a body, or why it has none that can be measured."""

from __future__ import annotations

import numpy as np

from . import _polygons
from .case import Case
from .probes import probe_matrix

SAMPLES = 2000


def recirculation_length(case: Case, x: np.ndarray, body: int) -> tuple[float | None, str | None]:
    """Length of reversed flow along the body's centre line from its rearmost point, and a reason when unknown.

    0 when the flow right behind the body goes downstream. ``None`` with a
    reason when the reversed flow runs into another body or out of the channel:
    its end is then not a property of this body's wake.
    """
    spec = case.spec
    b = spec.bodies[body]
    x_back, y_c = float(b.outline()[:, 0].max()), float(b.reference_point()[1])
    xs = np.linspace(x_back, spec.channel.length, SAMPLES)[1:]
    line = np.c_[xs, np.full_like(xs, y_c)]
    end, blocker = len(xs), "the outlet"
    for j, other in enumerate(spec.bodies):  # the line stops at the first body downstream
        if j != body:
            hit = np.nonzero(_polygons.contains(other.outline(), line))[0]
            if len(hit) and hit[0] < end:
                end, blocker = int(hit[0]), other.name
    matrix, found = probe_matrix(case.th.velocity, case.mesh.parent, line[:end].T)
    if not found.all():  # just outside a body's curved surface
        end = int(np.argmin(found))
    if end == 0:
        return None, f"{blocker} is directly behind {b.name}: no room for a wake to measure"
    ux = (matrix @ case.th.split(x)[0])[:end]
    if ux[0] >= 0:
        return 0.0, None
    forward = np.nonzero(ux >= 0)[0]
    if not len(forward):
        return None, f"the reversed flow behind {b.name} reaches {blocker}, so its length is not defined"
    i = int(forward[0])
    x_r = xs[i - 1] - ux[i - 1] * (xs[i] - xs[i - 1]) / (ux[i] - ux[i - 1])
    return float(x_r - x_back), None
