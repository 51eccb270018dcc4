"""One BLAS thread limiter for the whole package.

The eigensolvers (LOBPCG with an AMG preconditioner, many tiny dense eigenproblems on coarsest
graphs) run 10-30x slower with a contended BLAS thread pool on a loaded 2-core machine (measured),
so nested dissection and the Fiedler-vector solvers limit BLAS while they run.
"""

from __future__ import annotations

from contextlib import nullcontext
from functools import lru_cache

from threadpoolctl import ThreadpoolController

__all__ = ["blas_limit", "single_blas_thread"]


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
