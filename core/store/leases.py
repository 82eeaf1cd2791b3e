"""The worker side: claims, heartbeats, outcomes, hand-backs, the lease that re-queues silent workers' jobs, and
the worker processes' liveness.

A claimed row carries a random ``claim`` fencing token: duplicate broker deliveries, a re-queued job whose old
worker is still alive, and concurrent API calls never overwrite each other.
"""

from __future__ import annotations

import secrets
from dataclasses import dataclass
from datetime import timedelta
from typing import Any

from sqlalchemy import case, delete, func, select, update

from ..states import JobState
from .base import Repository, changed
from .models import Job, WorkerSeen
from .values import utcnow

# A job handed back by a stopping worker: queued again, the interrupted attempt not counted.
_RELEASED: dict[str, Any] = {
    "state": JobState.QUEUED,
    "claim": None,
    "eta_seconds": None,
    "attempts": case((Job.attempts > 0, Job.attempts - 1), else_=0),
}


# A remote worker (``wakeyard worker --url``) is known as TOKEN/box:pid, a broker's (Celery) worker as host:pid; a
# token's name has no "/" (``settings.TOKEN_NAME``) and neither has a host name.
REMOTE_MARK = "/"


def remote_worker(token: str, process: str) -> str:
    """The name a remote worker process is known by: its token's name and its own (box:pid)."""
    return f"{token}{REMOTE_MARK}{process}"


@dataclass
class Claimed:
    id: str
    claim: str
    spec: dict[str, Any]
    attempts: int


class Leases(Repository):
    def claim_next(self, host: str, tries: int = 8) -> Claimed | None:
        """Claim the next job (fair share: oldest job of the owner with the fewest running) by compare-and-set."""
        running = (
            select(Job.owner, func.count().label("n"))
            .where(Job.state == JobState.RUNNING)
            .group_by(Job.owner)
            .subquery()
        )
        pick = (
            select(Job.id)
            .outerjoin(running, running.c.owner == Job.owner)
            .where(Job.state == JobState.QUEUED)
            .order_by(func.coalesce(running.c.n, 0), Job.seq)
            .limit(1)
        )
        for _ in range(tries):
            with self.session.begin() as s:
                job_id = s.scalar(pick)
                if job_id is None:
                    return None
                claim, now = secrets.token_hex(16), utcnow()
                won = changed(
                    s.execute(
                        update(Job)
                        .where(Job.id == job_id, Job.state == JobState.QUEUED)
                        .values(
                            state=JobState.RUNNING,
                            claim=claim,
                            attempts=Job.attempts + 1,
                            worker_host=host,
                            started_at=func.coalesce(Job.started_at, now),
                            heartbeat_at=now,
                            eta_seconds=None,
                        )
                    )
                )
                if won:
                    job = s.scalar(select(Job).where(Job.id == job_id))
                    assert job is not None  # claimed in this transaction
                    return Claimed(job.id, claim, job.spec, job.attempts)
        return None

    def heartbeat(self, job_id: str, claim: str, values: dict[str, Any]) -> tuple[bool, bool]:
        """Record progress; returns (still ours, cancel requested)."""
        with self.session.begin() as s:
            ours = (
                changed(
                    s.execute(
                        update(Job)
                        .where(Job.id == job_id, Job.claim == claim, Job.state == JobState.RUNNING)
                        .values(heartbeat_at=utcnow(), **values)
                    )
                )
                == 1
            )
            cancel = bool(s.scalar(select(Job.cancel_requested).where(Job.id == job_id)))
            return ours, cancel

    def lease_held(self, job_id: str, claim: str) -> bool:
        """The job is running under this claim (a remote worker's upload or download is its holder's)."""
        with self.session() as s:
            found = s.scalar(
                select(func.count()).where(Job.id == job_id, Job.claim == claim, Job.state == JobState.RUNNING)
            )
            return bool(found)

    def finish(
        self,
        job_id: str,
        claim: str,
        state: JobState | str,
        summary: dict[str, Any] | None = None,
        error: str | None = None,
        progress: dict[str, Any] | None = None,
    ) -> bool:
        values: dict[str, Any] = {
            **(progress or {}),
            "state": JobState(state),
            "finished_at": utcnow(),
            "summary": summary,
            "error": error,
            "eta_seconds": None,
            "disk_bytes": None,  # its folder's final size: the next disk sweep measures it
        }
        with self.session.begin() as s:
            mine = (Job.id == job_id, Job.claim == claim, Job.state == JobState.RUNNING)
            return changed(s.execute(update(Job).where(*mine).values(**values))) == 1

    def release(self, job_id: str, claim: str) -> bool:
        """Hand a job back to the queue because its worker is shutting down (not the job's fault: the attempt is
        not counted); it resumes from its last checkpoint."""
        with self.session.begin() as s:
            mine = (Job.id == job_id, Job.claim == claim, Job.state == JobState.RUNNING)
            return changed(s.execute(update(Job).where(*mine).values(**_RELEASED))) == 1

    def release_hosts(self, hosts: list[str]) -> list[str]:
        """After a supervisor stopped its worker processes (``host:pid`` names): re-queue the jobs they still held,
        or finish them as cancelled when a cancel was requested. Returns the re-queued ids."""
        if not hosts:
            return []
        running = (Job.state == JobState.RUNNING, Job.worker_host.in_(hosts))
        with self.session.begin() as s:
            s.execute(
                update(Job)
                .where(*running, Job.cancel_requested.is_(True))
                .values(state=JobState.CANCELLED, finished_at=utcnow(), error="cancelled (its worker was stopped)")
            )
            ids = list(s.scalars(select(Job.id).where(*running)))
            s.execute(update(Job).where(Job.id.in_(ids), Job.state == JobState.RUNNING).values(**_RELEASED))
        return ids

    def expire_leases(self, lease_seconds: float, max_attempts: int) -> list[str]:
        """Re-queue running jobs whose heartbeat stopped; give up after ``max_attempts``. Returns re-queued ids."""
        cutoff = utcnow() - timedelta(seconds=lease_seconds)
        requeued = []
        with self.session() as s:
            stale = s.execute(
                select(Job.id, Job.claim, Job.attempts, Job.worker_host, Job.cancel_requested).where(
                    Job.state == JobState.RUNNING, Job.heartbeat_at < cutoff
                )
            ).all()
        for job_id, claim, attempts, host, cancel in stale:
            lost = f"the worker on {host} stopped sending heartbeats for over {lease_seconds:g} s"
            values: dict[str, Any]
            if cancel:
                values = {"state": JobState.CANCELLED, "finished_at": utcnow(), "error": f"cancelled ({lost})"}
            elif attempts >= max_attempts:
                values = {
                    "state": JobState.FAILED,
                    "finished_at": utcnow(),
                    "error": f"gave up after {attempts} attempts: {lost}",
                }
            else:
                values = {"state": JobState.QUEUED, "claim": None, "eta_seconds": None}
            with self.session.begin() as s:
                mine = (Job.id == job_id, Job.claim == claim, Job.state == JobState.RUNNING)
                won = changed(s.execute(update(Job).where(*mine).values(**values)))
            if won and values["state"] == JobState.QUEUED:
                requeued.append(job_id)
        return requeued

    # --- worker processes' liveness (for health and the lease's wake-ups) --------------------------------
    def worker_alive(self, name: str) -> None:
        with self.session.begin() as s:
            if not changed(s.execute(update(WorkerSeen).where(WorkerSeen.name == name).values(seen_at=utcnow()))):
                s.add(WorkerSeen(name=name, seen_at=utcnow()))

    def worker_gone(self, name: str) -> None:
        """A worker process that stops says so, so health does not count it until the lease runs out."""
        with self.session.begin() as s:
            s.execute(delete(WorkerSeen).where(WorkerSeen.name == name))

    def workers_seen(self, within: float, host: str | None = None, broker_only: bool = False) -> int:
        """Worker processes (of ``host``, or anywhere) that reported in within the last ``within`` seconds;
        ``broker_only``: only those that take wake-ups from the broker, not remote workers claiming over HTTP."""
        q = select(func.count()).where(WorkerSeen.seen_at >= utcnow() - timedelta(seconds=within))
        if host is not None:
            q = q.where(WorkerSeen.name.startswith(f"{host}:", autoescape=True))
        if broker_only:
            q = q.where(WorkerSeen.name.not_like(f"%{REMOTE_MARK}%"))
        with self.session() as s:
            return s.scalar(q) or 0
