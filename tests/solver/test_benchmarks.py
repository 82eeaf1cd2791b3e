"""Laminar cylinder benchmark 2D-1, Re = 20.

Set-up: M. Schäfer and S. Turek (1996), "Benchmark computations of laminar flow around a cylinder", in Flow
Simulation with High-Performance Computers II, Notes on Numerical Fluid Mechanics 52, Vieweg, 547-566. That paper
gives acceptance intervals only (cD 5.57-5.59, cL 0.0104-0.0110, dp 0.1172-0.1176, recirculation length
0.0842-0.0852; recalled, not re-read here: the stored copies of the paper reachable with our search tool end before
its results tables).

Reference digits: the values below are the high-accuracy reference values published online by the FEATFLOW group
(S. Turek's group, TU Dortmund) on its benchmark page "DFG flow around cylinder, laminar case (Re=20)". That page
names as its literature a Heidelberg preprint, "On high order methods for the stationary incompressible
Navier-Stokes equations" (IWR preprint 42/98, 1998; author G. Nabh, from memory), and V. John and G. Matthies
(2001), "Higher-order finite element discretizations in a benchmark problem for incompressible flows", Int. J.
Numer. Meth. Fluids 37:885-903. We read that page's set-up and its list of literature, but not its table of
values (the stored copy ends before it): the digits are recalled, and agree with the values many public codes
attribute to that page. Which of the two works computed them is not established here.
"""

import json

import pytest

from wakeyard.solver import run
from wakeyard.solver.caution import CAUTION

REFERENCE_2D1 = {"cd": 5.57953523384, "cl": 0.010618948146, "dp": 0.11752016697}

BENCHMARK_2D1 = {
    "title": "cylinder benchmark 2D-1",
    "channel": {"length": 2.2, "height": 0.41},
    "bodies": [{"name": "cylinder", "shape": "circle", "center": [0.2, 0.2], "radius": 0.05}],
    "fluid": {"density": 1.0, "viscosity": 1e-3},
    "inflow": {"profile": "parabolic", "peak_velocity": 0.3},
    "mesh": {"preset": "medium"},
    "probes": {"pressure_drop": [[0.15, 0.2], [0.25, 0.2]]},
}


@pytest.fixture(scope="module")
def result_2d1(tmp_path_factory):
    out = tmp_path_factory.mktemp("2d1")
    run(BENCHMARK_2D1, out)
    return out


def test_2d1_coefficients_match_reference(result_2d1):
    summary = json.loads((result_2d1 / "summary.json").read_text())
    body = summary["bodies"][0]
    # reference values above (FEATFLOW group's online page, digits recalled); the tolerances are project choices
    # (about ten times tighter than the 1996 acceptance intervals)
    assert body["drag_coefficient"] == pytest.approx(REFERENCE_2D1["cd"], rel=1e-4)
    assert body["lift_coefficient"] == pytest.approx(REFERENCE_2D1["cl"], rel=1e-3)
    assert summary["pressure_drop"] == pytest.approx(REFERENCE_2D1["dp"], rel=1e-4)
    # the 1996 acceptance interval 0.0842-0.0852 (recalled from memory, see above); a sharper value of about
    # 0.0847 is also recalled from memory, so only the interval is checked
    assert 0.0842 <= body["recirculation_length"] <= 0.0852
    assert summary["reynolds_number"] == pytest.approx(20.0)


def test_2d1_files_follow_the_contract(result_2d1):
    header = (result_2d1 / "forces.csv").read_text().splitlines()[0]
    assert header == "time,cylinder_fx,cylinder_fy,cylinder_cd,cylinder_cl,pressure_drop"
    summary = json.loads((result_2d1 / "summary.json").read_text())
    assert summary["mesh"]["dofs"] > 10_000 and summary["mesh"]["cells"] > 1000
    assert summary["wall_time_seconds"] > 0
    assert summary["units"]["bodies.*.fx"] == "N/m" and summary["units"]["pressure_drop"] == "Pa"
    assert summary["units"]["bodies.*.recirculation_length"] == "m" and summary["caution"] == CAUTION
    assert json.loads((result_2d1 / "status.json").read_text())["state"] == "succeeded"
    for name in ("speed", "vorticity", "pressure"):
        png = (result_2d1 / "pictures" / f"{name}_000000.png").read_bytes()
        assert png[:8] == b"\x89PNG\r\n\x1a\n"
    assert (result_2d1 / "fields" / "step_000000.vtu").stat().st_size > 10_000
    assert "step_000000.vtu" in (result_2d1 / "fields" / "flow.pvd").read_text()
