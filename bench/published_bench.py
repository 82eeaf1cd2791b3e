"""Fine versions of the published checks for shapes beyond the channel cylinder (see tests/solver/published_cases.py
for the cases, reference values and their sources). Prints computed against published values.

    python bench/published_bench.py                 # every case (an hour or more on one core)
    python bench/published_bench.py circle naca     # only some: circle circle_wide rotating square naca onset shapes
"""

from __future__ import annotations

import argparse
import math
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # the published cases live with the tests

from tests.solver import published_cases as pc
from wakeyard import solver
from wakeyard.core.blas import one_blas_thread

one_blas_thread()  # as the worker runs


def compare(label: str, computed: float | None, reference: float, source: str, width: int = 28) -> None:
    """One line: computed against published, with the difference in per cent and the source."""
    if computed is None:
        print(f"  {label:{width}s} computed   none     published {reference:8.4f}  ({source})")
        return
    print(
        f"  {label:{width}s} computed {computed:8.4f}  published {reference:8.4f}  "
        f"diff {100 * (computed - reference) / abs(reference):+6.2f} %  ({source})"
    )


def solve(spec: dict) -> dict | None:
    with tempfile.TemporaryDirectory() as out:
        t0, c0 = time.perf_counter(), time.process_time()
        try:
            s = solver.run(spec, out)
        except solver.RunFailed as err:
            print(f"  run failed: {err}")
            return None
    steps = f", {s['steps']} steps, ended by {s['ended_by']}" if "steps" in s else ""
    print(
        f"  [{s['mesh']['cells']} cells, {s['mesh']['dofs']} unknowns{steps}; wall {time.perf_counter() - t0:.0f} s, "
        f"cpu {time.process_time() - c0:.0f} s]"
    )
    return s


def circle() -> None:
    print("Circular cylinder in a free stream, Re 100 (slip walls 20 D apart, body D/20, dt 0.1 D/U)")
    s = solve(pc.circle_re100(scale=1.0, dt=0.1, end_time=300.0))
    if s is None:
        return
    b = s["bodies"][0]
    st = s["strouhal_number"]
    compare("Strouhal number", st, pc.strouhal_williamson_brown(100), "Williamson & Brown 1998 fit")
    compare("Strouhal number", st, pc.strouhal_williamson_1988(100), "Williamson 1988/1996 fit, memory")
    compare("Strouhal number", st, pc.CIRCLE_RE100["strouhal"], "Park et al. 1998, memory")
    compare("mean cD", b["drag_coefficient"]["mean"], pc.CIRCLE_RE100["cd_mean"], "Park et al. 1998, memory")
    compare(
        "cL amplitude", b["lift_coefficient"]["amplitude"], pc.CIRCLE_RE100["cl_amplitude"], "Park et al. 1998, memory"
    )


def circle_wide() -> None:
    print(
        "Circular cylinder in a free stream, Re 100, wider domain: walls 40 D apart (blockage 2.5 %), 15 D inflow, "
        "35 D outflow; body D/20, dt 0.1 D/U"
    )
    spec = pc.free_stream(
        pc.circle(offset=0.05, centre=(15.0, 20.0)),
        100.0,
        1.0,
        length=50.0,
        height=40.0,
        analysis=pc._transient(0.1, 300.0),
    )
    s = solve(spec)
    if s is None:
        return
    b = s["bodies"][0]
    compare("Strouhal number", s["strouhal_number"], pc.strouhal_williamson_brown(100), "Williamson & Brown 1998 fit")
    compare("mean cD", b["drag_coefficient"]["mean"], pc.CIRCLE_RE100["cd_mean"], "Park et al. 1998, memory")
    compare(
        "cL amplitude", b["lift_coefficient"]["amplitude"], pc.CIRCLE_RE100["cl_amplitude"], "Park et al. 1998, memory"
    )


def rotating() -> None:
    print("Rotating cylinder, Re 100, spin ratio 1 (counter-clockwise), body D/20, dt 0.1 D/U")
    s = solve(pc.rotating_re100(scale=1.0, dt=0.1))
    if s is None:
        return
    b = s["bodies"][0]
    compare("mean cL", b["lift_coefficient"]["mean"], pc.ROTATING_RE100_ALPHA1["cl_mean"], "Kang et al. 1999, memory")
    compare("mean cD", b["drag_coefficient"]["mean"], pc.ROTATING_RE100_ALPHA1["cd_mean"], "Kang et al. 1999, memory")
    print(f"  (Strouhal number {s['strouhal_number']:.4f}, cL amplitude {b['lift_coefficient']['amplitude']:.4f})")


def square() -> None:
    print("Square cylinder in a channel, blockage 1/8, Re 100 on u_max, channel 50 D, body D/20, dt 0.1 D/u_max")
    s = solve(pc.square_channel_re100(scale=1.0, dt=0.1, length=50.0))
    if s is None:
        return
    b = s["bodies"][0]
    compare("Strouhal number", s["strouhal_number"], pc.SQUARE_CHANNEL_RE100["strouhal"], "Breuer et al. 2000, memory")
    compare("mean cD", b["drag_coefficient"]["mean"], pc.SQUARE_CHANNEL_RE100["cd_mean"], "Breuer et al. 2000, memory")


def naca() -> None:
    for preset, scale in (("coarse", 1.0), ("medium", 1.0), ("medium", 0.7)):
        print(f"NACA 0012, Re 1000, 5 degrees, steady, preset {preset}, scale {scale}")
        s = solve(pc.naca0012_re1000(scale=scale, preset=preset))
        if s:
            b = s["bodies"][0]
            compare("cL", b["lift_coefficient"], pc.NACA0012_RE1000_AOA5["cl"], "Kurtulus 2015, memory")
            compare("cD", b["drag_coefficient"], pc.NACA0012_RE1000_AOA5["cd"], "Kurtulus 2015, memory")


def onset() -> None:
    print("Onset of shedding, free-stream circle: leading eigenvalue of the steady wake (body D/20)")
    values = {}
    for re in (40.0, 45.0, 50.0, 60.0):
        lam = pc.leading_eigenvalue(pc.free_stream(pc.circle(), re, scale=1.0))
        values[re] = lam
        print(f"  Re {re:4.0f}: growth rate {lam.real:+.4f} U/D, Strouhal number {lam.imag / (2 * math.pi):.4f}")
    res = sorted(values)
    for a, b in zip(res, res[1:]):
        if values[a].real < 0 <= values[b].real:
            crit = a + (b - a) * -values[a].real / (values[b].real - values[a].real)
            compare(
                "critical Reynolds number",
                crit,
                sum(pc.ONSET_RANGE) / 2,
                "Provansal et al. 1987 / Williamson 1996: 46-47",
            )
    print("Onset as a user sees it: transient runs from rest, until periodic or t = 400 D/U (body D/10, dt 0.2)")
    for re in (40.0, 60.0):
        spec = pc.free_stream(pc.circle(offset=0.05), re, scale=2.0, analysis=pc._transient(0.2, 400.0))
        s = solve(spec)
        if s is None:
            continue
        b = s["bodies"][0]
        st = s["strouhal_number"]
        print(
            f"  Re {re:.0f}: ended by {s['ended_by']}, lift amplitude over the last half "
            f"{b['lift_coefficient']['amplitude']:.2e}, Strouhal number {st}"
        )
        if s["ended_by"] == "periodic":  # a decaying wake still has a frequency: compare only a periodic one
            compare("Strouhal number", st, pc.strouhal_williamson_brown(re), "Williamson & Brown 1998 fit")


def shapes() -> None:
    print("Self-consistency on the 2D-1 set-up (Re 20), preset medium: ellipse of aspect ratio 1, regular polygons")

    def drag(body: dict) -> float | None:
        s = solve(pc.channel_re20(body, preset="medium"))
        return s["bodies"][0]["drag_coefficient"] if s else None

    circle_cd = drag({"name": "body", "shape": "circle", "center": [0.2, 0.2], "radius": 0.05})
    if circle_cd is None:
        return
    compare(
        "ellipse cD",
        drag({"name": "body", "shape": "ellipse", "center": [0.2, 0.2], "width": 0.1, "height": 0.1, "angle": 30}),
        circle_cd,
        "the circle, same mesh preset",
    )
    for sides in (8, 16, 32, 64, 128):
        compare(f"{sides}-gon cD", drag(pc.regular_polygon(sides)), circle_cd, "the circle, same mesh preset")


CASES = {
    "circle": circle,
    "circle_wide": circle_wide,
    "rotating": rotating,
    "square": square,
    "naca": naca,
    "onset": onset,
    "shapes": shapes,
}

if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("cases", nargs="*", help=f"cases to run (default: all): {', '.join(CASES)}")
    chosen = parser.parse_args().cases or list(CASES)
    if unknown := set(chosen) - set(CASES):
        parser.error(f"unknown case(s) {', '.join(sorted(unknown))}; choose from {', '.join(CASES)}")
    for name in chosen:
        CASES[name]()
        sys.stdout.flush()
