"""Fine versions of the heat-transfer checks (tests/solver/test_heat.py has the coarse ones). Prints computed
against published values and what the temperature costs per time step.

    python bench/heat_bench.py                    # everything (about an hour on one core)
    python bench/heat_bench.py plates cylinder    # only some: plates cylinder shedding cost
"""

from __future__ import annotations

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")  # as the worker runs; set before numpy loads

import argparse  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402
from scipy.sparse.linalg import spsolve  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # the published cases live with the tests

import published_bench  # noqa: E402 (beside this script)

from tests.solver import published_cases as pc  # noqa: E402
from wakeyard import solver  # noqa: E402
from wakeyard.solver.case import Case  # noqa: E402
from wakeyard.solver.heat_transfer import HeatTransfer, surface_mass  # noqa: E402
from wakeyard.solver.probes import probe_matrix  # noqa: E402
from wakeyard.solver.spec import load  # noqa: E402
from wakeyard.solver.steady import solve_steady  # noqa: E402


def compare(label: str, computed: float | None, reference: float, source: str) -> None:
    published_bench.compare(label, computed, reference, source, width=34)


def plates() -> None:
    print("Fully developed flow between parallel plates, Pe 200 on the hydraulic diameter, station x = 16")
    for scale in (1.0, 0.5):
        for kind, walls in (("temperature", {"temperature": 50.0}), ("heat_flux", {"heat_flux": 100.0})):
            spec = load(pc.plates(walls, scale=scale))
            case = Case.build(spec)
            x, _ = solve_steady(case.ns)
            heat = HeatTransfer(spec, case.th, case.mesh)
            heat.steady(x)
            y = np.linspace(0.0, 1.0, 801)
            matrix, _ = probe_matrix(heat.basis, case.mesh.parent, np.array([np.full_like(y, 16.0), y]))
            u, T = matrix @ case.th.split(x)[0], matrix @ heat.T
            bulk = np.trapezoid(u * T, y) / np.trapezoid(u, y)
            if kind == "temperature":
                facets = case.mesh.facets["walls"]
                wall = heat.basis.get_dofs(facets).all()
                mass = surface_mass(heat.basis, facets)[wall][:, wall]
                flux = spsolve(mass.tocsc(), heat.equation.boundary_flux(heat.T)[wall])
                near = (np.abs(heat.basis.doflocs[0, wall] - 16.0) < 0.2) & (heat.basis.doflocs[1, wall] < 0.5)
                nusselt = flux[near].mean() * 2.0 / (heat.kappa * (50.0 - bulk))
            else:
                nusselt = 100.0 * 2.0 / ((2.0 / 200.0) * (T[0] - bulk))
            label = f"Nu ({kind} walls, {case.cells} cells)"
            compare(label, nusselt, pc.PLATES_NUSSELT[kind], "Shah & London 1978, recalled")


def solve(spec: dict) -> dict | None:
    with tempfile.TemporaryDirectory() as out:
        t0 = time.perf_counter()
        try:
            s = solver.run(spec, out)
        except solver.RunFailed as err:
            print(f"  run failed: {err}")
            return None
    steps = f", {s['steps']} steps, ended by {s['ended_by']}" if "steps" in s else ""
    print(f"  [{s['mesh']['cells']} cells{steps}; wall {time.perf_counter() - t0:.0f} s]")
    return s


def cylinder() -> None:
    print("Steady heated cylinder in a free stream, Pr 0.7 (slip walls, inflow temperature at the inlet)")
    for height in (20.0, 40.0):
        for scale in (2.0, 1.0, 0.5):
            for re in (5.0, 20.0, 40.0):
                s = solve(pc.heated_circle(re, scale, height=height))
                nu = s["bodies"][0]["nusselt_number"] if s else None
                compare(
                    f"Re {re:g}, width {height:g} D, scale {scale:g}",
                    nu,
                    pc.nusselt_lange_durst_breuer(re),
                    "Lange, Durst & Breuer 1998 fit, recalled",
                )


def shedding() -> None:
    print("Shedding heated cylinder, Re 100, Pr 0.7, width 20 D, bdf2-implicit, dt 0.1 D/U, until periodic")
    s = solve(pc.heated_circle(100.0, 1.0, analysis=pc.circle_re100(scale=1.0, dt=0.1, end_time=300.0)["analysis"]))
    if s is None:
        return
    nu = s["bodies"][0]["nusselt_number"]
    compare("mean Nu", nu["mean"], pc.nusselt_lange_durst_breuer(100.0), "Lange, Durst & Breuer 1998 fit, recalled")
    print(f"  Nu amplitude {nu['amplitude']:.4f}, Strouhal number {s['strouhal_number']}")


def cost() -> None:
    print("Cost of the temperature per time step (Re 100 cylinder, 40 steps of bdf2-implicit, dt 0.1 D/U)")
    analysis = {**pc.circle_re100(scale=1.0, dt=0.1)["analysis"], "end_time": 4.0}
    for label, spec in (
        ("flow only", pc.free_stream(pc.circle(), 100.0, 1.0, analysis=analysis)),
        ("flow and temperature", pc.heated_circle(100.0, 1.0, analysis=analysis)),
    ):
        s = solve(spec)
        if s:
            print(f"  {label:22s} {s['timings']['seconds_per_step']:.3f} s per step")


CASES = {"plates": plates, "cylinder": cylinder, "shedding": shedding, "cost": cost}

if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("cases", nargs="*", help=f"any of {', '.join(CASES)} (default: all)")
    chosen = parser.parse_args().cases or list(CASES)
    unknown = [name for name in chosen if name not in CASES]
    if unknown:
        parser.error(f"unknown case {', '.join(unknown)}; choose from {', '.join(CASES)}")
    for name in chosen:
        CASES[name]()
