"""The preview's run estimates against real runs: time steps of bdf2-adaptive, seconds, and the CFL number.

Runs the calibration cases of :mod:`solver.run_cost` (the tests' tiny case at three accuracies and two lengths, the
demo post and guide vane, two steady demos, the tiny case on a medium mesh, the tiny case with fixed steps) and
prints estimate, real figure and their ratio. Wall-clock seconds depend on the machine and its load.

    python bench/estimate_bench.py [--estimates-only]
"""

from __future__ import annotations

import copy
import json
import sys
import tempfile
from pathlib import Path
from typing import Any

from wakeyard.solver import load, run
from wakeyard.solver.preview import estimate

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from tests.helpers import TINY  # noqa: E402


def tiny(mesh: dict[str, Any] | None = None, **analysis: Any) -> dict[str, Any]:
    spec = copy.deepcopy(TINY)
    spec["analysis"].pop("checkpoint_interval")
    spec["analysis"].update(scheme="bdf2-adaptive", time_step=None, output_interval=analysis.get("end_time", 0.3))
    spec["analysis"].update(analysis)
    if mesh:
        spec["mesh"] = mesh
    return spec


def example(name: str) -> dict[str, Any]:
    spec = json.loads((ROOT / "examples" / f"{name}.json").read_text())
    if spec["analysis"]["mode"] == "transient":
        spec["analysis"]["output_interval"] = spec["analysis"]["end_time"]
    return spec


CASES = {
    "tiny, accuracy 1e-3, 0.3 s": tiny(),
    "tiny, accuracy 1e-4, 0.3 s": tiny(accuracy=1e-4),
    "tiny, accuracy 1e-2, 1 s": tiny(accuracy=1e-2, end_time=1.0),
    "tiny, accuracy 1e-3, 1 s": tiny(end_time=1.0),
    "tiny, medium mesh, 0.1 s": tiny({"preset": "medium"}, end_time=0.1),
    "tiny, bdf2-imex 0.01 s": tiny(scheme="bdf2-imex", time_step=0.01),
    "lab_post (Re 20)": example("lab_post"),
    "guide_vane (Re 200)": example("guide_vane"),
    "rod_pair (steady)": example("rod_pair"),
    "bridge_pier (steady)": example("bridge_pier"),
}


def main() -> None:
    only = "--estimates-only" in sys.argv
    print(f"{'case':32} {'steps est/run':>18} {'ratio':>6} {'seconds est/run':>18} {'ratio':>6} {'CFL est/run':>14}")
    for name, spec in CASES.items():
        e = estimate(load(spec))
        if only:
            print(f"{name:32} {e['steps']!s:>18} {'':>6} {e['seconds']:18.1f}")
            continue
        with tempfile.TemporaryDirectory() as out:
            s = run(spec, Path(out))
        steps, secs = s.get("steps"), s["wall_time_seconds"]
        step_ratio = f"{e['steps'] / steps:6.2f}" if steps else f"{'':>6}"
        cfl = f"{e['cfl']:.2f}/{s['max_cfl']:.2f}" if e["cfl"] else ""
        both_steps, both_secs = f"{e['steps']}/{steps}", f"{e['seconds']:.1f}/{secs:.1f}"
        ratio = e["seconds"] / secs
        print(f"{name:32} {both_steps:>18} {step_ratio} {both_secs:>18} {ratio:6.2f} {cfl:>14}", flush=True)


if __name__ == "__main__":
    main()
