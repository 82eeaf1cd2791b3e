"""The per-user cap as a unique index: each queued or running job holds a slot number of its owner's, below the cap.

Revision ID: 0005
Revises: 0004
Created: 2026-12-03
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0005"
down_revision = "0004"
branch_labels = None
depends_on = None

HOLDS_SLOT = sa.text("state IN ('queued', 'running')")  # as core.store.models.HOLDS_SLOT was at this revision


def upgrade() -> None:
    op.add_column("jobs", sa.Column("slot", sa.Integer, nullable=True))
    bind = op.get_bind()
    jobs = sa.table("jobs", sa.column("seq", sa.Integer), sa.column("owner"), sa.column("state"), sa.column("slot"))
    active = bind.execute(sa.select(jobs.c.seq, jobs.c.owner).where(HOLDS_SLOT).order_by(jobs.c.seq)).all()
    taken: dict[str, int] = {}
    for seq, owner in active:  # the jobs already queued or running take each owner's first slots
        bind.execute(sa.update(jobs).where(jobs.c.seq == seq).values(slot=taken.setdefault(owner, 0)))
        taken[owner] += 1
    op.create_index(
        "ux_jobs_owner_slot",
        "jobs",
        ["owner", "slot"],
        unique=True,
        postgresql_where=HOLDS_SLOT,
        sqlite_where=HOLDS_SLOT,
    )


def downgrade() -> None:
    op.drop_index("ux_jobs_owner_slot", "jobs")
    with op.batch_alter_table("jobs") as batch:
        batch.drop_column("slot")
