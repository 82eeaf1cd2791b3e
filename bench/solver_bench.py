"""Solver benchmark: accuracy and speed on the cylinder benchmarks 2D-1 and 2D-2 of Schäfer & Turek (1996,
"Benchmark computations of laminar flow around a cylinder", Notes on Numerical Fluid Mechanics 52, 547-566).

Prints, for each configuration, the unknowns, set-up and solve times, and the relative errors
against the reference values (2D-1: cD 5.57953523384, cL 0.010618948146, dp 0.11752016697;
2D-2: cD,max 3.22739, St 0.30184). The 1996 paper gives intervals only: these digits are the FEATFLOW
group's online reference values (S. Turek's group, TU Dortmund; 2D-2 from its finest Q2/P1 series),
recalled, not read from its pages (see tests/solver/test_benchmarks.py and test_benchmark_2d2.py).
For the time schemes it prints seconds per step and the ratio of a step to one forward/back
substitution with stored factors.

    python bench/solver_bench.py            # 2D-1 and a short timing of every scheme
    python bench/solver_bench.py --full     # also 2D-2 from rest to t = 8 (several minutes)
"""

from __future__ import annotations

import argparse
import resource
import tempfile
import time

import numpy as np

import solver
from core.blas import one_blas_thread
from solver import analysis
from solver.case import Case
from solver.transient import Stepper

one_blas_thread()  # as the worker runs

# the benchmark's channel, cylinder and fluid, given explicitly (they are not wakeyard's defaults)
CHANNEL = {"length": 2.2, "height": 0.41}
CYLINDER = {"name": "cylinder", "shape": "circle", "center": [0.2, 0.2], "radius": 0.05}
FLUID = {"density": 1.0, "viscosity": 1e-3}
PROBES = {"pressure_drop": [[0.15, 0.2], [0.25, 0.2]]}
REF_2D1 = (5.57953523384, 0.010618948146, 0.11752016697)
REF_2D2 = (3.22739, 0.30184)


def bench_2d1(preset: str, elements: str) -> None:
    spec = {
        "channel": CHANNEL,
        "bodies": [CYLINDER],
        "fluid": FLUID,
        "probes": PROBES,
        "mesh": {"preset": preset},
        "elements": elements,
        "inflow": {"peak_velocity": 0.3},
    }
    with tempfile.TemporaryDirectory() as out:
        t0 = time.perf_counter()
        s = solver.run(spec, out)
        wall = time.perf_counter() - t0
    b = s["bodies"][0]
    errs = [abs(v - r) / r for v, r in zip((b["drag_coefficient"], b["lift_coefficient"], s["pressure_drop"]), REF_2D1)]
    tm = s["timings"]
    print(
        f"2D-1 {preset:6s} {elements}  dofs {s['mesh']['dofs']:7d}  mesh {tm['mesh']:.2f}s setup {tm['setup']:.2f}s "
        f"solve {tm['solve']:.2f}s wall {wall:.1f}s  err cD {errs[0]:.1e} cL {errs[1]:.1e} dp {errs[2]:.1e}"
    )


def bench_steps(preset: str, scheme: str, dt: float, steps: int) -> None:
    spec = solver.load(
        {
            "channel": CHANNEL,
            "bodies": [CYLINDER],
            "fluid": FLUID,
            "mesh": {"preset": preset},
            "inflow": {"peak_velocity": 1.5},
            "analysis": {"mode": "transient", "scheme": scheme, "time_step": dt},
        }
    )
    case = Case.build(spec)
    t0 = time.perf_counter()
    stepper = Stepper(case.ns, scheme, dt, case.ns.stokes())
    setup = time.perf_counter() - t0
    t0 = time.perf_counter()
    for _ in range(steps):
        r = stepper.step()
        case.force_row(stepper.t, r.x, r.convection, r.dudt)
    per_step = (time.perf_counter() - t0) / steps
    lu = stepper.factoriser if scheme == "bdf2-implicit" else stepper.solver
    rhs = np.random.default_rng(0).random(len(lu.free))
    t0 = time.perf_counter()
    for _ in range(10):
        lu.solve_free(rhs)
    one_solve = (time.perf_counter() - t0) / 10
    print(
        f"steps {preset:6s} {scheme:13s} dt {dt:g}  dofs {case.th.ndofs:7d}  factor+setup {setup:.2f}s  "
        f"{1e3 * per_step:.1f} ms/step  one solve {1e3 * one_solve:.1f} ms  ratio {per_step / one_solve:.2f}  "
        f"factorisations {stepper.factorisations}"
    )


def bench_2d2(preset: str, scheme: str, dt: float, end: float = 8.0) -> None:
    spec = {
        "channel": CHANNEL,
        "bodies": [CYLINDER],
        "fluid": FLUID,
        "probes": PROBES,
        "mesh": {"preset": preset},
        "inflow": {"peak_velocity": 1.5},
        "analysis": {"mode": "transient", "scheme": scheme, "time_step": dt, "end_time": end, "output_interval": end},
    }
    with tempfile.TemporaryDirectory() as out:
        t0 = time.perf_counter()
        solver.run(spec, out)
        wall = time.perf_counter() - t0
        _, data = solver.output.read_forces(__import__("pathlib").Path(out) / "forces.csv")
    t, cd, cl = data[:, 0], data[:, 3], data[:, 4]
    last = t > end - 1.0
    st = analysis.strouhal(t, cl, 0.1, 1.0)["strouhal_number"]
    print(
        f"2D-2 {preset:6s} {scheme:13s} dt {dt:g}  wall {wall:.0f}s  cD,max {cd[last].max():.4f} "
        f"(err {abs(cd[last].max() - REF_2D2[0]) / REF_2D2[0]:.1e})  St {st:.4f} "
        f"(err {abs(st - REF_2D2[1]) / REF_2D2[1]:.1e})"
    )


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--full", action="store_true", help="also run 2D-2 to t = 8")
    args = parser.parse_args()
    for preset, elements in [("coarse", "P2P1"), ("medium", "P2P1"), ("coarse", "P3P2")]:
        bench_2d1(preset, elements)
    for scheme, dt in [("euler-imex", 5e-4), ("bdf2-imex", 5e-4), ("bdf2-implicit", 5e-3)]:
        bench_steps("coarse", scheme, dt, 100)
    if args.full:
        bench_2d2("coarse", "bdf2-imex", 5e-4)
        bench_2d2("coarse", "bdf2-implicit", 5e-3)
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"peak memory of this process: {peak:.0f} MB")


if __name__ == "__main__":
    main()
