"""Bad input gets a 4xx naming the field (never a 500); auth, per-user cap, file confinement. No worker needed."""

from __future__ import annotations

import io
import json
import zipfile
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path
from typing import Any

import pytest
from fastapi.testclient import TestClient
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tests.helpers import TINY, settings_for, tiny
from wakeyard import solver
from wakeyard.api.app import WEB, create_app
from wakeyard.api.auth import create_token
from wakeyard.api.spec_checks import checked
from wakeyard.solver import SpecError, load
from wakeyard.solver.caution import CAUTION


def fields(response: Any) -> list[str]:
    return [d["field"] for d in response.json()["detail"]]


@pytest.mark.parametrize(
    ("body", "field"),
    [
        ({**TINY, "bodies": [{"shape": "circle", "center": [0.2, 0.2], "radius": -1}]}, "bodies.0.radius"),
        ({**TINY, "channel": {"length": "long", "height": 0.41}}, "channel.length"),
        ({**TINY, "colour": "blue"}, "colour"),
        ({**TINY, "analysis": {**TINY["analysis"], "time_step": 1e-6, "end_time": 100.0}}, "analysis.time_step"),
        ({**TINY, "analysis": {"mode": "transient", "accuracy": 0}}, "analysis.accuracy"),
        ({**TINY, "analysis": {"mode": "transient", "accuracy": -0.001}}, "analysis.accuracy"),
        ({**TINY, "analysis": {"mode": "transient", "accuracy": 5.0}}, "analysis.accuracy"),
        ({**TINY, "analysis": {"mode": "transient", "scheme": "bdf2-imex"}}, "analysis.time_step"),
        ({**TINY, "heat": {"prandtl": 0.7, "walls": {"heat_flux": 50.0}}}, "heat.walls.heat_flux"),
        ({**TINY, "heat": {"walls": {"temperature": -300.0}}}, "heat.walls.temperature"),
        ([1, 2, 3], "(body)"),
    ],
)
def test_bad_spec_is_422_naming_the_field(offline: TestClient, body: Any, field: str) -> None:
    r = offline.post("/api/v1/jobs", json=body)
    assert r.status_code == 422
    assert field in fields(r)
    assert all(d["message"] for d in r.json()["detail"])


def test_the_body_is_checked_as_the_solver_checks_a_spec_with_every_problem_at_once(offline: TestClient) -> None:
    """The request body is typed as the spec model (so OpenAPI shows its schema); a 422 still names every problem,
    the body's and the query's together, with the paths and messages of ``solver.load``."""
    bad = {**TINY, "bodies": [{"shape": "circle", "center": [0.2, 0.2], "radius": -1}], "colour": "blue"}
    with pytest.raises(SpecError) as solver_says:
        load(bad)
    r = offline.post("/api/v1/jobs", params={"fresh": "maybe"}, json=bad)
    assert r.status_code == 422 and list(r.json()) == ["detail"]
    found = [(d["field"], d["message"]) for d in r.json()["detail"]]
    assert sorted(found[1:]) == sorted(solver_says.value.problems) and found[0][0] == "query.fresh"
    # the geometry, checked after the fields, is the solver's too
    inside = {**TINY, "probes": {"velocity": [[0.2, 0.2]]}}
    assert fields(offline.post("/api/v1/jobs", json=inside)) == ["probes.velocity.0"]
    assert offline.post("/api/v1/jobs", content=b"").json()["detail"] == [
        {"field": "(body)", "message": "must be a JSON object, got nothing"}
    ]
    study = offline.post("/api/v1/studies", json={"kind": "sweep", "vary": [{"path": "x", "values": []}]})
    assert study.status_code == 422 and fields(study) == ["vary.0.values"]
    schema = offline.get("/openapi.json").json()
    for path, model in (("/api/v1/jobs", "JobSpec"), ("/api/v1/studies", "StudySpec")):
        operation = schema["paths"][path]["post"]
        assert operation["requestBody"]["content"]["application/json"]["schema"] == {
            "$ref": f"#/components/schemas/{model}"
        }
        refused = operation["responses"]["4XX"]["content"]["application/json"]["schema"]
        assert refused == {"$ref": "#/components/schemas/Refused"}  # the one problem shape, FastAPI's own not shown
    assert "HTTPValidationError" not in schema["components"]["schemas"]


def test_a_spec_sent_again_is_the_same_job_spec_and_still_meets_each_services_limits(
    offline: TestClient, tmp_path: Path
) -> None:
    """Accepted specs are remembered (api.spec_checks): the same spec again gives the same normalised spec, a
    service with a lower unknowns limit still refuses it, and a refused one stays refused."""
    first, again = (offline.post("/api/v1/jobs", json=tiny()).json()["id"] for _ in range(2))
    assert first != again
    spec = offline.get(f"/api/v1/jobs/{first}").json()["spec"]
    assert offline.get(f"/api/v1/jobs/{again}").json()["spec"] == spec == load(tiny()).model_dump(mode="json")
    with TestClient(create_app(settings_for(tmp_path, "wakeyard-small", broker="", max_dofs=100))) as small:
        refused = small.post("/api/v1/jobs", json=tiny())
        assert refused.status_code == 422 and fields(refused) == ["mesh"]
        assert "over the limit of 100" in refused.json()["detail"][0]["message"]
    bad = {**TINY, "bodies": [{"shape": "circle", "center": [0.2, 0.2], "radius": -1}]}
    assert [offline.post("/api/v1/jobs", json=bad).status_code for _ in range(2)] == [422, 422]


def test_a_remembered_spec_is_each_callers_own_copy() -> None:
    """A caller that changes the normalised spec it got does not change what the next request with that spec gets."""
    limits = solver.Limits()
    first = checked(load(tiny()), limits).spec
    first["channel"]["height"] = 99.0
    first["bodies"].clear()
    again = checked(load(tiny()), limits)
    assert again.spec == load(tiny()).model_dump(mode="json")


def test_malformed_json_is_422_not_500(offline: TestClient) -> None:
    r = offline.post("/api/v1/jobs", content=b'{"title": "pier", ', headers={"content-type": "application/json"})
    assert r.status_code == 422
    assert fields(r) == ["(body)"]
    assert "JSON" in r.json()["detail"][0]["message"]


def test_huge_body_is_413_with_the_limit(offline: TestClient) -> None:
    points = [[0.3 + 1e-7 * i, 0.2] for i in range(40_000)]
    r = offline.post("/api/v1/jobs", json={**TINY, "bodies": [{"shape": "polygon", "points": points}]})
    assert r.status_code == 413
    assert "262,144 bytes" in r.json()["detail"][0]["message"]


def test_bad_query_and_tags_are_422(offline: TestClient) -> None:
    assert fields(offline.get("/api/v1/jobs", params={"state": "sleeping"})) == ["query.state"]
    assert fields(offline.get("/api/v1/jobs", params={"cursor": "abc"})) == ["cursor"]
    assert fields(offline.post("/api/v1/jobs", params={"tags": ["x" * 65]}, json=TINY)) == ["tags.0"]


def test_list_filters_and_pages_newest_first(offline: TestClient) -> None:
    ids = [
        offline.post("/api/v1/jobs", params={"tags": [tag]}, json=tiny()).json()["id"]
        for tag in ("pier", "duct", "pier")
    ]
    page = offline.get("/api/v1/jobs", params={"limit": 2}).json()
    assert [j["id"] for j in page["jobs"]] == ids[::-1][:2]
    rest = offline.get("/api/v1/jobs", params={"limit": 2, "cursor": page["next_cursor"]}).json()
    assert [j["id"] for j in rest["jobs"]] == ids[:1]
    assert [j["id"] for j in offline.get("/api/v1/jobs", params={"tag": "pier"}).json()["jobs"]] == [ids[2], ids[0]]
    assert offline.get("/api/v1/jobs", params={"state": "running"}).json()["jobs"] == []


def test_per_user_cap_is_429_with_the_limit(offline: TestClient) -> None:
    for _ in range(3):
        assert offline.post("/api/v1/jobs", json=tiny()).status_code == 202
    r = offline.post("/api/v1/jobs", json=tiny())
    assert r.status_code == 429
    assert "limit per user is 3" in r.json()["detail"][0]["message"]
    first = offline.get("/api/v1/jobs").json()["jobs"][-1]["id"]
    assert offline.post(f"/api/v1/jobs/{first}/cancel").json()["state"] == "cancelled"
    assert offline.post("/api/v1/jobs", json=tiny()).status_code == 202


def test_cancel_queued_then_delete(offline: TestClient) -> None:
    job_id = offline.post("/api/v1/jobs", json=tiny()).json()["id"]
    job = offline.post(f"/api/v1/jobs/{job_id}/cancel").json()
    assert job["state"] == "cancelled" and job["started_at"] is None
    assert offline.post(f"/api/v1/jobs/{job_id}/cancel").status_code == 409
    assert offline.delete(f"/api/v1/jobs/{job_id}").status_code == 204
    assert offline.get(f"/api/v1/jobs/{job_id}").status_code == 404


def test_clone_merges_edits_and_validates_them(offline: TestClient) -> None:
    job_id = offline.post("/api/v1/jobs", params={"tags": ["sweep"]}, json=tiny()).json()["id"]
    r = offline.post(f"/api/v1/jobs/{job_id}/clone", json={"inflow": {"peak_velocity": 0.45}})
    assert r.status_code == 202
    clone = offline.get(r.json()["links"]["self"]).json()
    assert clone["spec"]["inflow"]["peak_velocity"] == 0.45
    assert clone["spec"]["inflow"]["ramp_time"] == 0.2 and clone["spec"]["bodies"][0]["radius"] == 0.05
    assert clone["tags"] == ["sweep"]
    bad = offline.post(f"/api/v1/jobs/{job_id}/clone", json={"inflow": {"peak_velocity": -2}})
    assert bad.status_code == 422 and fields(bad) == ["inflow.peak_velocity"]


def test_files_stay_inside_the_job_folder(offline: TestClient) -> None:
    job_id = offline.post("/api/v1/jobs", json=tiny()).json()["id"]
    folder = offline.app.state.settings.jobs_dir / job_id
    folder.mkdir()
    (folder / "forces.csv").write_text("time,fx\n0,1\n")
    (folder / "checkpoint.npz").write_bytes(b"internal")
    (folder / "escape.txt").symlink_to(offline.app.state.settings.data_dir / "jobs.sqlite")
    base = f"/api/v1/jobs/{job_id}/files"
    assert offline.get(f"{base}/forces.csv").headers["content-type"].startswith("text/csv")
    for path in (
        "..%2F..%2Fjobs.sqlite",
        "%2e%2e/%2e%2e/jobs.sqlite",
        "escape.txt",
        "checkpoint.npz",
        "%2Fetc%2Fpasswd",
        "summary.json",
        "fields.zip",
    ):
        r = offline.get(f"{base}/{path}")
        assert r.status_code == 404, path
        assert b"SQLite" not in r.content
    assert [f["path"] for f in offline.get(base).json()["files"]] == ["forces.csv"]
    # the zip of everything holds what the list shows (and the caution), never the hidden or linked-out files
    everything = offline.get(f"{base}/all-files.zip")
    assert everything.status_code == 200 and everything.headers["content-type"] == "application/zip"
    assert sorted(zipfile.ZipFile(io.BytesIO(everything.content)).namelist()) == ["CAUTION.txt", "forces.csv"]
    empty = offline.post("/api/v1/jobs", json=tiny()).json()["id"]
    r = offline.get(f"/api/v1/jobs/{empty}/files/all-files.zip")
    assert r.status_code == 404 and fields(r) == ["path"]


def test_tokens_owner_and_admin(offline: TestClient) -> None:
    store = offline.app.state.store
    alice, bob = create_token(store, "alice"), create_token(store, "bob")
    admin = create_token(store, "ops", admin=True)
    assert offline.get("/api/v1/jobs").status_code == 401
    assert offline.get("/api/v1/jobs", headers={"Authorization": "Bearer nope"}).status_code == 401
    r = offline.post("/api/v1/jobs", json=tiny(), headers={"Authorization": f"Bearer {alice}"})
    job_id = r.json()["id"]
    as_bob = offline.get(f"/api/v1/jobs/{job_id}", headers={"Authorization": f"Bearer {bob}"})
    assert as_bob.json()["owner"] == "alice"
    assert offline.post(f"/api/v1/jobs/{job_id}/cancel", headers={"Authorization": f"Bearer {bob}"}).status_code == 403
    r = offline.post(f"/api/v1/jobs/{job_id}/cancel", headers={"Authorization": f"Bearer {admin}"})
    assert r.json()["state"] == "cancelled"
    assert alice not in {v for t in store.list_tokens() for v in (t.id, t.name, t.digest)}  # only its digest


def test_health_and_metrics_on_the_embedded_broker(offline: TestClient) -> None:
    assert offline.get("/api/v1/health").json()["status"] == "ok"  # nothing queued: no worker needed yet
    offline.post("/api/v1/jobs", json=tiny())
    r = offline.get("/api/v1/health")  # a job waits and no worker has reported in: not ok
    assert r.status_code == 503 and r.json()["status"] == "degraded" and r.json()["queue_depth"] == 1
    assert r.json()["problems"] == ["1 job(s) queued and no worker process seen in the last 30 s"]
    metrics = offline.get("/metrics").text
    assert 'wakeyard_jobs{state="queued"} 1' in metrics and "wakeyard_healthy 0" in metrics
    offline.app.state.store.worker_alive("box:1234")  # as a worker process does every few seconds
    assert offline.get("/api/v1/health").status_code == 200
    assert "wakeyard_healthy 1" in offline.get("/metrics").text
    assert "JobSpec" in offline.get("/openapi.json").json()["components"]["schemas"]


def test_the_page_is_served_without_its_python_side(offline: TestClient) -> None:
    assert offline.get("/").status_code == 200 and "<html" in offline.get("/").text.lower()
    assert offline.get("/app.js").status_code == 200
    for hidden in ("/__init__.py", "/__pycache__/__init__.cpython-311.pyc"):
        assert offline.get(hidden).status_code == 404, hidden


def test_the_page_reads_the_one_caution_from_the_service(offline: TestClient) -> None:
    assert offline.get("/api/v1/caution").json() == {"caution": CAUTION}
    page = [f for f in WEB.iterdir() if f.name.endswith((".html", ".js", ".css"))]
    assert len(page) > 10  # the page ships as package data
    for page_file in page:  # the page shows the service's text and has no wording of its own
        assert "design loads" not in page_file.read_text(), page_file.name


json_values = st.recursive(
    st.none() | st.booleans() | st.integers(-(10**6), 10**6) | st.floats(allow_nan=False) | st.text(max_size=8),
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(st.text(max_size=8), inner, max_size=3),
    max_leaves=8,
)
spec_keys = st.sampled_from(["title", "channel", "bodies", "fluid", "inflow", "mesh", "elements", "analysis", "probes"])


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(edits=st.dictionaries(spec_keys, json_values, max_size=3))
def test_fuzzed_specs_never_give_500(offline: TestClient, edits: dict[str, Any]) -> None:
    offline.app.state.settings.max_active_per_user = 10**9
    body = json.dumps({**TINY, **edits})
    r = offline.post("/api/v1/jobs", content=body, headers={"content-type": "application/json"})
    assert r.status_code in (202, 422), r.text
    if r.status_code == 422:
        assert all(d["field"] and d["message"] for d in r.json()["detail"])


def test_concurrent_submissions_from_several_clients(offline: TestClient) -> None:
    offline.app.state.settings.max_active_per_user = 1000

    def submit(client: int) -> list[str]:
        return [
            offline.post("/api/v1/jobs", params={"tags": [f"client{client}"]}, json=tiny()).json()["id"]
            for _ in range(8)
        ]

    with ThreadPoolExecutor(4) as pool:
        ids = [i for batch in pool.map(submit, range(4)) for i in batch]
    assert len(set(ids)) == 32
    listed = offline.get("/api/v1/jobs", params={"limit": 100}).json()["jobs"]
    assert sorted(j["id"] for j in listed) == sorted(ids)
    assert len(offline.get("/api/v1/jobs", params={"tag": "client2"}).json()["jobs"]) == 8
