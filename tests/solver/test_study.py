"""Study expansion: sweeps over spec fields and their errors."""

import pytest

from wakeyard.solver import SpecError, load
from wakeyard.solver.results import SteadySummary, TransientSummary
from wakeyard.solver.study import expand, summary_values, sweepable
from wakeyard.solver.units import labelled, number_paths, spec_unit, value_unit

PIER = {
    "channel": {"length": 2.0, "height": 1.0},
    "bodies": [{"name": "pier", "shape": "rectangle", "center": [0.5, 0.5], "width": 0.1, "height": 0.1}],
}


def test_two_parameter_sweep_is_a_product():
    points = expand(
        {
            "base": PIER,
            "vary": [
                {"path": "bodies.0.angle", "values": [0, 15, 30]},
                {
                    "path": "inflow.peak_velocity",
                    "range": {"start": 0.1, "stop": 0.4, "count": 3, "spacing": "geometric"},
                },
            ],
        }
    )
    assert len(points) == 9
    values, spec = points[-1]
    assert values == {"bodies.0.angle": 30, "inflow.peak_velocity": pytest.approx(0.4)}
    assert spec.bodies[0].angle == 30 and spec.inflow.peak() == pytest.approx(0.4)
    assert points[1][0]["inflow.peak_velocity"] == pytest.approx(0.2)  # geometric middle of 0.1 and 0.4


@pytest.mark.parametrize(
    ("study", "field"),
    [
        ({"base": PIER, "vary": [{"path": "bodies.3.angle", "values": [1]}]}, "vary.0.path"),
        ({"base": PIER, "vary": [{"path": "channel.walls", "values": [1]}]}, "vary.0.path"),
        ({"base": PIER, "vary": [{"path": "bodies.0.center.0", "values": [0.5, 1.99]}]}, "points.1.bodies.0"),
        ({"base": PIER, "vary": []}, "(spec)"),
        (
            {"base": {**PIER, "fluid": {"viscosity": -1}}, "vary": [{"path": "fluid.viscosity", "values": [1]}]},
            "base.fluid.viscosity",
        ),
        (
            {
                "base": PIER,
                "vary": [
                    {"path": "fluid.density", "range": {"start": 0, "stop": 1, "count": 3, "spacing": "geometric"}}
                ],
            },
            "vary.0.range",
        ),
    ],
)
def test_bad_studies_name_the_field(study, field):
    with pytest.raises(SpecError) as err:
        expand(study)
    assert field in dict(err.value.problems), err.value.problems


HEAD = {
    "title": "",
    "elements": "P2P1",
    "reynolds_number": 20.0,
    "reference": {"velocity": 1.0, "lengths": {"a": 0.1}},
    "mesh": {"cells": 100, "dofs": 1000},
    "timings": {},
}


def _stats(mean: float, amplitude: float) -> dict[str, float]:
    return {"mean": mean, "min": mean - amplitude, "max": mean + amplitude, "amplitude": amplitude, "rms": amplitude}


def _steady(body: dict) -> SteadySummary:
    values = {"fx": 0.0, "fy": 0.0, "lift_coefficient": 0.0, "recirculation_length": None}
    return SteadySummary.model_validate({**HEAD, "mode": "steady", "bodies": [{**values, **body}]})


def _transient(body: dict, **more) -> TransientSummary:
    values = {"drag_coefficient": _stats(1.0, 0.0), "lift_coefficient": _stats(0.0, 0.0), "strouhal_number": None}
    return TransientSummary.model_validate({**HEAD, "mode": "transient", "bodies": [{**values, **body}], **more})


def test_summary_values_flatten_transient_statistics():
    summary = _transient(
        {"name": "a", "drag_coefficient": _stats(1.0, 0.1), "lift_coefficient": _stats(0.0, 0.5)},
        pressure_drop=_stats(2.0, 0.3),
        strouhal_number=0.2,
    )
    assert summary_values(summary) == {
        "a.cd_mean": 1.0,
        "a.cd_amplitude": 0.1,
        "a.cl_mean": 0.0,
        "a.cl_amplitude": 0.5,
        "pressure_drop_mean": 2.0,
        "strouhal_number": 0.2,
    }


def test_every_numeric_spec_field_has_a_unit_for_study_axes():
    full = load(
        {
            "bodies": [
                {
                    "shape": "circle",
                    "center": [0.05, 0.05],
                    "radius": 0.005,
                    "spin": 1.0,
                    "thermal": {"temperature": 50},
                },
                {
                    "thermal": {"heat_flux": 100.0},
                    "shape": "rectangle",
                    "center": [0.1, 0.05],
                    "width": 0.01,
                    "height": 0.01,
                    "angle": 10,
                    "corner_radius": 0.001,
                },
                {"shape": "ellipse", "center": [0.15, 0.05], "width": 0.02, "height": 0.01, "angle": 5},
                {"shape": "naca4", "code": "0012", "chord": 0.02, "leading_edge": [0.2, 0.05], "angle_of_attack": 4},
                {"shape": "polygon", "points": [[0.3, 0.04], [0.32, 0.05], [0.3, 0.06]]},
            ],
            "fluid": {"reference": {"velocity": 0.001, "length": 0.01}},
            "inflow": {"time_law": {"kind": "table", "points": [[0, 0.5], [1, 1.0]]}},
            "mesh": {"body_size": 0.001, "wake_size": 0.002, "far_size": 0.01, "wake_length": 0.1},
            "analysis": {"output_interval": 1.0, "until_periodic": {}},
            "probes": {"pressure_drop": [[0.01, 0.05], [0.39, 0.05]], "velocity": [[0.2, 0.02]]},
            "heat": {"walls": {"temperature": 30.0}},
        }
    )
    data = full.model_dump(mode="json")
    assert [p for p in number_paths(data) if spec_unit(p) is None] == []
    assert spec_unit("inflow.mean_velocity") == "m/s" and spec_unit("bodies.1.center.0") == "m"
    assert spec_unit("fluid.viscosity") == "m^2/s" and spec_unit("bodies.0.angle") == "deg"
    assert spec_unit("bodies.1.thermal.heat_flux") == "W/m^2" and spec_unit("heat.conductivity") == "W/(m K)"
    assert labelled("inflow.mean_velocity", "m/s") == "inflow.mean_velocity [m/s]"
    assert labelled("pier.cd", value_unit("pier.cd")) == "pier.cd [-]"
    assert value_unit("pressure_drop_mean") == "Pa" and labelled("x", None) == "x"


def test_summary_values_carry_the_nusselt_number():
    steady = _steady({"name": "rod", "drag_coefficient": 1.5, "nusselt_number": 2.4})
    assert summary_values(steady)["rod.nu"] == 2.4
    transient = _transient({"name": "rod", "nusselt_number": _stats(5.1, 0.2)})
    assert summary_values(transient) == {
        "rod.cd_mean": 1.0,
        "rod.cd_amplitude": 0.0,
        "rod.cl_mean": 0.0,
        "rod.cl_amplitude": 0.0,
        "rod.nu_mean": 5.1,
        "rod.nu_amplitude": 0.2,
    }


def test_empty_fields_a_sweep_can_set_are_offered_with_the_value_in_use():
    spec = load({"bodies": [{"shape": "circle", "center": [0.1, 0.05], "radius": 0.01}], "fluid": {"viscosity": 1e-6}})
    fields = {f["path"]: f for f in sweepable(spec)}
    assert fields["fluid.viscosity"] == {"path": "fluid.viscosity", "value": 1e-6, "unit": "m^2/s"}
    assert fields["fluid.reynolds"]["derived"] and fields["fluid.reynolds"]["value"] == pytest.approx(spec.reynolds())
    assert fields["mesh.body_size"]["derived"] and fields["mesh.body_size"]["value"] == pytest.approx(0.02 / 40)
    assert "analysis.time_step" not in fields  # under bdf2-adaptive only the first step: no knob to sweep
    assert "fluid.reference.velocity" not in fields and "inflow.time_law.period" not in fields
    # sweeping the Reynolds number of a case given by its viscosity: each point is given by its Reynolds number
    points = expand({"base": spec.model_dump(mode="json"), "vary": [{"path": "fluid.reynolds", "values": [30, 60]}]})
    assert [(p.fluid.viscosity, p.reynolds()) for _, p in points] == [(None, 30), (None, 60)]
    sized = expand({"base": spec.model_dump(mode="json"), "vary": [{"path": "mesh.body_size", "values": [1e-3]}]})
    assert sized[0][1].mesh.body_size == 1e-3


def test_every_mount_field_has_a_unit_and_a_sweep_can_vary_the_reduced_velocity():
    spring = {"kind": "spring", "directions": ["x", "y"], "mass_ratio": 10, "damping_ratio": 0.01}
    spec = load(
        {
            "channel": {"length": 0.6, "height": 0.3},
            "bodies": [
                {
                    "name": "tube",
                    "shape": "circle",
                    "center": [0.1, 0.15],
                    "radius": 0.01,
                    "mount": {**spring, "reduced_velocity": 5, "initial_displacement": [0.001, 0.002]},
                },
                {
                    "name": "rod",
                    "shape": "circle",
                    "center": [0.3, 0.15],
                    "radius": 0.01,
                    "mount": {"kind": "driven", "direction": "y", "amplitude": 0.002, "frequency": 0.1},
                },
            ],
            "analysis": {"mode": "transient"},
        }
    )
    data = spec.model_dump(mode="json")
    assert [p for p in number_paths(data) if spec_unit(p) is None] == []
    offered = {f["path"]: f["unit"] for f in sweepable(spec)}
    assert offered["bodies.0.mount.reduced_velocity"] == "1" and offered["bodies.0.mount.mass_ratio"] == "1"
    assert offered["bodies.0.mount.initial_velocity.1"] == "m/s" and offered["bodies.1.mount.frequency"] == "1/s"
    points = expand({"base": data, "vary": [{"path": "bodies.0.mount.reduced_velocity", "values": [3, 8]}]})
    assert [p.bodies[0].mount.reduced_velocity for _, p in points] == [3, 8]


def test_a_moving_body_s_response_leads_its_summary_values_and_a_held_axis_is_left_out():
    still = {"mean": 0.0, "min": 0.0, "max": 0.0, "amplitude": 0.0, "amplitude_ratio": 0.0}
    swing = {"mean": 0.0, "min": -0.01, "max": 0.01, "amplitude": 0.01, "amplitude_ratio": 0.5}
    motion = {"x": still, "y": swing, "frequency": 1.0, "frequency_ratio": 0.95}
    values = summary_values(_transient({"name": "tube", "motion": motion}))
    assert list(values)[:2] == ["tube.y_amplitude_ratio", "tube.frequency_ratio"]
    assert values["tube.y_amplitude_ratio"] == 0.5 and values["tube.frequency_ratio"] == 0.95
    assert "tube.x_amplitude_ratio" not in values
