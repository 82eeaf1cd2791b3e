"""The preview's figures are the run's: cells and unknowns of the dry run against the real mesh of every example,
the size rule and the unknowns limit on the same figures, and the estimated steps and CFL number against real runs."""

from __future__ import annotations

import copy
import json

import pytest

from tests.helpers import TINY
from tests.solver.test_examples import EXAMPLES
from wakeyard.solver import Limits, SpecError, check_limits, load, meshing, run
from wakeyard.solver.case import Case
from wakeyard.solver.preview import preview
from wakeyard.solver.sizing import mesh_size

VARIANTS = {
    **EXAMPLES,
    # the cubic pair and extra splits, on the quickest example
    "post P3P2 medium, one refinement": {
        **EXAMPLES["examples/lab_post.json"],
        "elements": "P3P2",
        "mesh": {"preset": "medium", "scale": 2.0, "refinements": 1},
    },
}


@pytest.mark.parametrize("name", sorted(VARIANTS))
def test_cells_and_unknowns_match_the_real_mesh(name: str) -> None:
    data = VARIANTS[name]
    p = preview(data)
    assert p["problems"] == []
    case = Case.build(load(data))
    est = p["estimate"]
    assert est["method"] == "mesher"
    assert abs(est["cells"] - case.cells) <= 0.25 * case.cells
    assert abs(est["dofs"] - case.th.ndofs) <= 0.25 * case.th.ndofs
    print(f"{name}: cells {est['cells']} / {case.cells}, dofs {est['dofs']} / {case.th.ndofs}")


@pytest.mark.parametrize("preset", ["coarse", "medium", "fine"])
def test_the_size_rule_is_calibrated_against_the_mesher(preset: str) -> None:
    """The rule stands in for a dry run only on meshes too big to generate quickly; on every example it is within
    35 % of the mesher's count (it was 41-81 % short before its calibration)."""
    for name, data in EXAMPLES.items():
        spec = load({**data, "mesh": {**data.get("mesh", {}), "preset": preset}})
        exact = mesh_size(spec).cells
        assert abs(meshing.estimate_cells(spec) - exact) <= 0.35 * exact, name


def test_the_unknowns_limit_judges_the_previews_figure() -> None:
    spec = load(EXAMPLES["examples/bridge_pier.json"])
    dofs = preview(spec.model_dump(mode="json"))["estimate"]["dofs"]
    assert dofs == Case.build(spec).th.ndofs  # the dry run counts exactly on this straight-sided body
    check_limits(spec, Limits(max_dofs=dofs))
    with pytest.raises(SpecError) as refused:
        check_limits(spec, Limits(max_dofs=dofs - 1))
    assert refused.value.problems[0][0] == "mesh" and f"{dofs:,} unknowns" in refused.value.problems[0][1]


def test_steps_are_counted_for_fixed_schemes_and_estimated_for_adaptive() -> None:
    body = {"shape": "circle", "center": [0.1, 0.05], "radius": 0.01}
    fixed = {"bodies": [body], "mesh": {"preset": "coarse"}}
    fixed["analysis"] = {"mode": "transient", "scheme": "bdf2-imex", "time_step": 0.3, "end_time": 30}
    assert preview(fixed)["estimate"]["steps"] == 100
    adaptive = {**fixed, "analysis": {"mode": "transient", "end_time": 30}}
    est = preview(adaptive)["estimate"]
    assert est["steps"] > 0 and "estimate" in est["note"] and est["seconds"] > 0
    finer = preview({**adaptive, "analysis": {**adaptive["analysis"], "accuracy": 1e-4}})["estimate"]
    assert finer["steps"] > est["steps"]  # a tighter accuracy takes more steps
    steady = preview({**fixed, "analysis": {"mode": "steady"}})["estimate"]
    assert steady["steps"] is None and steady["seconds"] > 0


def tiny(**analysis: object) -> dict:
    spec = copy.deepcopy(TINY)
    spec["analysis"].pop("checkpoint_interval")
    spec["analysis"].update(scheme="bdf2-adaptive", time_step=None, output_interval=0.3)
    spec["analysis"].update(analysis)
    return spec


@pytest.mark.parametrize("accuracy", [1e-3, 1e-2])
def test_the_adaptive_step_estimate_is_within_a_factor_of_two(tmp_path, accuracy: float) -> None:
    """The estimate's rule (solver.run_cost) against the steps a real run accepts, on the tiny case: 0.3 s with
    the ramp's end in it (its calibration runs gave 0.8-1.5 of the real count)."""
    spec = tiny(accuracy=accuracy)
    estimated = preview(spec)["estimate"]["steps"]
    accepted = run(spec, tmp_path)["time_steps"]["accepted"]
    print(f"accuracy {accuracy}: {estimated} steps estimated, {accepted} accepted")
    assert accepted / 2 <= estimated <= 2 * accepted


def test_the_cfl_warning_is_the_solvers_rule(tmp_path) -> None:
    """A fixed step past the CFL limit of explicit convection is warned about (the run would split it); the estimate
    is within 25 % of the largest CFL number the run measures."""
    spec = tiny(scheme="bdf2-imex", time_step=0.01)
    p = preview(spec)
    assert p["warnings"] == []
    measured = run(spec, tmp_path)["max_cfl"]
    assert p["estimate"]["cfl"] == pytest.approx(measured, rel=0.25)
    big = tiny(scheme="bdf2-imex", time_step=0.05)
    assert [w["field"] for w in preview(big)["warnings"]] == ["analysis.time_step"]
    assert "split" in preview(big)["warnings"][0]["message"]
    assert "stop" in preview(tiny(scheme="euler-imex", time_step=1.0, end_time=2.0))["warnings"][0]["message"]
    assert preview(tiny(scheme="bdf2-implicit", time_step=0.05))["warnings"] == []  # no explicit convection
    assert json.dumps(preview(tiny())["warnings"]) == "[]"  # the error control keeps its own CFL cap


def test_scales_and_outlines() -> None:
    # two 20 mm posts one above the other in a 100 mm channel: 40 % blockage; Re = 0.001 * 0.02 / 1.004e-6
    posts = [{"shape": "circle", "center": [0.1, y], "radius": 0.01} for y in (0.025, 0.075)]
    p = preview({"bodies": posts, "mesh": {"preset": "coarse"}})
    assert p["blockage"] == pytest.approx(0.4, rel=1e-3)
    assert p["reynolds"] == pytest.approx(0.001 * 0.02 / 1.004e-6)
    assert [o["name"] for o in p["outlines"]] == ["body1", "body2"]
    assert p["spec"]["channel"]["length"] == 0.4  # the normalised spec shows the defaults it filled in


def test_every_problem_at_once() -> None:
    data = {
        "bodies": [
            {"shape": "circle", "center": [0.39, 0.05], "radius": 0.02},  # reaches past the outlet
            {"shape": "circle", "center": [0.1, 0.05], "radius": -1},  # a field problem
            {"shape": "circle", "center": [0.1, 0.05], "radius": 0.01},
            {"shape": "circle", "center": [0.11, 0.05], "radius": 0.01},  # overlaps the one before
        ],
        "analysis": {"mode": "transient", "accuracy": 5.0},
    }
    p = preview(data)
    fields = [q["field"] for q in p["problems"]]
    assert "bodies.1.radius" in fields and "analysis.accuracy" in fields  # field problems
    assert "bodies.0" in fields and "bodies.3" in fields  # geometry problems, with the user's numbering
    assert "bodies.2" not in fields
    assert "body4 overlaps or touches body3" in [q["message"] for q in p["problems"]]
    assert p["estimate"] is None and p["spec"] is None
    # the drawing still gets the solver's outline of every body valid on its own, in the user's numbering
    assert [o and o["name"] for o in p["outlines"]] == ["body1", None, "body3", "body4"]


def test_a_huge_mesh_is_estimated_not_built() -> None:
    sizes = {"body_size": 1e-4, "wake_size": 1e-4, "far_size": 1e-4}  # millions of cells: minutes to mesh
    data = {"bodies": [{"shape": "circle", "center": [0.1, 0.05], "radius": 0.01}], "mesh": sizes}
    p = preview(data, Limits(max_dofs=10**9))
    assert p["estimate"]["method"] == "rule"
    assert p["estimate"]["cells"] > 1_000_000
    over = preview(data)  # over the service's default limit: a problem naming the mesh, as at job creation
    assert [q["field"] for q in over["problems"]] == ["mesh"]


def test_a_case_with_no_inflow_gets_an_accuracy_step_estimate() -> None:
    """Still water (a table law that keeps the inflow at zero): no CFL cap to divide by, the accuracy step rules."""
    spec = copy.deepcopy(TINY)
    spec["fluid"]["reference"] = {"velocity": 0.1}
    spec["analysis"] = {"mode": "transient", "end_time": 0.3}  # bdf2-adaptive
    spec["inflow"] = {
        "profile": "uniform",
        "mean_velocity": 0.1,
        "time_law": {"kind": "table", "points": [[0, 0], [9, 0]]},
    }
    p = preview(spec)
    assert p["problems"] == [] and p["estimate"]["steps"] > 0
