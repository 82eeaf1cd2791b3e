"""A full disk: recognise it in any error, and keep a small reserve of space so the service can still record
cancels, deletes and failures (a SQLite job store on the same disk needs room for every write)."""

from __future__ import annotations

import errno
import logging
import os
import shutil
from collections.abc import Callable
from pathlib import Path
from typing import TypeVar

log = logging.getLogger(__name__)
T = TypeVar("T")
FULL_ERRNOS = (errno.ENOSPC, errno.EDQUOT)
FULL_WORDS = ("database or disk is full", "no space left on device", "could not extend file")


def disk_full(err: BaseException | None) -> bool:
    """True when ``err`` (or what caused it: SQLAlchemy wraps the driver's error) says the disk is full."""
    seen = 0
    while err is not None and seen < 10:
        if isinstance(err, OSError) and err.errno in FULL_ERRNOS:
            return True
        if getattr(err, "sqlstate", None) == "53100" or any(w in str(err).lower() for w in FULL_WORDS):
            return True  # 53100: PostgreSQL's disk_full
        err = getattr(err, "orig", None) or err.__cause__ or err.__context__
        seen += 1
    return False


class DiskReserve:
    """A file of ``size`` bytes in the data folder, given up when a write that must succeed finds the disk full."""

    def __init__(self, folder: Path, size: int = 4 * 2**20):
        self.path, self.size = folder / ".disk-reserve", size

    def ensure(self) -> None:
        """(Re)create the reserve, if there is clearly room for it."""
        if self.path.exists():
            return
        try:
            if shutil.disk_usage(self.path.parent).free < 4 * self.size:
                return
            fd = os.open(self.path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
            try:
                os.posix_fallocate(fd, 0, self.size)
            finally:
                os.close(fd)
        except FileExistsError:
            return
        except OSError:
            log.warning("could not create the disk reserve %s", self.path, exc_info=True)
            self.path.unlink(missing_ok=True)

    def give_up(self) -> bool:
        try:
            self.path.unlink()
        except FileNotFoundError:
            return False
        log.warning("the data folder's disk is full: the reserve of %d MiB was given up", self.size // 2**20)
        return True

    def retry(self, action: Callable[[], T]) -> T:
        """Run ``action``; if the disk is full, give up the reserve and run it once more."""
        try:
            return action()
        except Exception as err:
            if disk_full(err) and self.give_up():
                return action()
            raise
