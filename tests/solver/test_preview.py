"""The preview's figures are the run's: cells and unknowns of the dry run against the real mesh of every example."""

from __future__ import annotations

import pytest

from tests.solver.test_examples import EXAMPLES
from wakeyard.solver import Limits, load
from wakeyard.solver.case import Case
from wakeyard.solver.preview import preview

VARIANTS = {
    **EXAMPLES,
    # the cubic pair and extra splits, on the quickest example
    "post P3P2 medium, one refinement": {
        **EXAMPLES["web:post"],
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


def test_steps_are_counted_for_fixed_schemes_only() -> None:
    body = {"shape": "circle", "center": [0.1, 0.05], "radius": 0.01}
    fixed = {"bodies": [body], "mesh": {"preset": "coarse"}}
    fixed["analysis"] = {"mode": "transient", "scheme": "bdf2-imex", "time_step": 0.3, "end_time": 30}
    assert preview(fixed)["estimate"]["steps"] == 100
    adaptive = {**fixed, "analysis": {"mode": "transient", "end_time": 30}}
    est = preview(adaptive)["estimate"]
    assert est["steps"] is None and "bdf2-adaptive" in est["note"]
    assert preview({**fixed, "analysis": {"mode": "steady"}})["estimate"]["steps"] is None


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


def test_a_huge_mesh_is_estimated_not_built() -> None:
    sizes = {"body_size": 1e-4, "wake_size": 1e-4, "far_size": 1e-4}  # millions of cells: minutes to mesh
    data = {"bodies": [{"shape": "circle", "center": [0.1, 0.05], "radius": 0.01}], "mesh": sizes}
    p = preview(data, Limits(max_dofs=10**9))
    assert p["estimate"]["method"] == "rule"
    assert p["estimate"]["cells"] > 1_000_000
    over = preview(data)  # over the service's default limit: a problem naming the mesh, as at job creation
    assert [q["field"] for q in over["problems"]] == ["mesh"]
