"""Driven bodies on the moving (ALE) mesh: added mass and damping of a circle oscillating in still fluid, and cost.

Prints, per Stokes number beta = D^2 f / nu, the in-phase (k, added mass) and out-of-phase (k', damping)
coefficients of the force F = -rho pi R^2 (k s'' + k' omega s') on a circle driven by s = A sin(omega t),
A = 0.02 D, in a still box 20 D wide, against the Stokes (1851) / Wang (1968, J. Fluid Mech. 32:55) expansion
(recalled from memory; see tests/solver/test_moving_bodies.py), and the cost per step of the moving mesh
over that of the same mesh held still (the same body fixed in a slowly oscillating stream).

    python bench/moving_bench.py [--fine] [beta ...]
"""

from __future__ import annotations

import argparse
import math
import tempfile
import time

import numpy as np

from wakeyard.solver import run
from wakeyard.solver.output import read_forces

D, F, RHO = 0.02, 1.0, 1000.0
AMPLITUDE, BOX = 0.02 * D, 20 * D


def stokes_wang(beta: float) -> tuple[float, float]:
    """k and k' of the Stokes-Wang expansion (recalled from memory)."""
    x = math.pi * beta
    return 1 + 4 * x**-0.5 + x**-1.5, 4 * x**-0.5 + 4 / x - x**-1.5


def spec(beta: float, fine: bool, moving: bool) -> dict:
    speed = 2 * math.pi * F * AMPLITUDE
    body = {"name": "tube", "shape": "circle", "center": [BOX / 2, BOX / 2], "radius": D / 2}
    if moving:
        body["mount"] = {"kind": "driven", "direction": "y", "amplitude": AMPLITUDE, "frequency": F}
        inflow = {"profile": "uniform", "mean_velocity": 1.0, "time_law": {"kind": "table", "points": [[0, 0], [9, 0]]}}
    else:  # the same mesh held still, in a stream of about the body's speed (cost only)
        inflow = {"profile": "uniform", "mean_velocity": speed, "time_law": {"kind": "sine", "period": 1 / F}}
    return {
        "channel": {"length": BOX, "height": BOX},
        "bodies": [body],
        "fluid": {"density": RHO, "viscosity": D * D * F / beta, "reference": {"velocity": speed}},
        "inflow": inflow,
        "mesh": {"preset": "coarse", "body_size": D / (20 if fine else 12)},
        "analysis": {
            "mode": "transient",
            "end_time": 2.5 / F,
            "accuracy": 1e-3 if fine else 1e-2,
            "output_interval": 10.0,
        },
    }


def coefficients(folder: str) -> tuple[float, float]:
    columns, data = read_forces(f"{folder}/forces.csv")
    t, fy = data[:, 0], data[:, columns.index("tube_fy")]
    last = t >= 1.0 / F
    omega = 2 * math.pi * F
    basis = np.c_[np.sin(omega * t[last]), np.cos(omega * t[last]), np.ones(last.sum())]
    s, c, _ = np.linalg.lstsq(basis, fy[last], rcond=None)[0]
    scale = RHO * math.pi * (D / 2) ** 2 * AMPLITUDE * omega**2
    return s / scale, -c / scale


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("beta", nargs="*", type=float, default=[50.0])
    parser.add_argument("--fine", action="store_true", help="body cells D/20 and accuracy 1e-3 (default D/12, 1e-2)")
    args = parser.parse_args()
    head = ("beta", "k", "ref", "err %", "k_damp", "ref", "err %", "steps", "s/step ratio")
    print(" ".join(f"{h:>{w}}" for h, w in zip(head, (6, 8, 8, 7, 8, 8, 7, 6, 12))))
    for beta in args.beta:
        with tempfile.TemporaryDirectory() as moving, tempfile.TemporaryDirectory() as still:
            t0 = time.perf_counter()
            summary = run(spec(beta, args.fine, True), moving)
            wall = time.perf_counter() - t0
            k, kd = coefficients(moving)
            fixed = run(spec(beta, args.fine, False), still)
            ratio = summary["timings"]["seconds_per_step"] / fixed["timings"]["seconds_per_step"]
        k_ref, kd_ref = stokes_wang(beta)
        print(
            f"{beta:6g} {k:8.4f} {k_ref:8.4f} {100 * (k / k_ref - 1):7.2f} {kd:8.4f} {kd_ref:8.4f} "
            f"{100 * (kd / kd_ref - 1):7.2f} {summary['steps']:6d} {ratio:12.2f}   ({wall:.0f} s)"
        )


if __name__ == "__main__":
    main()
