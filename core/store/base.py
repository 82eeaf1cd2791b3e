"""What every part of the job store works with: the engine and a session factory."""

from __future__ import annotations

from sqlalchemy import text
from sqlalchemy.engine import Engine
from sqlalchemy.orm import Session, sessionmaker


class Repository:
    engine: Engine
    session: sessionmaker[Session]

    def ping(self) -> None:
        with self.engine.connect() as conn:
            conn.execute(text("SELECT 1"))
