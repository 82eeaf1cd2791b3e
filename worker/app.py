"""The worker's Celery app and its signals: announce liveness, stop quickly, hand back a running job."""

from __future__ import annotations

import logging
import os
import socket
import sys
import threading

from celery.signals import task_postrun, worker_ready, worker_shutting_down

from wakeyard.core.broker import make_celery
from wakeyard.core.settings import Settings
from wakeyard.core.store import Store
from wakeyard.worker.tasks import BUSY, SHUTDOWN

log = logging.getLogger(__name__)


app = make_celery(Settings(), include=["wakeyard.worker.tasks"])


_stop_announcing = threading.Event()
_name = f"{socket.gethostname()}:{os.getpid()}"  # as the job store knows this process (claims, heartbeats)
_stores: list[Store] = []  # the announcer's, once the worker is ready


@worker_ready.connect
def _announce(**_: object) -> None:
    """Tell the job store this worker process is alive, a few times per lease (for /api/v1/health)."""
    settings = Settings()
    store = Store(settings.db_url)
    _stores.append(store)
    every = min(5.0, settings.lease_seconds / 3)

    def loop() -> None:
        while True:
            try:
                store.worker_alive(_name)
            except Exception:  # a busy or restarting database must not kill the worker
                log.exception("could not record worker heartbeat")
            if _stop_announcing.wait(every):
                return

    threading.Thread(target=loop, name="wakeyard-alive", daemon=True).start()


@worker_shutting_down.connect
def _shutting_down(**_: object) -> None:
    """SIGTERM or SIGINT (called in the signal handler): a running job stops at its next step and is handed back;
    an idle process leaves at once."""
    SHUTDOWN.set()
    _stop_announcing.set()
    if not BUSY.is_set():  # solo pool: no task can start while this handler runs in the main thread
        _leave()


@task_postrun.connect
def _after_task(**_: object) -> None:
    if SHUTDOWN.is_set():
        _leave()


def _leave() -> None:
    """Exit now: Celery's own warm shutdown would first wait for its next broker poll (a second or two), and nothing
    is left to finish (wake-ups are acknowledged on receipt; the job store holds the queue)."""
    try:
        for store in _stores:
            store.worker_gone(_name)
    except Exception:  # health stops counting this process once the lease passes anyway
        log.exception("could not record that the worker stopped")
    logging.shutdown()
    sys.stdout.flush()
    os._exit(0)
