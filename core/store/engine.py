"""The database engine: SQLite tuned for several processes, PostgreSQL with a steady pool for every request thread."""

from __future__ import annotations

import time
from typing import Any

from sqlalchemy import create_engine, event, exc
from sqlalchemy.engine import Engine
from sqlalchemy.ext.asyncio import AsyncEngine, create_async_engine
from sqlalchemy.pool import ConnectionPoolEntry, PoolProxiedConnection

# The API's request threads (api.app sets anyio's limit, 40 by default, to this): on a few cores more threads add
# no throughput, only switching and database connections, and PostgreSQL allows 100 in all by default.
REQUEST_THREADS = 16
# Every request thread and the lead's threads (reaper, disk sweep) may each hold a connection at once. The pool
# keeps POOL_SIZE of them open: a connection beyond the pool is closed when returned, so a pool smaller than the
# usual number of concurrent requests would open (a PostgreSQL backend, a login) and close one per request.
POOL_SIZE = REQUEST_THREADS + 4
MAX_CONNECTIONS = POOL_SIZE + 4
# The event loop's own connections (status reads with PostgreSQL): a read waiting for one awaits, blocking nothing.
ASYNC_POOL_SIZE = 8
# A connection unused for this long is pinged before use (a restarted server drops them all). A busy pool skips
# the round trip; a connection lost all the same fails its one request and invalidates the rest of the pool.
PING_AFTER_IDLE_SECONDS = 2.0


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
    engine = create_engine(url, pool_size=POOL_SIZE, max_overflow=MAX_CONNECTIONS - POOL_SIZE)
    _ping_when_idle(engine)
    return engine


def make_async_engine(url: str) -> AsyncEngine | None:
    """PostgreSQL's engine for the event loop (psycopg's async connections), in autocommit: it serves single
    statements (status reads), each one round trip with no BEGIN and ROLLBACK around it. None for SQLite, whose
    reads stay in threads (its driver has no async side)."""
    if url.startswith("sqlite"):
        return None
    engine = create_async_engine(url, pool_size=ASYNC_POOL_SIZE, max_overflow=0, isolation_level="AUTOCOMMIT")
    _ping_when_idle(engine.sync_engine)
    return engine


def _ping_when_idle(engine: Engine) -> None:
    """SQLAlchemy's ``pool_pre_ping``, but only for a connection idle over PING_AFTER_IDLE_SECONDS: under load
    the ping was one extra round trip per request."""

    @event.listens_for(engine, "checkin")
    def _returned(_conn: Any, record: ConnectionPoolEntry) -> None:
        record.info["returned"] = time.monotonic()

    @event.listens_for(engine, "checkout")
    def _taken(conn: Any, record: ConnectionPoolEntry, _proxy: PoolProxiedConnection) -> None:
        returned = record.info.get("returned")
        if returned is None or time.monotonic() - returned < PING_AFTER_IDLE_SECONDS:
            return  # new, or in use a moment ago
        try:
            engine.dialect.do_ping(conn)
        except Exception as err:  # the pool discards it and checks out (or opens) another
            raise exc.DisconnectionError(f"a pooled connection was lost: {err}") from err
