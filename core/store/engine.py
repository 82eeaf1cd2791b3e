"""The database engine: SQLite tuned for several processes, PostgreSQL with a pool for every request thread."""

from __future__ import annotations

from typing import Any

from sqlalchemy import create_engine, event
from sqlalchemy.engine import Engine

# Every request thread (anyio's default limit is 40), the event loop (status reads) and the reaper may each hold a
# connection at once: with a smaller pool the event loop could wait for one, stalling every request.
MAX_CONNECTIONS = 48


def make_engine(url: str) -> Engine:
    """Engine with SQLite tuned for several processes (WAL, waiting on locks instead of failing)."""
    if url.startswith("sqlite"):
        # enough pooled connections that a burst of requests does not open (and set up) one each
        engine = create_engine(
            url,
            pool_size=16,
            max_overflow=MAX_CONNECTIONS - 16,
            connect_args={"timeout": 30, "check_same_thread": False},
        )

        @event.listens_for(engine, "connect")
        def _pragmas(conn: Any, _record: Any) -> None:
            cur = conn.cursor()
            cur.execute("PRAGMA journal_mode=WAL")
            cur.execute("PRAGMA synchronous=NORMAL")  # with WAL: durable across crashes, fsync only at checkpoints
            cur.execute("PRAGMA busy_timeout=30000")
            cur.execute("PRAGMA foreign_keys=ON")
            cur.close()

        return engine
    return create_engine(url, pool_pre_ping=True, max_overflow=MAX_CONNECTIONS - 5)
