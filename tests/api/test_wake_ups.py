"""Wake-ups go only where a worker takes them out of the broker: with ``serve --workers 0`` and remote boxes alone
(they claim over HTTP) none is sent, however many jobs are created or re-queued, so nothing piles up in the broker
(real Redis); once a broker worker has reported in, the service sends every queued job's wake-up."""

from __future__ import annotations

import os
import socket
from pathlib import Path

import redis
from fastapi.testclient import TestClient

from tests.api.test_dispatch import hints
from tests.helpers import settings_for, tiny, wait_until
from wakeyard.api.app import create_app
from wakeyard.api.auth import create_token
from wakeyard.core.store import Store

JOBS = 30


def test_wake_ups_do_not_pile_up_without_a_broker_worker(tmp_path: Path, redis_broker: str) -> None:
    settings = settings_for(
        tmp_path,
        "wakeyard-unheard",
        redis_broker,
        workers=0,
        lease_seconds=1.0,
        reaper_seconds=0.1,
        max_active_per_user=JOBS,
    )
    broker = redis.Redis.from_url(redis_broker)
    lengths: list[int] = []
    try:
        with TestClient(create_app(settings)) as client:
            store: Store = client.app.state.store  # type: ignore[attr-defined]
            box = {"Authorization": f"Bearer {create_token(store, 'box-2', kind='worker')}"}
            user = {"Authorization": f"Bearer {create_token(store, 'ana')}"}
            ids = []
            for k in range(JOBS):
                made = client.post("/api/v1/jobs", json=tiny(end_time=0.3 + 0.01 * k), headers=user)
                assert made.status_code == 202, made.text
                ids.append(made.json()["id"])
                lengths.append(broker.llen(settings.queue))
            # a remote box claims a job and goes silent: the reaper re-queues it and sends its wake-up again
            claimed = client.post("/api/v1/worker/claim", json={"worker": "box:1"}, headers=box).json()["job_id"]

            def requeued() -> bool:
                lengths.append(broker.llen(settings.queue))
                return store.get(claimed).state == "queued"

            wait_until("the silent box's job to be re-queued", requeued, 30, [])
            assert store.workers_seen(within=60) == 1  # the remote box counts for health all the same
        # the service has stopped: every wake-up it meant to send has been handled
        lengths.append(broker.llen(settings.queue))
        assert max(lengths) == 0

        store.worker_alive(f"{socket.gethostname()}:{os.getpid()}")  # a broker worker reports in, as Celery's do
        with TestClient(create_app(settings)):  # the service again (or another API process taking the lead)

            def woken() -> list[str]:
                return hints(broker.lrange(settings.queue, 0, -1)) if broker.llen(settings.queue) >= JOBS else []

            assert set(wait_until("the queued jobs' wake-ups", woken, 30, [])) == set(ids)
    finally:
        broker.delete(settings.queue)
        broker.close()
