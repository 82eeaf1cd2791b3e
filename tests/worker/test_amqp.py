"""RabbitMQ as the broker: the broker is a setting (WAKEYARD_BROKER_URL=amqp://...), not an assumption of Redis."""

from __future__ import annotations

import uuid
from pathlib import Path

import kombu
from fastapi.testclient import TestClient

from tests.helpers import Worker, finished, settings_for, tiny, wait_for
from wakeyard.api.app import create_app


def test_a_job_runs_to_success_through_rabbitmq(tmp_path: Path, amqp_url: str) -> None:
    queue = f"wakeyard-amqp-{uuid.uuid4().hex[:12]}"  # the broker may be shared: a queue of this test's own
    settings = settings_for(tmp_path, queue, broker=amqp_url)
    worker = Worker(settings, tmp_path / "worker.log")
    try:
        with TestClient(create_app(settings)) as client:
            job = wait_for(
                client, client.post("/api/v1/jobs", json=tiny(end_time=0.05)).json()["id"], finished, timeout=120
            )
    finally:
        worker.stop()
        with kombu.Connection(amqp_url) as conn:
            channel = conn.default_channel
            channel.queue_declare(queue, passive=True)  # raises if the queue is not on this broker
            channel.queue_delete(queue)
    # the worker listened on RabbitMQ only, so the job ran on a wake-up that came through it. A spare wake-up
    # (the API re-sends them for queued jobs) may still wait when the worker stops: harmless, and not counted.
    assert job["state"] == "succeeded", job
    assert job["attempts"] == 1
