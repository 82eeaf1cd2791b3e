"""Restarting the API and the broker with jobs queued loses nothing: the job store, not the broker,
holds the queue, and a starting API re-sends wake-ups for queued jobs."""

from __future__ import annotations

from pathlib import Path

import redis
from fastapi.testclient import TestClient

from tests.helpers import REDIS_DB, Worker, finished, settings_for, tiny, wait_for
from wakeyard.api.app import create_app


def test_api_and_broker_restart_with_queued_jobs(tmp_path: Path, redis_url: str) -> None:
    restart_redis = f"{redis_url}/{REDIS_DB + 1}"  # a database of its own: the test empties it on purpose
    settings = settings_for(tmp_path, "wakeyard-restart", broker=restart_redis)
    broker = redis.Redis.from_url(restart_redis)
    broker.flushdb()
    try:
        with TestClient(create_app(settings)) as client:  # no worker yet: the jobs stay queued
            ids = [client.post("/api/v1/jobs", json=tiny(end_time=0.05)).json()["id"] for _ in range(3)]
            assert {client.get(f"/api/v1/jobs/{i}").json()["state"] for i in ids} == {"queued"}
        # the API is gone; a broker restart (Redis keeps nothing on disk here) drops every message
        broker.flushdb()
        worker = Worker(settings, tmp_path / "worker.log")
        try:
            with TestClient(create_app(settings)) as client:
                jobs = [wait_for(client, i, finished, timeout=120) for i in ids]
        finally:
            worker.stop()
        assert [j["state"] for j in jobs] == ["succeeded"] * 3
        assert all(j["attempts"] == 1 for j in jobs)
    finally:
        broker.flushdb()
