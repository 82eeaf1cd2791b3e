"""Jobs record the bytes their folder takes (for the per-user quota) and when the retention rule trimmed them.

Revision ID: 0003
Revises: 0002
Created: 2026-12-03
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0003"
down_revision = "0002"
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.add_column("jobs", sa.Column("disk_bytes", sa.BigInteger, nullable=True))
    op.add_column("jobs", sa.Column("trimmed_at", sa.DateTime, nullable=True))


def downgrade() -> None:
    with op.batch_alter_table("jobs") as batch:
        batch.drop_column("trimmed_at")
        batch.drop_column("disk_bytes")
