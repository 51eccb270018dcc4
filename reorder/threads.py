"""Threads: one BLAS thread limiter for the whole package, and the worker count of the orderings.

The eigensolvers (LOBPCG with an AMG preconditioner, many tiny dense eigenproblems on coarsest
graphs) run 10-30x slower with a contended BLAS thread pool on a loaded 2-core machine (measured),
so nested dissection and the Fiedler-vector solvers limit BLAS while they run.

Nested dissection orders independent subtrees of its separator tree in worker threads (its compiled
kernels release the GIL); :func:`ordering_threads` says how many.
"""

from __future__ import annotations

import os
from contextlib import nullcontext
from functools import lru_cache

from threadpoolctl import ThreadpoolController

__all__ = ["blas_limit", "single_blas_thread", "ordering_threads", "MAX_THREADS", "ENV"]

#: default cap on the worker threads of an ordering (the machines this is tuned on have 2 cores)
MAX_THREADS = 2
#: environment variable overriding the default worker count (a positive integer)
ENV = "REORDER_THREADS"


@lru_cache(maxsize=1)
def _controller() -> ThreadpoolController:
    # scanning the loaded libraries costs milliseconds: once per process
    return ThreadpoolController()


def blas_limit(threads: int | None):
    """Context limiting BLAS to ``threads`` threads (None: leave the setting alone)."""
    if threads is None:
        return nullcontext()
    return _controller().limit(limits=int(threads), user_api="blas")


def single_blas_thread():
    """Context limiting BLAS to one thread."""
    return blas_limit(1)


def ordering_threads(requested: int | None = None) -> int:
    """Worker threads an ordering may use: ``requested`` if given, else the value of the
    environment variable :data:`ENV` if it is a positive integer, else ``min(MAX_THREADS,
    os.cpu_count())``. Always at least 1. The result of an ordering never depends on it.

    Examples
    --------
    >>> ordering_threads(1)
    1
    """
    if requested is not None:
        return max(1, int(requested))
    env = os.environ.get(ENV, "").strip()
    if env.isdigit() and int(env) > 0:
        return int(env)
    return max(1, min(MAX_THREADS, os.cpu_count() or 1))
