"""What every part of the job store works with: the engines and a session factory."""

from __future__ import annotations

from typing import Any, cast

from sqlalchemy import text
from sqlalchemy.engine import CursorResult, Engine, Result
from sqlalchemy.ext.asyncio import AsyncEngine
from sqlalchemy.orm import Session, sessionmaker


def changed(result: Result[Any]) -> int:
    """Rows an UPDATE or DELETE changed (SQLAlchemy types ``Session.execute`` as a ``Result``; a DML statement
    returns the ``CursorResult`` that counts them)."""
    return cast(CursorResult[Any], result).rowcount


class Repository:
    engine: Engine
    # the same pool in autocommit: a statement that needs no transaction of its own (a read, one INSERT) is one
    # round trip to PostgreSQL instead of three (BEGIN, the statement, ROLLBACK or COMMIT)
    single: Engine
    async_engine: AsyncEngine | None  # PostgreSQL's, for the event loop (status reads), in autocommit
    session: sessionmaker[Session]

    def ping(self) -> None:
        with self.engine.connect() as conn:
            conn.execute(text("SELECT 1"))
