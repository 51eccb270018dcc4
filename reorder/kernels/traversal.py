"""Graph traversal kernels shared by the spectral, envelope and separator code."""

from __future__ import annotations

import numpy as np
from numba import njit


@njit(cache=True, nogil=True)
def bfs_levels(indptr, indices, start):
    """Breadth-first distance of every vertex from ``start`` (``-1`` where unreachable)."""
    n = indptr.size - 1
    dist = np.full(n, -1, dtype=np.int64)
    queue = np.empty(n, dtype=np.int64)
    dist[start] = 0
    queue[0] = start
    head = 0
    tail = 1
    while head < tail:
        v = queue[head]
        head += 1
        lv = dist[v] + 1
        for p in range(indptr[v], indptr[v + 1]):
            u = indices[p]
            if dist[u] < 0:
                dist[u] = lv
                queue[tail] = u
                tail += 1
    return dist
