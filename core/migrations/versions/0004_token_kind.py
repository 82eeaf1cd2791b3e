"""Tokens get a kind: "user" (every token made before) or "worker" (a compute box that may only claim jobs, report
on them and upload their files).

Revision ID: 0004
Revises: 0003
Created: 2026-12-03
"""

from __future__ import annotations

import sqlalchemy as sa
from alembic import op

revision = "0004"
down_revision = "0003"
branch_labels = None
depends_on = None


def upgrade() -> None:
    op.add_column("tokens", sa.Column("kind", sa.String(16), nullable=False, server_default="user"))


def downgrade() -> None:
    with op.batch_alter_table("tokens") as batch:
        batch.drop_column("kind")
