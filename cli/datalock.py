"""An exclusive lock on the data folder for ``wakeyard serve``.

The lock (``flock`` on ``serve.lock``) belongs to an open file that the worker processes inherit, so it is held
until serve *and* every one of its workers are gone: a restarted serve can never run a second pool beside one
that is still dying. The kernel drops it whatever kills the processes.
"""

from __future__ import annotations

import fcntl
import os
import time
from pathlib import Path


class DataLock:
    def __init__(self, folder: Path):
        self.path = folder / "serve.lock"
        self.fd = -1

    def acquire(self, wait: float) -> bool:
        """Take the lock, waiting up to ``wait`` seconds (the workers of a serve just killed take a moment to go)."""
        self.fd = os.open(self.path, os.O_RDWR | os.O_CREAT, 0o644)
        deadline = time.monotonic() + wait
        while True:
            try:
                fcntl.flock(self.fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                break
            except BlockingIOError:
                if time.monotonic() > deadline:
                    return False
                time.sleep(0.1)
        try:  # who holds it, for the message of the serve that is refused (best effort: the disk may be full)
            os.ftruncate(self.fd, 0)
            os.pwrite(self.fd, f"{os.getpid()}\n".encode(), 0)
        except OSError:
            pass
        return True

    def holder(self) -> str:
        try:
            return self.path.read_text().strip() or "unknown"
        except OSError:
            return "unknown"

    def release(self) -> None:
        if self.fd >= 0:
            os.close(self.fd)
            self.fd = -1
