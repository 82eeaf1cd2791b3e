"""Solver benchmark: accuracy and speed on the cylinder benchmarks 2D-1 and 2D-2 of Schäfer & Turek (1996,
"Benchmark computations of laminar flow around a cylinder", Notes on Numerical Fluid Mechanics 52, 547-566).

Prints, for each configuration, the unknowns, set-up and solve times, and the relative errors
against the reference values (2D-1: cD 5.57953523384, cL 0.010618948146, dp 0.11752016697;
2D-2: cD,max 3.22739, cL,max 0.98658, St 0.30184). The 1996 paper gives intervals only: these digits are the FEATFLOW
group's online reference values (S. Turek's group, TU Dortmund; 2D-2 from its finest Q2/P1 series),
recalled, not read from its pages (see tests/solver/test_benchmarks.py and test_benchmark_2d2.py).
For the time schemes it prints seconds per step and the ratio of a step to one forward/back
substitution with stored factors; for the default error-controlled steps also their statistics.

    python bench/solver_bench.py            # 2D-1, a short timing of every scheme, 2D-2 to t = 2
    python bench/solver_bench.py --full     # also 2D-2 to t = 8 on spec defaults (P2P1 coarse and medium, and
                                            # P3P2 on the coarse preset's cells scaled by 2) and the rising
                                            # inflow of 2D-3 (a quarter of an hour or more)
"""

from __future__ import annotations

import argparse
import os
import resource
import tempfile
import time
from pathlib import Path

import numpy as np

from wakeyard import solver
from wakeyard.core.blas import one_blas_thread
from wakeyard.solver import analysis
from wakeyard.solver.case import Case
from wakeyard.solver.linear import RepeatedSolver
from wakeyard.solver.transient import Stepper

one_blas_thread()  # as the worker runs

# the benchmark's channel, cylinder and fluid, given explicitly (they are not wakeyard's defaults)
CHANNEL = {"length": 2.2, "height": 0.41}
CYLINDER = {"name": "cylinder", "shape": "circle", "center": [0.2, 0.2], "radius": 0.05}
FLUID = {"density": 1.0, "viscosity": 1e-3}
PROBES = {"pressure_drop": [[0.15, 0.2], [0.25, 0.2]]}
REF_2D1 = (5.57953523384, 0.010618948146, 0.11752016697)
REF_2D2 = (3.22739, 0.98658, 0.30184)  # cD,max, cL,max, St


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
    """Seconds per fixed step, and its ratio to one forward/back substitution with stored factors."""
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
    stepper = Stepper(case.ns, scheme, dt, case.ns.stokes(), cfl=case.cfl)
    setup = time.perf_counter() - t0
    t0 = time.perf_counter()
    for _ in range(steps):
        r = stepper.step()
        case.force_row(stepper.t, r.x, r.convection, r.dudt)
    per_step = (time.perf_counter() - t0) / steps
    one_solve = stored_solve_seconds(case)
    print(
        f"steps {preset:6s} {scheme:13s} dt {dt:g}  dofs {case.th.ndofs:7d}  setup {setup:.2f}s  "
        f"{1e3 * per_step:.1f} ms/step  one solve {1e3 * one_solve:.1f} ms  ratio {per_step / one_solve:.2f}  "
        f"factorisations {stepper.stats.factorisations}"
    )


def stored_solve_seconds(case: Case) -> float:
    """One forward/back substitution with stored factors of the implicit step's matrix, on ``case``'s mesh."""
    th, ns = case.th, case.ns
    x = ns.stokes()
    lu = RepeatedSolver(ns.free)
    lu.factor(th.saddle_point(300.0 * th.mass + ns.oseen_blocks(x)))
    rhs = np.random.default_rng(0).random(len(ns.free))
    lu.solve_free(rhs)
    t0 = time.perf_counter()
    for _ in range(20):
        lu.solve_free(rhs)
    seconds = (time.perf_counter() - t0) / 20
    lu.close()
    return seconds


def run_case(spec: dict) -> tuple[dict, np.ndarray, float]:
    with tempfile.TemporaryDirectory() as out:
        t0 = time.perf_counter()
        summary = solver.run(spec, out)
        wall = time.perf_counter() - t0
        _, data = solver.output.read_forces(Path(out) / "forces.csv")
    return summary, data, wall


def steps_line(summary: dict, one_solve: float) -> str:
    s = summary["time_steps"]
    per_step = summary["timings"]["seconds_per_step"]
    return (
        f"steps {s['accepted']} (+{s['rejected']} rejected), dt {s['smallest']:.2g}..{s['largest']:.2g} "
        f"mean {s['mean']:.3g}, factorisations {s['factorisations']}, solves/step {s['solves_per_step']:.2f}, "
        f"{1e3 * per_step:.1f} ms/step = {per_step / one_solve:.2f} stored-factor solves ({1e3 * one_solve:.1f} ms)"
    )


def bench_2d2(preset: str, analysis_extra: dict, end: float = 8.0, elements: str = "P2P1", scale: float = 1.0) -> None:
    """2D-2 from rest to ``end``; with no extra analysis fields, the spec's defaults pick scheme and steps.

    Prints the wall time and the process's CPU time: on a busy machine the CPU time is the closer figure to what
    an idle machine's wall clock would show (the run is single-threaded)."""
    a = {"mode": "transient", "end_time": end, "output_interval": end, **analysis_extra}
    spec = {"channel": CHANNEL, "bodies": [CYLINDER], "fluid": FLUID, "probes": PROBES, "elements": elements}
    spec |= {"mesh": {"preset": preset, "scale": scale}, "inflow": {"peak_velocity": 1.5}, "analysis": a}
    cpu = time.process_time()
    summary, data, wall = run_case(spec)
    cpu = time.process_time() - cpu
    t, cd, cl = data[:, 0], data[:, 3], data[:, 4]
    last = t > end - 1.0
    st = analysis.strouhal(t, cl, 0.1, 1.0)["strouhal_number"]
    errors = [(v - r) / r for v, r in zip((cd[last].max(), cl[last].max(), st), REF_2D2)]
    print(
        f"2D-2 to t = {end:g} {preset:6s} x{scale:g} {elements} {summary['scheme']} "
        f"{analysis_extra or '(spec defaults)'}  "
        f"dofs {summary['mesh']['dofs']}  wall {wall:.0f}s cpu {cpu:.0f}s (load {os.getloadavg()[0]:.1f})  "
        f"cD,max {cd[last].max():.4f} ({errors[0]:+.1e})  cL,max {cl[last].max():.4f} ({errors[1]:+.1e})  "
        f"St {st:.4f} ({errors[2]:+.1e})"
    )
    if summary["scheme"] == "bdf2-adaptive":
        print(f"     {steps_line(summary, stored_solve_seconds(Case.build(solver.load(spec))))}")


def bench_rising_inflow(preset: str) -> None:
    """The cylinder of 2D-3 (Schäfer & Turek 1996): inflow 1.5 sin(pi t / 8) from rest, t in [0, 8], spec defaults.

    Reference maxima (recalled, not re-read: John 2004, Int. J. Numer. Meth. Fluids 44:777): cD,max 2.950921575,
    cL,max 0.47795.
    """
    law = {"kind": "sine", "period": 16.0, "mean": 0.0, "amplitude": 1.0}
    spec = {"channel": CHANNEL, "bodies": [CYLINDER], "fluid": FLUID, "mesh": {"preset": preset}}
    spec |= {"inflow": {"peak_velocity": 1.5, "time_law": law}, "analysis": {"mode": "transient", "end_time": 8.0}}
    summary, data, wall = run_case(spec)
    cd, cl = data[:, 3].max(), data[:, 4].max()
    print(
        f"rising inflow {preset} (spec defaults, {summary['scheme']})  wall {wall:.0f}s  ended by "
        f"{summary['ended_by']} at t = {summary['simulated_time']:g}  cD,max {cd:.4f} ({cd / 2.950921575 - 1:+.1e})  "
        f"cL,max {cl:.4f} ({cl / 0.47795 - 1:+.1e})"
    )
    print(f"     {steps_line(summary, stored_solve_seconds(Case.build(solver.load(spec))))}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--full", action="store_true", help="also run 2D-2 to t = 8")
    args = parser.parse_args()
    for preset, elements in [("coarse", "P2P1"), ("medium", "P2P1"), ("coarse", "P3P2")]:
        bench_2d1(preset, elements)
    for scheme, dt in [("euler-imex", 5e-4), ("bdf2-imex", 5e-4), ("bdf2-implicit", 5e-3)]:
        bench_steps("coarse", scheme, dt, 100)
    bench_2d2("coarse", {}, end=2.0)
    if args.full:
        bench_2d2("coarse", {})
        bench_2d2("medium", {})
        bench_2d2("coarse", {}, elements="P3P2", scale=2.0)  # cubic velocities on a mesh twice as coarse
        bench_2d2("coarse", {"scheme": "bdf2-implicit", "time_step": 5e-3})
        bench_rising_inflow("medium")
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"peak memory of this process: {peak:.0f} MB")


if __name__ == "__main__":
    main()
