"""Point evaluation on curved meshes: locate on the straight-sided parent, invert the curved map."""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
from scipy.spatial import cKDTree
from skfem import Basis, MeshTri


def locate(basis: Basis, parent: MeshTri, points: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Cells holding ``points`` (shape ``(2, n)``) and the points' reference coordinates.

    Points on a curved boundary may fall just outside the parent's straight
    edges, so nearby cells are also tried with the curved map.
    """
    mapping = basis.mapping
    cells = np.empty(points.shape[1], dtype=np.int64)
    refs = np.empty_like(points, dtype=float)
    finder = parent.element_finder()
    tree = cKDTree(parent.p[:, parent.t].mean(axis=1).T)
    scale = float(np.max(np.ptp(parent.p, axis=1)))
    for i, x in enumerate(points.T):
        try:
            candidates = list(finder(np.array([x[0]]), np.array([x[1]])))
        except ValueError:
            candidates = []
        candidates += list(tree.query(x, k=min(12, parent.t.shape[1]))[1])
        for cell in candidates:
            X = mapping.invF(x[:, None, None], tind=np.array([cell]))
            inside = X.min() >= -1e-9 and X.sum() <= 1 + 1e-9
            if inside and np.linalg.norm(mapping.F(X, tind=np.array([cell]))[:, 0, 0] - x) < 1e-9 * scale:
                cells[i], refs[:, i] = cell, X[:, 0, 0]
                break
        else:
            raise ValueError(f"point ({x[0]:g}, {x[1]:g}) is not inside the mesh")
    return cells, refs


def probe_matrix(basis: Basis, parent: MeshTri, points: np.ndarray) -> sp.csr_matrix:
    """Matrix ``P`` with ``P @ u`` = values of the scalar field ``u`` at ``points``."""
    cells, refs = locate(basis, parent, points)
    n = points.shape[1]
    phis = np.array([np.asarray(basis.elem.gbasis(basis.mapping, refs[:, :, None], k, tind=cells)[0])[:, 0]
                     for k in range(basis.Nbfun)])
    rows = np.tile(np.arange(n), basis.Nbfun)
    cols = basis.element_dofs[:, cells].ravel()
    return sp.coo_matrix((phis.ravel(), (rows, cols)), shape=(n, basis.N)).tocsr()
