"""The heartbeat lease: a killed worker's job is re-queued, resumes from its checkpoint, and gives up after N tries."""

from __future__ import annotations

import os
import signal
from datetime import timedelta
from functools import partial
from pathlib import Path

import numpy as np
from fastapi.testclient import TestClient
from sqlalchemy import update

from tests.helpers import Hold, Worker, finished, settings_for, tiny, wait_for
from wakeyard.api.app import create_app
from wakeyard.core.store import Job, Store, remote_worker, utcnow


def _stale(store: Store, job_id: str) -> None:
    with store.session.begin() as s:
        s.execute(update(Job).where(Job.id == job_id).values(heartbeat_at=utcnow() - timedelta(minutes=5)))


def test_expired_lease_requeues_then_gives_up(store_url: str) -> None:
    store = Store(store_url)
    job_id = store.create("ana", tiny(), []).id
    for attempt in (1, 2):
        claimed = store.claim_next("w")
        assert claimed is not None and claimed.attempts == attempt
        _stale(store, job_id)
        assert store.expire_leases(60, max_attempts=3) == [job_id]
        assert not store.heartbeat(job_id, claimed.claim, {})[0]  # the old worker has lost the job
    store.claim_next("w")
    _stale(store, job_id)
    assert store.expire_leases(60, max_attempts=3) == []
    job = store.get(job_id)
    assert job.state == "failed" and "gave up after 3 attempts" in job.error


def test_kill_9_of_the_worker_resumes_from_checkpoint(tmp_path: Path, redis_broker: str) -> None:
    settings = settings_for(tmp_path, "wakeyard-lease", redis_broker, lease_seconds=3.0)
    hold = Hold(tmp_path / "hold", step=20)  # the solver parks after its checkpoint at step 20
    first = Worker(settings, tmp_path / "first.log", hold=hold)
    try:
        with TestClient(create_app(settings)) as client:
            spec = tiny(end_time=4.0, output_interval=2.0, checkpoint_interval=10)
            job_id = client.post("/api/v1/jobs", json=spec).json()["id"]
            held = hold.wait_held()
            first.kill()
            saved = int(np.load(settings.jobs_dir / job_id / "checkpoint.npz")["step"])
            stale = client.get(f"/api/v1/jobs/{job_id}").json()
            assert stale["state"] == "running" and saved == held["step"] == 20

            second = Worker(settings, tmp_path / "second.log")
            try:
                job = wait_for(client, job_id, finished, timeout=90)
            finally:
                second.stop()
            assert job["state"] == "succeeded", job["error"]
            assert job["attempts"] == 2 and job["summary"]["steps"] == 400
            assert job["summary"]["resumed_from_step"] == saved  # continued from the checkpoint, not from step 0
    finally:
        first.stop()


def test_kill_9_of_a_pool_child_requeues_and_the_same_worker_finishes(tmp_path: Path, redis_broker: str) -> None:
    settings = settings_for(tmp_path, "wakeyard-child", redis_broker, lease_seconds=3.0)
    hold = Hold(tmp_path / "hold", step=20)
    worker = Worker(settings, tmp_path / "worker.log", hold=hold)
    try:
        with TestClient(create_app(settings)) as client:
            job_id = client.post(
                "/api/v1/jobs", json=tiny(end_time=4.0, output_interval=2.0, checkpoint_interval=10)
            ).json()["id"]
            child = hold.wait_held()["pid"]  # the pool process that runs the job, parked at step 20
            running = client.get(f"/api/v1/jobs/{job_id}").json()
            assert running["state"] == "running" and running["worker_host"].endswith(f":{child}")
            assert child != worker.proc.pid
            os.kill(child, signal.SIGKILL)
            job = wait_for(client, job_id, finished, timeout=90)
            assert job["state"] == "succeeded", job["error"]
            assert job["attempts"] == 2 and job["summary"]["steps"] == 400
            assert job["summary"]["resumed_from_step"] == 20
            assert worker.proc.poll() is None  # the worker replaced its child and carried on
    finally:
        worker.stop()


def test_reaper_resends_lost_wake_ups_only_to_workers_that_consume_the_queue(tmp_path: Path) -> None:
    """``serve --workers 0``: while only remote boxes (claiming over HTTP) report in, no wake-up is re-sent; once
    broker workers do (the compose API's workers), every queued job's at once, then one per worker process in each
    idle round."""
    from wakeyard.api.reaper import Reaper
    from wakeyard.core.disk import DiskReserve

    settings = settings_for(tmp_path, "wakeyard-reaper", broker="", workers=0)
    store, sent = Store(settings.db_url), []
    listeners = partial(store.workers_seen, within=settings.lease_seconds, broker_only=True)
    reaper = Reaper(settings, store, sent.append, DiskReserve(tmp_path), listeners)
    try:
        queued = [store.create("ana", tiny(), []).id for _ in range(3)]
        store.worker_alive(remote_worker("box-2", "box:1"))
        reaper.step()
        reaper.step()
        assert reaper.leading and sent == []
        store.worker_alive("box-a:1")
        store.worker_alive("box-b:2")
        reaper.step()
        assert sent == queued + queued[:2]
        sent.clear()
        reaper.step()
        assert sent == queued[:2]
    finally:
        reaper.lead.close()
        reaper.broker_db.dispose()  # the reaper's thread never started: step() ran here
