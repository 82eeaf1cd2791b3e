"""Taylor-Hood spaces on a (possibly curved) triangle mesh and their constant matrices.

Velocity components are two copies of a scalar Lagrange space of degree k,
pressure the continuous space of degree k-1 (P2/P1 or P3/P2). Unknowns are
ordered ``[u_x, u_y, p]``. Everything the time loop needs is precomputed here,
including sparse quadrature operators that evaluate the convection term with
a handful of sparse matrix-vector products instead of a fresh assembly.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np
import scipy.sparse as sp
from skfem import Basis, BilinearForm, ElementTriP1, ElementTriP2, ElementTriP3, Mesh, asm
from skfem.helpers import dot, grad

ELEMENTS = {"P2P1": (ElementTriP2, ElementTriP1), "P3P2": (ElementTriP3, ElementTriP2)}


@BilinearForm
def _mass(u, v, w):
    return u * v


@BilinearForm
def _laplace(u, v, w):
    return dot(grad(u), grad(v))


@BilinearForm
def _ddx(u, q, w):
    return q * grad(u)[0]


@BilinearForm
def _ddy(u, q, w):
    return q * grad(u)[1]


@dataclass
class QuadratureOperators:
    """Maps velocity DoFs to values and derivatives at all quadrature points.

    ``value @ u`` gives u at every quadrature point (flattened element by
    element), ``ddx``/``ddy`` its derivatives and ``weights`` the quadrature
    weights times the Jacobian, so ``value.T @ (weights * f)`` integrates ``f``
    against every basis function.
    """

    value: sp.csr_matrix
    ddx: sp.csr_matrix
    ddy: sp.csr_matrix
    weights: np.ndarray

    @classmethod
    def build(cls, basis: Basis) -> QuadratureOperators:
        nelem, nqp = basis.dx.shape
        rows = np.arange(nelem * nqp).reshape(nelem, nqp)
        mats = []
        for pick in (np.asarray, lambda f: f.grad[0], lambda f: f.grad[1]):
            r, c, d = [], [], []
            for j, field in enumerate(basis.basis):
                r.append(rows)
                c.append(np.broadcast_to(basis.element_dofs[j][:, None], (nelem, nqp)))
                d.append(pick(field[0]))
            mats.append(sp.csr_matrix((np.ravel(d), (np.ravel(r), np.ravel(c))), shape=(nelem * nqp, basis.N)))
        value, ddx, ddy = mats
        return cls(value, ddx, ddy, weights=basis.dx.ravel())

    def convection(
        self, ux: np.ndarray, uy: np.ndarray, ax: np.ndarray | None = None, ay: np.ndarray | None = None
    ) -> tuple[np.ndarray, np.ndarray]:
        """Load vectors of ``(a . grad) u`` with advecting velocity ``a`` (default ``u``)."""
        ax = ux if ax is None else ax
        ay = uy if ay is None else ay
        a_x, a_y = self.weights * (self.value @ ax), self.weights * (self.value @ ay)
        cx = a_x * (self.ddx @ ux) + a_y * (self.ddy @ ux)
        cy = a_x * (self.ddx @ uy) + a_y * (self.ddy @ uy)
        return self._value_t @ cx, self._value_t @ cy

    @cached_property
    def _value_t(self) -> sp.csr_matrix:
        """The transpose stored row-wise: a product with it is faster than with the transposed view."""
        return self.value.T.tocsr()

    def advection_matrix(self, ax: np.ndarray, ay: np.ndarray) -> sp.csr_matrix:
        """Matrix of ``v -> ((a . grad) v, phi_i)`` for one scalar component."""
        wt = self.value.T
        return (
            wt @ sp.diags(self.weights * (self.value @ ax)) @ self.ddx
            + wt @ sp.diags(self.weights * (self.value @ ay)) @ self.ddy
        ).tocsr()

    def reaction_matrix(self, coefficient: np.ndarray) -> sp.csr_matrix:
        """Matrix of ``v -> (c v, phi_i)`` for a coefficient ``c`` given at quadrature points."""
        return (self.value.T @ sp.diags(self.weights * coefficient) @ self.value).tocsr()


class TaylorHood:
    """The discrete spaces and constant matrices of one mesh and element pair.

    Examples
    --------
    >>> from skfem import MeshTri
    >>> th = TaylorHood(MeshTri().refined(2), "P2P1")
    >>> th.nu, th.npr
    (81, 25)
    """

    def __init__(self, mesh: Mesh, elements: str = "P2P1"):
        self.elements = elements
        self._assemble(mesh)

    def move(self, mesh: Mesh) -> None:
        """Rebuild everything on ``mesh``, the same cells with moved nodes (a moving-mesh step).

        In place, so whoever holds this object (forces, snapshots) sees the moved geometry.
        """
        self.__dict__.pop("_projector", None)
        self._assemble(mesh)

    def _assemble(self, mesh: Mesh) -> None:
        velocity_element, pressure_element = ELEMENTS[self.elements]
        degree = 2 if self.elements == "P2P1" else 3
        self.mesh = mesh
        self.velocity = Basis(mesh, velocity_element(), intorder=2 * degree + 1)
        self.pressure = self.velocity.with_element(pressure_element())
        self.nu = int(self.velocity.N)
        self.npr = int(self.pressure.N)
        self.mass = asm(_mass, self.velocity).tocsr()
        self.stiffness = asm(_laplace, self.velocity).tocsr()
        self.div_x = asm(_ddx, self.velocity, self.pressure).tocsr()
        self.div_y = asm(_ddy, self.velocity, self.pressure).tocsr()
        self.quadrature = QuadratureOperators.build(self.velocity)

    @property
    def ndofs(self) -> int:
        return 2 * self.nu + self.npr

    def split(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Views of ``(u_x, u_y, p)`` in a full vector."""
        n = self.nu
        return x[:n], x[n : 2 * n], x[2 * n :]

    def saddle_point(self, velocity_block: sp.spmatrix, coupled: sp.spmatrix | None = None) -> sp.csr_matrix:
        """``[[V, C, -Bx^T], [C', V', -By^T], [-Bx, -By, 0]]`` from scalar velocity blocks.

        ``velocity_block`` is either one scalar matrix used for both components
        or a 2x2 nested list of scalar matrices (Newton linearisation).
        """
        if isinstance(velocity_block, list):
            (vxx, vxy), (vyx, vyy) = velocity_block
        else:
            vxx = vyy = velocity_block
            vxy = vyx = None
        bx, by = self.div_x, self.div_y
        return sp.bmat([[vxx, vxy, -bx.T], [vyx, vyy, -by.T], [-bx, -by, None]], format="csc")

    @cached_property
    def _projector(self):
        from scipy.sparse.linalg import factorized

        return factorized(self.mass.tocsc())

    def vorticity(self, ux: np.ndarray, uy: np.ndarray) -> np.ndarray:
        """L2 projection of ``dv/dx - du/dy`` onto the velocity space."""
        q = self.quadrature
        rhs = q.value.T @ (q.weights * (q.ddx @ uy - q.ddy @ ux))
        return self._projector(rhs)
