"""The run's policy: how a check uses the machine, set around the work and restored.

Kept apart from the pipeline so the command line can set it before the heavy imports
(numpy, scipy, the DXF library) without paying for them when it only prints help.
"""

from __future__ import annotations

import gc
import os
from collections.abc import Iterator
from contextlib import contextmanager

#: environment variables a user sets to choose the BLAS thread count themselves
BLAS_THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")


@contextmanager
def run_policy(*, blas_threads: int | None = 1) -> Iterator[None]:
    """The run's policy around the stages, restored afterwards.

    - The cyclic garbage collector is paused: the DXF document and the model are
      millions of small objects that live until the run ends, and the collector frees
      none of them but walks them again at every threshold (measured at 100k members:
      about 1.5 s of 12 s CPU, for +60 MB peak). Reference counting still frees
      everything dropped.
    - BLAS uses ``blas_threads`` threads (None: leave as set). Each part's dense algebra
      is small, so one thread is faster than two that fight (measured: a 204 x 204 SVD
      0.01 s vs 0.04-0.16 s on a busy 2-core machine); several drawings already run one
      process per core. A user's own OPENBLAS/OMP/MKL_NUM_THREADS setting wins.
    """
    was_enabled = gc.isenabled()
    gc.disable()
    limits = None
    user_set = any(os.environ.get(v) for v in BLAS_THREAD_VARIABLES)
    if blas_threads is not None and not user_set:
        from threadpoolctl import threadpool_limits

        limits = threadpool_limits(limits=blas_threads, user_api="blas")
    try:
        yield
    finally:
        if limits is not None:
            limits.restore_original_limits()
        if was_enabled:
            gc.enable()
