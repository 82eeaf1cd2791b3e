"""The job store (SQLAlchemy 2): the single source of truth for job state; broker messages only wake workers.

Every state change is a compare-and-set ``UPDATE ... WHERE state = ...`` so that duplicate broker
deliveries, a re-queued job whose old worker is still alive, and concurrent API calls never
overwrite each other: the row is claimed with a random ``claim`` fencing token.
"""

from __future__ import annotations

import math
import secrets
import time
import uuid
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta
from typing import Any

from sqlalchemy import (
    JSON,
    Boolean,
    DateTime,
    Float,
    ForeignKey,
    Index,
    Integer,
    String,
    Text,
    TypeDecorator,
    bindparam,
    case,
    create_engine,
    delete,
    event,
    func,
    insert,
    inspect,
    select,
    text,
    update,
)
from sqlalchemy.engine import Engine, Row
from sqlalchemy.orm import DeclarativeBase, Mapped, mapped_column, sessionmaker

ACTIVE = ("queued", "running")


def utcnow() -> datetime:
    return datetime.now(UTC)


class UTCDateTime(TypeDecorator[datetime]):
    """Naive UTC in the database (sortable text in SQLite), aware UTC in Python."""

    impl = DateTime
    cache_ok = True

    def process_bind_param(self, value: datetime | None, dialect: Any) -> datetime | None:
        return value.astimezone(UTC).replace(tzinfo=None) if value is not None else None

    def process_result_value(self, value: datetime | None, dialect: Any) -> datetime | None:
        return value.replace(tzinfo=UTC) if value is not None else None


class Base(DeclarativeBase):
    pass


class Job(Base):
    __tablename__ = "jobs"
    __table_args__ = (  # the two look-ups every creation makes, answered from the index alone
        Index("ix_jobs_owner_state", "owner", "state"),
        Index("ix_jobs_hash_state", "spec_hash", "state"),
    )

    seq: Mapped[int] = mapped_column(Integer, primary_key=True, autoincrement=True)
    id: Mapped[str] = mapped_column(String(32), unique=True, index=True)
    state: Mapped[str] = mapped_column(String(16), index=True)
    owner: Mapped[str] = mapped_column(String(100), index=True)
    title: Mapped[str] = mapped_column(String(200), default="")
    spec: Mapped[dict[str, Any]] = mapped_column(JSON)
    tags: Mapped[list[str]] = mapped_column(JSON, default=list)
    created_at: Mapped[datetime] = mapped_column(UTCDateTime)
    started_at: Mapped[datetime | None] = mapped_column(UTCDateTime)
    finished_at: Mapped[datetime | None] = mapped_column(UTCDateTime)
    heartbeat_at: Mapped[datetime | None] = mapped_column(UTCDateTime)
    attempts: Mapped[int] = mapped_column(Integer, default=0)
    claim: Mapped[str | None] = mapped_column(String(32))
    worker_host: Mapped[str | None] = mapped_column(String(200))
    cancel_requested: Mapped[bool] = mapped_column(Boolean, default=False)
    progress_fraction: Mapped[float] = mapped_column(Float, default=0.0)
    progress_step: Mapped[int] = mapped_column(Integer, default=0)
    progress_time: Mapped[float] = mapped_column(Float, default=0.0)
    eta_seconds: Mapped[float | None] = mapped_column(Float)
    summary: Mapped[dict[str, Any] | None] = mapped_column(JSON)
    error: Mapped[str | None] = mapped_column(Text)
    spec_hash: Mapped[str | None] = mapped_column(String(64), index=True)
    reused_from: Mapped[str | None] = mapped_column(String(32))
    study_id: Mapped[str | None] = mapped_column(ForeignKey("studies.id"), index=True)
    study_values: Mapped[dict[str, float] | None] = mapped_column(JSON)


class Study(Base):
    """A parameter study; its state and progress derive from its jobs (``Job.study_id``)."""

    __tablename__ = "studies"

    seq: Mapped[int] = mapped_column(Integer, primary_key=True, autoincrement=True)
    id: Mapped[str] = mapped_column(String(32), unique=True, index=True)
    kind: Mapped[str] = mapped_column(String(32))
    title: Mapped[str] = mapped_column(String(200), default="")
    owner: Mapped[str] = mapped_column(String(100), index=True)
    spec: Mapped[dict[str, Any]] = mapped_column(JSON)
    created_at: Mapped[datetime] = mapped_column(UTCDateTime)


@dataclass
class Provenance:
    """Where a new job comes from: its spec's hash, the succeeded job it reuses (if any), its study point."""

    spec_hash: str
    title: str
    source: Row[Any] | None = None  # a row of the jobs table
    study_id: str | None = None
    study_values: dict[str, float] | None = None


class JobTag(Base):
    """One row per (job, tag): portable tag filtering on SQLite and PostgreSQL."""

    __tablename__ = "job_tags"

    job_seq: Mapped[int] = mapped_column(ForeignKey("jobs.seq", ondelete="CASCADE"), primary_key=True)
    tag: Mapped[str] = mapped_column(String(64), primary_key=True, index=True)


class Token(Base):
    __tablename__ = "tokens"

    name: Mapped[str] = mapped_column(String(100), primary_key=True)
    digest: Mapped[str] = mapped_column(String(64), unique=True, index=True)
    admin: Mapped[bool] = mapped_column(Boolean, default=False)
    created_at: Mapped[datetime] = mapped_column(UTCDateTime)


class WorkerSeen(Base):
    __tablename__ = "workers"

    name: Mapped[str] = mapped_column(String(200), primary_key=True)
    seen_at: Mapped[datetime] = mapped_column(UTCDateTime)


@dataclass
class Claimed:
    id: str
    claim: str
    spec: dict[str, Any]
    attempts: int


def finite(value: Any) -> Any:
    """JSON columns on PostgreSQL (and JSON responses) reject NaN/inf: make them null."""
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {k: finite(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [finite(v) for v in value]
    return value


# Every request thread (anyio's default limit is 40), the event loop (status reads) and the reaper may each hold a
# connection at once: with a smaller pool the event loop could wait for one, stalling every request.
MAX_CONNECTIONS = 48


def make_engine(url: str) -> Engine:
    """Engine with SQLite tuned for several processes (WAL, waiting on locks instead of failing)."""
    if url.startswith("sqlite"):
        # enough pooled connections that a burst of requests does not open (and set up) one each
        engine = create_engine(
            url,
            pool_size=16,
            max_overflow=MAX_CONNECTIONS - 16,
            connect_args={"timeout": 30, "check_same_thread": False},
        )

        @event.listens_for(engine, "connect")
        def _pragmas(conn: Any, _record: Any) -> None:
            cur = conn.cursor()
            cur.execute("PRAGMA journal_mode=WAL")
            cur.execute("PRAGMA synchronous=NORMAL")  # with WAL: durable across crashes, fsync only at checkpoints
            cur.execute("PRAGMA busy_timeout=30000")
            cur.execute("PRAGMA foreign_keys=ON")
            cur.close()

        return engine
    return create_engine(url, pool_pre_ping=True, max_overflow=MAX_CONNECTIONS - 5)


def upgrade_schema(engine: Engine) -> None:
    """A job store made by an earlier version lacks the columns (all nullable) and indexes added since: add them,
    so an existing data folder keeps working, and stays quick, after an upgrade."""
    inspector = inspect(engine)
    with engine.begin() as conn:
        for table in Base.metadata.sorted_tables:
            have = {c["name"] for c in inspector.get_columns(table.name)}
            for column in (c for c in table.columns if c.name not in have):
                conn.execute(
                    text(f"ALTER TABLE {table.name} ADD COLUMN {column.name} {column.type.compile(engine.dialect)}")
                )
            indexed = {i["name"] for i in inspector.get_indexes(table.name)}
            for index in table.indexes:
                if index.name not in indexed:
                    index.create(conn, checkfirst=True)  # another process may be upgrading too


# Statements built once (their SQL is compiled and cached once too) for the per-request look-ups.
JOBS = Job.__table__
_READ = select(JOBS).where(JOBS.c.id == bindparam("job_id"))
_RESULT = (
    select(JOBS)
    .where(Job.spec_hash == bindparam("spec_hash"), Job.state == "succeeded", Job.reused_from.is_(None))
    .order_by(Job.seq.desc())
    .limit(1)
)
_ACTIVE = select(func.count()).where(Job.owner == bindparam("owner"), Job.state.in_(ACTIVE))
# A job handed back by a stopping worker: queued again, the interrupted attempt not counted.
_RELEASED: dict[str, Any] = {
    "state": "queued",
    "claim": None,
    "eta_seconds": None,
    "attempts": case((Job.attempts > 0, Job.attempts - 1), else_=0),
}


class Store:
    """Job-store operations used by the API, the workers and the lease reaper."""

    def __init__(self, url: str):
        self.engine = make_engine(url)
        Base.metadata.create_all(self.engine)
        upgrade_schema(self.engine)
        self.session = sessionmaker(self.engine, expire_on_commit=False)
        self._tokens_checked = -math.inf  # monotonic time of the last "no tokens" answer
        self._tokens_exist = False
        self._token_users: dict[str, tuple[str, bool]] = {}

    # --- API side -------------------------------------------------------------------------------------
    def create(
        self,
        owner: str,
        spec: dict[str, Any],
        tags: list[str],
        new: Provenance | None = None,
        job_id: str | None = None,
    ) -> Job:
        """A queued job, or with ``new.source`` one that is succeeded at once with the source's result."""
        job = Job(
            id=job_id or uuid.uuid4().hex,
            state="queued",
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
            job.state, job.reused_from, job.summary = "succeeded", src.id, src.summary
            job.started_at = job.finished_at = now
            job.progress_fraction, job.progress_step, job.progress_time = 1.0, src.progress_step, src.progress_time
        values = {c.key: getattr(job, c.key) for c in JOBS.columns if c.key != "seq"}
        with self.engine.begin() as conn:  # Core, not the unit of work: creation is a hot path
            job.seq = conn.execute(insert(JOBS), values).inserted_primary_key[0]
            if tags:
                conn.execute(insert(JobTag.__table__), [{"job_seq": job.seq, "tag": t} for t in set(tags)])
        return job

    def find_result(self, spec_hash: str) -> Row[Any] | None:
        """The newest succeeded job computed (not itself reused) from a spec with this hash."""
        with self.engine.connect() as conn:
            return conn.execute(_RESULT, {"spec_hash": spec_hash}).first()

    def get(self, job_id: str) -> Job | None:
        with self.session() as s:
            return s.scalar(select(Job).where(Job.id == job_id))

    def read(self, job_id: str) -> Row[Any] | None:
        """One job's columns as a read-only row (attributes named like ``Job``'s): status reads are the hottest
        path, and a prepared Core statement costs about a third of an ORM session."""
        with self.engine.connect() as conn:
            return conn.execute(_READ, {"job_id": job_id}).first()

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
        with self.engine.connect() as conn:
            return conn.scalar(_ACTIVE, {"owner": owner}) or 0

    def cancel(self, job_id: str) -> str | None:
        """Cancel a queued job at once, flag a running one for its worker; returns the new state."""
        with self.session.begin() as s:
            done = s.execute(
                update(Job)
                .where(Job.id == job_id, Job.state == "queued")
                .values(
                    state="cancelled", cancel_requested=True, finished_at=utcnow(), error="cancelled before it started"
                )
            ).rowcount
            if not done:
                s.execute(update(Job).where(Job.id == job_id, Job.state == "running").values(cancel_requested=True))
            return s.scalar(select(Job.state).where(Job.id == job_id))

    def delete(self, job_id: str) -> bool:
        """Delete a job that is not running (a running job must be cancelled first)."""
        with self.session.begin() as s:
            seq = s.scalar(select(Job.seq).where(Job.id == job_id, Job.state != "running"))
            if seq is None:
                return False
            s.execute(delete(JobTag).where(JobTag.job_seq == seq))
            s.execute(delete(Job).where(Job.seq == seq))
            return True

    def create_study(self, owner: str, kind: str, title: str, spec: dict[str, Any]) -> Study:
        study = Study(id=uuid.uuid4().hex, kind=kind, title=title[:200], owner=owner, spec=spec, created_at=utcnow())
        with self.session.begin() as s:
            s.add(study)
        return study

    def get_study(self, study_id: str) -> Study | None:
        with self.session() as s:
            return s.scalar(select(Study).where(Study.id == study_id))

    def list_studies(self, limit: int) -> list[Study]:
        with self.session() as s:
            return list(s.scalars(select(Study).order_by(Study.seq.desc()).limit(limit)))

    def study_jobs(self, study_ids: list[str]) -> list[Job]:
        """The jobs of these studies, in the order their points were created."""
        with self.session() as s:
            return list(s.scalars(select(Job).where(Job.study_id.in_(study_ids)).order_by(Job.seq)))

    def counts(self) -> dict[str, int]:
        with self.session() as s:
            return dict(s.execute(select(Job.state, func.count()).group_by(Job.state)).all())

    def workers_seen(self, within: float, host: str | None = None) -> int:
        """Worker processes (of ``host``, or anywhere) that reported in within the last ``within`` seconds."""
        q = select(func.count()).where(WorkerSeen.seen_at >= utcnow() - timedelta(seconds=within))
        if host is not None:
            q = q.where(WorkerSeen.name.startswith(f"{host}:", autoescape=True))
        with self.session() as s:
            return s.scalar(q) or 0

    def ping(self) -> None:
        with self.engine.connect() as conn:
            conn.execute(text("SELECT 1"))

    # --- worker side ----------------------------------------------------------------------------------
    def claim_next(self, host: str, tries: int = 8) -> Claimed | None:
        """Claim the next job (fair share: oldest job of the owner with the fewest running) by compare-and-set."""
        running = (
            select(Job.owner, func.count().label("n")).where(Job.state == "running").group_by(Job.owner).subquery()
        )
        pick = (
            select(Job.id)
            .outerjoin(running, running.c.owner == Job.owner)
            .where(Job.state == "queued")
            .order_by(func.coalesce(running.c.n, 0), Job.seq)
            .limit(1)
        )
        for _ in range(tries):
            with self.session.begin() as s:
                job_id = s.scalar(pick)
                if job_id is None:
                    return None
                claim, now = secrets.token_hex(16), utcnow()
                won = s.execute(
                    update(Job)
                    .where(Job.id == job_id, Job.state == "queued")
                    .values(
                        state="running",
                        claim=claim,
                        attempts=Job.attempts + 1,
                        worker_host=host,
                        started_at=func.coalesce(Job.started_at, now),
                        heartbeat_at=now,
                        eta_seconds=None,
                    )
                ).rowcount
                if won:
                    job = s.scalar(select(Job).where(Job.id == job_id))
                    return Claimed(job.id, claim, job.spec, job.attempts)
        return None

    def heartbeat(self, job_id: str, claim: str, values: dict[str, Any]) -> tuple[bool, bool]:
        """Record progress; returns (still ours, cancel requested)."""
        with self.session.begin() as s:
            ours = (
                s.execute(
                    update(Job)
                    .where(Job.id == job_id, Job.claim == claim, Job.state == "running")
                    .values(heartbeat_at=utcnow(), **values)
                ).rowcount
                == 1
            )
            cancel = bool(s.scalar(select(Job.cancel_requested).where(Job.id == job_id)))
            return ours, cancel

    def finish(
        self,
        job_id: str,
        claim: str,
        state: str,
        summary: dict[str, Any] | None = None,
        error: str | None = None,
        progress: dict[str, Any] | None = None,
    ) -> bool:
        values: dict[str, Any] = {
            **(progress or {}),
            "state": state,
            "finished_at": utcnow(),
            "summary": summary,
            "error": error,
            "eta_seconds": None,
        }
        with self.session.begin() as s:
            return (
                s.execute(
                    update(Job).where(Job.id == job_id, Job.claim == claim, Job.state == "running").values(**values)
                ).rowcount
                == 1
            )

    def worker_alive(self, name: str) -> None:
        with self.session.begin() as s:
            if not s.execute(update(WorkerSeen).where(WorkerSeen.name == name).values(seen_at=utcnow())).rowcount:
                s.add(WorkerSeen(name=name, seen_at=utcnow()))

    def worker_gone(self, name: str) -> None:
        """A worker process that stops says so, so health does not count it until the lease runs out."""
        with self.session.begin() as s:
            s.execute(delete(WorkerSeen).where(WorkerSeen.name == name))

    def release(self, job_id: str, claim: str) -> bool:
        """Hand a job back to the queue because its worker is shutting down (not the job's fault: the attempt is
        not counted); it resumes from its last checkpoint."""
        with self.session.begin() as s:
            return (
                s.execute(
                    update(Job).where(Job.id == job_id, Job.claim == claim, Job.state == "running").values(**_RELEASED)
                ).rowcount
                == 1
            )

    def release_hosts(self, hosts: list[str]) -> list[str]:
        """After a supervisor stopped its worker processes (``host:pid`` names): re-queue the jobs they still held,
        or finish them as cancelled when a cancel was requested. Returns the re-queued ids."""
        if not hosts:
            return []
        running = (Job.state == "running", Job.worker_host.in_(hosts))
        with self.session.begin() as s:
            s.execute(
                update(Job)
                .where(*running, Job.cancel_requested.is_(True))
                .values(state="cancelled", finished_at=utcnow(), error="cancelled (its worker was stopped)")
            )
            ids = list(s.scalars(select(Job.id).where(*running)))
            s.execute(update(Job).where(Job.id.in_(ids), Job.state == "running").values(**_RELEASED))
        return ids

    # --- lease ----------------------------------------------------------------------------------------
    def expire_leases(self, lease_seconds: float, max_attempts: int) -> list[str]:
        """Re-queue running jobs whose heartbeat stopped; give up after ``max_attempts``. Returns re-queued ids."""
        cutoff = utcnow() - timedelta(seconds=lease_seconds)
        requeued = []
        with self.session() as s:
            stale = s.execute(
                select(Job.id, Job.claim, Job.attempts, Job.worker_host, Job.cancel_requested).where(
                    Job.state == "running", Job.heartbeat_at < cutoff
                )
            ).all()
        for job_id, claim, attempts, host, cancel in stale:
            lost = f"the worker on {host} stopped sending heartbeats for over {lease_seconds:g} s"
            if cancel:
                values = {"state": "cancelled", "finished_at": utcnow(), "error": f"cancelled ({lost})"}
            elif attempts >= max_attempts:
                values = {
                    "state": "failed",
                    "finished_at": utcnow(),
                    "error": f"gave up after {attempts} attempts: {lost}",
                }
            else:
                values = {"state": "queued", "claim": None, "eta_seconds": None}
            with self.session.begin() as s:
                won = s.execute(
                    update(Job).where(Job.id == job_id, Job.claim == claim, Job.state == "running").values(**values)
                ).rowcount
            if won and values["state"] == "queued":
                requeued.append(job_id)
        return requeued

    def queued_ids(self) -> list[str]:
        with self.session() as s:
            return list(s.scalars(select(Job.id).where(Job.state == "queued").order_by(Job.seq)))

    # --- tokens ---------------------------------------------------------------------------------------
    def add_token(self, name: str, digest: str, admin: bool) -> None:
        with self.session.begin() as s:
            s.add(Token(name=name, digest=digest, admin=admin, created_at=utcnow()))

    def find_token(self, digest: str) -> Token | None:
        with self.session() as s:
            return s.scalar(select(Token).where(Token.digest == digest))

    def known_token_user(self, digest: str) -> tuple[str, bool] | None:
        """(name, admin) for a token seen before, without asking the database."""
        return self._token_users.get(digest)

    def token_user(self, digest: str) -> tuple[str, bool] | None:
        """(name, admin) for a token digest; known tokens are remembered (tokens are never revoked)."""
        if digest not in self._token_users:
            row = self.find_token(digest)
            if row is None:
                return None
            self._token_users[digest] = (row.name, row.admin)
        return self._token_users[digest]

    def has_token_named(self, name: str) -> bool:
        with self.session() as s:
            return s.get(Token, name) is not None

    def tokens_required(self) -> bool:
        """Once a token exists, tokens stay required; until then ask the database at most once a second."""
        cached = self.tokens_required_cached()
        if cached is None:
            self._tokens_exist, self._tokens_checked = self.has_tokens(), time.monotonic()
            return self._tokens_exist
        return cached

    def tokens_required_cached(self) -> bool | None:
        """The answer of :meth:`tokens_required` if it needs no database query, else None."""
        if self._tokens_exist or time.monotonic() - self._tokens_checked <= 1.0:
            return self._tokens_exist
        return None

    def has_tokens(self) -> bool:
        with self.session() as s:
            return s.scalar(select(func.count()).select_from(Token)) > 0
