"""One BLAS thread per process, set in this one place: the sparse direct solves gain nothing from more, and the
worker processes (one job each) share the machine's cores."""

from __future__ import annotations

from threadpoolctl import threadpool_limits


def one_blas_thread() -> None:
    """Limit every BLAS and OpenMP library in this process to one thread.

    threadpoolctl limits the libraries loaded so far, so the solver (numpy, scipy and, for pypardiso, MKL) is
    loaded first; environment variables would have to be set before numpy's first import instead, which depends
    on import order."""
    from wakeyard import solver  # noqa: F401  (loads the numerical libraries)

    for _ in range(2):  # MKL loads its OpenMP runtime only when its thread count is first set: limit that too
        threadpool_limits(limits=1)
