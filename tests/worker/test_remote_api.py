"""The worker endpoints (``/api/v1/worker``) a remote box uses: only worker tokens may call them, and worker tokens
nothing else; uploads are resumable and checked by size and hash; a lease that expired can neither upload into its
old job nor record its outcome."""

from __future__ import annotations

import hashlib
import io
import json
import zipfile
from typing import Any

from fastapi.testclient import TestClient

from tests.helpers import tiny
from wakeyard.api.auth import create_token
from wakeyard.core.store import Store


def bearer(token: str) -> dict[str, str]:
    return {"Authorization": f"Bearer {token}"}


def problem(r: Any, status: int) -> tuple[str, str]:
    assert r.status_code == status, r.text
    [p] = r.json()["detail"]
    return p["field"], p["message"]


def sha(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


class Box:
    """One remote worker's calls, as ``wakeyard worker --url`` makes them."""

    def __init__(self, client: TestClient, token: str):
        self.client, self.headers = client, bearer(token)

    def claim(self) -> Any:
        return self.client.post("/api/v1/worker/claim", json={"worker": "box:1"}, headers=self.headers)

    def put(
        self, job: str, lease: str, path: str, data: bytes, digest: str, part: tuple[int, int] | None = None
    ) -> Any:
        headers = {**self.headers, "Lease": lease, "Content-SHA256": digest}
        body = data
        if part is not None:
            start, total = part
            headers["Content-Range"] = f"bytes {start}-{start + len(data) - 1}/{total}"
        return self.client.put(f"/api/v1/worker/jobs/{job}/files/{path}", content=body, headers=headers)

    def received(self, job: str, lease: str, path: str) -> int:
        r = self.client.get(f"/api/v1/worker/jobs/{job}/uploads/{path}", headers={**self.headers, "Lease": lease})
        assert r.status_code == 200, r.text
        return int(r.json()["received"])

    def finish(self, job: str, lease: str, **outcome: Any) -> Any:
        url = f"/api/v1/worker/jobs/{job}/finish"
        return self.client.post(url, json=outcome, headers={**self.headers, "Lease": lease})


def setup(client: TestClient) -> tuple[dict[str, str], Box, str]:
    """A user (admin) token, a worker box and one queued job."""
    store: Store = client.app.state.store  # type: ignore[attr-defined]
    user = bearer(create_token(store, "ana", admin=True))
    box = Box(client, create_token(store, "box-2", kind="worker"))
    made = client.post("/api/v1/jobs", json=tiny(), headers=user)
    assert made.status_code == 202, made.text
    return user, box, made.json()["id"]


def test_worker_tokens_call_only_the_worker_endpoints_and_only_they_can(offline: TestClient) -> None:
    assert problem(offline.post("/api/v1/worker/claim", json={"worker": "w"}), 401)[0] == "Authorization"
    user, box, _ = setup(offline)
    field, message = problem(offline.get("/api/v1/jobs", headers=box.headers), 403)
    assert field == "Authorization" and "worker token" in message
    field, message = problem(offline.post("/api/v1/worker/claim", json={"worker": "w"}, headers=user), 403)
    assert field == "Authorization" and "only a worker token" in message
    made = offline.post("/api/v1/tokens", json={"name": "box-3", "kind": "worker"}, headers=user)
    assert made.status_code == 201 and made.json()["kind"] == "worker"
    both = offline.post("/api/v1/tokens", json={"name": "box-4", "kind": "worker", "admin": True}, headers=user)
    assert "cannot be an admin" in problem(both, 422)[1]
    listed = {t["name"]: t["kind"] for t in offline.get("/api/v1/tokens", headers=user).json()["tokens"]}
    assert listed == {"ana": "user", "box-2": "worker", "box-3": "worker"}


def test_a_claim_carries_the_spec_and_a_lease_that_heartbeats_extend(offline: TestClient) -> None:
    user, box, job_id = setup(offline)
    claimed = box.claim()
    assert claimed.status_code == 200, claimed.text
    job = claimed.json()
    assert job["job_id"] == job_id and job["attempts"] == 1 and job["files"] == []
    settings = offline.app.state.settings  # type: ignore[attr-defined]
    assert (job["heartbeat_seconds"], job["max_wall_time"]) == (settings.heartbeat_seconds, settings.max_wall_time)
    assert job["spec"]["analysis"]["end_time"] == tiny()["analysis"]["end_time"]
    assert box.claim().status_code == 204  # nothing else waits
    store: Store = offline.app.state.store  # type: ignore[attr-defined]
    store.worker_gone("box-2/box:1")  # seen at its claim: now its heartbeats alone must keep it counted
    beat = offline.post(
        f"/api/v1/worker/jobs/{job_id}/heartbeat",
        json={"progress": {"fraction": 0.25, "step": 7, "time": 0.07}, "worker": "box:1"},
        headers={**box.headers, "Lease": job["lease"]},
    )
    assert beat.json() == {"lease_held": True, "cancel": False}
    assert store.workers_seen(within=60) == 1  # the busy box counts as a live worker (health)
    seen = offline.get(f"/api/v1/jobs/{job_id}", headers=user).json()
    assert seen["state"] == "running" and seen["progress"]["step"] == 7
    assert offline.post(f"/api/v1/jobs/{job_id}/cancel", headers=user).status_code == 200
    wrong = offline.post(
        f"/api/v1/worker/jobs/{job_id}/heartbeat", json={}, headers={**box.headers, "Lease": "not-the-lease"}
    )
    assert wrong.json() == {"lease_held": False, "cancel": True}


def test_an_upload_resumes_from_what_arrived_and_is_checked_by_size_and_hash(offline: TestClient) -> None:
    _, box, job_id = setup(offline)
    lease = box.claim().json()["lease"]
    folder = offline.app.state.settings.jobs_dir / job_id  # type: ignore[attr-defined]
    data = bytes(range(256)) * 1500  # 384 000 bytes: more than the API's request-body cap, which uploads skip
    half = len(data) // 2

    first = box.put(job_id, lease, "fields/step_000005.npz", data[:half], sha(data), (0, len(data)))
    assert first.status_code == 202 and first.json()["received"] == half
    assert box.received(job_id, lease, "fields/step_000005.npz") == half
    assert not (folder / "fields" / "step_000005.npz").exists()  # nothing half-uploaded is ever a result
    gap = box.put(job_id, lease, "fields/step_000005.npz", data[half + 1 :], sha(data), (half + 1, len(data)))
    assert problem(gap, 409) == (
        "Content-Range",
        f"the service has {half} bytes of fields/step_000005.npz: continue from byte {half}",
    )
    rest = box.put(job_id, lease, "fields/step_000005.npz", data[half:], sha(data), (half, len(data)))
    assert rest.status_code == 201, rest.text
    assert (folder / "fields" / "step_000005.npz").read_bytes() == data

    bad = b"x" * 1000
    field, message = problem(box.put(job_id, lease, "forces.csv", bad, sha(b"y" * 1000)), 422)
    assert field == "Content-SHA256" and sha(bad) in message
    assert not (folder / "forces.csv").exists() and box.received(job_id, lease, "forces.csv") == 0
    assert problem(box.put(job_id, lease, ".uploads/manifest.json", b"{}", sha(b"{}")), 422)[0] == "path"
    assert problem(box.put(job_id, lease, "forces.csv", bad, "nothex"), 400)[0] == "Content-SHA256"
    field, message = problem(box.put(job_id, lease, "fields", b"x", sha(b"x")), 409)  # a folder of the job
    assert field == "path" and "clashes" in message
    field, message = problem(box.put(job_id, lease, "fields/step_000005.npz/x", b"x", sha(b"x")), 409)
    assert field == "path" and "clashes" in message
    manifest = json.loads((folder / ".uploads" / "manifest.json").read_text())
    assert manifest == {"fields/step_000005.npz": {"size": len(data), "sha256": sha(data)}}


def test_an_expired_lease_can_neither_upload_nor_finish_and_the_next_claim_gets_the_checkpoint(
    offline: TestClient,
) -> None:
    user, box, job_id = setup(offline)
    store: Store = offline.app.state.store  # type: ignore[attr-defined]
    old = box.claim().json()["lease"]
    checkpoint = b"the restart state" * 100
    assert box.put(job_id, old, "checkpoint.npz", checkpoint, sha(checkpoint)).status_code == 201
    assert store.expire_leases(lease_seconds=0.0, max_attempts=3) == [job_id]  # the box went silent

    again = box.claim().json()
    assert again["job_id"] == job_id and again["attempts"] == 2 and again["lease"] != old
    assert again["files"] == [{"path": "checkpoint.npz", "size": len(checkpoint), "sha256": sha(checkpoint)}]
    got = offline.get(
        f"/api/v1/worker/jobs/{job_id}/files/checkpoint.npz", headers={**box.headers, "Lease": again["lease"]}
    )
    assert got.content == checkpoint and got.headers["content-sha256"] == sha(checkpoint)

    late = b"{}"
    assert problem(box.put(job_id, old, "summary.json", late, sha(late)), 409)[0] == "Lease"
    assert problem(box.finish(job_id, old, state="failed", error="stale"), 409)[0] == "Lease"
    early = box.finish(job_id, again["lease"], state="succeeded", summary={"bodies": []})
    assert problem(early, 409)[0] == "state"  # success needs its summary.json uploaded first
    summary = json.dumps({"bodies": []}).encode()
    assert box.put(job_id, again["lease"], "summary.json", summary, sha(summary)).status_code == 201
    done = box.finish(job_id, again["lease"], state="succeeded", summary={"bodies": []})
    assert done.status_code == 200, done.text
    job = offline.get(f"/api/v1/jobs/{job_id}", headers=user).json()
    assert job["state"] == "succeeded" and job["attempts"] == 2 and job["error"] is None
    folder = offline.app.state.settings.jobs_dir / job_id  # type: ignore[attr-defined]
    assert not (folder / "checkpoint.npz").exists()  # a finished run's restart state is not kept
    assert problem(box.finish(job_id, again["lease"], state="failed", error="twice"), 409)[0] == "Lease"
    files = offline.get(f"/api/v1/jobs/{job_id}/files", headers=user).json()
    assert "summary.json" in json.dumps(files) and "manifest" not in json.dumps(files)


def test_a_stopping_box_hands_its_job_back(offline: TestClient) -> None:
    user, box, job_id = setup(offline)
    lease = box.claim().json()["lease"]
    back = offline.post(f"/api/v1/worker/jobs/{job_id}/release", headers={**box.headers, "Lease": lease})
    assert back.status_code == 200
    assert offline.get(f"/api/v1/jobs/{job_id}", headers=user).json()["state"] == "queued"
    assert (
        problem(offline.post(f"/api/v1/worker/jobs/{job_id}/release", headers={**box.headers, "Lease": lease}), 409)[0]
        == "Lease"
    )


def test_a_running_jobs_restart_state_is_never_listed_or_served_as_a_result(offline: TestClient) -> None:
    """A heat-transfer run checkpoints the flow and the temperature; a box uploads both while the job runs."""
    user, box, job_id = setup(offline)
    lease = box.claim().json()["lease"]
    uploaded = {
        "checkpoint.npz": b"flow state",
        "heat_checkpoint.npz": b"temperature state",
        "forces.csv": b"time,fx\n0,1\n",
        "heat.csv": b"time,nusselt\n0,2\n",
    }
    for path, data in uploaded.items():
        assert box.put(job_id, lease, path, data, sha(data)).status_code == 201
    assert offline.get(f"/api/v1/jobs/{job_id}", headers=user).json()["state"] == "running"
    base = f"/api/v1/jobs/{job_id}/files"
    assert [f["path"] for f in offline.get(base, headers=user).json()["files"]] == ["forces.csv", "heat.csv"]
    for internal in ("checkpoint.npz", "heat_checkpoint.npz"):
        assert problem(offline.get(f"{base}/{internal}", headers=user), 404)[0] == "path"
    everything = offline.get(f"{base}/all-files.zip", headers=user)
    assert sorted(zipfile.ZipFile(io.BytesIO(everything.content)).namelist()) == [
        "CAUTION.txt",
        "forces.csv",
        "heat.csv",
    ]
