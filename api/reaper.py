"""The lease: re-queue jobs whose worker went silent, re-send wake-ups that a broker may have lost (or that were
not sent while no worker consumed the queue, ``listeners.py``), prune the
embedded broker's delivered messages, restore the disk reserve, run the disk sweep (``api.disk_sweep``). Runs in a
thread of every API process, but does its work only in the one that holds the service's lead (``core.lead``)."""

from __future__ import annotations

import logging
import os
import threading
import time
from collections.abc import Callable
from datetime import datetime, timedelta

from sqlalchemy import create_engine, text
from sqlalchemy.exc import OperationalError

from wakeyard.core.disk import DiskReserve
from wakeyard.core.lead import Lead
from wakeyard.core.settings import Settings
from wakeyard.core.states import JobState
from wakeyard.core.store import Store

from .disk_sweep import DiskSweep

log = logging.getLogger(__name__)


class Reaper:
    def __init__(
        self,
        settings: Settings,
        store: Store,
        dispatch: Callable[[str], None],
        reserve: DiskReserve,
        listeners: Callable[[], int],
    ):
        self.settings, self.store, self.dispatch, self.reserve = settings, store, dispatch, reserve
        self.listeners, self.heard = listeners, False  # heard: a worker consumed the queue at the last step
        self.stop = threading.Event()
        self.thread = threading.Thread(target=self._loop, name="wakeyard-reaper", daemon=True)
        embedded = settings.celery_broker.startswith("sqla+")
        self.broker_db = create_engine(settings.celery_broker.removeprefix("sqla+")) if embedded else None
        self.lead = Lead(settings.db_url, settings.data_dir)
        self.sweep, self.swept = DiskSweep(settings, store), -float("inf")

    @property
    def leading(self) -> bool:
        return self.lead.held

    def start(self) -> None:
        self.thread.start()

    def close(self) -> None:
        self.stop.set()
        self.thread.join(timeout=10)
        self.lead.close()
        if self.broker_db is not None:
            self.broker_db.dispose()

    def _loop(self) -> None:
        wait = 0.0  # the first try at once: a lone API process leads from its start
        while not self.stop.wait(wait):
            wait = self.settings.reaper_seconds
            try:
                self.step()
            except Exception:  # keep the lease alive through database or broker trouble
                log.exception("lease check failed")

    def step(self) -> None:
        """Take or keep the lead; the lead's work when it is ours."""
        was = self.lead.held
        if not self.lead.hold():
            return
        if not was:
            log.info("this API process (pid %d) leads: it runs the lease reaper and the disk sweep", os.getpid())
        heard = self.listeners() > 0
        if heard and not (was and self.heard):  # lost while no one led, or not sent while no worker listened
            for job_id in self.store.queued_ids():
                self.dispatch(job_id)
        self.heard = heard
        self.tick()
        if time.monotonic() - self.swept >= self.settings.disk_sweep_seconds:
            self.swept = time.monotonic()
            self.sweep.run()

    def tick(self) -> None:
        self.reserve.ensure()  # back once space has been freed
        for job_id in self.store.expire_leases(self.settings.lease_seconds, self.settings.max_attempts):
            log.warning("job %s lost its worker: re-queued", job_id)
            self.dispatch(job_id)
        counts = self.store.counts()
        if counts.get(JobState.QUEUED) and not counts.get(
            JobState.RUNNING
        ):  # idle with work waiting: wake-ups were lost
            for job_id in self.store.queued_ids()[: self.wake_ups()]:
                self.dispatch(job_id)
        self._prune()

    def wake_ups(self) -> int:
        """How many lost wake-ups to re-send: one per worker process that consumes the queue, this host's
        (``workers``) or any seen within the lease; remote workers claim over HTTP and need none."""
        return max(self.settings.workers, self.listeners())

    def _prune(self) -> None:
        """The SQLAlchemy transport keeps delivered messages forever; drop those older than an hour."""
        if self.broker_db is None:
            return
        cutoff = datetime.now() - timedelta(hours=1)  # the transport stores local naive times
        try:
            with self.broker_db.begin() as conn:
                conn.execute(
                    text("DELETE FROM kombu_message WHERE visible = 0 AND timestamp < :cutoff"), {"cutoff": cutoff}
                )
        except OperationalError:  # no message table until the first message is sent
            log.debug("no broker table to prune yet")
