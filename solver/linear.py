"""Sparse direct solves with prescribed (Dirichlet) unknowns eliminated."""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import splu


class ConstrainedSolver:
    """Factor ``A`` restricted to the free unknowns once; solve for many right-hand sides.

    Examples
    --------
    >>> A = sp.csc_matrix(np.array([[2.0, 1.0], [1.0, 3.0]]))
    >>> s = ConstrainedSolver(A, free=np.array([1]))
    >>> s.solve(np.array([0.0, 5.0]), np.array([1.0, 0.0]))
    array([1.        , 1.33333333])
    """

    def __init__(self, A: sp.spmatrix, free: np.ndarray):
        A = sp.csc_matrix(A)
        self.free = free
        self.fixed = np.setdiff1d(np.arange(A.shape[0]), free)
        rows = A[free]
        self.coupling = rows[:, self.fixed].tocsr()
        self.lu = splu(rows[:, free].tocsc(), permc_spec="COLAMD")

    def solve(self, rhs: np.ndarray, prescribed: np.ndarray) -> np.ndarray:
        """Full solution that equals ``prescribed`` on the fixed unknowns."""
        x = prescribed.copy()
        x[self.free] = self.lu.solve(rhs[self.free] - self.coupling @ prescribed[self.fixed])
        return x

    def solve_free(self, rhs_free: np.ndarray) -> np.ndarray:
        """Solve for the free unknowns alone (fixed unknowns held at zero)."""
        return self.lu.solve(rhs_free)
