"""Jobs: creation (queued, or succeeded at once by reusing a result), reads, lists, cancel and delete.

Every state change is a compare-and-set ``UPDATE ... WHERE state = ...`` so that concurrent API calls and workers
never overwrite each other. The per-user cap is a unique index: a capped queued job takes a free slot number below
the cap, and an owner's queued and running jobs hold distinct slots (``ux_jobs_owner_slot``), so concurrent
creations never take an owner over the cap, yet wait for each other only when two pick the same slot. A job frees
its slot by leaving those states, whichever way it leaves (finish, failure, cancel, the reaper) or by its deletion.
"""

from __future__ import annotations

import asyncio
import random
import uuid
from dataclasses import dataclass
from typing import Any, cast

from sqlalchemy import Table, bindparam, delete, func, insert, select, update
from sqlalchemy.dialects import postgresql, sqlite
from sqlalchemy.engine import Connection, Row
from sqlalchemy.sql.dml import ReturningInsert

from ..states import ACTIVE, JobState
from .base import Repository, changed
from .models import HOLDS_SLOT, Job, JobTag
from .values import utcnow


@dataclass
class Provenance:
    """Where a new job comes from: its spec's hash, the succeeded job it reuses (if any), its study point."""

    spec_hash: str
    title: str
    source: Row[Any] | None = None  # a row of the jobs table
    study_id: str | None = None
    study_values: dict[str, float] | None = None


# Statements built once (their SQL is compiled and cached once too) for the per-request look-ups.
JOBS = cast(Table, Job.__table__)  # declared as a FromClause; a mapped class's table is a Table
_READ = select(JOBS).where(JOBS.c.id == bindparam("job_id"))
_RESULT = (
    select(JOBS)
    .where(
        Job.spec_hash == bindparam("spec_hash"),
        Job.state == JobState.SUCCEEDED,
        Job.reused_from.is_(None),
        Job.trimmed_at.is_(None),  # its fields are gone: run the case again rather than hand out a partial result
    )
    .order_by(Job.seq.desc())
    .limit(1)
)
_ACTIVE = select(func.count()).where(Job.owner == bindparam("owner"), Job.state.in_(ACTIVE))
_SLOTS = select(JOBS.c.slot).where(JOBS.c.owner == bindparam("owner"), HOLDS_SLOT)  # from the unique index alone
_HELD = select(func.count()).select_from(JOBS).where(JOBS.c.owner == bindparam("owner"), HOLDS_SLOT)
# a creation that keeps meeting others on the slots it picks gives up (each such meeting is another job created)
SLOT_TRIES = 64
FEW_SLOTS = 256  # a cap up to this many: a miss reads the held slots at once
# the operating system's randomness: the same in no two processes (a forked copy of a generator would pick the
# same slots as its parent), and never made repeatable by seeding the global generator (as test tools do)
PICK = random.SystemRandom()


def _into_free_slot(new: postgresql.Insert | sqlite.Insert) -> ReturningInsert[Any]:
    """INSERT that does nothing if the owner's slot is held (waiting, if its holder has not committed yet, to see
    whether it does), returning the new job's key if it was inserted."""
    return new.on_conflict_do_nothing(index_elements=[JOBS.c.owner, JOBS.c.slot], index_where=HOLDS_SLOT).returning(
        JOBS.c.seq
    )


_INTO_FREE_SLOT = {
    "postgresql": _into_free_slot(postgresql.insert(JOBS)),
    "sqlite": _into_free_slot(sqlite.insert(JOBS)),
}


class OverCap(Exception):
    """A queued job would take its owner over the per-user cap; nothing was created."""

    def __init__(self, owner: str, active: int, cap: int):
        super().__init__(f"{owner} has {active} queued or running jobs, the cap is {cap}")
        self.owner, self.active, self.cap = owner, active, cap


def _free_slot(held: set[int], cap: int) -> int:
    """A random slot below ``cap`` not in ``held`` (random, so that concurrent creations rarely pick the same)."""
    if 2 * len(held) < cap:
        while (slot := PICK.randrange(cap)) in held:
            pass
        return slot
    return PICK.choice([slot for slot in range(cap) if slot not in held])


def _insert_capped(conn: Connection, values: dict[str, Any], cap: int) -> int:
    """Insert a queued job into a free slot of its owner's; its key, or :class:`OverCap` if all ``cap`` are held.

    The first try picks a slot blind (one round trip when the owner has room to spare); after a miss, the slots
    held now are read and a free one is picked among them. Under a cap of more than FEW_SLOTS they are counted
    first, and read only if half the cap or more is held (else the next try is blind again, and misses less than
    half the time): an owner with thousands of queued jobs would cost more to read than the creation itself.
    Each miss is a slot another creation took meanwhile; after SLOT_TRIES of them the owner counts as full."""
    statement, held, owner = _INTO_FREE_SLOT[conn.dialect.name], set[int](), {"owner": values["owner"]}
    for _ in range(SLOT_TRIES):
        slot = _free_slot(held, cap)
        key = conn.execute(statement, {**values, "slot": slot}).scalar()
        if key is not None:
            return key
        held.add(slot)
        if cap > FEW_SLOTS:
            active = conn.scalar(_HELD, owner) or 0
            if active >= cap:
                raise OverCap(values["owner"], active, cap)
            if 2 * active < cap:
                continue
        slots = conn.scalars(_SLOTS, owner).all()  # None: an active job of no cap's
        if len(slots) >= cap:
            raise OverCap(values["owner"], len(slots), cap)
        held = set(slots)
    raise OverCap(values["owner"], len(held), cap)


class Jobs(Repository):
    def create(
        self,
        owner: str,
        spec: dict[str, Any],
        tags: list[str],
        new: Provenance | None = None,
        job_id: str | None = None,
        cap: int | None = None,
    ) -> Job:
        """A queued job, or with ``new.source`` one that is succeeded at once with the source's result.

        With ``cap``, a queued job is created only if its owner then has at most ``cap`` queued or running jobs,
        else :class:`OverCap` is raised and nothing is created. Without it the job holds no slot: every creation
        of a service passes its cap."""
        job = Job(
            id=job_id or uuid.uuid4().hex,
            state=JobState.QUEUED,
            owner=owner,
            title=str(spec.get("title", ""))[:200],
            spec=spec,
            tags=tags,
            created_at=utcnow(),
            attempts=0,
            cancel_requested=False,
            progress_fraction=0.0,
            progress_step=0,
            progress_time=0.0,
        )
        if new is not None:
            job.title, job.spec_hash = new.title[:200], new.spec_hash
            job.study_id, job.study_values = new.study_id, new.study_values
        if new is not None and new.source is not None:
            now, src = utcnow(), new.source
            job.state, job.reused_from, job.summary = JobState.SUCCEEDED, src.id, src.summary
            job.started_at = job.finished_at = now
            job.progress_fraction, job.progress_step, job.progress_time = 1.0, src.progress_step, src.progress_time
        values = {c.key: getattr(job, c.key) for c in JOBS.columns if c.key not in ("seq", "slot")}
        # Core, not the unit of work: creation is a hot path. Without tags the job is one INSERT (each try at a slot
        # stands alone): no transaction around it
        with self.engine.begin() if tags else self.single.connect() as conn:
            if cap is not None and job.state == JobState.QUEUED:
                job.seq = _insert_capped(conn, values, cap)
            else:  # uncapped (a reused result, or a caller that checks no cap): holds no slot
                key = conn.execute(insert(JOBS), values).inserted_primary_key
                assert key is not None  # a one-row INSERT always has its key
                job.seq = key[0]
            if tags:
                conn.execute(insert(cast(Table, JobTag.__table__)), [{"job_seq": job.seq, "tag": t} for t in set(tags)])
        return job

    def find_result(self, spec_hash: str) -> Row[Any] | None:
        """The newest succeeded job computed (not itself reused) from a spec with this hash."""
        with self.single.connect() as conn:
            return conn.execute(_RESULT, {"spec_hash": spec_hash}).first()

    def get(self, job_id: str) -> Job | None:
        with self.session() as s:
            return s.scalar(select(Job).where(Job.id == job_id))

    def read(self, job_id: str) -> Row[Any] | None:
        """One job's columns as a read-only row (attributes named like ``Job``'s): status reads are the hottest
        path, and a prepared Core statement costs about a third of an ORM session; one statement, no transaction."""
        with self.single.connect() as conn:
            return conn.execute(_READ, {"job_id": job_id}).first()

    async def read_on_loop(self, job_id: str) -> Row[Any] | None:
        """:meth:`read` for the event loop: awaiting PostgreSQL (a status read needs no thread, nor the hand-offs
        to and from one), or with SQLite in a thread (a busy file must not stall the loop)."""
        if self.async_engine is None:
            return await asyncio.to_thread(self.read, job_id)
        async with self.async_engine.connect() as conn:
            return (await conn.execute(_READ, {"job_id": job_id})).first()

    def list_jobs(
        self, state: str | None, owner: str | None, tag: str | None, limit: int, before_seq: int | None
    ) -> list[Job]:
        q = select(Job).order_by(Job.seq.desc()).limit(limit)
        if state:
            q = q.where(Job.state == state)
        if owner:
            q = q.where(Job.owner == owner)
        if tag:
            q = q.where(Job.seq.in_(select(JobTag.job_seq).where(JobTag.tag == tag)))
        if before_seq is not None:
            q = q.where(Job.seq < before_seq)
        with self.session() as s:
            return list(s.scalars(q))

    def active_count(self, owner: str) -> int:
        with self.single.connect() as conn:
            return conn.scalar(_ACTIVE, {"owner": owner}) or 0

    def cancel(self, job_id: str) -> str | None:
        """Cancel a queued job at once, flag a running one for its worker; returns the new state."""
        with self.session.begin() as s:
            done = changed(
                s.execute(
                    update(Job)
                    .where(Job.id == job_id, Job.state == JobState.QUEUED)
                    .values(
                        state=JobState.CANCELLED,
                        cancel_requested=True,
                        finished_at=utcnow(),
                        error="cancelled before it started",
                    )
                )
            )
            if not done:
                s.execute(
                    update(Job).where(Job.id == job_id, Job.state == JobState.RUNNING).values(cancel_requested=True)
                )
            return s.scalar(select(Job.state).where(Job.id == job_id))

    def delete(self, job_id: str) -> bool:
        """Delete a job that is not running (a running job must be cancelled first)."""
        with self.session.begin() as s:
            seq = s.scalar(select(Job.seq).where(Job.id == job_id, Job.state != JobState.RUNNING))
            if seq is None:
                return False
            s.execute(delete(JobTag).where(JobTag.job_seq == seq))
            s.execute(delete(Job).where(Job.seq == seq))
            return True

    def counts(self) -> dict[str, int]:
        with self.session() as s:
            return {str(state): n for state, n in s.execute(select(Job.state, func.count()).group_by(Job.state))}

    def queued_ids(self) -> list[str]:
        with self.session() as s:
            return list(s.scalars(select(Job.id).where(Job.state == JobState.QUEUED).order_by(Job.seq)))
