"""Who takes the broker's wake-ups: the worker processes that consume the queue (Celery's, on this host or any
sharing the broker) as the job store last saw them. With none (``serve --workers 0`` and only remote boxes, which
claim over HTTP) a wake-up would wait in the broker for ever, so none is sent (``dispatch.py``); the reaper sends
the queued jobs' wake-ups once one reports in (``reaper.py``)."""

from __future__ import annotations

import threading
import time

from wakeyard.core.store import Store

FRESH_SECONDS = 1.0  # an answer is reused this long: a burst of creations asks the database once


class Listeners:
    def __init__(self, store: Store, within: float):
        self.store, self.within = store, within
        self.lock = threading.Lock()
        self.count, self.asked = 0, -float("inf")

    def __call__(self) -> int:
        """Broker worker processes that reported in within ``within`` seconds (the lease)."""
        with self.lock:
            if time.monotonic() - self.asked >= FRESH_SECONDS:
                self.count = self.store.workers_seen(within=self.within, broker_only=True)
                self.asked = time.monotonic()
            return self.count
