"""End to end against Redis and a real Celery worker process: run, files, cancel, duplicate delivery."""

from __future__ import annotations

import csv
import io
import json
import threading
import zipfile

from fastapi.testclient import TestClient

from tests.helpers import finished, tiny, wait_for
from wakeyard.core.store import Store
from wakeyard.core.store.models import Job
from wakeyard.solver.caution import CAUTION


def test_submit_runs_to_success_with_files(service: TestClient) -> None:
    r = service.post("/api/v1/jobs", params={"tags": ["duct"]}, json=tiny())
    assert r.status_code == 202 and r.json()["state"] == "queued"
    job = wait_for(service, r.json()["id"], finished)
    assert job["state"] == "succeeded", job["error"]
    assert job["attempts"] == 1 and job["progress"]["fraction"] == 1.0 and job["progress"]["step"] == 30
    assert job["started_at"] <= job["finished_at"]
    assert job["summary"]["steps"] == 30 and job["summary"]["bodies"][0]["name"] == "pipe"
    assert job["caution"] == CAUTION and job["summary"]["caution"] == CAUTION

    files = {f["path"]: f for f in service.get(job["links"]["files"]).json()["files"]}
    assert {"forces.csv", "summary.json", "forces.png", "fields/flow.pvd", "fields.zip"} <= set(files)
    assert any(p.startswith("pictures/vorticity_") for p in files)
    forces = service.get(files["forces.csv"]["url"])
    assert forces.headers["content-type"].startswith("text/csv")
    assert len(list(csv.reader(io.StringIO(forces.text)))) == 31  # header + one row per step
    summary = service.get(files["summary.json"]["url"])
    assert summary.headers["content-type"] == "application/json"
    assert json.loads(summary.content)["steps"] == 30 and json.loads(summary.content)["caution"] == CAUTION
    # the job, read or listed, carries summary.json's keys and values, no more (the response model adds no nulls)
    assert job["summary"] == json.loads(summary.content)
    listed = service.get("/api/v1/jobs", params={"tag": "duct"}).json()["jobs"]
    assert [j["summary"] for j in listed if j["id"] == job["id"]] == [job["summary"]]
    assert service.get(files["forces.png"]["url"]).content[:4] == b"\x89PNG"
    archive = zipfile.ZipFile(io.BytesIO(service.get(files["fields.zip"]["url"]).content))
    assert "flow.pvd" in archive.namelist() and sum(n.endswith(".vtu") for n in archive.namelist()) == 4
    assert " ".join(archive.read("CAUTION.txt").decode().split()) == f"Caution: {CAUTION}"

    health = service.get("/api/v1/health").json()
    assert health["status"] == "ok" and health["workers_seen"] >= 1
    assert 'wakeyard_jobs{state="succeeded"}' in service.get("/metrics").text


def test_cancel_running_keeps_forces_and_queued_never_starts(service: TestClient) -> None:
    long_id = service.post("/api/v1/jobs", json=tiny(end_time=1000.0)).json()["id"]  # 100,000 steps: never ends first
    wait_for(service, long_id, lambda j: j["state"] == "running" and j["progress"]["step"] > 5)
    queued_id = service.post("/api/v1/jobs", params={"fresh": "true"}, json=tiny()).json()["id"]  # not a reuse
    assert service.post(f"/api/v1/jobs/{queued_id}/cancel").json()["state"] == "cancelled"

    running = service.post(f"/api/v1/jobs/{long_id}/cancel").json()
    assert running["cancel_requested"] and running["state"] in ("running", "cancelled")
    job = wait_for(service, long_id, finished, timeout=10)
    assert job["state"] == "cancelled" and "cancelled at t =" in job["error"]
    assert service.get(f"/api/v1/jobs/{long_id}/files/forces.csv").status_code == 200

    wait_for(service, long_id, lambda j: service.get("/api/v1/health").json()["running"] == 0)
    never = service.get(f"/api/v1/jobs/{queued_id}").json()
    assert never["state"] == "cancelled" and never["started_at"] is None and never["attempts"] == 0
    assert service.get(f"/api/v1/jobs/{queued_id}/files").json()["files"] == []
    assert service.delete(f"/api/v1/jobs/{long_id}").status_code == 204
    assert not (service.app.state.settings.jobs_dir / long_id).exists()


def test_duplicate_delivery_runs_the_job_once(service: TestClient) -> None:
    job_id = service.post("/api/v1/jobs", json=tiny(end_time=0.1)).json()["id"]
    for _ in range(3):  # as if the broker delivered the wake-up again
        service.app.state.dispatch(job_id)
    job = wait_for(service, job_id, finished)
    assert job["state"] == "succeeded" and job["attempts"] == 1


def test_concurrent_claims_pick_each_job_once(store_url: str) -> None:
    store = Store(store_url)
    ids = {store.create("ana", tiny(), []).id for _ in range(3)}
    won: list[str] = []

    def claimer(n: int) -> None:
        while (job := store.claim_next(f"t{n}")) is not None:
            won.append(job.id)

    threads = [threading.Thread(target=claimer, args=(n,)) for n in range(6)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert sorted(won) == sorted(ids)


def test_fair_share_prefers_the_owner_with_fewest_running(store_url: str) -> None:
    store = Store(store_url)
    first = [store.create("ana", tiny(), []).id for _ in range(3)]
    bo = store.create("bo", tiny(), []).id
    assert store.claim_next("w1").id == first[0]
    assert store.claim_next("w2").id == bo  # ana already runs one; bo's job is newer but bo runs none
    assert store.claim_next("w3").id == first[1]


def test_a_lost_wake_up_does_not_lose_the_job(service: TestClient) -> None:
    """As after a broker restart without persistence: the job is in the store but no message is queued."""
    job = service.app.state.store.create("local", tiny(end_time=0.1), ["lost"])
    done = wait_for(service, job.id, finished)
    assert done["state"] == "succeeded" and done["attempts"] == 1


def test_divergence_fails_with_the_solvers_explanation(service: TestClient) -> None:
    spec = tiny(end_time=5.0, scheme="euler-imex", time_step=0.05, output_interval=1.0)
    spec["inflow"] = {"peak_velocity": 20.0, "ramp_time": 1.0}  # the step becomes far too long as the flow speeds up
    job = wait_for(service, service.post("/api/v1/jobs", json=spec).json()["id"], finished)
    assert job["state"] == "failed" and "CFL number" in job["error"] and "analysis.time_step" in job["error"]
    assert job["summary"] is None and job["attempts"] == 1
    assert service.get(f"{job['links']['files']}/forces.csv").status_code == 200  # the history so far is kept


def test_openapi_documents_the_job_and_its_summary(offline: TestClient) -> None:
    schemas = offline.get("/openapi.json").json()["components"]["schemas"]
    summary = schemas["Job"]["properties"]["summary"]
    assert {"#/components/schemas/SteadySummary", "#/components/schemas/TransientSummary"} <= {
        option.get("$ref") for option in summary["anyOf"][0]["oneOf"]
    }
    assert "drag_coefficient" in schemas["TransientBody"]["properties"]
    assert schemas["Stats"]["required"] == ["mean", "min", "max", "amplitude", "rms"]
    read = offline.get("/openapi.json").json()["paths"]["/api/v1/jobs/{job_id}"]["get"]
    assert read["responses"]["200"]["content"]["application/json"]["schema"] == {"$ref": "#/components/schemas/Job"}


def test_a_summary_written_by_an_older_release_still_reads_and_lists(offline: TestClient) -> None:
    """Summaries are stored as the run wrote them; one with a key the current models do not know (a field a
    later release renamed) is served as stored, never a 500."""
    job_id = offline.post("/api/v1/jobs", params={"tags": ["old"]}, json=tiny()).json()["id"]
    older = {"mode": "transient", "steps": 3, "retired_field": 1.5}
    store: Store = offline.app.state.store  # type: ignore[attr-defined]
    with store.engine.begin() as conn:
        conn.execute(Job.__table__.update().where(Job.id == job_id).values(state="succeeded", summary=older))
    assert offline.get(f"/api/v1/jobs/{job_id}").json()["summary"] == older
    listed = offline.get("/api/v1/jobs", params={"tag": "old"})
    assert listed.status_code == 200 and listed.json()["jobs"][0]["summary"] == older
