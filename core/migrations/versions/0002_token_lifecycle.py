"""Tokens get an id (for lists and revoking), an optional expiry, the time they were last used and a revocation time.

Revision ID: 0002
Revises: 0001
Created: 2026-12-03
"""

from __future__ import annotations

import secrets

import sqlalchemy as sa
from alembic import op

revision = "0002"
down_revision = "0001"
branch_labels = None
depends_on = None


def upgrade() -> None:
    for name in ("expires_at", "last_used_at", "revoked_at"):
        op.add_column("tokens", sa.Column(name, sa.DateTime, nullable=True))
    op.add_column("tokens", sa.Column("id", sa.String(16), nullable=True))
    bind = op.get_bind()
    tokens = sa.table("tokens", sa.column("name", sa.String), sa.column("id", sa.String))
    for (name,) in bind.execute(sa.select(tokens.c.name)).all():  # tokens made before ids: give each one
        bind.execute(sa.update(tokens).where(tokens.c.name == name).values(id=secrets.token_hex(6)))
    with op.batch_alter_table("tokens") as batch:  # SQLite cannot alter a column in place: batch copies the table
        batch.alter_column("id", existing_type=sa.String(16), nullable=False)
        batch.create_index("ix_tokens_id", ["id"], unique=True)


def downgrade() -> None:
    with op.batch_alter_table("tokens") as batch:
        batch.drop_index("ix_tokens_id")
        for name in ("id", "expires_at", "last_used_at", "revoked_at"):
            batch.drop_column(name)
