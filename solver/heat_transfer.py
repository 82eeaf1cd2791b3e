"""A case's temperature problem: boundary conditions from the spec, Nusselt numbers and the outlet temperature.

Boundaries: the inflow temperature at x=0; walls and bodies insulated, at a fixed temperature or with a fixed
heat flux; the outlet free (no diffusive flux). Heat fluxes enter the equation divided by ρc.

The heat a body gives the fluid is the weak residual of the discrete energy equation tested with the sum of
the body's surface basis functions (like the forces, :mod:`solver.forces`): consistent with the solve and
more accurate than differentiating the temperature at the wall. The local flux along a surface is that
residual divided by the row sums of the surface mass matrix (Simpson's weights on quadratic edges, all
positive): it keeps the total exactly and, unlike the consistent mass matrix, does not make the values at
edge midpoints and corners alternate where the thermal layer is thin.

Nusselt numbers use the body's reference length L and the body-to-inflow temperature difference:
``Nu = q L / (k ΔT)`` with q the mean flux over the perimeter; for a body with a given heat flux ΔT is its
mean surface temperature above the inflow's.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
from skfem import Basis, BilinearForm, ElementTriP2, FacetBasis, Functional

from .heat import AdvectionDiffusion
from .meshing import ChannelMesh
from .spec import JobSpec
from .taylor_hood import TaylorHood
from .thermal import Thermal


@BilinearForm
def _mass(u, v, w):
    return u * v


def surface_mass(basis: Basis, facets: np.ndarray) -> sp.csr_matrix:
    """Mass matrix of the P2 space on the boundary facets ``facets`` (full size)."""
    return _mass.assemble(FacetBasis(basis.mesh, ElementTriP2(), facets=facets, intorder=5)).tocsr()


@Functional
def _flow_rate(w):
    return w.ux


@Functional
def _heat_flow(w):
    return w.ux * w.temperature


@dataclass
class Surface:
    """One heated body: its temperature DoFs, surface mass matrix and Nusselt scales."""

    name: str
    dofs: np.ndarray
    mass: sp.csr_matrix  # surface mass restricted to ``dofs``
    perimeter: float
    length: float
    thermal: Thermal
    center: tuple[float, float]


class HeatTransfer:
    """The temperature of one case: solve steady or step in time, then read Nusselt numbers off the solution."""

    def __init__(self, spec: JobSpec, th: TaylorHood, cm: ChannelMesh):
        heat = spec.heat
        if heat is None:
            raise ValueError("the spec has no heat section")
        self.spec, self.th = spec, th
        basis = th.velocity if th.elements == "P2P1" else th.velocity.with_element(ElementTriP2())
        self.basis = basis
        self.kappa = heat.diffusivity(spec.viscosity(), spec.fluid.density)
        self.rho_c = spec.fluid.density * heat.heat_capacity if heat.heat_capacity else None
        self.inflow = heat.inflow_temperature
        self.prescribed = np.zeros(basis.N)
        flux_load = np.zeros(basis.N)
        fixed = [basis.get_dofs(cm.facets["inlet"]).all()]
        self.prescribed[fixed[0]] = self.inflow
        sides = [("walls", heat.walls)] + [(b.name, b.thermal or Thermal()) for b in spec.bodies]
        self.surfaces: list[Surface] = []
        for i, (name, thermal) in enumerate(sides):
            facets = cm.facets[name]
            dofs = basis.get_dofs(facets).all()
            mass = surface_mass(basis, facets)
            if thermal.kind == "temperature":
                # walls at a temperature keep the inflow's where they meet the inlet (the inflow is prescribed)
                dofs_free = np.setdiff1d(dofs, fixed[0]) if name == "walls" else dofs
                fixed.append(dofs_free)
                self.prescribed[dofs_free] = thermal.temperature
            elif thermal.kind == "heat_flux":
                flux_load += thermal.heat_flux / self.rho_c * np.asarray(mass.sum(axis=1)).ravel()  # type: ignore[operator]
            if i > 0 and self._heated(thermal):
                body = spec.bodies[i - 1]
                self.surfaces.append(
                    Surface(
                        name,
                        dofs,
                        mass[dofs][:, dofs].tocsr(),
                        float(mass.sum()),
                        spec.reference_length(i - 1),
                        thermal,
                        tuple(body.reference_point()),  # type: ignore[arg-type]
                    )
                )
        self.equation = AdvectionDiffusion(
            basis, self.kappa, np.concatenate(fixed), flux_load, velocity_at=th.quadrature.value
        )
        outlet = FacetBasis(basis.mesh, th.velocity.elem, facets=cm.facets["outlet"], intorder=5)
        self.outlet = (outlet, outlet.with_element(ElementTriP2()))
        self.T = self.start()
        self.T_old: np.ndarray | None = None
        self.dTdt: np.ndarray | None = None
        self.last_dt: float | None = None

    def _heated(self, thermal: Thermal) -> bool:
        if thermal.kind == "temperature":
            return thermal.temperature != self.inflow
        return thermal.kind == "heat_flux" and thermal.heat_flux != 0

    def start(self) -> np.ndarray:
        """The start of a transient run: the inflow temperature everywhere, surfaces at their own."""
        T = np.full(self.basis.N, self.inflow)
        T[self.equation.fixed] = self.prescribed[self.equation.fixed]
        return T

    def steady(self, x: np.ndarray) -> np.ndarray:
        """Stationary temperature in the flow ``x``."""
        ux, uy, _ = self.th.split(x)
        self.T = self.equation.steady(ux, uy, self.prescribed)
        self.dTdt = None
        return self.T

    def advance(self, x: np.ndarray, dt: float) -> np.ndarray:
        """Follow one accepted flow step of length ``dt`` to the flow ``x`` (variable-step BDF2)."""
        ux, uy, _ = self.th.split(x)
        ratio = dt / self.last_dt if self.last_dt else None
        T_new, self.dTdt = self.equation.advance(self.T, self.T_old, ux, uy, dt, ratio, self.prescribed)
        self.T_old, self.T, self.last_dt = self.T, T_new, dt
        return T_new

    def local_flux(self, surface: Surface) -> np.ndarray:
        """``κ ∂T/∂n`` (K m/s, into the fluid) at the surface's DoFs."""
        if surface.thermal.kind == "heat_flux":
            return np.full(len(surface.dofs), surface.thermal.heat_flux / self.rho_c)  # type: ignore[operator]
        residual = self.equation.boundary_flux(self.T, self.dTdt)[surface.dofs]
        return residual / np.asarray(surface.mass.sum(axis=1)).ravel()

    def nusselt(self, surface: Surface) -> float:
        """Mean Nusselt number of one heated body."""
        if surface.thermal.kind == "temperature":
            heat = float(self.equation.boundary_flux(self.T, self.dTdt)[surface.dofs].sum())
            difference = surface.thermal.temperature - self.inflow  # type: ignore[operator]
            return heat * surface.length / (self.kappa * surface.perimeter * difference)
        mean_surface = float((surface.mass @ self.T[surface.dofs]).sum()) / surface.perimeter
        flux = surface.thermal.heat_flux / self.rho_c  # type: ignore[operator]
        return flux * surface.length / (self.kappa * (mean_surface - self.inflow))

    def surface_temperature(self, surface: Surface) -> float:
        """Mean temperature over the body's surface, °C."""
        return float((surface.mass @ self.T[surface.dofs]).sum()) / surface.perimeter

    def local_nusselt(self, surface: Surface) -> np.ndarray:
        """Columns x, y, angle (degrees from the upstream point, 90 on top), arc length from it, Nu; by angle."""
        xy = self.basis.doflocs[:, surface.dofs]
        cx, cy = surface.center
        angle = np.degrees(np.arctan2(xy[1] - cy, -(xy[0] - cx))) % 360.0
        order = np.argsort(angle)
        flux = self.local_flux(surface)
        if surface.thermal.kind == "temperature":
            difference = np.full(len(flux), surface.thermal.temperature - self.inflow)  # type: ignore[operator]
        else:
            difference = self.T[surface.dofs] - self.inflow
        nu = flux * surface.length / (self.kappa * difference)
        pts = xy[:, order]
        arc = np.r_[0.0, np.cumsum(np.hypot(*np.diff(pts, axis=1)))]
        return np.c_[pts.T, angle[order], arc, nu[order]]

    def outlet_temperature(self, x: np.ndarray) -> float | None:
        """Mixed-mean (flow-weighted) temperature across the outlet, °C; ``None`` without net outflow."""
        ux = self.th.split(x)[0]
        fb_u, fb_t = self.outlet
        fields = {"ux": fb_u.interpolate(ux), "temperature": fb_t.interpolate(self.T)}
        flow = float(_flow_rate.assemble(fb_u, **fields))
        if abs(flow) < 1e-12 * self.spec.nominal_velocity() * self.spec.channel.height:
            return None
        return float(_heat_flow.assemble(fb_u, **fields)) / flow

    def close(self) -> None:
        self.equation.close()
