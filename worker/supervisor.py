"""Keeps a fixed number of worker processes (``worker.child``) alive, and stops them all quickly.

A process that exits is logged and started again after a back-off (1 s, doubling while it keeps dying young, up to
a minute). Every child gets the kernel's parent-death signal tied to the supervising thread, so the children are
started and stopped by that one thread, which lives until they are gone.
"""

from __future__ import annotations

import logging
import os
import signal
import socket
import subprocess
import sys
import threading
import time
from collections.abc import Sequence

log = logging.getLogger("wakeyard.supervisor")

GRACE = 1.5  # seconds a child has after SIGTERM to hand back its job before SIGKILL (total stop stays under 2 s)
STABLE = 60.0  # a child that lived this long was healthy: its next restart waits the shortest back-off again
MAX_BACKOFF = 60.0


class Supervisor:
    def __init__(
        self, count: int, loglevel: str = "info", keep_fds: Sequence[int] = (), module: str = "wakeyard.worker.child"
    ):
        """``module``: what each process runs (``worker.child``, a Celery worker on the job store, or
        ``worker.remote``, a worker that reaches only the service's HTTP endpoints)."""
        self.count, self.loglevel, self.keep_fds, self.module = count, loglevel, tuple(keep_fds), module
        self.procs: list[subprocess.Popen[bytes] | None] = [None] * count
        self.born = [0.0] * count
        self.failures = [0] * count
        self.due = [0.0] * count
        self.stopped: list[str] = []  # host:pid (as the job store knows them) of the children the stop ended
        self.stopping = threading.Event()

    def run(self) -> None:
        """Start the children, restart any that exit, and when ``stopping`` is set stop them all; returns then."""
        try:
            while not self.stopping.is_set():
                self._tick()
                self.stopping.wait(0.2)
        finally:
            self._stop_all()

    def _tick(self) -> None:
        now = time.monotonic()
        for i, proc in enumerate(self.procs):
            if proc is not None and proc.poll() is not None:
                lived = now - self.born[i]
                self.failures[i] = self.failures[i] + 1 if lived < STABLE else 1
                delay = min(MAX_BACKOFF, 2.0 ** (self.failures[i] - 1))
                log.warning(
                    "worker process %d (pid %d) exited with code %s after %.0f s; starting it again in %.0f s",
                    i,
                    proc.pid,
                    proc.returncode,
                    lived,
                    delay,
                )
                self.procs[i], self.due[i] = None, now + delay
            if self.procs[i] is None and now >= self.due[i] and not self.stopping.is_set():
                self._spawn(i)

    def _spawn(self, i: int) -> None:
        env = {**os.environ, "WAKEYARD_SUPERVISOR_PID": str(os.getpid())}
        try:  # a group of its own: a Ctrl-C in the terminal reaches only the supervisor, which stops the children
            proc = subprocess.Popen(
                [sys.executable, "-m", self.module, self.loglevel],
                env=env,
                pass_fds=self.keep_fds,
                process_group=0,
            )
        except OSError:  # out of memory or processes: try again later
            log.exception("could not start worker process %d", i)
            self.due[i] = time.monotonic() + MAX_BACKOFF
            return
        self.procs[i], self.born[i] = proc, time.monotonic()

    def _stop_all(self) -> None:
        alive = [p for p in self.procs if p is not None and p.poll() is None]
        self.stopped = [f"{socket.gethostname()}:{p.pid}" for p in alive]
        for proc in alive:
            proc.send_signal(signal.SIGTERM)  # the child stops its job at the next time step and hands it back
        deadline = time.monotonic() + GRACE
        for proc in alive:
            try:
                proc.wait(max(0.0, deadline - time.monotonic()))
            except subprocess.TimeoutExpired:
                log.warning("worker process %d did not stop within %.1f s: killed", proc.pid, GRACE)
                proc.kill()
                proc.wait()
