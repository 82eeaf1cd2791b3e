"""Taylor-Hood spaces on a (possibly curved) triangle mesh and their constant matrices.

Velocity components are two copies of a scalar Lagrange space of degree k,
pressure the continuous space of degree k-1 (P2/P1 or P3/P2). Unknowns are
ordered ``[u_x, u_y, p]``. Everything the time loop needs is precomputed here,
including quadrature operators that evaluate the convection term from
reference tables, cell by cell, instead of a fresh assembly.
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

    The convection term, evaluated a few times every time step, takes a faster
    path: a Lagrange basis has the same values and reference gradients at the
    reference quadrature points in every cell, so gathering each cell's DoFs
    and multiplying by the small reference tables (dense products) replaces the
    long sparse products; only the inverse Jacobian varies from cell to cell
    (and from point to point on curved cells).
    """

    value: sp.csr_matrix
    ddx: sp.csr_matrix
    ddy: sp.csr_matrix
    weights: np.ndarray
    cell_dofs: np.ndarray  # (cells, local DoFs)
    reference_value: np.ndarray  # (local DoFs, points)
    reference_gradient: np.ndarray  # (2, local DoFs, points)
    inverse_jacobian: np.ndarray  # (2, 2, cells, points)

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
        tables = [basis.elem.lbasis(basis.X, j) for j in range(len(basis.basis))]
        return cls(
            value,
            ddx,
            ddy,
            weights=basis.dx.ravel(),
            cell_dofs=np.ascontiguousarray(basis.element_dofs.T),
            reference_value=np.array([phi for phi, _ in tables]),
            reference_gradient=np.array([dphi for _, dphi in tables]).transpose(1, 0, 2).copy(),
            inverse_jacobian=basis.mapping.invDF(basis.X),
        )

    def convection(
        self, ux: np.ndarray, uy: np.ndarray, ax: np.ndarray | None = None, ay: np.ndarray | None = None
    ) -> tuple[np.ndarray, np.ndarray]:
        """Load vectors of ``(a . grad) u`` with advecting velocity ``a`` (default ``u``)."""
        ax = ux if ax is None else ax
        ay = uy if ay is None else ay
        w = self.weights.reshape(self.cell_dofs.shape[0], -1)
        a_x, a_y = (w * self._values(a) for a in (ax, ay))
        cx, cy = (a_x * dx + a_y * dy for dx, dy in (self._gradient(ux), self._gradient(uy)))
        return self._tested(cx), self._tested(cy)

    def _values(self, u: np.ndarray) -> np.ndarray:
        """``u`` at the quadrature points, (cells, points)."""
        return u[self.cell_dofs] @ self.reference_value

    def _gradient(self, u: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """``du/dx, du/dy`` at the quadrature points: reference gradients mapped by the inverse Jacobian."""
        cell = u[self.cell_dofs]
        g_xi, g_eta = cell @ self.reference_gradient[0], cell @ self.reference_gradient[1]
        inv = self.inverse_jacobian
        return g_xi * inv[0, 0] + g_eta * inv[1, 0], g_xi * inv[0, 1] + g_eta * inv[1, 1]

    def _tested(self, f: np.ndarray) -> np.ndarray:
        """``(f, phi_i)`` for every basis function, from ``f`` times the weights at the quadrature points."""
        local = f @ self.reference_value.T
        return np.bincount(self.cell_dofs.ravel(), weights=local.ravel(), minlength=self.value.shape[1])

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
