"""The one task: claim the next job in the store, run it with the solver (``attempt``), record how it ended."""

from __future__ import annotations

import logging
import os
import socket
import threading
from functools import cache

from celery import shared_task

from wakeyard.core.broker import TASK
from wakeyard.core.settings import Settings
from wakeyard.core.store import Store

from .attempt import Attempt

log = logging.getLogger(__name__)


@cache
def _settings() -> Settings:
    return Settings()


_stores: dict[int, Store] = {}


def _store() -> Store:
    """One store per process: connections must never cross a fork of the prefork pool."""
    pid = os.getpid()
    if pid not in _stores:
        _stores[pid] = Store(_settings().db_url)
    return _stores[pid]


# Set (from the worker's SIGTERM handler) when this process is asked to stop: the running job stops at its next
# time step and goes back to the queue, to resume from its last checkpoint.
SHUTDOWN = threading.Event()
BUSY = threading.Event()  # a task is running in this (solo-pool) process


@shared_task(name=TASK)
def run_next(hint: str | None = None) -> str | None:
    """Run the next queued job, if any; ``hint`` (the submitted job id) is for logs only."""
    if SHUTDOWN.is_set():
        return None
    BUSY.set()
    try:
        job = _store().claim_next(f"{socket.gethostname()}:{os.getpid()}")
        if job is None:
            log.info("nothing to run (message for %s)", hint)
            return None
        Attempt(_store(), _settings(), job, SHUTDOWN).run()
        return job.id
    finally:
        BUSY.clear()
