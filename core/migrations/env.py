"""Alembic's environment for the job store: ``core.migrate`` hands it an open connection (in a transaction)."""

from __future__ import annotations

from alembic import context

from wakeyard.core.store.models import Base

connection = context.config.attributes["connection"]
context.configure(connection=connection, target_metadata=Base.metadata, render_as_batch=True)
with context.begin_transaction():
    context.run_migrations()
