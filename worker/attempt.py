"""One attempt at one job: the solver in this thread, heartbeat and cancel polling in another, the outcome recorded
through a :class:`Ledger`: the job store itself (a worker of the service's box) or the service's worker endpoints
(``wakeyard worker --url`` on another box)."""

from __future__ import annotations

import logging
import threading
import time
from collections.abc import Callable
from pathlib import Path
from typing import Any, Protocol

from wakeyard import solver
from wakeyard.core.disk import DiskReserve, disk_full
from wakeyard.core.settings import Settings
from wakeyard.core.states import JobState
from wakeyard.core.store import Claimed, finite

from .pulse import Pulse

log = logging.getLogger(__name__)


class Ledger(Protocol):
    """Where a claimed job's heartbeats and outcome go; every call is fenced by the claim."""

    def heartbeat(self, job_id: str, claim: str, values: dict[str, Any]) -> tuple[bool, bool]: ...

    def finish(
        self,
        job_id: str,
        claim: str,
        state: JobState | str,
        summary: dict[str, Any] | None = None,
        error: str | None = None,
        progress: dict[str, Any] | None = None,
    ) -> bool: ...

    def release(self, job_id: str, claim: str) -> bool: ...


class Attempt:
    def __init__(
        self,
        ledger: Ledger,
        settings: Settings,
        job: Claimed,
        shutdown: threading.Event,
        out: Path | None = None,
        on_checkpoint: Callable[[int], None] | None = None,
    ):
        self.ledger, self.settings, self.job, self.shutdown = ledger, settings, job, shutdown
        self.out = out or settings.jobs_dir / job.id
        self.on_checkpoint = on_checkpoint
        self.latest: solver.Progress | None = None
        self.first: tuple[float, float] | None = None
        self.stop = threading.Event()
        self.finishing = threading.Event()  # the outcome is being recorded: a lease that ends now ended by it
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
            ours, cancel = self.ledger.heartbeat(self.job.id, self.job.claim, values)
        except Exception:  # keep computing through a database or network hiccup; the lease decides
            log.exception("heartbeat of %s failed", self.job.id)
            return
        if not ours and self.finishing.is_set():
            return
        if not ours:
            log.warning("job %s is no longer ours (lease expired): stopping", self.job.id)
            self.lost = True
        if cancel or not ours:
            self.stop.set()

    def _should_stop(self) -> bool:
        return self.stop.is_set() or self.shutdown.is_set()

    def run(self) -> None:
        """Run the job and record its outcome; heartbeats go on until it is recorded (a remote worker uploads its
        result files first, which may take a while)."""
        with Pulse(self.beat, self.settings.heartbeat_seconds, f"heartbeat-{self.job.id}"):
            self._run()

    def _run(self) -> None:
        summary = None
        try:
            summary = solver.run(
                self.job.spec,
                self.out,
                progress=self.progress,
                should_stop=self._should_stop,
                wall_time_limit=self.settings.max_wall_time,
                resume=True,
                on_checkpoint=self.on_checkpoint,
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
        if self.lost:
            return
        self.finishing.set()
        if state == JobState.CANCELLED and not self.stop.is_set():  # stopped by SIGTERM, not by a cancel request
            if self.ledger.release(self.job.id, self.job.claim):
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
            lambda: self.ledger.finish(self.job.id, self.job.claim, state, finite(summary), error, finite(progress))
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
