"""What /api/v1/health and /metrics report: honest facts about the job store, the broker, the workers and the disk.

The service is ``degraded`` when the store or the broker does not answer, when jobs are queued and no worker
process has reported in within the lease, or when the data folder's free space is below ``min_free_mb``.
"""

from __future__ import annotations

import shutil
from dataclasses import dataclass, field
from typing import Any

from celery import Celery

from wakeyard.core.settings import Settings
from wakeyard.core.states import JobState
from wakeyard.core.store import Store


@dataclass
class Health:
    database: str = "ok"
    broker: str = "ok"
    counts: dict[str, int] = field(default_factory=dict)
    workers_seen: int | None = None
    free_disk_bytes: int | None = None
    problems: list[str] = field(default_factory=list)

    @property
    def ok(self) -> bool:
        return not self.problems

    def body(self) -> dict[str, Any]:
        return {
            "status": "ok" if self.ok else "degraded",
            "problems": self.problems,
            "database": self.database,
            "broker": self.broker,
            "queue_depth": self.counts.get(JobState.QUEUED, 0),
            "running": self.counts.get(JobState.RUNNING, 0),
            "workers_seen": self.workers_seen,
            "free_disk_bytes": self.free_disk_bytes,
        }


def check(settings: Settings, store: Store, celery: Celery) -> Health:
    health = Health()
    try:
        store.ping()
        health.counts = store.counts()
        health.workers_seen = store.workers_seen(within=settings.lease_seconds)
    except Exception as err:  # report, don't crash: health must answer when things are broken
        health.database = f"error: {type(err).__name__}: {err}"
        health.problems.append(f"the job store does not answer ({type(err).__name__})")
    queued = health.counts.get(JobState.QUEUED, 0)
    if queued and health.workers_seen == 0:
        health.problems.append(
            f"{queued} job(s) queued and no worker process seen in the last {settings.lease_seconds:g} s"
        )
    try:
        with celery.connection_for_write() as conn:
            conn.ensure_connection(max_retries=1, timeout=2)
    except Exception as err:
        health.broker = f"error: {type(err).__name__}: {err}"
        health.problems.append(f"the broker does not answer ({type(err).__name__})")
    try:
        health.free_disk_bytes = shutil.disk_usage(settings.data_dir).free
    except OSError as err:
        health.problems.append(f"cannot read the free space of the data folder: {err.strerror}")
    else:
        if health.free_disk_bytes < settings.min_free_bytes:
            health.problems.append(
                f"only {health.free_disk_bytes / 2**20:.0f} MiB free in the data folder, below "
                f"{settings.min_free_mb:.0f} MiB: new jobs are refused until space is freed"
            )
    return health
