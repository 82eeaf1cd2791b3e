"""Job spec validation: bad input names the field and the rule."""

import pytest

from wakeyard.solver import Limits, SpecError, check_limits, load
from wakeyard.solver.spec import DEFAULT_POST

# the cylinder and channel of the 2D-1 benchmark (Schäfer & Turek 1996), given explicitly: not the defaults
CYLINDER = {"shape": "circle", "center": [0.2, 0.2], "radius": 0.05}
CHANNEL = {"length": 2.2, "height": 0.41}


def problems(data):
    with pytest.raises(SpecError) as err:
        load(data)
    return dict(err.value.problems)


def test_three_line_spec_gets_defaults():
    spec = load({"bodies": [{**DEFAULT_POST, "name": ""}]})
    assert spec.bodies[0].name == "body1"
    # a 20 mm post in a 0.4 m x 0.1 m channel of water at 20 °C, mean speed 1 mm/s (2/3 of the default peak)
    assert (spec.channel.length, spec.channel.height) == (0.4, 0.1)
    assert spec.fluid.density == 998.2 and spec.viscosity() == 1.004e-6
    assert spec.inflow.mean() == pytest.approx(0.001)
    assert spec.reynolds() == pytest.approx(0.001 * 0.02 / 1.004e-6)  # 19.9


def test_reynolds_number_sets_viscosity_from_reference_scales():
    spec = load(
        {"channel": CHANNEL, "bodies": [CYLINDER], "fluid": {"reynolds": 100}, "inflow": {"peak_velocity": 1.5}}
    )
    assert spec.viscosity() == pytest.approx(1.0 * 0.1 / 100)


def test_time_law_amplitude_not_instant_value_sets_reference_velocity():
    spec = load(
        {
            "inflow": {
                "mean_velocity": 2.0,
                "profile": "uniform",
                "time_law": {"kind": "sine", "period": 1.0, "amplitude": 0.5},
            }
        }
    )
    assert spec.nominal_velocity() == pytest.approx(1.0)
    assert spec.inflow.factor(0.25) == pytest.approx(0.5)


@pytest.mark.parametrize(
    ("data", "field", "words"),
    [
        ({"channel": CHANNEL, "bodies": [{**CYLINDER, "radius": -1}]}, "bodies.0.radius", "greater than 0"),
        ({"fluid": {"viscosity": 0}}, "fluid.viscosity", "greater than 0"),
        ({"analysis": {"time_step": -1e-3}}, "analysis.time_step", "greater than 0"),
        ({"channel": CHANNEL, "bodies": [{**CYLINDER, "radius": 0.3}]}, "bodies.0", "not strictly inside the channel"),
        ({"channel": CHANNEL, "bodies": [CYLINDER, {**CYLINDER, "center": [0.25, 0.2]}]}, "bodies.1", "overlaps"),
        (
            {"channel": CHANNEL, "bodies": [CYLINDER], "probes": {"pressure_drop": [[0.2, 0.2], [0.5, 0.2]]}},
            "probes.pressure_drop.0",
            "inside body",
        ),
        ({"analysis": {"mode": "transient", "time_step": 0.1, "end_time": 0.01}}, "analysis.end_time", "shorter"),
        ({"colour": "red"}, "colour", "not permitted"),
        (
            {"bodies": [{"shape": "naca4", "code": "24x2", "chord": 0.1, "leading_edge": [0.1, 0.2]}]},
            "bodies.0.code",
            "pattern",
        ),
        (
            {"bodies": [{"shape": "polygon", "points": [[0.3, 0.1], [0.4, 0.2], [0.4, 0.1], [0.3, 0.2]]}]},
            "bodies.0.points",
            "cross",
        ),
        ({"fluid": {"viscosity": 1e-3, "reynolds": 100}}, "fluid", "not both"),
        ({"channel": {"length": "long"}}, "channel.length", "number"),
        ({"channel": CHANNEL, "bodies": [{**CYLINDER, "radius": 1e300}]}, "bodies.0.radius", "less than or equal"),
        (
            {"channel": CHANNEL, "bodies": [{**CYLINDER, "center": [1e300, 0.2]}]},
            "bodies.0.center.0",
            "less than or equal",
        ),
        ({"channel": CHANNEL, "bodies": [{**CYLINDER, "radius": 1e-9}]}, "bodies.0", "too small to mesh"),
    ],
)
def test_bad_input_names_field(data, field, words):
    found = problems(data)
    assert field in found, found
    assert words in found[field]


def test_limits_name_the_estimated_size():
    spec = load({"channel": CHANNEL, "bodies": [CYLINDER], "mesh": {"preset": "fine", "scale": 0.1}})
    with pytest.raises(SpecError) as err:
        check_limits(spec, Limits(max_dofs=100_000))
    field, message = err.value.problems[0]
    assert field == "mesh" and "unknowns" in message and "100,000" in message


def test_astronomical_step_count_is_refused_not_overflowed():
    spec = load({"analysis": {"mode": "transient", "scheme": "bdf2-imex", "time_step": 1e-300, "end_time": 1e9}})
    with pytest.raises(SpecError, match="over 1e15 steps"):
        check_limits(spec, Limits())


def test_step_limit():
    spec = load({"analysis": {"mode": "transient", "scheme": "bdf2-imex", "time_step": 1e-4, "end_time": 10}})
    with pytest.raises(SpecError, match="100,000 steps"):
        check_limits(spec, Limits(max_steps=1000))


@pytest.mark.parametrize(
    ("data", "field", "words"),
    [
        (
            {"channel": CHANNEL, "bodies": [CYLINDER], "fluid": {"reynolds": 4.9e-324}},
            "fluid.reynolds",
            "greater than or equal to 0.000001",
        ),
        (
            {"channel": CHANNEL, "bodies": [CYLINDER], "fluid": {"viscosity": 5e-324}},
            "fluid.viscosity",
            "Reynolds number U L / ν = inf",
        ),
        (
            {"channel": CHANNEL, "bodies": [CYLINDER], "fluid": {"reynolds": 1e-6, "reference": {"velocity": 1e4}}},
            "fluid.reynolds",
            "kinematic viscosity of 1e+09 m²/s, over the limit of 1e+06",
        ),
        (
            {"inflow": {"time_law": {"kind": "table", "points": [[0, 0], [1, 0]]}}},
            "inflow.time_law",
            "nominal velocity is zero",
        ),
    ],
)
def test_derived_scales_stay_bounded(data, field, words):
    """Reynolds number, viscosity and reference velocity derived from each other stay finite and in range."""
    found = problems(data)
    assert words in found[field]


def test_polygon_whose_corner_touches_an_edge_is_refused():
    touching = [[0.3, 0.1], [0.5, 0.1], [0.5, 0.3], [0.4, 0.1], [0.3, 0.3]]
    assert "cross or touch" in problems({"bodies": [{"shape": "polygon", "points": touching}]})["bodies.0.points"]


def test_a_body_inside_another_overlaps():
    ring = {"shape": "polygon", "points": [[0.1, 0.1], [0.4, 0.1], [0.4, 0.35], [0.1, 0.35]]}
    assert "overlaps" in problems({"bodies": [ring, {**CYLINDER, "center": [0.25, 0.22], "radius": 0.02}]})["bodies.1"]
