"""Sparse direct solves with prescribed (Dirichlet) unknowns eliminated.

Two kinds of use, two tools:

* :class:`ConstrainedSolver` factors one matrix once and solves many times
  (constant-matrix time stepping): SuperLU, whose triangular solves are fast.
* :class:`RepeatedSolver` factors a sequence of matrices with one sparsity
  pattern (Newton iterations, linearly implicit steps): PARDISO (MKL) keeps
  the symbolic analysis and only redoes the numeric factorisation, several
  times faster than a fresh SuperLU factorisation. Without MKL it falls back
  to SuperLU.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import SuperLU, splu

try:
    import pypardiso
except ImportError:  # MKL ships for x86-64 only
    pypardiso = None


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


def _pardiso():
    """A PARDISO handle; MKL is looked up in the environment's lib folder first, not by a recursive search."""
    if "PYPARDISO_MKL_RT" not in os.environ:
        found = sorted(Path(sys.prefix, "lib").glob("libmkl_rt.so*"))
        if found:
            os.environ["PYPARDISO_MKL_RT"] = str(found[0])
    solver = pypardiso.PyPardisoSolver(mtype=11)
    os.environ.setdefault("PYPARDISO_MKL_RT", solver.libmkl._name)
    return solver


class RepeatedSolver:
    """Solve ``A_k x = b`` restricted to the free unknowns for a sequence of matrices ``A_k``.

    Examples
    --------
    >>> s = RepeatedSolver(free=np.array([0, 1]))
    >>> for k in (1.0, 2.0):
    ...     s.factor(sp.csr_matrix(np.array([[k, 1.0], [0.0, 1.0]])))
    ...     print(s.solve_free(np.array([3.0, 1.0])))
    [2. 1.]
    [1. 1.]
    >>> s.close()
    """

    def __init__(self, free: np.ndarray):
        self.free = free
        self.pattern: tuple[np.ndarray, np.ndarray] | None = None
        self.matrix: sp.csr_matrix | None = None
        self.lu: SuperLU | None = None
        self.pardiso = _pardiso() if pypardiso is not None else None

    def factor(self, A: sp.spmatrix) -> None:
        """Factor the free block of ``A`` (full size), reusing the analysis of an equal pattern."""
        M = sp.csr_matrix(A)[self.free][:, self.free].tocsr()
        M.sort_indices()
        if self.pardiso is None:
            self.lu = splu(M.tocsc(), permc_spec="COLAMD")
            return
        same = (
            self.pattern is not None
            and np.array_equal(self.pattern[0], M.indptr)
            and np.array_equal(self.pattern[1], M.indices)
        )
        # pypardiso exposes the PARDISO phases only through its internal call:
        # 11 analysis, 22 numeric factorisation, 33 solve
        if not same:
            self.pardiso.set_phase(11)
            self.pardiso._call_pardiso(M, np.zeros((M.shape[0], 1)))
            self.pattern = (M.indptr.copy(), M.indices.copy())
            # the analysis filled in PARDISO's defaults, among them up to two steps of iterative refinement
            # per solve, each a product with the matrix in PARDISO's slow sequential path: without them a
            # solve is several times faster, and every caller checks or corrects its residual itself
            self.pardiso.iparm[7] = 0
        self.pardiso.set_phase(22)
        self.pardiso._call_pardiso(M, np.zeros((M.shape[0], 1)))
        self.matrix = M

    def solve_free(self, rhs_free: np.ndarray) -> np.ndarray:
        if self.pardiso is None:
            assert self.lu is not None, "factor() comes first"
            return self.lu.solve(rhs_free)
        self.pardiso.set_phase(33)
        return self.pardiso._call_pardiso(self.matrix, np.ascontiguousarray(rhs_free))

    def close(self) -> None:
        """Release MKL's memory (it is not returned otherwise); once is enough."""
        if self.pardiso is not None and self.pattern is not None:
            self.pardiso.free_memory(everything=True)
            self.pattern = self.matrix = None

    def __del__(self) -> None:
        self.close()
