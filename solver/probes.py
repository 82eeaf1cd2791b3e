"""Point evaluation on curved meshes: locate on the straight-sided parent, invert the curved map."""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
from scipy.spatial import cKDTree
from skfem import Basis, MeshTri


def locate(basis: Basis, parent: MeshTri, points: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Cells holding ``points`` (shape ``(2, n)``) and the points' reference coordinates.

    All points are first located at once on the straight-sided parent; a point
    on a curved boundary may fall just outside the parent's straight edges, so
    the points that fail are retried one by one in nearby cells with the curved map.
    """
    mapping = basis.mapping
    scale = float(np.max(np.ptp(parent.p, axis=1)))
    try:
        cells = np.asarray(parent.element_finder()(points[0], points[1]), dtype=np.int64)
        refs = mapping.invF(points[:, :, None], tind=cells)[:, :, 0]
        ok = _holds(mapping, cells, refs, points, scale)
    except ValueError:
        n = points.shape[1]
        cells, refs, ok = np.zeros(n, dtype=np.int64), np.zeros((2, n)), np.zeros(n, dtype=bool)
    if not ok.all():
        tree = cKDTree(parent.p[:, parent.t].mean(axis=1).T)
        for i in np.nonzero(~ok)[0]:
            x = points[:, i]
            for cell in tree.query(x, k=min(12, parent.t.shape[1]))[1]:
                X = mapping.invF(x[:, None, None], tind=np.array([cell]))[:, :, 0]
                if _holds(mapping, np.array([cell]), X, x[:, None], scale)[0]:
                    cells[i], refs[:, i] = cell, X[:, 0]
                    break
            else:
                raise ValueError(f"point ({x[0]:g}, {x[1]:g}) is not inside the mesh")
    return cells, refs


def _holds(mapping, cells: np.ndarray, refs: np.ndarray, points: np.ndarray, scale: float) -> np.ndarray:
    """Whether each reference point lies in its reference triangle and maps back onto its point."""
    inside = (refs.min(axis=0) >= -1e-9) & (refs.sum(axis=0) <= 1 + 1e-9)
    back = mapping.F(refs[:, :, None], tind=cells)[:, :, 0]
    return inside & (np.linalg.norm(back - points, axis=0) < 1e-9 * scale)


def probe_matrix(basis: Basis, parent: MeshTri, points: np.ndarray) -> sp.csr_matrix:
    """Matrix ``P`` with ``P @ u`` = values of the scalar field ``u`` at ``points``."""
    cells, refs = locate(basis, parent, points)
    n = points.shape[1]
    phis = np.array([np.asarray(basis.elem.gbasis(basis.mapping, refs[:, :, None], k, tind=cells)[0])[:, 0]
                     for k in range(basis.Nbfun)])
    rows = np.tile(np.arange(n), basis.Nbfun)
    cols = basis.element_dofs[:, cells].ravel()
    return sp.coo_matrix((phis.ravel(), (rows, cols)), shape=(n, basis.N)).tocsr()
