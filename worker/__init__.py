"""wakeyard's Celery workers: one job per process (BLAS threads: ``core.blas``)."""
