"""The Celery app factory. The broker only wakes workers; the job store decides which job runs (``core.store``)."""

from __future__ import annotations

import sqlite3
from collections.abc import Callable, Sequence
from pathlib import Path

from celery import Celery

from .settings import Settings

TASK = "wakeyard.run_next"  # the one task's name: the API sends it, the worker defines it


def make_celery(settings: Settings, include: Sequence[str] = ()) -> Celery:
    """Celery app for ``settings``: early acknowledgement (the job-table lease, not the broker, recovers jobs).

    The API only sends wake-ups by name; the worker passes the module that defines the task in ``include``."""
    app = Celery("wakeyard", broker=settings.celery_broker, include=list(include))
    app.conf.update(
        task_default_queue=settings.queue,
        task_ignore_result=True,
        task_acks_late=False,
        worker_prefetch_multiplier=1,
        worker_concurrency=settings.workers or None,  # None: one per core
        broker_connection_retry_on_startup=True,
        # the SQLAlchemy transport hands these to create_engine
        broker_transport_options={"creator": _sqlite_opener(settings.data_dir / "broker.sqlite")}
        if not settings.broker_url
        else {},
    )
    return app


def _sqlite_opener(path: Path) -> Callable[[], sqlite3.Connection]:
    """Connections to the embedded broker: WAL without an fsync per message, waiting on locks instead of failing."""

    def connect() -> sqlite3.Connection:
        path.parent.mkdir(parents=True, exist_ok=True)
        conn = sqlite3.connect(path.resolve(), timeout=30, check_same_thread=False)
        conn.execute("PRAGMA journal_mode=WAL")
        conn.execute("PRAGMA synchronous=NORMAL")
        return conn

    return connect
