"""The Celery app. The broker only wakes workers; the job store decides which job runs (see api.store)."""

from __future__ import annotations

import logging
import os
import socket
import sqlite3
import threading
from collections.abc import Callable
from pathlib import Path

from celery import Celery
from celery.signals import worker_ready

from api.settings import Settings
from api.store import Store

log = logging.getLogger(__name__)


def make_celery(settings: Settings) -> Celery:
    """Celery app for ``settings``: early acknowledgement (the job-table lease, not the broker, recovers jobs)."""
    app = Celery("wakeyard", broker=settings.celery_broker, include=["worker.tasks"])
    app.conf.update(
        task_default_queue=settings.queue,
        task_ignore_result=True,
        task_acks_late=False,
        worker_prefetch_multiplier=1,
        worker_concurrency=settings.workers or None,  # None: one per core
        broker_connection_retry_on_startup=True,
        # the SQLAlchemy transport hands these to create_engine
        broker_transport_options={"creator": _sqlite_opener(settings.data_dir / "broker.sqlite")}
        if not settings.broker_url else {},
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


app = make_celery(Settings())


@worker_ready.connect
def _announce(**_: object) -> None:
    """Tell the job store this worker is alive every few seconds (for /api/v1/health)."""
    name = f"{socket.gethostname()}:{os.getpid()}"
    store = Store(Settings().db_url)
    stop = threading.Event()

    def loop() -> None:
        while True:
            try:
                store.worker_alive(name)
            except Exception:  # a busy or restarting database must not kill the worker
                log.exception("could not record worker heartbeat")
            if stop.wait(5.0):
                return

    threading.Thread(target=loop, name="wakeyard-alive", daemon=True).start()
