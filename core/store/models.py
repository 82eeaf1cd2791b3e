"""The job store's tables (SQLAlchemy 2 declarative models); their history is in ``core/migrations``."""

from __future__ import annotations

from datetime import UTC, datetime
from typing import Any

from sqlalchemy import (
    JSON,
    BigInteger,
    Boolean,
    DateTime,
    Float,
    ForeignKey,
    Index,
    Integer,
    String,
    Text,
    TypeDecorator,
    text,
)
from sqlalchemy.orm import DeclarativeBase, Mapped, mapped_column

from ..states import ACTIVE

# The rows the per-user cap counts: a job holds its slot while queued or running, and frees it by leaving those states.
HOLDS_SLOT = text("state IN ({})".format(", ".join(f"'{state.value}'" for state in ACTIVE)))


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
        # the per-user cap as a constraint: an owner's queued and running jobs hold distinct slots below the cap
        # (core.store.jobs), so they never outnumber it, and every way out of those states frees the slot
        Index("ux_jobs_owner_slot", "owner", "slot", unique=True, postgresql_where=HOLDS_SLOT, sqlite_where=HOLDS_SLOT),
    )

    seq: Mapped[int] = mapped_column(Integer, primary_key=True, autoincrement=True)
    id: Mapped[str] = mapped_column(String(32), unique=True, index=True)
    state: Mapped[str] = mapped_column(String(16), index=True)  # a core.states.JobState value
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
    # bytes of the job's folder as last measured by the disk sweep (core.usage); None: not measured since it finished
    disk_bytes: Mapped[int | None] = mapped_column(BigInteger)
    trimmed_at: Mapped[datetime | None] = mapped_column(UTCDateTime)  # when the retention rule removed its fields
    slot: Mapped[int | None] = mapped_column(Integer)  # 0 to cap - 1 for a capped queued job; see ux_jobs_owner_slot


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


class JobTag(Base):
    """One row per (job, tag): portable tag filtering on SQLite and PostgreSQL."""

    __tablename__ = "job_tags"

    job_seq: Mapped[int] = mapped_column(ForeignKey("jobs.seq", ondelete="CASCADE"), primary_key=True)
    tag: Mapped[str] = mapped_column(String(64), primary_key=True, index=True)


class Token(Base):
    """One live token per name (the name is the user); a revoked or expired one stays listed until replaced."""

    __tablename__ = "tokens"

    name: Mapped[str] = mapped_column(String(100), primary_key=True)
    id: Mapped[str] = mapped_column(String(16), unique=True, index=True)  # what lists show and revoke takes
    digest: Mapped[str] = mapped_column(String(64), unique=True, index=True)
    admin: Mapped[bool] = mapped_column(Boolean, default=False)
    # "user", or "worker": a compute box's token, good only for the worker endpoints (claim, report, upload)
    kind: Mapped[str] = mapped_column(String(16), default="user", server_default="user")
    created_at: Mapped[datetime] = mapped_column(UTCDateTime)
    expires_at: Mapped[datetime | None] = mapped_column(UTCDateTime)
    last_used_at: Mapped[datetime | None] = mapped_column(UTCDateTime)
    revoked_at: Mapped[datetime | None] = mapped_column(UTCDateTime)


class WorkerSeen(Base):
    __tablename__ = "workers"

    name: Mapped[str] = mapped_column(String(200), primary_key=True)
    seen_at: Mapped[datetime] = mapped_column(UTCDateTime)
