"""Every refused request (4xx) answers in the one problem shape of a bad spec, the bearer scheme is declared in
OpenAPI, and /metrics has request latency histograms by route template."""

from __future__ import annotations

import re
from typing import Any

from fastapi.testclient import TestClient
from httpx import Response

from tests.helpers import tiny
from wakeyard.api.auth import create_token


def problems(r: Response, status: int) -> list[dict[str, Any]]:
    assert r.status_code == status, r.text
    body = r.json()
    assert list(body) == ["detail"] and body["detail"], body
    assert all(set(p) == {"field", "message"} and isinstance(p["message"], str) for p in body["detail"])
    return body["detail"]


def test_every_refusal_has_the_problem_shape(offline: TestClient) -> None:
    assert problems(offline.get("/api/v1/jobs/nope"), 404) == [{"field": "job_id", "message": "no job nope"}]
    assert problems(offline.get("/api/v1/studies/nope"), 404)[0]["field"] == "study_id"
    assert problems(offline.get("/api/v1/jobs/nope/files/a.csv"), 404)[0]["field"] == "job_id"
    assert problems(offline.get("/api/v1/no-such-thing"), 404)[0]["field"] == "(request)"
    assert problems(offline.put("/api/v1/jobs"), 405)[0]["message"] == "Method Not Allowed"
    job_id = offline.post("/api/v1/jobs", json=tiny()).json()["id"]
    offline.post(f"/api/v1/jobs/{job_id}/cancel")
    assert "already cancelled" in problems(offline.post(f"/api/v1/jobs/{job_id}/cancel"), 409)[0]["message"]
    for _ in range(3):  # the offline service's cap is 3 queued or running jobs per user
        offline.post("/api/v1/jobs", json=tiny(), params={"fresh": "true"})
    assert "limit per user is 3" in problems(offline.post("/api/v1/jobs", json=tiny()), 429)[0]["message"]
    assert problems(offline.post("/api/v1/jobs", json={"bodies": 3}), 422)[0]["field"] == "bodies"


def test_token_refusals_have_the_problem_shape_and_the_scheme_is_declared(offline: TestClient) -> None:
    store = offline.app.state.store
    alice, bob = create_token(store, "alice"), create_token(store, "bob")
    r = offline.get("/api/v1/jobs")
    assert problems(r, 401)[0]["field"] == "Authorization" and r.headers["WWW-Authenticate"] == "Bearer"
    assert (
        "unknown token"
        in problems(offline.get("/api/v1/jobs", headers={"Authorization": "Bearer x"}), 401)[0]["message"]
    )
    assert (
        "Bearer <token>"
        in problems(offline.get("/api/v1/jobs", headers={"Authorization": "Basic x"}), 401)[0]["message"]
    )
    job_id = offline.post("/api/v1/jobs", json=tiny(), headers={"Authorization": f"Bearer {alice}"}).json()["id"]
    forbidden = offline.delete(f"/api/v1/jobs/{job_id}", headers={"Authorization": f"Bearer {bob}"})
    assert "belongs to alice" in problems(forbidden, 403)[0]["message"]
    schemes = offline.get("/openapi.json").json()["components"]["securitySchemes"]
    assert schemes["HTTPBearer"]["type"] == "http" and schemes["HTTPBearer"]["scheme"] == "bearer"


def test_metrics_have_latency_histograms_by_route_template(offline: TestClient) -> None:
    for _ in range(3):
        offline.get("/api/v1/jobs/nope")
    offline.get("/api/v1/caution")
    text = offline.get("/metrics").text
    count = re.search(
        r'^wakeyard_http_request_duration_seconds_count\{method="GET",route="/api/v1/jobs/\{job_id\}",status="404"\} '
        r"(\S+)$",
        text,
        re.MULTILINE,
    )
    assert count is not None and float(count.group(1)) == 3.0, text
    assert 'route="/api/v1/caution",status="200"' in text and "/api/v1/jobs/nope" not in text
    assert "# TYPE wakeyard_http_request_duration_seconds histogram" in text
