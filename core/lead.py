"""The service's lead: the one API process (of however many, on however many hosts) that runs the lease reaper and
the disk sweep. On PostgreSQL it is a session advisory lock held on a connection of its own, so it spans hosts;
with a SQLite job store (one host by nature) an ``flock`` on a file in the data folder. Either is dropped by the
database or the kernel when its process dies, and another process takes the lead at its next try."""

from __future__ import annotations

import fcntl
import logging
import os
from pathlib import Path

from sqlalchemy import create_engine, text
from sqlalchemy.engine import Connection, Engine
from sqlalchemy.pool import NullPool

log = logging.getLogger(__name__)
# two-key advisory locks: 1 is the per-owner creation locks' space, 2 the lead's, keyed by the schema so that two
# services in schemas of one database each have their own lead
_TAKE = text("SELECT pg_try_advisory_lock(2, hashtext(current_schema()))")


class Lead:
    def __init__(self, db_url: str, folder: Path):
        self.postgres = db_url.startswith("postgresql")
        self.engine: Engine | None = create_engine(db_url, poolclass=NullPool) if self.postgres else None
        self.path = folder / "lead.lock"
        self.conn: Connection | None = None
        self.fd = -1

    @property
    def held(self) -> bool:
        return self.conn is not None or self.fd >= 0

    def hold(self) -> bool:
        """True while this process holds the lead: takes it when it is free, checks it is still ours when held."""
        try:
            return self._check() if self.held else self._take()
        except Exception:  # the database is away: whatever we held is lost with the connection
            log.warning("the service's lead could not be checked; trying again", exc_info=True)
            self.release()
            return False

    def _take(self) -> bool:
        if self.engine is not None:
            conn = self.engine.connect()
            if conn.scalar(_TAKE):
                conn.commit()
                self.conn = conn
                return True
            conn.close()
            return False
        fd = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o644)
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            os.close(fd)
            return False
        os.set_inheritable(fd, False)
        self.fd = fd
        return True

    def _check(self) -> bool:
        if self.conn is not None:
            self.conn.scalar(text("SELECT 1"))  # the lock lives as long as this connection
            self.conn.commit()
        return True

    def release(self) -> None:
        if self.conn is not None:
            conn, self.conn = self.conn, None
            try:
                conn.close()  # closing the session drops its advisory locks
            except Exception:
                log.debug("the lead's connection was already gone", exc_info=True)
        if self.fd >= 0:
            os.close(self.fd)  # closing the one descriptor drops the flock
            self.fd = -1

    def close(self) -> None:
        self.release()
        if self.engine is not None:
            self.engine.dispose()
