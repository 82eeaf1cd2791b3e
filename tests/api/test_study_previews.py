"""POST /api/v1/studies/previews: a study's points and estimates from the solver, nothing queued; refusals as 422."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from fastapi.testclient import TestClient

from tests.helpers import settings_for
from wakeyard.api.app import create_app

# a cylinder in a 1.0 x 0.41 channel (an invented cooling-duct tube, coarse mesh)
BASE: dict[str, Any] = {
    "channel": {"length": 1.0, "height": 0.41},
    "bodies": [{"name": "tube", "shape": "circle", "center": [0.2, 0.2], "radius": 0.05}],
    "fluid": {"density": 1.0, "viscosity": 1e-3},
    "mesh": {"preset": "coarse", "scale": 2.0},
}


@pytest.fixture
def roomy(tmp_path: Path) -> Iterator[TestClient]:
    """As ``offline``, with room for a 6-point study under the per-user cap."""
    settings = settings_for(tmp_path, "wakeyard-offline", broker="", max_active_per_user=6)
    with TestClient(create_app(settings)) as client:
        yield client


def test_a_two_field_sweep_lists_its_points_and_totals(roomy: TestClient) -> None:
    offline = roomy
    vary = [
        {"path": "inflow.peak_velocity", "values": [0.15, 0.3]},
        {"path": "fluid.viscosity", "range": {"start": 1e-3, "stop": 4e-3, "count": 3, "spacing": "geometric"}},
    ]
    r = offline.post("/api/v1/studies/previews", json={"base": BASE, "vary": vary})
    assert r.status_code == 200, r.text
    p = r.json()
    assert p["count"] == 6 and len(p["points"]) == 6
    nus = sorted({pt["values"]["fluid.viscosity"] for pt in p["points"]})
    assert [round(v, 9) for v in nus] == [0.001, 0.002, 0.004]  # the geometric range, expanded by the solver
    # Re = mean velocity (2/3 of the parabola's peak) x diameter / nu: 0.3 -> 20, as the job preview says
    fast = next(pt for pt in p["points"] if pt["values"] == {"inflow.peak_velocity": 0.3, "fluid.viscosity": 1e-3})
    assert round(fast["reynolds"], 6) == 20.0
    single = offline.post("/api/v1/previews", json=BASE).json()["estimate"]
    assert all(pt["estimate"]["cells"] == single["cells"] for pt in p["points"])  # the same mesh at every point
    assert p["total"]["cells"] == 6 * single["cells"] and p["total"]["dofs"] == 6 * single["dofs"]
    assert p["total"]["steps"] is None  # steady: no time steps
    assert offline.get("/api/v1/jobs").json()["jobs"] == []  # nothing queued


def test_mesh_convergence_points_grow_fourfold(offline: TestClient) -> None:
    r = offline.post("/api/v1/studies/previews", json={"kind": "mesh-convergence", "base": BASE, "levels": 3})
    assert r.status_code == 200, r.text
    cells = [pt["estimate"]["cells"] for pt in r.json()["points"]]
    assert [pt["values"] for pt in r.json()["points"]] == [{"mesh.refinements": k} for k in (0, 1, 2)]
    assert cells[1] == 4 * cells[0] and cells[2] == 16 * cells[0]


def test_fixed_steps_are_totalled(offline: TestClient) -> None:
    analysis = {"mode": "transient", "scheme": "bdf2-imex", "time_step": 0.01, "end_time": 0.3}
    study = {"base": {**BASE, "analysis": analysis}, "vary": [{"path": "analysis.end_time", "values": [0.3, 0.5]}]}
    p = offline.post("/api/v1/studies/previews", json=study).json()
    assert [pt["estimate"]["steps"] for pt in p["points"]] == [30, 50] and p["total"]["steps"] == 80


def test_bad_studies_are_refused_naming_the_field(offline: TestClient) -> None:
    def refused(study: dict[str, Any]) -> list[str]:
        r = offline.post("/api/v1/studies/previews", json=study)
        assert r.status_code == 422, r.text
        return [q["field"] for q in r.json()["detail"]]

    rng = {"start": 1.0, "stop": 2.0, "count": 1}
    assert refused({"base": BASE, "vary": [{"path": "fluid.viscosity", "range": rng}]}) == ["vary.0.range.count"]
    assert refused({"base": BASE, "vary": [{"path": "fluid.colour", "values": [1]}]}) == ["vary.0.path"]
    assert refused({"base": BASE, "vary": [{"path": "fluid.viscosity", "values": [1e-3, -1.0]}]}) == [
        "points.1.fluid.viscosity"
    ]
    assert refused(
        {"base": {**BASE, "fluid": {"viscosity": "thin"}}, "vary": [{"path": "mesh.scale", "values": [1]}]}
    ) == ["base.fluid.viscosity"]
    twice = [{"path": "mesh.scale", "values": [1, 2]}, {"path": "mesh.scale", "values": [3]}]
    assert refused({"base": BASE, "vary": twice}) == ["vary.1.path"]
    # the service's size limits, as queueing would apply them (this service allows 10 000 steps)
    analysis = {"mode": "transient", "scheme": "bdf2-imex", "time_step": 1e-3, "end_time": 5.0}
    study = {"base": {**BASE, "analysis": analysis}, "vary": [{"path": "analysis.end_time", "values": [5.0, 20.0]}]}
    assert refused(study) == ["points.1.analysis.time_step"]


def test_the_job_preview_offers_the_sweepable_fields(offline: TestClient) -> None:
    fields = {f["path"]: f for f in offline.post("/api/v1/previews", json=BASE).json()["sweepable"]}
    assert fields["fluid.viscosity"] == {"path": "fluid.viscosity", "value": 1e-3, "unit": "m^2/s"}
    assert fields["bodies.0.radius"]["unit"] == "m" and "inflow.peak_velocity" in fields
    assert "title" not in fields and not any(p.startswith("probes.") for p in fields)


def test_openapi_documents_the_study_preview(offline: TestClient) -> None:
    op = offline.get("/openapi.json").json()["paths"]["/api/v1/studies/previews"]["post"]
    assert op["requestBody"]["content"]["application/json"]["schema"]["$ref"] == "#/components/schemas/StudySpec"
    assert "4XX" in op["responses"] and "total" in op["description"]


def test_a_study_over_the_per_user_cap_is_refused_as_queueing_would(offline: TestClient) -> None:
    """The offline service allows 3 queued or running jobs per user: 4 points are refused with 429 by the preview
    and by queueing alike, 3 pass."""
    study = {"base": BASE, "vary": [{"path": "inflow.peak_velocity", "values": [0.1, 0.2, 0.3, 0.4]}]}
    preview = offline.post("/api/v1/studies/previews", json=study)
    queued = offline.post("/api/v1/studies", json=study)
    assert preview.status_code == queued.status_code == 429, preview.text
    assert preview.json()["detail"] == queued.json()["detail"] and "3" in preview.json()["detail"][0]["message"]
    study["vary"][0]["values"] = [0.1, 0.2, 0.3]
    assert offline.post("/api/v1/studies/previews", json=study).status_code == 200
