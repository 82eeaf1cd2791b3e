"""Point evaluation on curved meshes: locate on the straight-sided parent, invert the curved map.

Location never raises: a point outside the fluid (inside a body, or off the mesh) is reported as not
found, and the caller decides what that means (a probe without a value, the end of a sampled line).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from scipy.spatial import cKDTree
from skfem import Basis, MeshTri

# A point this close to the fluid (relative to the mesh's smaller extent, the channel height as a rule) counts as on
# its boundary and is evaluated at the nearest boundary point; the spec check accepts probe points this far inside
# a body for the same reason.
ON_SURFACE = 1e-6


@dataclass
class Located:
    """Cell and reference coordinates of each point; ``found`` is False for points outside the fluid."""

    cells: np.ndarray
    refs: np.ndarray
    found: np.ndarray


def locate(basis: Basis, parent: MeshTri, points: np.ndarray) -> Located:
    """Cells holding ``points`` (shape ``(2, n)``) and the points' reference coordinates.

    All points are located at once in the straight-sided parent; a point near a
    curved boundary may fall outside the parent's straight edges (or inside
    them but outside the curved cell), so those are retried one by one in
    nearby cells with the curved map.
    """
    n = points.shape[1]
    scale = float(np.max(np.ptp(parent.p, axis=1)))
    surface = ON_SURFACE * float(np.min(np.ptp(parent.p, axis=1)))
    cells = _straight_cells(parent, points)
    refs = np.zeros((2, n))
    found = cells >= 0
    if found.any():
        X = _inverse(basis.mapping, cells[found], points[:, found])
        refs[:, found] = X
        found[found] = _distance(basis.mapping, cells[found], X, points[:, found]) < 1e-9 * scale
    if not found.all():
        tree = cKDTree(parent.p[:, parent.t].mean(axis=1).T)
        k = min(12, parent.t.shape[1])
        for i in np.nonzero(~found)[0]:
            near = np.atleast_1d(tree.query(points[:, i], k=k)[1])
            X = _inverse(basis.mapping, near, np.repeat(points[:, i : i + 1], len(near), axis=1))
            dist = _distance(basis.mapping, near, X, np.repeat(points[:, i : i + 1], len(near), axis=1))
            best = int(np.argmin(dist))
            if dist[best] < surface:
                cells[i], refs[:, i], found[i] = near[best], X[:, best], True
    cells[~found] = 0
    return Located(cells, refs, found)


def probe_matrix(basis: Basis, parent: MeshTri, points: np.ndarray) -> tuple[sp.csr_matrix, np.ndarray]:
    """Matrix ``P`` with ``P @ u`` = values of the scalar field ``u`` at ``points``, and which points were found.

    The row of a point outside the fluid is zero: check ``found`` before using it.
    """
    at = locate(basis, parent, points)
    n = points.shape[1]
    phis = (
        np.array(
            [
                np.asarray(basis.elem.gbasis(basis.mapping, at.refs[:, :, None], k, tind=at.cells)[0])[:, 0]
                for k in range(basis.Nbfun)
            ]
        )
        * at.found
    )
    rows = np.tile(np.arange(n), basis.Nbfun)
    cols = basis.element_dofs[:, at.cells].ravel()
    return sp.coo_matrix((phis.ravel(), (rows, cols)), shape=(n, basis.N)).tocsr(), at.found


def _straight_cells(parent: MeshTri, points: np.ndarray) -> np.ndarray:
    """Parent cell holding each point (barycentric test on the nearest cells, then on all), or -1."""
    p, t = parent.p, parent.t
    tree = cKDTree(p[:, t].mean(axis=1).T)
    k = min(16, t.shape[1])
    near = tree.query(points.T, k=k)[1].reshape(points.shape[1], k)
    inside = _barycentric_inside(p, t, near, points)
    cells = np.where(inside.any(axis=1), near[np.arange(len(near)), inside.argmax(axis=1)], -1)
    everything = np.arange(t.shape[1])
    for i in np.nonzero(cells < 0)[0]:  # a point beside a much larger cell: look everywhere
        hit = np.nonzero(_barycentric_inside(p, t, everything[None, :], points[:, i : i + 1])[0])[0]
        cells[i] = everything[hit[0]] if len(hit) else -1
    return cells


def _barycentric_inside(p: np.ndarray, t: np.ndarray, cells: np.ndarray, points: np.ndarray) -> np.ndarray:
    """For each point (column of ``points``) and each of its candidate ``cells`` (a row): inside the triangle?"""
    a, b, c = (p[:, t[j, cells]] for j in range(3))  # each (2, npoints, k)
    x = points[:, :, None]
    det = (b[0] - a[0]) * (c[1] - a[1]) - (c[0] - a[0]) * (b[1] - a[1])
    l1 = ((x[0] - a[0]) * (c[1] - a[1]) - (c[0] - a[0]) * (x[1] - a[1])) / det
    l2 = ((b[0] - a[0]) * (x[1] - a[1]) - (x[0] - a[0]) * (b[1] - a[1])) / det
    tol = 1e-12
    return (l1 >= -tol) & (l2 >= -tol) & (l1 + l2 <= 1 + tol)


def _inverse(mapping, cells: np.ndarray, points: np.ndarray, iterations: int = 30) -> np.ndarray:
    """Reference coordinates of each point in its cell by Newton steps kept inside the reference triangle.

    For a point outside the cell this ends near the cell's closest point, so the
    remaining distance says how far outside the point lies. Never raises
    (scikit-fem's own inverse gives up with an exception when a point is outside).
    """
    X = np.full((2, len(cells)), 1 / 3)
    for _ in range(iterations):
        F = mapping.F(X[:, :, None], tind=cells)[:, :, 0]
        J = mapping.DF(X[:, :, None], tind=cells)[:, :, :, 0]  # (2, 2, n)
        r = points - F
        det = J[0, 0] * J[1, 1] - J[0, 1] * J[1, 0]
        dX = np.array([J[1, 1] * r[0] - J[0, 1] * r[1], -J[1, 0] * r[0] + J[0, 0] * r[1]]) / det
        X_new = _onto_triangle(X + dX)
        if np.abs(X_new - X).max() < 1e-14:
            return X_new
        X = X_new
    return X


def _onto_triangle(X: np.ndarray) -> np.ndarray:
    """Closest points of the reference triangle {x >= 0, y >= 0, x + y <= 1} to the columns of ``X``."""
    a, b = X
    on_b0 = np.array([np.clip(a, 0, 1), np.zeros_like(a)])
    on_a0 = np.array([np.zeros_like(b), np.clip(b, 0, 1)])
    s = np.clip((a - b + 1) / 2, 0, 1)
    on_diagonal = np.array([s, 1 - s])
    candidates = np.stack([on_b0, on_a0, on_diagonal])  # (3, 2, n)
    best = np.linalg.norm(candidates - X, axis=1).argmin(axis=0)
    projected = candidates[best, :, np.arange(X.shape[1])].T
    inside = (a >= 0) & (b >= 0) & (a + b <= 1)
    return np.where(inside, X, projected)


def _distance(mapping, cells: np.ndarray, refs: np.ndarray, points: np.ndarray) -> np.ndarray:
    """How far each point lies from the image of its reference coordinates."""
    return np.linalg.norm(mapping.F(refs[:, :, None], tind=cells)[:, :, 0] - points, axis=0)
