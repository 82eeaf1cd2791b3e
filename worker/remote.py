"""A worker process on another box (``wakeyard worker --url URL``): it reaches only the service's worker endpoints,
never the database or the service's data folder.

It polls for a job, fetches the checkpoint an earlier attempt uploaded (so a job whose box vanished resumes where
that box's last upload left it), runs the job with the same :class:`~wakeyard.worker.attempt.Attempt` as the
service's own workers, uploads each checkpoint as it is written and every result file at the end, then reports
the outcome. Started by the supervisor (``python -m wakeyard.worker.remote``), one job at a time per process.
"""

from __future__ import annotations

import logging
import math
import os
import shutil
import signal
import socket
import sys
import threading
from pathlib import Path
from types import FrameType
from typing import Any

import numpy as np

from wakeyard.core.settings import Settings
from wakeyard.core.states import JobState
from wakeyard.core.store import Claimed
from wakeyard.solver.restart import FLOW_CHECKPOINT, RESTART_FILES

from .attempt import Attempt
from .pulse import Pulse
from .service_client import LeaseLost, Refused, ServiceClient, Stopped

log = logging.getLogger("wakeyard.remote")

URL_VARIABLE = "WAKEYARD_SERVICE_URL"
TOKEN_VARIABLE = "WAKEYARD_WORKER_TOKEN"
POLL_VARIABLE = "WAKEYARD_POLL_SECONDS"
STAGING = ".staging"  # copies of a checkpoint waiting to be uploaded (hidden: never a result file)

SHUTDOWN = threading.Event()  # SIGTERM: the job stops at its next step (or download block) and is handed back


class Uploader:
    """Sends one job's files: the newest checkpoint in a thread while the solver goes on, the results at the end.

    A checkpoint's field snapshots go first and its restart files last, so the service never holds a checkpoint
    whose snapshots it lacks. A file already sent unchanged is not sent again."""

    def __init__(self, client: ServiceClient, job: Claimed, out: Path):
        self.client, self.job, self.out = client, job, out
        self.sent: dict[str, tuple[int, int]] = {}  # path -> (size, mtime_ns) as sent
        self.pending: tuple[int, list[tuple[Path, str]]] | None = None
        self.lock = threading.Lock()  # guards ``pending`` between the solver's thread and the upload thread
        self.wake, self.closed = threading.Event(), False
        self.thread = threading.Thread(target=self._loop, name=f"upload-{job.id}", daemon=True)
        self.thread.start()

    def checkpoint(self, step: int) -> None:
        """Called by the solver right after checkpoint ``step``: keep its restart files (hard links, so no copying
        stalls the solver: it replaces them by renaming at the next checkpoint), list its finished snapshots, and
        leave both to the upload thread."""
        stage = self.out / STAGING / f"{step:09d}"
        stage.mkdir(parents=True, exist_ok=True)
        restart = []
        for name in RESTART_FILES:
            if (self.out / name).exists():
                try:
                    os.link(self.out / name, stage / name)
                except OSError:  # a file system without hard links
                    shutil.copy2(self.out / name, stage / name)
                restart.append((stage / name, name))
        snapshots = [(p, f"fields/{p.name}") for p in sorted((self.out / "fields").glob("step_*.*"))]
        done = [(p, r) for p, r in snapshots if _step_of(p) <= step and p.suffix in (".npz", ".vtu")]
        with self.lock:
            old, self.pending = self.pending, (step, done + restart)
        if old is not None:  # never sent: the newer checkpoint replaces it
            shutil.rmtree(self.out / STAGING / f"{old[0]:09d}", ignore_errors=True)
        self.wake.set()

    def _loop(self) -> None:
        while True:
            self.wake.wait()
            self.wake.clear()
            if self.closed:
                return
            with self.lock:
                work, self.pending = self.pending, None
            if work is None:
                continue
            step, files = work
            try:
                for local, remote in files:
                    self._send(local, remote)
                log.info("job %s: checkpoint of step %d uploaded", self.job.id, step)
            except LeaseLost:
                log.warning("job %s: lease lost while uploading its checkpoint", self.job.id)
            except Exception:  # the next checkpoint tries again; the lease keeps the job safe meanwhile
                log.exception("job %s: could not upload the checkpoint of step %d", self.job.id, step)
            finally:
                shutil.rmtree(self.out / STAGING / f"{step:09d}", ignore_errors=True)

    def close(self) -> None:
        """Stop the checkpoint thread (a checkpoint being sent is finished first)."""
        self.closed = True
        self.wake.set()
        self.thread.join()

    def _send(self, local: Path, remote: str) -> None:
        stat = local.stat()
        mark = (stat.st_size, stat.st_mtime_ns)
        if self.sent.get(remote) == mark:
            return
        self.client.upload(self.job.id, self.job.claim, local, remote)
        self.sent[remote] = mark

    def results(self) -> None:
        """Every result file of the finished run that was not sent unchanged before."""
        self.close()
        for path in sorted(self.out.rglob("*")):
            rel = path.relative_to(self.out)
            if path.is_file() and not any(part.startswith(".") for part in rel.parts) and rel.name not in RESTART_FILES:
                self._send(path, rel.as_posix())


class RemoteLedger:
    """The :class:`~wakeyard.worker.attempt.Ledger` of a remote worker: the service's worker endpoints. The result
    files are uploaded before the outcome is reported; results the service refuses (its upload limits) fail the
    job, saying why, instead of leaving it to the lease and to another box that would be refused the same."""

    def __init__(self, client: ServiceClient, uploader: Uploader):
        self.client, self.uploader = client, uploader

    def heartbeat(self, job_id: str, claim: str, values: dict[str, Any]) -> tuple[bool, bool]:
        return self.client.heartbeat(job_id, claim, _progress(values))

    def finish(
        self,
        job_id: str,
        claim: str,
        state: JobState | str,
        summary: dict[str, Any] | None = None,
        error: str | None = None,
        progress: dict[str, Any] | None = None,
    ) -> bool:
        try:
            try:
                self.uploader.results()
            except Refused as refused:  # over the service's upload limits: sending again would be refused again
                state, summary, error = JobState.FAILED, None, f"the result files could not be uploaded: {refused}"
            outcome = {"state": str(state), "summary": summary, "error": error, "progress": _progress(progress or {})}
            self.client.finish(job_id, claim, outcome)
        except LeaseLost:
            return False
        return True

    def release(self, job_id: str, claim: str) -> bool:
        self.uploader.close()
        try:
            self.client.release(job_id, claim)
        except LeaseLost:
            return False
        return True


def _progress(values: dict[str, Any]) -> dict[str, Any] | None:
    """The attempt's progress as the service takes it: within its bounds, so that a heartbeat is never refused
    for an odd value (a refused heartbeat would let the lease run out)."""
    if not values:
        return None

    def number(key: str) -> float | None:
        value = values.get(key)
        return float(value) if value is not None and math.isfinite(value) else None

    eta = number("eta_seconds")
    return {
        "fraction": min(1.0, max(0.0, number("progress_fraction") or 0.0)),
        "step": min(2**31 - 1, max(0, int(values.get("progress_step") or 0))),
        "time": number("progress_time") or 0.0,
        "eta_seconds": eta if eta is not None and eta >= 0 else None,
    }


def prepare(client: ServiceClient, job: Claimed, files: list[dict[str, Any]], out: Path) -> int | None:
    """A clean job folder holding the checkpoint an earlier attempt uploaded, with its field snapshots; returns
    the checkpoint's step, or None when the job starts from the beginning. Raises :class:`Stopped` when SIGTERM
    comes during a download (the rest of the checkpoint is not waited for)."""
    shutil.rmtree(out, ignore_errors=True)  # what this box may have left of an earlier attempt is not the service's
    out.mkdir(parents=True)
    uploaded = {f["path"]: f for f in files}
    if FLOW_CHECKPOINT not in uploaded:
        return None
    for name in RESTART_FILES:
        if name in uploaded:
            client.download(job.id, job.claim, name, out / name, uploaded[name]["sha256"], SHUTDOWN)
    with np.load(out / FLOW_CHECKPOINT, allow_pickle=False) as ck:
        snapshots = [int(k) for k in ck["snapshots"]]
        step = int(ck["step"])
    for k in snapshots:
        name = f"fields/step_{k:06d}.npz"
        if name in uploaded:
            client.download(job.id, job.claim, name, out / name, uploaded[name]["sha256"], SHUTDOWN)
    return step


def fetch(client: ServiceClient, job: Claimed, files: list[dict[str, Any]], out: Path, every: float) -> int | None:
    """:func:`prepare` with heartbeats every ``every`` seconds: a large checkpoint on a slow link can take longer
    than the lease, and a job whose heartbeats stop is handed to another box."""

    def beat() -> None:
        try:
            held, _ = client.heartbeat(job.id, job.claim, None)
        except Exception:  # a hiccup: the next beat tries again, the lease decides
            log.exception("job %s: heartbeat failed while fetching its checkpoint", job.id)
            return
        if not held:  # the next download is refused (LeaseLost)
            log.warning("job %s: lease lost while fetching its checkpoint", job.id)

    with Pulse(beat, every, f"fetch-{job.id}"):
        return prepare(client, job, files, out)


def run_one(client: ServiceClient, settings: Settings, name: str) -> bool:
    """Claim and run one job; False when none was waiting."""
    claimed = client.claim(name)
    if claimed is None:
        return False
    job = Claimed(claimed["job_id"], claimed["lease"], claimed["spec"], claimed["attempts"])
    out = settings.jobs_dir / job.id
    try:
        step = fetch(client, job, claimed["files"], out, claimed["heartbeat_seconds"])
    except LeaseLost:
        log.warning("job %s: lease lost while fetching its checkpoint", job.id)
        return True
    except Stopped:  # hand it back now: another box can take it at once instead of after the lease
        client.release(job.id, job.claim)
        log.warning("job %s handed back to the queue: this worker stopped while fetching its checkpoint", job.id)
        return True
    except Exception:  # its checkpoint could not be fetched: another box (or a later try) may do better
        log.exception("job %s: could not fetch its checkpoint; handing it back", job.id)
        client.release(job.id, job.claim)
        return True
    if step is None:
        log.info("job %s (attempt %d): starting", job.id, job.attempts)
    else:
        log.info("job %s (attempt %d): resuming from the uploaded checkpoint of step %d", job.id, job.attempts, step)
    uploader = Uploader(client, job, out)
    rules = settings.model_copy(  # the service's, as its own workers have them
        update={"heartbeat_seconds": claimed["heartbeat_seconds"], "max_wall_time": claimed["max_wall_time"]}
    )
    try:
        Attempt(RemoteLedger(client, uploader), rules, job, SHUTDOWN, out, uploader.checkpoint).run()
    finally:
        uploader.close()
    log.info("job %s: done here", job.id)
    return True


def _step_of(path: Path) -> int:
    try:
        return int(path.stem.removeprefix("step_"))
    except ValueError:
        return -1


def main() -> None:
    """One remote worker process: poll, run, repeat, until SIGTERM (a running job is handed back first)."""
    from .child import die_with_parent

    die_with_parent(int(os.environ["WAKEYARD_SUPERVISOR_PID"]))
    from wakeyard.core.blas import one_blas_thread

    one_blas_thread()
    logging.basicConfig(level=logging.WARNING, format="%(asctime)s %(name)s %(levelname)s: %(message)s")
    log.setLevel(logging.INFO)  # what this worker does with its jobs; the libraries only when they warn
    settings = Settings()
    poll = float(os.environ.get(POLL_VARIABLE, "1.0"))
    client = ServiceClient(os.environ[URL_VARIABLE], os.environ[TOKEN_VARIABLE])
    name = f"{socket.gethostname()}:{os.getpid()}"

    def stop(sig: int, _: FrameType | None) -> None:
        SHUTDOWN.set()

    signal.signal(signal.SIGTERM, stop)
    signal.signal(signal.SIGINT, signal.SIG_IGN)  # the supervisor stops this process
    log.info("remote worker %s polling %s", name, os.environ[URL_VARIABLE])
    while not SHUTDOWN.is_set():
        try:
            busy = run_one(client, settings, name)
        except Exception:  # the service is unreachable or refused: wait, then try again
            log.exception("could not get a job from %s", os.environ[URL_VARIABLE])
            busy = False
        if not busy:
            SHUTDOWN.wait(poll)
    client.close()
    sys.stdout.flush()
    os._exit(0)


if __name__ == "__main__":
    main()
