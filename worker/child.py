"""One worker process under a supervisor (``wakeyard serve`` or ``wakeyard worker``).

It runs one job at a time (Celery's solo pool: no pool children that could be orphaned) and dies with its
supervisor whatever kills that, SIGKILL included: the kernel's parent-death signal, set before any work starts.
"""

from __future__ import annotations

import ctypes
import os
import signal
import sys

PR_SET_PDEATHSIG = 1  # from <linux/prctl.h>


def die_with_parent(parent: int) -> None:
    """SIGKILL this process when ``parent`` ends; exit at once if it has ended already (the race before prctl)."""
    libc = ctypes.CDLL(None, use_errno=True)
    if libc.prctl(PR_SET_PDEATHSIG, signal.SIGKILL, 0, 0, 0) != 0:
        errno = ctypes.get_errno()
        raise OSError(errno, f"prctl(PR_SET_PDEATHSIG) failed: {os.strerror(errno)}")
    if os.getppid() != parent:
        os._exit(1)


def main(loglevel: str) -> None:
    die_with_parent(int(os.environ["WAKEYARD_SUPERVISOR_PID"]))
    from wakeyard.core.blas import one_blas_thread
    from wakeyard.core.settings import Settings
    from wakeyard.worker.app import app

    one_blas_thread()

    # mingle, gossip and event heartbeats sync worker state; ours lives in the job store
    app.worker_main(
        [
            "worker",
            "-P",
            "solo",
            "-Q",
            Settings().queue,
            "-n",
            f"wakeyard-{os.getpid()}@%h",
            "--loglevel",
            loglevel,
            "--without-mingle",
            "--without-gossip",
            "--without-heartbeat",
        ]
    )


if __name__ == "__main__":
    main(sys.argv[1] if len(sys.argv) > 1 else "info")
