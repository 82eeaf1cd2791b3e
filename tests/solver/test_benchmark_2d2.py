"""Periodic cylinder benchmark 2D-2, Re = 100.

Set-up: M. Schäfer and S. Turek (1996), "Benchmark computations of laminar flow around a cylinder", Notes on
Numerical Fluid Mechanics 52, 547-566, which gives acceptance intervals only (cD,max 3.22-3.24, St 0.295-0.305;
recalled, not re-read here).

Reference digits: cD,max = 3.22739 and St = 0.30184 are from the finest reference series (Q2/P1 elements; the
series' mesh and time step, about 667k unknowns and dt = 1/1600, are recalled from memory) that the FEATFLOW group
(S. Turek's group, TU Dortmund) publishes on its online page "DFG flow around cylinder benchmark 2D-2,
time-periodic case (Re=100)". We read that page's set-up but not its results table (the stored copy ends before
it): the digits are recalled from memory, and agree with the values other public codes attribute to that page
(cD,max 3.227393, St 0.301841).
"""

import pytest

from wakeyard.solver import run

REFERENCE = {"cd_max": 3.22739, "strouhal": 0.30184}


@pytest.mark.slow
def test_2d2_shedding_on_coarse_mesh(tmp_path):
    spec = {
        "title": "cylinder benchmark 2D-2",
        "channel": {"length": 2.2, "height": 0.41},
        "bodies": [{"name": "cylinder", "shape": "circle", "center": [0.2, 0.2], "radius": 0.05}],
        "fluid": {"density": 1.0, "viscosity": 1e-3},
        "inflow": {"profile": "parabolic", "peak_velocity": 1.5},
        "mesh": {"preset": "coarse"},
        "analysis": {
            "mode": "transient",
            "scheme": "bdf2-imex",
            "time_step": 5e-4,
            "end_time": 8.0,
            "output_interval": 1.0,
            "checkpoint_interval": 4000,
            "until_periodic": {"cycles": 3, "tolerance": 0.01},
        },
        "probes": {"pressure_drop": [[0.15, 0.2], [0.25, 0.2]]},
    }
    summary = run(spec, tmp_path)
    body = summary["bodies"][0]
    assert summary["ended_by"] == "periodic"
    assert summary["window"]["whole_cycles"] >= 3
    # tolerance 1 % on a coarse mesh fit for CI: a project choice
    assert summary["strouhal_number"] == pytest.approx(REFERENCE["strouhal"], rel=0.01)
    assert body["drag_coefficient"]["max"] == pytest.approx(REFERENCE["cd_max"], rel=0.01)
    assert summary["reynolds_number"] == pytest.approx(100.0)
