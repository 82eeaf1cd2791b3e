"""Wake-ups for workers, sent from a background thread so a request never waits on the broker.

Wake-ups queued while the thread was publishing go out together: on the one producer the thread keeps (taking one
from the pool for each batch cost about as much CPU as publishing a few messages), in kombu's publish batch
(``Producer.batch``), which on Redis sends the whole batch as one pipeline, one round trip (other transports
publish each message at once, as before). A burst of creations costs one broker round trip, not one per job.

A wake-up that is lost (broker down, process killed before sending) costs only time: the job is already
in the store, and the reaper re-sends wake-ups for queued jobs when the workers sit idle. While no worker consumes
the queue (``listeners.py``) none is sent: nothing would ever take it out of the broker.
"""

from __future__ import annotations

import logging
import queue
import threading
from collections.abc import Callable
from typing import Any

from celery import Celery

from wakeyard.core.broker import TASK

log = logging.getLogger(__name__)
MAX_BATCH = 256


class Dispatcher:
    """``listeners()``: how many worker processes consume the queue now (0: the wake-ups are dropped)."""

    def __init__(self, celery: Celery, queue_name: str, listeners: Callable[[], int]):
        self.celery, self.queue_name, self.listeners = celery, queue_name, listeners
        self.producer: Any = None  # kept between batches; handed back to the pool after a failure and at the end
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
        stopping = False
        while not stopping:
            batch = [self.pending.get()]
            while len(batch) < MAX_BATCH:
                try:
                    batch.append(self.pending.get_nowait())
                except queue.Empty:
                    break
            stopping = None in batch
            self._send([job_id for job_id in batch if job_id is not None])
        self._hand_back()

    def _hand_back(self) -> None:
        if self.producer is not None:
            self.producer.release()
            self.producer = None

    def _send(self, batch: list[str]) -> None:
        if not batch:
            return
        sent = 0
        try:
            if not self.listeners():
                log.debug("no worker consumes the queue: %d wake-up(s) not sent", len(batch))
                return
            if self.producer is None:
                self.producer = self.celery.producer_pool.acquire(block=True)
            with self.producer.batch(max_size=MAX_BATCH):
                for job_id in batch:
                    self.celery.send_task(TASK, args=[job_id], queue=self.queue_name, producer=self.producer)
                    sent += 1
        except Exception:  # the broker is away: the rest would fail the same way, each after its own retries
            self._hand_back()  # the next batch takes a producer afresh
            log.exception("could not send %d of %d wake-up(s); the reaper will retry", len(batch) - sent, len(batch))
