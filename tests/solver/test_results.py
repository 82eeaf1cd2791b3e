"""The result models against real runs: summary.json validates, round-trips to the same text, and its values are
forces.csv's columns read by name."""

import json

import pytest
from pydantic import ValidationError

from wakeyard.solver import run
from wakeyard.solver.results import ForceHistory, SteadySummary, TransientSummary, body_column, dump, parse

# A cheap Re-20 case of our own (a heated pipe in a short duct) with every optional block a run can fill: pressure
# probes, velocity probes, the temperature; no published value is checked in this file.
DUCT = {
    "title": "heated pipe in a short duct (test)",
    "channel": {"length": 1.0, "height": 0.41},
    "bodies": [
        {"name": "pipe", "shape": "circle", "center": [0.2, 0.2], "radius": 0.05, "thermal": {"temperature": 40}},
        {"name": "strut", "shape": "rectangle", "center": [0.55, 0.2], "width": 0.04, "height": 0.04},
    ],
    "fluid": {"density": 1.0, "viscosity": 1e-3},
    "inflow": {"peak_velocity": 0.3, "ramp_time": 0.05},
    "mesh": {"preset": "coarse", "scale": 2.0},
    "probes": {"pressure_drop": [[0.1, 0.2], [0.9, 0.2]], "velocity": [[0.4, 0.35]]},
    "heat": {},
}
TRANSIENT = {"mode": "transient", "scheme": "bdf2-imex", "time_step": 0.005, "end_time": 0.06}


@pytest.fixture(scope="module", params=["steady", "transient"])
def finished(request, tmp_path_factory):
    out = tmp_path_factory.mktemp(request.param)
    spec = DUCT if request.param == "steady" else {**DUCT, "analysis": TRANSIENT}
    returned = run(spec, out)
    return out, returned


def test_summary_json_validates_and_round_trips_to_the_same_text(finished):
    out, returned = finished
    text = (out / "summary.json").read_text()
    summary = parse(json.loads(text))
    assert type(summary) is (SteadySummary if summary.mode == "steady" else TransientSummary)
    assert json.dumps(dump(summary), indent=2, allow_nan=False) + "\n" == text  # same keys, order and values
    assert dump(summary) == returned
    assert summary.heat is not None and summary.bodies[0].nusselt_number is not None


def test_summary_values_are_the_force_columns_by_name(finished):
    out, _ = finished
    summary = parse(json.loads((out / "summary.json").read_text()))
    forces = ForceHistory.read(out / "forces.csv")
    assert forces.columns[:5] == ["time", "pipe_fx", "pipe_fy", "pipe_cd", "pipe_cl"]
    for body in summary.bodies:
        cd = body.drag_coefficient
        if isinstance(summary, SteadySummary):
            # forces.csv keeps 12 significant digits
            assert cd == pytest.approx(forces.last(body_column(body.name, "cd")), rel=1e-11)
            assert body.fy == pytest.approx(forces.last(body_column(body.name, "fy")), rel=1e-11)  # type: ignore[union-attr]
        else:
            assert cd.min <= cd.mean <= cd.max  # type: ignore[union-attr]
            assert cd.max <= forces.body(body.name, "cd").max()  # type: ignore[union-attr]


def test_a_block_the_run_did_not_fill_is_left_out(finished):
    """An optional block (here the heat fields) is written only by a run that fills it, so summaries without it
    keep their keys; a key the models do not know is refused (the models document every key)."""
    out, _ = finished
    data = json.loads((out / "summary.json").read_text())
    data.pop("heat"), data.pop("outlet_temperature")
    for body in data["bodies"]:
        body.pop("nusselt_number", None), body.pop("surface_temperature", None)
    assert dump(parse(data)) == data
    data["bodies"][0]["unknown"] = 1.0
    with pytest.raises(ValidationError, match="unknown"):
        parse(data)
