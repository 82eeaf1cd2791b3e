"""wakeyard's Celery workers: one job per process, so BLAS must not start threads of its own.

The variables are set here, before anything imports numpy, because BLAS reads them only once.
"""

import os

for _name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_name] = "1"
