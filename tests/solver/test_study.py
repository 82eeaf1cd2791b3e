"""Study expansion: sweeps over spec fields and their errors."""

import pytest

from solver import SpecError
from solver.study import expand, summary_values

PIER = {"channel": {"length": 2.0, "height": 1.0},
        "bodies": [{"name": "pier", "shape": "rectangle", "center": [0.5, 0.5], "width": 0.1, "height": 0.1}]}


def test_two_parameter_sweep_is_a_product():
    points = expand({"base": PIER, "vary": [
        {"path": "bodies.0.angle", "values": [0, 15, 30]},
        {"path": "inflow.peak_velocity", "range": {"start": 0.1, "stop": 0.4, "count": 3, "spacing": "geometric"}}]})
    assert len(points) == 9
    values, spec = points[-1]
    assert values == {"bodies.0.angle": 30, "inflow.peak_velocity": pytest.approx(0.4)}
    assert spec.bodies[0].angle == 30 and spec.inflow.peak() == pytest.approx(0.4)
    assert points[1][0]["inflow.peak_velocity"] == pytest.approx(0.2)  # geometric middle of 0.1 and 0.4


@pytest.mark.parametrize(("study", "field"), [
    ({"base": PIER, "vary": [{"path": "bodies.3.angle", "values": [1]}]}, "vary.0.path"),
    ({"base": PIER, "vary": [{"path": "channel.walls", "values": [1]}]}, "vary.0.path"),
    ({"base": PIER, "vary": [{"path": "bodies.0.center.0", "values": [0.5, 1.99]}]}, "points.1.bodies.0"),
    ({"base": PIER, "vary": []}, "(spec)"),
    ({"base": {**PIER, "fluid": {"viscosity": -1}}, "vary": [{"path": "fluid.viscosity", "values": [1]}]},
     "base.fluid.viscosity"),
    ({"base": PIER, "vary": [{"path": "fluid.density", "range": {"start": 0, "stop": 1, "count": 3,
                                                                   "spacing": "geometric"}}]}, "vary.0.range"),
])
def test_bad_studies_name_the_field(study, field):
    with pytest.raises(SpecError) as err:
        expand(study)
    assert field in dict(err.value.problems), err.value.problems


def test_summary_values_flatten_transient_statistics():
    summary = {"bodies": [{"name": "a", "drag_coefficient": {"mean": 1.0, "amplitude": 0.1},
                           "lift_coefficient": {"mean": 0.0, "amplitude": 0.5}}],
               "pressure_drop": {"mean": 2.0}, "strouhal_number": 0.2}
    assert summary_values(summary) == {"a.cd_mean": 1.0, "a.cd_amplitude": 0.1, "a.cl_mean": 0.0,
                                       "a.cl_amplitude": 0.5, "pressure_drop_mean": 2.0, "strouhal_number": 0.2}
