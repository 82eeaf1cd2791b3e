"""POST /api/v1/previews: the solver's preview through the service, documented in its OpenAPI schema."""

from __future__ import annotations

from fastapi.testclient import TestClient

POST = {"bodies": [{"name": "post", "shape": "circle", "center": [0.1, 0.05], "radius": 0.01}]}


def test_a_valid_spec_gets_figures_from_the_mesher(offline: TestClient) -> None:
    r = offline.post("/api/v1/previews", json={**POST, "mesh": {"preset": "coarse"}})
    assert r.status_code == 200
    p = r.json()
    assert p["problems"] == []
    assert p["spec"]["bodies"][0]["name"] == "post" and p["spec"]["channel"]["height"] == 0.1
    # 20 mm of the 100 mm channel; Re as in solver.load's doctest
    assert round(p["blockage"], 9) == 0.2 and round(p["reynolds"], 1) == 19.9
    assert p["estimate"]["method"] == "mesher" and p["estimate"]["cells"] > 100
    assert p["estimate"]["steps"] is None and p["estimate"]["seconds"] > 0  # steady: no steps; seconds estimated
    assert p["warnings"] == []
    assert len(p["outlines"][0]["points"]) == 96


def test_field_and_geometry_problems_together_are_a_200(offline: TestClient) -> None:
    bodies = [{"shape": "circle", "center": [0.39, 0.05], "radius": 0.02}, {"shape": "circle", "radius": "big"}]
    r = offline.post("/api/v1/previews", json={"bodies": bodies})
    assert r.status_code == 200
    assert {q["field"] for q in r.json()["problems"]} == {"bodies.0", "bodies.1.radius"}
    assert offline.post("/api/v1/jobs", json={"bodies": bodies}).status_code == 422  # job creation refuses it


def test_the_service_limits_apply(offline: TestClient) -> None:
    analysis = {"mode": "transient", "scheme": "euler-imex", "time_step": 1e-9, "end_time": 100.0}
    r = offline.post("/api/v1/previews", json={**POST, "analysis": analysis})
    assert [q["field"] for q in r.json()["problems"]] == ["analysis.time_step"]


def test_not_an_object_and_not_json(offline: TestClient) -> None:
    r = offline.post("/api/v1/previews", json=[1, 2])
    assert r.status_code == 200 and r.json()["problems"][0]["field"] == "(body)"
    r = offline.post("/api/v1/previews", content=b"{", headers={"content-type": "application/json"})
    assert r.status_code == 422


def test_openapi_documents_the_preview(offline: TestClient) -> None:
    op = offline.get("/openapi.json").json()["paths"]["/api/v1/previews"]["post"]
    assert op["requestBody"]["content"]["application/json"]["schema"]["$ref"] == "#/components/schemas/JobSpec"
    assert "problems" in op["description"] and "bdf2-adaptive" in op["description"]
    assert "estimate" in op["description"] and "warnings" in op["description"]


def test_a_fixed_step_past_the_cfl_limit_is_warned_about(offline: TestClient) -> None:
    analysis = {"mode": "transient", "scheme": "bdf2-imex", "time_step": 2.0, "end_time": 20.0}
    p = offline.post("/api/v1/previews", json={**POST, "mesh": {"preset": "coarse"}, "analysis": analysis}).json()
    assert p["problems"] == [] and p["estimate"]["cfl"] > 1
    assert [w["field"] for w in p["warnings"]] == ["analysis.time_step"]
