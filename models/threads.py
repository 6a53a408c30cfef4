"""One BLAS thread for the fast model's small dense solves, in every entry point.

The fast model works on dense matrices of a few hundred rows: BLAS threads cost more than they
save there (measured 218 ms vs 35 ms per evaluate on a busy 2-core machine), and studies run one
evaluation per core instead. ``models`` calls ``one_blas_thread()`` when it is imported, so the
Python API, the command line and the study workers all run this way. An explicit setting of
OPENBLAS_NUM_THREADS, OMP_NUM_THREADS or MKL_NUM_THREADS in the environment wins.
"""

from __future__ import annotations

import os
import sys

__all__ = ["THREAD_VARIABLES", "one_blas_thread"]

THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")

_limiter = None


def one_blas_thread() -> None:
    """Limit BLAS to one thread unless the environment names another count.

    Before numpy is loaded the environment variables do it (BLAS reads them once, at load);
    when numpy was imported first (a notebook, a user's script), threadpoolctl sets the loaded
    BLAS libraries to the count the environment gives (1 by default) for the rest of the process.
    """
    global _limiter
    numpy_loaded = "numpy" in sys.modules
    for var in THREAD_VARIABLES:  # for BLAS libraries loaded from now on (scipy's own, workers)
        os.environ.setdefault(var, "1")
    if numpy_loaded and _limiter is None:
        from threadpoolctl import threadpool_limits

        _limiter = threadpool_limits(limits=_threads_from_environment(), user_api="blas")


def _threads_from_environment() -> int:
    """The first valid positive count among THREAD_VARIABLES, else 1."""
    for var in THREAD_VARIABLES:
        try:
            n = int(os.environ.get(var, ""))
        except ValueError:
            continue
        if n >= 1:
            return n
    return 1
