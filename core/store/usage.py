"""Disk use: the bytes each job's folder takes (measured by the disk sweep) and which jobs the retention rule trims.

A finished job's size is measured once (``finish`` clears it, the sweep fills it in); a running job's is measured at
every sweep, so an owner's total grows while its jobs write.
"""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import bindparam, case, func, or_, select, update

from ..states import FINISHED, JobState
from .base import Repository, changed
from .models import Job
from .values import utcnow

_USE = select(func.coalesce(func.sum(Job.disk_bytes), 0)).where(Job.owner == bindparam("owner"))


class Usage(Repository):
    def to_measure(self, limit: int = 1000) -> list[str]:
        """Jobs whose folder may have changed since it was last measured: running ones, and finished or reused
        ones not measured since, at most ``limit`` (a store upgraded with many jobs is measured over several
        sweeps, so the lease checks beside them never wait long)."""
        unmeasured = (Job.state.in_(FINISHED)) & Job.disk_bytes.is_(None)
        running_first = case((Job.state == JobState.RUNNING, 0), else_=1)
        q = (
            select(Job.id)
            .where(or_(Job.state == JobState.RUNNING, unmeasured))
            .order_by(running_first, Job.seq.desc())
            .limit(limit)
        )
        with self.engine.connect() as conn:
            return list(conn.scalars(q))

    def record_sizes(self, sizes: dict[str, int]) -> None:
        if not sizes:
            return
        with self.session.begin() as s:
            for job_id, size in sizes.items():
                s.execute(update(Job).where(Job.id == job_id).values(disk_bytes=size))

    def disk_use(self, owner: str) -> int:
        """Bytes of result files ``owner``'s jobs take, as last measured."""
        with self.single.connect() as conn:
            used: int | None = conn.scalar(_USE, {"owner": owner})
            return 0 if used is None else int(used)

    def disk_use_by_owner(self) -> dict[str, int]:
        q = select(Job.owner, func.coalesce(func.sum(Job.disk_bytes), 0)).group_by(Job.owner)
        with self.engine.connect() as conn:
            return {owner: 0 if n is None else int(n) for owner, n in conn.execute(q)}

    def to_trim(self, finished_before: datetime, limit: int = 500) -> list[str]:
        """Finished jobs older than the retention time whose fields are still there, oldest first."""
        q = (
            select(Job.id)
            .where(Job.state.in_(FINISHED), Job.finished_at < finished_before, Job.trimmed_at.is_(None))
            .order_by(Job.seq)
            .limit(limit)
        )
        with self.engine.connect() as conn:
            return list(conn.scalars(q))

    def mark_trimmed(self, job_id: str) -> bool:
        """Record the trim before any file goes, so no new job reuses the result from then on (``find_result``);
        False if the job is no longer a finished one (deleted, or re-run)."""
        with self.session.begin() as s:
            done = s.execute(
                update(Job)
                .where(Job.id == job_id, Job.state.in_(FINISHED), Job.trimmed_at.is_(None))
                .values(trimmed_at=utcnow(), disk_bytes=None)
            )
            return changed(done) == 1
