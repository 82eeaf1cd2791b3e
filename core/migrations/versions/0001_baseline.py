"""The job store as it was when migrations began: jobs, studies, job tags, tokens, worker liveness.

It also brings a store made before migrations (by ``Store()``'s create-and-add-columns) to this schema: tables
that are missing are created, columns and indexes added since are added (those columns are all nullable).

Revision ID: 0001
Revises:
Created: 2026-12-03
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0001"
down_revision = None
branch_labels = None
depends_on = None


def _tables() -> sa.MetaData:
    """The baseline's tables, written out (not imported from the models, which move on with later revisions)."""
    meta = sa.MetaData()
    sa.Table(
        "studies",
        meta,
        sa.Column("seq", sa.Integer, primary_key=True, autoincrement=True),
        sa.Column("id", sa.String(32), nullable=False, unique=True, index=True),
        sa.Column("kind", sa.String(32), nullable=False),
        sa.Column("title", sa.String(200), nullable=False),
        sa.Column("owner", sa.String(100), nullable=False, index=True),
        sa.Column("spec", sa.JSON, nullable=False),
        sa.Column("created_at", sa.DateTime, nullable=False),
    )
    sa.Table(
        "jobs",
        meta,
        sa.Column("seq", sa.Integer, primary_key=True, autoincrement=True),
        sa.Column("id", sa.String(32), nullable=False, unique=True, index=True),
        sa.Column("state", sa.String(16), nullable=False, index=True),
        sa.Column("owner", sa.String(100), nullable=False, index=True),
        sa.Column("title", sa.String(200), nullable=False),
        sa.Column("spec", sa.JSON, nullable=False),
        sa.Column("tags", sa.JSON, nullable=False),
        sa.Column("created_at", sa.DateTime, nullable=False),
        sa.Column("started_at", sa.DateTime),
        sa.Column("finished_at", sa.DateTime),
        sa.Column("heartbeat_at", sa.DateTime),
        sa.Column("attempts", sa.Integer, nullable=False),
        sa.Column("claim", sa.String(32)),
        sa.Column("worker_host", sa.String(200)),
        sa.Column("cancel_requested", sa.Boolean, nullable=False),
        sa.Column("progress_fraction", sa.Float, nullable=False),
        sa.Column("progress_step", sa.Integer, nullable=False),
        sa.Column("progress_time", sa.Float, nullable=False),
        sa.Column("eta_seconds", sa.Float),
        sa.Column("summary", sa.JSON),
        sa.Column("error", sa.Text),
        sa.Column("spec_hash", sa.String(64), index=True),
        sa.Column("reused_from", sa.String(32)),
        sa.Column("study_id", sa.String(32), sa.ForeignKey("studies.id"), index=True),
        sa.Column("study_values", sa.JSON),
        sa.Index("ix_jobs_owner_state", "owner", "state"),
        sa.Index("ix_jobs_hash_state", "spec_hash", "state"),
    )
    sa.Table(
        "job_tags",
        meta,
        sa.Column("job_seq", sa.Integer, sa.ForeignKey("jobs.seq", ondelete="CASCADE"), primary_key=True),
        sa.Column("tag", sa.String(64), primary_key=True, index=True),
    )
    sa.Table(
        "tokens",
        meta,
        sa.Column("name", sa.String(100), primary_key=True),
        sa.Column("digest", sa.String(64), nullable=False, unique=True, index=True),
        sa.Column("admin", sa.Boolean, nullable=False),
        sa.Column("created_at", sa.DateTime, nullable=False),
    )
    sa.Table(
        "workers",
        meta,
        sa.Column("name", sa.String(200), primary_key=True),
        sa.Column("seen_at", sa.DateTime, nullable=False),
    )
    return meta


def upgrade() -> None:
    bind = op.get_bind()
    inspector = sa.inspect(bind)
    for table in _tables().sorted_tables:
        if not inspector.has_table(table.name):
            table.create(bind)
            continue
        have = {c["name"] for c in inspector.get_columns(table.name)}
        for column in table.columns:
            if column.name not in have:  # added after the store was made: nullable, added without constraints
                op.add_column(table.name, sa.Column(column.name, column.type, nullable=True))
        indexed = {i["name"] for i in inspector.get_indexes(table.name)}
        for index in table.indexes:
            if index.name not in indexed:
                index.create(bind)


def downgrade() -> None:
    for table in reversed(_tables().sorted_tables):
        op.drop_table(table.name)
