"""Advection–diffusion of temperature by a given velocity, stabilised by SUPG.

The temperature lives in the continuous quadratic Lagrange space (P2) on the flow's mesh, whatever the
velocity's degree, and shares the velocity basis's quadrature points so the velocity is evaluated there with
one sparse product. Weak form, with test function ``v + τ a·∇v`` (streamline-upwind Petrov–Galerkin, Brooks &
Hughes 1982, Comput. Methods Appl. Mech. Eng. 32:199)::

    (∂T/∂t + a·∇T, v) + κ (∇T, ∇v) + Σ_K (∂T/∂t + a·∇T - κ ΔT - f, τ a·∇v)_K = (f, v) + (g, v)_Γ

with ``g = κ ∂T/∂n`` on flux boundaries. τ is Brooks & Hughes' optimal one-dimensional value
``h / (2|a|) (coth Pe - 1/Pe)``, ``Pe = |a| h / (2κ)``, where ``h`` is the element length along the flow
(Tezduyar & Park 1986, from the gradients of the corner functions) divided by the degree (common practice for
higher-order elements). ΔT in the residual uses each cell's straight-sided Hessian of the P2 basis, exact on
straight cells; on the curved cells along a body it is an approximation confined to one layer of cells.

Time stepping is variable-step BDF2 (backward Euler on the first step), so the temperature follows any flow
stepper: after each accepted flow step call :meth:`AdvectionDiffusion.advance` with the new velocity.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from skfem import Basis, BilinearForm, ElementTriP2, asm
from skfem.helpers import dot, grad

from .linear import ConstrainedSolver, RepeatedSolver
from .taylor_hood import QuadratureOperators


@BilinearForm
def _mass(u, v, w):
    return u * v


@BilinearForm
def _laplace(u, v, w):
    return dot(grad(u), grad(v))


def bdf2_weights(ratio: float | None) -> tuple[float, float, float]:
    """Weights ``(a0, a1, a2)`` of ``dT/dt ≈ (a0 T_new + a1 T_n + a2 T_old) / dt`` for ``ratio = dt / dt_previous``.

    ``None`` gives backward Euler (the first step); the weights of variable-step BDF2 are exact for quadratics.

    Examples
    --------
    >>> bdf2_weights(1.0)
    (1.5, -2.0, 0.5)
    >>> bdf2_weights(None)
    (1.0, -1.0, 0.0)
    """
    if ratio is None:
        return 1.0, -1.0, 0.0
    w = float(ratio)
    return (1 + 2 * w) / (1 + w), -(1 + w), w * w / (1 + w)


def _supg_tau(speed: np.ndarray, length: np.ndarray, diffusivity: float) -> np.ndarray:
    """Brooks & Hughes' ``h/(2|a|) (coth Pe - 1/Pe)``, by its series ``h²/(12κ)(1 - Pe²/15)`` for small Pe."""
    pe = speed * length / (2 * diffusivity)
    small = pe < 1e-3
    safe = np.where(small, 1.0, pe)
    xi = np.where(small, pe / 3 * (1 - pe**2 / 15), 1 / np.tanh(safe) - 1 / safe)
    return np.where(
        small, length**2 / (12 * diffusivity) * (1 - pe**2 / 15), length / (2 * np.maximum(speed, 1e-300)) * xi
    )


def _corner_gradients(basis: Basis) -> tuple[np.ndarray, np.ndarray]:
    """Gradients of the barycentric coordinates of every straight cell, shape ``(3, 2, cells)``, and the areas."""
    p = basis.mesh.p[:, basis.mesh.t[:3]]
    e1, e2 = p[:, 1] - p[:, 0], p[:, 2] - p[:, 0]
    det = e1[0] * e2[1] - e1[1] * e2[0]
    g1 = np.array([e2[1], -e2[0]]) / det
    g2 = np.array([-e1[1], e1[0]]) / det
    return np.stack([-g1 - g2, g1, g2]), np.abs(det) / 2


def _laplacian_operator(basis: Basis, corners: np.ndarray) -> sp.csr_matrix:
    """Map P2 DoFs to the Laplacian at every quadrature point (piecewise constant on straight cells).

    The P2 basis is ``λi(2λi - 1)`` at corner i and ``4 λi λj`` on edge ij (skfem's order: edges 01, 12, 02),
    so its Laplacians are ``4|∇λi|²`` and ``8 ∇λi·∇λj``.
    """
    nelem, nqp = basis.dx.shape
    pairs = [(0, 0), (1, 1), (2, 2), (0, 1), (1, 2), (0, 2)]
    factor = [4, 4, 4, 8, 8, 8]
    rows = np.arange(nelem * nqp).reshape(nelem, nqp)
    r, c, d = [], [], []
    for j, ((a, b), f) in enumerate(zip(pairs, factor)):
        value = f * np.einsum("ie,ie->e", corners[a], corners[b])
        r.append(rows)
        c.append(np.broadcast_to(basis.element_dofs[j][:, None], (nelem, nqp)))
        d.append(np.broadcast_to(value[:, None], (nelem, nqp)))
    return sp.csr_matrix((np.ravel(d), (np.ravel(r), np.ravel(c))), shape=(nelem * nqp, basis.N))


@dataclass
class Operator:
    """The discrete equation ``mass @ dT/dt + stiffness @ T = load`` for one advecting velocity."""

    mass: sp.csr_matrix
    stiffness: sp.csr_matrix
    load: np.ndarray


class AdvectionDiffusion:
    """SUPG-stabilised advection–diffusion of a scalar on a P2 space with prescribed values at ``fixed`` DoFs.

    ``velocity_at`` maps the velocity's DoFs to values at this basis's quadrature points (the same points);
    ``flux_load`` is the boundary load ``(κ ∂T/∂n, v)_Γ`` of the flux boundaries; ``source`` a volume source
    ``f`` (K/s) at the quadrature points.

    Examples
    --------
    Pure diffusion between T = 0 and T = 1 on the unit square's left and right sides is linear:

    >>> from skfem import MeshTri
    >>> mesh = MeshTri().refined(2).with_boundaries({"left": lambda x: x[0] < 1e-9, "right": lambda x: x[0] > 1 - 1e-9})
    >>> basis = Basis(mesh, ElementTriP2(), intorder=5)
    >>> left, right = basis.get_dofs("left").all(), basis.get_dofs("right").all()
    >>> heat = AdvectionDiffusion(basis, 0.1, np.r_[left, right])
    >>> prescribed = np.zeros(basis.N); prescribed[right] = 1.0
    >>> zero = np.zeros(basis.N)
    >>> T = heat.steady(zero, zero, prescribed)
    >>> bool(np.allclose(T, basis.doflocs[0]))
    True
    """

    def __init__(
        self,
        basis: Basis,
        diffusivity: float,
        fixed: np.ndarray,
        flux_load: np.ndarray | None = None,
        velocity_at: sp.csr_matrix | None = None,
        source: np.ndarray | None = None,
        degree: int = 2,
    ):
        if not isinstance(basis.elem, ElementTriP2):
            raise ValueError("the temperature lives in the P2 space")
        self.basis, self.kappa, self.degree = basis, float(diffusivity), degree
        self.fixed = np.unique(fixed)
        self.free = np.setdiff1d(np.arange(basis.N), self.fixed)
        self.q = QuadratureOperators.build(basis)
        self.velocity_at = self.q.value if velocity_at is None else velocity_at
        self.mass = asm(_mass, basis).tocsr()
        self.diffusion = self.kappa * asm(_laplace, basis).tocsr()
        self.flux_load = np.zeros(basis.N) if flux_load is None else flux_load
        self.corners, area = _corner_gradients(basis)
        self.diameter = np.repeat(np.sqrt(2 * area), basis.dx.shape[1])
        self.laplacian = _laplacian_operator(basis, self.corners)
        self.source = np.zeros(basis.dx.size) if source is None else np.ravel(source)
        self._repeated: RepeatedSolver | None = None
        self.last: Operator | None = None

    def operator(self, ux: np.ndarray, uy: np.ndarray) -> Operator:
        """Assemble the Galerkin and SUPG terms for the advecting velocity ``(ux, uy)`` (velocity DoFs)."""
        q = self.q
        ax, ay = self.velocity_at @ ux, self.velocity_at @ uy
        speed = np.hypot(ax, ay)
        nqp = self.basis.dx.shape[1]
        # element length along the flow: 2|a| / Σ|a·∇λi| (corner functions), per quadrature point
        gx = np.repeat(self.corners[:, 0], nqp, axis=1)
        gy = np.repeat(self.corners[:, 1], nqp, axis=1)
        spread = np.abs(ax * gx + ay * gy).sum(axis=0)
        moving = spread > 1e-12 * (speed.max(initial=0.0) + 1e-300)
        length = np.where(moving, 2 * speed / np.where(moving, spread, 1.0), self.diameter)
        tau = _supg_tau(speed, length / self.degree, self.kappa)
        streamline = (sp.diags(ax) @ q.ddx + sp.diags(ay) @ q.ddy).tocsr()
        weighted = (streamline.T @ sp.diags(q.weights * tau)).tocsr()
        galerkin = q.value.T @ sp.diags(q.weights) @ streamline
        stiffness = self.diffusion + galerkin + weighted @ (streamline - self.kappa * self.laplacian)
        mass = self.mass + weighted @ q.value
        load = self.flux_load + q.value.T @ (q.weights * self.source) + weighted @ self.source
        return Operator(mass.tocsr(), stiffness.tocsr(), load)

    def steady(self, ux: np.ndarray, uy: np.ndarray, prescribed: np.ndarray) -> np.ndarray:
        """Stationary temperature for a stationary velocity; ``prescribed`` holds the fixed values."""
        op = self.operator(ux, uy)
        self.last = op
        return ConstrainedSolver(op.stiffness, self.free).solve(op.load, prescribed)

    def advance(
        self,
        T: np.ndarray,
        T_old: np.ndarray | None,
        ux: np.ndarray,
        uy: np.ndarray,
        dt: float,
        ratio: float | None,
        prescribed: np.ndarray,
    ) -> tuple[np.ndarray, np.ndarray]:
        """One variable-step BDF2 step to the new velocity; returns the new temperature and its time derivative.

        ``ratio = dt / dt_previous``; ``None`` (or no ``T_old``) takes a backward-Euler step.
        """
        a0, a1, a2 = bdf2_weights(None if T_old is None else ratio)
        history = (a1 * T + (a2 * T_old if a2 and T_old is not None else 0.0)) / dt
        op = self.operator(ux, uy)
        A = (a0 / dt) * op.mass + op.stiffness
        if self._repeated is None:
            self._repeated = RepeatedSolver(self.free)
        self._repeated.factor(A)
        T_new = np.zeros_like(T)
        T_new[self.fixed] = prescribed[self.fixed]
        rhs = op.load - op.mass @ history - A @ T_new
        T_new[self.free] = self._repeated.solve_free(rhs[self.free])
        self.last = op
        return T_new, a0 * T_new / dt + history

    def boundary_flux(self, T: np.ndarray, dTdt: np.ndarray | None = None) -> np.ndarray:
        """Weak residual of the last solve per DoF: ``(κ ∂T/∂n, φi)_Γ`` on fixed DoFs (n out of the fluid).

        The same discrete equations as the solve, so the flux is consistent (conservative) with it.
        """
        op = self.last
        if op is None:
            raise RuntimeError("no solve yet")
        r = op.stiffness @ T - op.load
        if dTdt is not None:
            r += op.mass @ dTdt
        return r

    def close(self) -> None:
        if self._repeated is not None:
            self._repeated.close()
