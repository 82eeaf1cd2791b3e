"""Wake-ups in batches: a burst of creations still sends exactly one message per job, each naming its job, through
a real Redis broker (one pipeline per batch) and through the embedded SQLite transport (no batching there), and
closing the dispatcher sends what is still pending."""

from __future__ import annotations

import base64
import json
import sqlite3
from pathlib import Path

import redis

from tests.helpers import settings_for
from wakeyard.api.dispatch import Dispatcher
from wakeyard.core.broker import make_celery

JOBS = [f"{i:032x}" for i in range(600)]  # more than one batch

ONE_WORKER = 1  # worker process consuming the queue, as the dispatcher is told (these tests start none)


def hints(bodies: list[bytes | str]) -> list[str]:
    """The job ids the messages name (Celery's protocol 2: the body is [args, kwargs, embed], base64 JSON)."""
    return [json.loads(base64.b64decode(json.loads(b)["body"]))[0][0] for b in bodies]


def test_a_burst_of_wake_ups_reaches_redis_one_message_per_job(tmp_path: Path, redis_broker: str) -> None:
    settings = settings_for(tmp_path, "wakeyard-dispatch", broker=redis_broker)
    dispatch = Dispatcher(make_celery(settings), settings.queue, lambda: ONE_WORKER)
    for job_id in JOBS:
        dispatch(job_id)
    dispatch.close()
    client = redis.Redis.from_url(redis_broker)
    try:
        assert sorted(hints(client.lrange(settings.queue, 0, -1))) == JOBS
    finally:
        client.delete(settings.queue)
        client.close()


def test_the_embedded_broker_gets_every_wake_up_too(tmp_path: Path) -> None:
    settings = settings_for(tmp_path, "wakeyard-dispatch", broker="")
    dispatch = Dispatcher(make_celery(settings), settings.queue, lambda: ONE_WORKER)
    for job_id in JOBS[:50]:
        dispatch(job_id)
    dispatch.close()
    with sqlite3.connect(tmp_path / "broker.sqlite") as conn:
        bodies = [row[0] for row in conn.execute("SELECT payload FROM kombu_message")]
    assert sorted(hints(bodies)) == JOBS[:50]
