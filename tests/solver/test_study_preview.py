"""solver.study_preview: a study's points with their size estimates, and the fallback once time runs out."""

from __future__ import annotations

import math
from types import SimpleNamespace

import pytest

from wakeyard.solver import SpecError, study_preview
from wakeyard.solver.study_preview import preview_study

# an invented pipe-bundle tube in a small duct, coarse mesh
BASE = {
    "bodies": [{"name": "tube", "shape": "circle", "center": [0.1, 0.05], "radius": 0.01}],
    "mesh": {"preset": "coarse"},
}
RADII = {"base": BASE, "vary": [{"path": "bodies.0.radius", "values": [0.008, 0.012]}]}


def test_each_point_has_its_own_mesh_estimate() -> None:
    p = preview_study(RADII)
    small, large = (pt["estimate"] for pt in p["points"])
    assert small["method"] == large["method"] == "mesher"
    assert small["cells"] != large["cells"]  # the radius changes the mesh: each point gets its own dry run
    assert p["total"]["cells"] == small["cells"] + large["cells"]


def test_points_estimated_after_the_deadline_get_the_size_rule(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(study_preview, "time", SimpleNamespace(monotonic=lambda: math.inf))
    p = preview_study(RADII, deadline=1e300)  # expand's own clock is untouched: only the estimates run late
    assert [pt["estimate"]["method"] for pt in p["points"]] == ["rule", "rule"]
    assert all(pt["estimate"]["cells"] > 0 for pt in p["points"])


def test_a_refused_point_names_the_study_field() -> None:
    with pytest.raises(SpecError) as err:
        preview_study({"base": BASE, "vary": [{"path": "bodies.0.radius", "values": [0.01, 0.2]}]})
    assert [f for f, _ in err.value.problems] == ["points.1.bodies.0"]
