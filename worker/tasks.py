"""The one task: claim the next job in the store, run it with the solver, record how it ended."""

from __future__ import annotations

import logging
import os
import socket
import threading
import time
from functools import cache
from typing import Any

from celery import shared_task
from sqlalchemy.exc import SQLAlchemyError

from wakeyard import solver
from wakeyard.core.broker import TASK
from wakeyard.core.disk import DiskReserve, disk_full
from wakeyard.core.settings import Settings
from wakeyard.core.states import JobState
from wakeyard.core.store import Claimed, Store, finite

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
        _Attempt(_store(), _settings(), job).run()
        return job.id
    finally:
        BUSY.clear()


class _Attempt:
    """One attempt at one job: the solver in this thread, heartbeat and cancel polling in another."""

    def __init__(self, store: Store, settings: Settings, job: Claimed):
        self.store, self.settings, self.job = store, settings, job
        self.latest: solver.Progress | None = None
        self.first: tuple[float, float] | None = None
        self.stop = threading.Event()
        self.done = threading.Event()
        self.lost = False

    def progress(self, p: solver.Progress) -> None:
        if self.first is None:
            self.first = (time.monotonic(), p.fraction)
        self.latest = p

    def _eta(self, p: solver.Progress) -> float | None:
        if self.first is None or p.fraction <= self.first[1]:
            return None
        t0, f0 = self.first
        return (time.monotonic() - t0) * (1.0 - p.fraction) / (p.fraction - f0)

    def _values(self) -> dict[str, Any]:
        p = self.latest
        return (
            {}
            if p is None
            else {
                "progress_fraction": p.fraction,
                "progress_step": p.step,
                "progress_time": p.time,
                "eta_seconds": self._eta(p),
            }
        )

    def beat(self) -> None:
        values = self._values()
        try:
            ours, cancel = self.store.heartbeat(self.job.id, self.job.claim, values)
        except SQLAlchemyError:  # keep computing through a database hiccup; the lease decides
            log.exception("heartbeat of %s failed", self.job.id)
            return
        if not ours:
            log.warning("job %s is no longer ours (lease expired): stopping", self.job.id)
            self.lost = True
        if cancel or not ours:
            self.stop.set()

    def _should_stop(self) -> bool:
        return self.stop.is_set() or SHUTDOWN.is_set()

    def _beat_loop(self) -> None:
        while not self.done.wait(self.settings.heartbeat_seconds):
            self.beat()

    def run(self) -> None:
        out = self.settings.jobs_dir / self.job.id
        beater = threading.Thread(target=self._beat_loop, name=f"heartbeat-{self.job.id}", daemon=True)
        beater.start()
        summary = None
        try:
            summary = solver.run(
                self.job.spec,
                out,
                progress=self.progress,
                should_stop=self._should_stop,
                wall_time_limit=self.settings.max_wall_time,
                resume=True,
            )
            state, error = JobState.SUCCEEDED, None
        except solver.Cancelled as err:
            state, error = JobState.CANCELLED, str(err)
        except solver.InternalError as err:  # the message names the stage; the log keeps the traceback
            log.exception("job %s failed in %s", self.job.id, err.stage)
            state, error = JobState.FAILED, str(err)
        except (solver.RunFailed, solver.SpecError) as err:
            state, error = JobState.FAILED, str(err)
        except Exception as err:  # record every failure: a job must never stay "running" silently
            state, error = JobState.FAILED, _unexpected(self.job.id, err)
        finally:
            self.done.set()
            beater.join()
        if self.lost:
            return
        if state == JobState.CANCELLED and not self.stop.is_set():  # stopped by SIGTERM, not by a cancel request
            if self.store.release(self.job.id, self.job.claim):
                log.warning("job %s handed back to the queue: this worker is stopping", self.job.id)
            return
        progress = self._values()
        if summary is not None:  # the last progress report can be half a second old
            progress.update(
                progress_fraction=1.0,
                progress_step=summary.get("steps", progress.get("progress_step", 0)),
                progress_time=summary.get("simulated_time", progress.get("progress_time", 0.0)),
            )
        reserve = DiskReserve(self.settings.data_dir)  # a full disk must not keep the job "running"
        if not reserve.retry(
            lambda: self.store.finish(self.job.id, self.job.claim, state, finite(summary), error, finite(progress))
        ):
            log.warning("job %s changed hands before it finished; its outcome %s is not recorded", self.job.id, state)


def _unexpected(job_id: str, err: Exception) -> str:
    """The error recorded for a failure the solver did not raise on purpose."""
    if disk_full(err):
        log.error("job %s failed: the disk is full (%s)", job_id, err)
        return (
            f"the results could not be written: the data folder's disk is full ({err}); free space (delete "
            "jobs no longer needed), then run the job again"
        )
    log.exception("job %s crashed", job_id)
    return f"the worker failed: {type(err).__name__}: {err}"
