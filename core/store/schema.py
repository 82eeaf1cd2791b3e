"""Bring a job store's tables up to date."""

from __future__ import annotations

from sqlalchemy import inspect, text
from sqlalchemy.engine import Engine

from .models import Base


def upgrade_schema(engine: Engine) -> None:
    """A job store made by an earlier version lacks the columns (all nullable) and indexes added since: add them,
    so an existing data folder keeps working, and stays quick, after an upgrade."""
    Base.metadata.create_all(engine)
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
