"""Disk use per user, the storage quota and the retention rule, on a real job store and real files: the sweep
measures job folders, the caller and /metrics see the totals, an owner at the quota gets 507 naming the limit, and
the retention rule removes fields, pictures and checkpoints of old jobs while their summary, forces and spec stay
byte for byte."""

from __future__ import annotations

import hashlib
from collections.abc import Iterator
from datetime import timedelta
from pathlib import Path

import pytest
from fastapi.testclient import TestClient
from prometheus_client.parser import text_string_to_metric_families
from sqlalchemy import update

from tests.helpers import settings_for, tiny
from wakeyard.api.app import create_app
from wakeyard.api.auth import create_token
from wakeyard.core.store import Job, Store, utcnow

MiB = 2**20


@pytest.fixture
def client(tmp_path: Path, blank_store_url: str) -> Iterator[TestClient]:
    """The API on SQLite and on PostgreSQL, with no worker: the test claims and finishes jobs as a worker would."""
    settings = settings_for(
        tmp_path,
        "wakeyard-disk",
        broker="",
        database_url=blank_store_url,
        user_quota_mb=3,
        fields_retention_days=7,
        disk_sweep_seconds=3600,
    )
    with TestClient(create_app(settings)) as client:
        yield client


def bearer(token: str) -> dict[str, str]:
    return {"Authorization": f"Bearer {token}"}


def finish_with_files(client: TestClient, headers: dict[str, str], field_mib: float) -> tuple[str, Path]:
    """Queue a job, claim it as a worker would, write result files of a known size, record it succeeded."""
    store: Store = client.app.state.store
    job_id = client.post("/api/v1/jobs", params={"fresh": True}, json=tiny(), headers=headers).json()["id"]
    claimed = store.claim_next("test-worker")
    assert claimed is not None and claimed.id == job_id
    folder = client.app.state.settings.jobs_dir / job_id
    (folder / "fields").mkdir(parents=True)
    (folder / "pictures").mkdir()
    (folder / "fields" / "step_000010.vtu").write_bytes(b"v" * int(field_mib * MiB))
    (folder / "pictures" / "vorticity_000010.png").write_bytes(b"p" * 1000)
    (folder / "checkpoint.npz").write_bytes(b"c" * 2000)
    for name, text in (("summary.json", '{"drag": 1.5}'), ("forces.csv", "time,cd\n0.1,1.5\n"), ("spec.json", "{}")):
        (folder / name).write_text(text)
    assert store.finish(job_id, claimed.claim, "succeeded", {"bodies": []})
    return job_id, folder


def digests(folder: Path) -> dict[str, str]:
    return {p.name: hashlib.sha256(p.read_bytes()).hexdigest() for p in folder.iterdir() if p.is_file()}


def test_disk_use_is_measured_shown_and_the_quota_refuses_new_jobs(client: TestClient) -> None:
    store: Store = client.app.state.store
    ana, ben = bearer(create_token(store, "ana", admin=True)), bearer(create_token(store, "ben"))
    big, _ = finish_with_files(client, ana, field_mib=3.5)
    finish_with_files(client, ben, field_mib=0.5)
    assert client.get("/api/v1/me", headers=ana).json()["disk"]["used_bytes"] == 0  # not measured yet
    client.app.state.reaper.sweep.run()

    me = client.get("/api/v1/me", headers=ana).json()
    assert me["name"] == "ana" and me["admin"] is True
    assert 3.5 * MiB < me["disk"]["used_bytes"] < 3.6 * MiB and me["disk"]["quota_bytes"] == 3 * MiB
    assert me["jobs"] == {"active": 0, "max_active": 20}
    usage = client.get("/api/v1/usage", headers=ana).json()["owners"]
    assert [o["name"] for o in usage] == ["ana", "ben"]
    assert client.get("/api/v1/usage", headers=ben).status_code == 403
    samples = {
        (s.name, s.labels.get("owner")): s.value
        for family in text_string_to_metric_families(client.get("/metrics").text)
        for s in family.samples
    }
    assert samples[("wakeyard_disk_used_bytes", "ana")] == me["disk"]["used_bytes"]
    assert samples[("wakeyard_disk_used_bytes", "ben")] > 0.5 * MiB
    assert samples[("wakeyard_disk_quota_bytes", None)] == 3 * MiB

    over = client.post("/api/v1/jobs", json=tiny(), headers=ana)
    assert over.status_code == 507
    assert "at or over the per-user quota of 3 MiB (WAKEYARD_USER_QUOTA_MB)" in over.json()["detail"]
    study = client.post("/api/v1/studies", json={"kind": "mesh-convergence", "base": tiny()}, headers=ana)
    assert study.status_code == 507
    assert client.post("/api/v1/jobs", json=tiny(), headers=ben).status_code == 202  # ben is under it

    assert client.delete(f"/api/v1/jobs/{big}", headers=ana).status_code == 204
    assert client.get("/api/v1/me", headers=ana).json()["disk"]["used_bytes"] == 0
    assert client.post("/api/v1/jobs", json=tiny(), headers=ana).status_code == 202


def test_retention_trims_old_jobs_only_and_keeps_their_results(client: TestClient) -> None:
    store: Store = client.app.state.store
    old, old_folder = finish_with_files(client, {}, field_mib=1)
    recent, recent_folder = finish_with_files(client, {}, field_mib=1)
    reused = client.post("/api/v1/jobs", json=tiny()).json()  # the same spec: the old result, hard-linked
    assert reused["reused_from"] == recent
    with store.session.begin() as s:
        s.execute(update(Job).where(Job.id == old).values(finished_at=utcnow() - timedelta(days=8)))
    kept_before = {k: v for k, v in digests(old_folder).items() if k.endswith((".json", ".csv"))}
    recent_before = digests(recent_folder)

    assert client.app.state.reaper.sweep.apply_retention() == [old]
    assert sorted(p.name for p in old_folder.iterdir()) == ["forces.csv", "spec.json", "summary.json"]
    assert digests(old_folder) == kept_before
    assert digests(recent_folder) == recent_before and (recent_folder / "fields" / "step_000010.vtu").exists()
    shown = client.get(f"/api/v1/jobs/{old}").json()
    assert shown["summary"] == {"bodies": []} and shown["fields_removed_at"] is not None
    assert client.get(f"/api/v1/jobs/{recent}").json()["fields_removed_at"] is None
    files = [f["path"] for f in client.get(f"/api/v1/jobs/{old}/files").json()["files"]]
    assert sorted(files) == ["forces.csv", "spec.json", "summary.json"]  # no fields.zip offered any more
    assert client.app.state.reaper.sweep.apply_retention() == []  # once only

    client.app.state.reaper.sweep.run()
    assert store.get(old).disk_bytes < 1000 and store.get(recent).disk_bytes > MiB
    # a trimmed result is no longer reused: the same spec runs again
    with store.session.begin() as s:
        s.execute(update(Job).where(Job.id == recent).values(finished_at=utcnow() - timedelta(days=8)))
    client.app.state.reaper.sweep.apply_retention()
    assert (client.app.state.settings.jobs_dir / reused["id"] / "fields" / "step_000010.vtu").exists()  # its own link
    again = client.post("/api/v1/jobs", json=tiny()).json()
    assert again["reused_from"] is None and again["state"] == "queued"
