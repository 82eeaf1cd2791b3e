"""Error-controlled time stepping: observed order, tolerance proportionality, rough inflows, exact resumption.

The observed order is measured by self-convergence against the same scheme at a far tighter accuracy (common
practice); that a
variable-step BDF2 is second order and that an error-per-unit-step control makes the global error about
proportional to the tolerance are textbook facts (e.g. Hairer, Norsett & Wanner, "Solving ODEs I", 1993,
sections III.5 and II.4; recalled). The accepted bands are project choices.
"""

import numpy as np
import pytest

from tests.helpers import interrupted_then_resumed
from wakeyard.solver import SpecError, load, run
from wakeyard.solver.adaptive import AdaptiveBDF2, Scales
from wakeyard.solver.output import read_forces

from .conftest import RAMP_END as END


def final_velocity(case, accuracy):
    U, L = case.spec.reference_velocity(), case.spec.reference_length()
    scales = Scales(U, L / U)
    stepper = AdaptiveBDF2(case.ns, case.ns.stokes(0.0), accuracy, scales, first_step=1e-3 * L / U)
    while stepper.t < END * (1 - 1e-12):
        result = stepper.step(END)
    return stepper, result.x


def test_second_order_and_error_about_proportional_to_the_accuracy(ramped_cylinder):
    case = ramped_cylinder
    # the reference: the same scheme at a far tighter accuracy (self-convergence; measured within 3e-8 of a
    # fixed-step BDF2 run with 1280 steps, 50 times below the smallest error checked here)
    reference_stepper, reference = final_velocity(case, 1e-6)
    errors, mean_steps = [], []
    for accuracy in (1e-3, 2.5e-4, 6.25e-5):
        stepper, x = final_velocity(case, accuracy)
        errors.append(reference_stepper._norm(x - reference))
        mean_steps.append(END / stepper.stats.accepted)
        assert stepper.stats.rejected == 0  # a smooth flow: the controller never overshoots
    errors, mean_steps = np.log(errors), np.log(mean_steps)
    order = np.polyfit(mean_steps, errors, 1)[0]
    assert 1.8 <= order <= 3.2, (np.exp(errors), np.exp(mean_steps), order)
    # a quarter of the accuracy: a few times smaller error, about half the step
    error_ratios, step_ratios = np.exp(-np.diff(errors)), np.exp(-np.diff(mean_steps))
    assert np.all((error_ratios >= 2.5) & (error_ratios <= 8)), np.exp(errors)
    assert np.all((step_ratios >= 1.5) & (step_ratios <= 2.6)), np.exp(mean_steps)


# a post in a channel whose inflow doubles abruptly (a gate opening upstream): a table law with a jump
ROUGH = {
    "channel": {"length": 1.0, "height": 0.41},
    "bodies": [{"name": "post", "shape": "circle", "center": [0.2, 0.2], "radius": 0.05}],
    "fluid": {"density": 1.0, "viscosity": 1e-3},
    "inflow": {
        "peak_velocity": 0.3,
        "ramp_time": 0.0,
        "time_law": {"kind": "table", "points": [[0.0, 1.0], [0.5, 1.0], [0.5001, 2.0], [2.0, 2.0]]},
    },
    "mesh": {"preset": "coarse", "scale": 2.0},
    "analysis": {"mode": "transient", "end_time": 1.0, "checkpoint_interval": 10},
}


def test_an_abrupt_inflow_change_runs_to_the_end_with_the_defaults(tmp_path):
    summary = run(ROUGH, tmp_path)
    assert summary["scheme"] == "bdf2-adaptive" and summary["ended_by"] == "end_time"
    assert summary["simulated_time"] == pytest.approx(1.0, rel=1e-12)
    _, data = read_forces(tmp_path / "forces.csv")
    t, dt = data[:, 0], data[:, -1]
    assert np.allclose(np.diff(t), dt[1:])
    steps = summary["time_steps"]
    assert steps["accepted"] == len(t)
    assert np.isclose(t, 0.5, rtol=0, atol=1e-12).any() and np.isclose(t, 0.5001, rtol=0, atol=1e-12).any()
    assert dt[np.abs(t - 0.5) < 0.01].min() < 0.1 * dt[(t > 0.2) & (t < 0.45)].mean()  # steps shrink at the jump
    assert steps["solves_per_step"] < 3


def test_adaptive_resume_is_bitwise_identical(tmp_path):
    spec = {**ROUGH, "analysis": {**ROUGH["analysis"], "end_time": 0.7}}
    whole = run(spec, tmp_path / "whole")
    resumed = interrupted_then_resumed(spec, tmp_path / "parts", steps=37)
    assert resumed["resumed_from_step"] == 30
    assert (tmp_path / "parts" / "forces.csv").read_bytes() == (tmp_path / "whole" / "forces.csv").read_bytes()
    assert resumed["time_steps"] == whole["time_steps"]


def test_a_split_fixed_step_keeps_explicit_convection_below_the_cfl_limit(tmp_path):
    spec = {**ROUGH, "analysis": {"mode": "transient", "scheme": "bdf2-imex", "time_step": 0.02, "end_time": 0.7}}
    summary = run(spec, tmp_path)
    _, data = read_forces(tmp_path / "forces.csv")
    t, dt = data[:, 0], data[:, -1]
    assert set(np.round(dt, 12)) <= {0.02, 0.01, 0.005, 0.0025, 0.00125}
    assert dt[t > 0.55].max() < dt[t < 0.45].min()  # the doubled inflow needs split steps
    # the limit holds for the velocity each step starts from; a step across the jump ends at up to twice it
    assert summary["max_cfl"] < 2.0


@pytest.mark.parametrize("accuracy", [0, -1e-3, 0.5, 1e-9])
def test_an_accuracy_out_of_range_is_refused_naming_the_field(accuracy):
    with pytest.raises(SpecError) as failure:
        load({"analysis": {"mode": "transient", "accuracy": accuracy}})
    assert [field for field, _ in failure.value.problems] == ["analysis.accuracy"]


def test_a_fixed_scheme_without_a_time_step_is_refused():
    with pytest.raises(SpecError) as failure:
        load({"analysis": {"mode": "transient", "scheme": "bdf2-imex"}})
    assert [field for field, _ in failure.value.problems] == ["analysis.time_step"]
