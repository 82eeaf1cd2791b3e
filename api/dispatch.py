"""Wake-ups for workers, sent from a background thread so a request never waits on the broker.

A wake-up that is lost (broker down, process killed before sending) costs only time: the job is already
in the store, and the reaper re-sends wake-ups for queued jobs when the workers sit idle.
"""

from __future__ import annotations

import logging
import queue
import threading

from celery import Celery

from wakeyard.core.broker import TASK

log = logging.getLogger(__name__)


class Dispatcher:
    def __init__(self, celery: Celery, queue_name: str):
        self.celery, self.queue_name = celery, queue_name
        self.pending: queue.SimpleQueue[str | None] = queue.SimpleQueue()
        self.thread = threading.Thread(target=self._loop, name="wakeyard-dispatch", daemon=True)
        self.thread.start()

    def __call__(self, job_id: str) -> None:
        self.pending.put(job_id)

    def close(self, timeout: float = 10.0) -> None:
        """Send what is pending, then stop."""
        self.pending.put(None)
        self.thread.join(timeout)

    def _loop(self) -> None:
        while (job_id := self.pending.get()) is not None:
            try:
                self.celery.send_task(TASK, args=[job_id], queue=self.queue_name)
            except Exception:
                log.exception("could not send the wake-up for job %s; the reaper will retry", job_id)
