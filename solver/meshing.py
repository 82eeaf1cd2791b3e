"""Channel meshes from a job spec: gmsh builds curved (quadratic) triangles refined at bodies and in the wake.

The result is a :class:`ChannelMesh`: the scikit-fem mesh, its straight-sided
parent (for locating points) and boundary facets by name ("inlet", "outlet",
"walls" and one entry per body).
"""

from __future__ import annotations

import ctypes
import math
import signal
import threading
from dataclasses import dataclass
from typing import Any

import numpy as np
from skfem import MeshTri, MeshTri2

from . import _polygons
from .shapes import Circle, Ellipse, Naca4, Polygon, Rectangle
from .spec import JobSpec

# Final element sizes as fractions of the reference length D (at bodies, in the wake, far field), and how
# many times a mesh of twice (four times) those sizes is split uniformly to reach them. Split meshes
# converge far more regularly than freshly graded ones of the same size: on the 2D-1 benchmark, medium
# gives cD within 1e-5 with about 46k unknowns where a directly generated mesh needed 90k.
PRESETS = {
    "coarse": ((1 / 20, 1 / 3, 1 / 1.2), 0),
    "medium": ((1 / 40, 1 / 4, 1 / 1.6), 1),
    "fine": ((1 / 40, 1 / 6, 1 / 2.4), 2),
}

_gmsh_lock = threading.Lock()  # gmsh keeps global state


@dataclass
class MeshSizes:
    """Final element sizes; the mesher builds a mesh ``2**preset_splits`` times coarser and splits it."""

    body: float
    wake: float
    far: float
    wake_length: float
    preset_splits: int = 0
    extra_splits: int = 0


@dataclass
class ChannelMesh:
    mesh: MeshTri2 | MeshTri
    parent: MeshTri
    facets: dict[str, np.ndarray]


def sizes(spec: JobSpec) -> MeshSizes:
    """Element sizes of a spec: preset fractions of the smallest body, overridden by explicit sizes."""
    m, ch = spec.mesh, spec.channel
    d = min((b.reference_length() for b in spec.bodies), default=ch.height / 4)
    (fb, fw, ff), splits = PRESETS[m.preset]
    far = min(m.far_size or ff * d, ch.height / 4, ch.length / 4)
    body = min(m.body_size or fb * d, far)
    wake = min(max(m.wake_size or fw * d, body), far)
    wake_length = m.wake_length if m.wake_length is not None else min(ch.length, 12 * d)
    return MeshSizes(body * m.scale, wake * m.scale, far * m.scale, wake_length, splits, m.refinements)


# The size rule below counts cells by area and size but misses the graded band around each body, which fills
# most of the channel: on the examples it gave 0.41-0.61 of the mesher's cells on coarse meshes, 0.19-0.32 on
# medium and 0.14-0.25 on fine ones. These factors bring it to 0.68-1.24 of the mesher's counts (the tests check
# within 35 %); :mod:`solver.sizing` uses it only for meshes too big for a dry run of the mesher.
RULE_CORRECTION = {"coarse": 2.0, "medium": 3.6, "fine": 5.0}


def estimate_cells(spec: JobSpec) -> int:
    """Rough triangle count by the size rule (calibrated against the mesher, see :data:`RULE_CORRECTION`)."""
    s = sizes(spec)
    ch = spec.channel

    def per_area(size: float) -> float:  # cells per unit area; guarded against sizes that underflow
        return 2.3 * RULE_CORRECTION[spec.mesh.preset] / max(size, 1e-150) ** 2

    cells = ch.length * ch.height * per_area(s.far)
    for body in spec.bodies:
        pts = body.outline()
        extent = float(np.ptp(pts[:, 1])) + 2 * s.wake
        perimeter = float(np.linalg.norm(np.diff(np.vstack([pts, pts[:1]]), axis=0), axis=1).sum())
        wake_area = min(s.wake_length, ch.length) * min(extent * 2, ch.height)
        cells += wake_area * per_area(s.wake) + perimeter * 4 * s.body * per_area(s.body)
    return int(min(cells * 4**s.extra_splits, 1e18))


def estimate_dofs(spec: JobSpec) -> int:
    """Rough count of unknowns: Taylor-Hood P2/P1 has about 4.5 per cell, P3/P2 about 9.5."""
    return int(estimate_cells(spec) * (4.5 if spec.elements == "P2P1" else 9.5))


def build(spec: JobSpec) -> ChannelMesh:
    """Mesh the channel of ``spec`` with its bodies cut out."""
    s = sizes(spec)
    coarsen = 2**s.preset_splits
    base = MeshSizes(
        s.body * coarsen, s.wake * coarsen, s.far * coarsen, s.wake_length, s.preset_splits, s.extra_splits
    )
    with _gmsh_lock:
        p, t = _generate(spec, base)
    order2 = t.shape[0] == 6
    vertices = np.unique(t[:3])
    parent_index = -np.ones(p.shape[1], dtype=np.int64)
    parent_index[vertices] = np.arange(len(vertices))
    parent = MeshTri(np.ascontiguousarray(p[:, vertices]), np.ascontiguousarray(parent_index[t[:3]]))
    mesh = MeshTri2(p, _sorted_quadratic(t)) if order2 else parent
    return ChannelMesh(mesh, parent, _tag_boundaries(mesh, spec))


def _sorted_quadratic(t: np.ndarray) -> np.ndarray:
    """Order each cell's vertices by index, moving the edge nodes along.

    Cubic elements orient their two edge DoFs by the vertex order, so
    neighbouring cells must agree on it; scikit-fem does this for straight
    meshes but not for quadratic ones.
    """
    n = t.shape[1]
    mid = np.zeros((n, 3, 3), dtype=t.dtype)
    for k, (i, j) in enumerate([(0, 1), (1, 2), (2, 0)]):
        mid[:, i, j] = mid[:, j, i] = t[3 + k]
    perm = np.argsort(t[:3], axis=0)
    cols = np.arange(n)
    out = np.empty_like(t)
    out[:3] = t[perm, cols]
    for k, (i, j) in enumerate([(0, 1), (1, 2), (2, 0)]):
        out[3 + k] = mid[cols, perm[i], perm[j]]
    return out


def _initialize_keeping_signal_handlers(gmsh: Any) -> None:
    """gmsh.initialize resets SIGTERM and SIGINT to the default action in C; put back the process's own handlers,
    so a worker asked to stop can still hand its job back instead of dying on the spot, and a service that meshes
    in its thread pool (previews, the unknowns limit) still stops cleanly on SIGTERM.

    The handlers are saved and restored at the C level (``sigaction``): Python's own table is untouched by gmsh,
    and Python may set handlers only from the main thread, while the API meshes in worker threads."""
    saved = {sig: _sigaction(sig, None) for sig in (signal.SIGINT, signal.SIGTERM)}
    gmsh.initialize(interruptible=False)
    for sig, action in saved.items():
        _sigaction(sig, action)


_SIGACTION_BYTES = 256  # larger than glibc's struct sigaction on every Linux architecture (152 bytes on x86-64)


def _sigaction(sig: int, action: ctypes.Array[ctypes.c_char] | None) -> ctypes.Array[ctypes.c_char]:
    """Install ``action`` for ``sig`` (None: leave it) and return the action that was in place, as opaque bytes."""
    previous = ctypes.create_string_buffer(_SIGACTION_BYTES)
    if _libc.sigaction(sig, action, previous) != 0:
        raise OSError(ctypes.get_errno(), f"sigaction({sig}) failed")
    return previous


_libc = ctypes.CDLL(None, use_errno=True)


def counts(spec: JobSpec) -> tuple[int, int, int, float]:
    """Vertices, edges and cells of the mesh :func:`build` would make, and its shortest edge, without building it.

    Only the coarse base mesh is generated; the uniform splits that follow are counted, not made: splitting every
    triangle into four adds one vertex per edge and turns E edges and F cells into 2E + 3F and 4F, and halves
    every edge.
    """
    s = sizes(spec)
    coarsen = 2**s.preset_splits
    base = MeshSizes(s.body * coarsen, s.wake * coarsen, s.far * coarsen, s.wake_length)
    with _gmsh_lock:
        p, t = _generate(spec, base, dry=True)
    edges = np.unique(np.sort(np.hstack([t[[0, 1]], t[[1, 2]], t[[2, 0]]]), axis=0), axis=1)
    v, e, f = int(np.unique(t).size), int(edges.shape[1]), int(t.shape[1])
    shortest = float(np.linalg.norm(p[:, edges[0]] - p[:, edges[1]], axis=0).min())
    for _ in range(s.preset_splits + s.extra_splits):
        v, e, f = v + e, 2 * e + 3 * f, 4 * f
        shortest /= 2
    return v, e, f, shortest


def _generate(spec: JobSpec, s: MeshSizes, dry: bool = False) -> tuple[np.ndarray, np.ndarray]:
    """Points and cells of the mesh; ``dry`` stops after the first straight mesh (no splits, no curving)."""
    import gmsh

    _initialize_keeping_signal_handlers(gmsh)
    try:
        gmsh.option.setNumber("General.Terminal", 0)
        gmsh.option.setNumber("General.NumThreads", 1)
        gmsh.model.add("channel")
        occ = gmsh.model.occ
        ch = spec.channel
        box = occ.addRectangle(0, 0, 0, ch.length, ch.height)
        holes = [(2, _add_body(occ, body, s.body)) for body in spec.bodies]
        if holes:
            occ.cut([(2, box)], holes)
        occ.synchronize()
        _size_fields(gmsh, spec, s)
        for name, value in [
            ("Mesh.MeshSizeExtendFromBoundary", 0),
            ("Mesh.MeshSizeFromPoints", 0),
            ("Mesh.MeshSizeFromCurvature", 0),
            ("Mesh.Algorithm", 6),
            ("Mesh.HighOrderOptimize", 0),
        ]:
            gmsh.option.setNumber(name, value)
        gmsh.model.mesh.generate(2)
        for _ in range(0 if dry else s.preset_splits + s.extra_splits):
            gmsh.model.mesh.refine()
        if spec.mesh.curved and not dry:
            gmsh.model.mesh.setOrder(2)
        tags, xyz, _ = gmsh.model.mesh.getNodes()
        etypes, _, enodes = gmsh.model.mesh.getElements(2)
    finally:
        gmsh.finalize()
    nper = 6 if spec.mesh.curved and not dry else 3
    index = np.empty(int(tags.max()) + 1, dtype=np.int64)
    index[tags.astype(np.int64)] = np.arange(len(tags))
    t = index[np.concatenate(enodes).astype(np.int64)].reshape(-1, nper).T
    used = np.unique(t)
    remap = -np.ones(len(tags), dtype=np.int64)
    remap[used] = np.arange(len(used))
    return np.ascontiguousarray(xyz.reshape(-1, 3)[used, :2].T), np.ascontiguousarray(remap[t])


def _add_body(occ, body, h: float) -> int:
    """Add one body as an OCC surface and return its tag; curves stay exact for curved cells."""
    if isinstance(body, Circle):
        return occ.addDisk(*body.center, 0, body.radius, body.radius)
    if isinstance(body, Ellipse):
        a, b = body.width / 2, body.height / 2
        tag = occ.addDisk(*body.center, 0, max(a, b), min(a, b))
        angle = body.angle + (0 if a >= b else 90)
        occ.rotate([(2, tag)], *body.center, 0, 0, 0, 1, math.radians(angle))
        return tag
    if isinstance(body, Rectangle):
        w, hh = body.width, body.height
        r = min(body.corner_radius, 0.499 * min(w, hh))
        tag = occ.addRectangle(body.center[0] - w / 2, body.center[1] - hh / 2, 0, w, hh, roundedRadius=r)
        occ.rotate([(2, tag)], *body.center, 0, 0, 0, 1, math.radians(body.angle))
        return tag
    if isinstance(body, Naca4):
        pts = body.surface(max(64, 2 * int(_perimeter(body.outline()) / h)))
        tags = [occ.addPoint(x, y, 0) for x, y in pts]
        curve = occ.addSpline(tags + [tags[0]])
        return occ.addPlaneSurface([occ.addCurveLoop([curve])])
    if isinstance(body, Polygon):
        pts = body.outline()
        tags = [occ.addPoint(x, y, 0) for x, y in pts]
        lines = [occ.addLine(tags[i], tags[(i + 1) % len(tags)]) for i in range(len(tags))]
        return occ.addPlaneSurface([occ.addCurveLoop(lines)])
    raise TypeError(f"unknown body shape {body!r}")


def _perimeter(pts: np.ndarray) -> float:
    return float(np.linalg.norm(np.diff(np.vstack([pts, pts[:1]]), axis=0), axis=1).sum())


def _size_fields(gmsh, spec: JobSpec, s: MeshSizes) -> None:
    field = gmsh.model.mesh.field
    ch = spec.channel
    fields = []
    if spec.bodies:
        outer = {
            tag for _, tag in gmsh.model.getBoundary([(2, t) for _, t in gmsh.model.getEntities(2)], oriented=False)
        }
        body_curves = []
        for tag in outer:
            xmin, ymin, _, xmax, ymax, _ = gmsh.model.getBoundingBox(1, tag)
            tol = 1e-5 * min(ch.length, ch.height)
            on_side = xmax < tol or xmin > ch.length - tol or ymax < tol or ymin > ch.height - tol
            if not on_side:
                body_curves.append(tag)
        dist = field.add("Distance")
        field.setNumbers(dist, "CurvesList", body_curves)
        field.setNumber(dist, "Sampling", 400)
        near = field.add("Threshold")
        field.setNumber(near, "InField", dist)
        field.setNumber(near, "SizeMin", s.body)
        field.setNumber(near, "SizeMax", s.far)
        field.setNumber(near, "DistMin", 0.5 * s.body)
        field.setNumber(near, "DistMax", 0.5 * s.body + 8 * (s.far - s.body))
        fields.append(near)
        outlines = np.vstack([b.outline() for b in spec.bodies])
        (x0, y0), (x1, y1) = outlines.min(axis=0), outlines.max(axis=0)
        spread = 0.5 * (y1 - y0) + s.wake
        box = field.add("Box")
        field.setNumber(box, "VIn", s.wake)
        field.setNumber(box, "VOut", s.far)
        field.setNumber(box, "XMin", max(0.0, x0 - 2 * s.wake))
        field.setNumber(box, "XMax", min(ch.length, x1 + s.wake_length))
        field.setNumber(box, "YMin", max(0.0, y0 - spread))
        field.setNumber(box, "YMax", min(ch.height, y1 + spread))
        field.setNumber(box, "Thickness", 4 * s.wake)
        fields.append(box)
    const = field.add("MathEval")
    field.setString(const, "F", repr(s.far))
    fields.append(const)
    smallest = field.add("Min")
    field.setNumbers(smallest, "FieldsList", fields)
    field.setAsBackgroundMesh(smallest)


def _tag_boundaries(mesh: MeshTri, spec: JobSpec) -> dict[str, np.ndarray]:
    """Name boundary facets by where their midpoints lie; body facets go to the nearest body."""
    ch = spec.channel
    facets = mesh.boundary_facets()
    mid = mesh.p[:, mesh.facets[:, facets]].mean(axis=1)
    tol = 1e-8 * max(ch.length, ch.height)
    inlet = np.abs(mid[0]) < tol
    outlet = np.abs(mid[0] - ch.length) < tol
    walls = ~inlet & ~outlet & ((np.abs(mid[1]) < tol) | (np.abs(mid[1] - ch.height) < tol))
    tagged = {"inlet": facets[inlet], "outlet": facets[outlet], "walls": facets[walls]}
    rest = ~(inlet | outlet | walls)
    if spec.bodies:
        dist = np.array([_polygons.distance(b.outline(512), mid[:, rest].T) for b in spec.bodies])
        owner = dist.argmin(axis=0)
        for i, body in enumerate(spec.bodies):
            tagged[body.name] = facets[rest][owner == i]
    elif rest.any():
        raise RuntimeError("the mesh has boundary facets that belong to no side and no body")
    return tagged
