"""Envelope kernels: Sloan's priority-queue numbering and the profile of an order.

Plain NumPy arrays in and out (``indptr``, ``indices`` of a symmetric graph without diagonal, int64);
no validation here: :mod:`reorder.spectral` and :mod:`reorder.orderings.envelope` call these.
"""

from __future__ import annotations

import numpy as np
from numba import njit

from .heap import heap_down, heap_up


@njit(cache=True)
def row_profile(n, indptr, indices, inv):
    """Profile ``Σ_i (i − min{j ≤ i : a_ij ≠ 0})`` of the matrix reordered by ``inv`` (old → new)."""
    total = 0
    for v in range(n):
        i = inv[v]
        m = i
        for p in range(indptr[v], indptr[v + 1]):
            j = inv[indices[p]]
            if j < m:
                m = j
        total += i - m
    return total


@njit(cache=True)
def sloan(n, indptr, indices, start, gprio, w1, w2):
    """Sloan's profile-reducing numbering with a global priority ``gprio``.

    The priority of a vertex is ``w2 * gprio[i] − w1 * incr(i)``, where ``incr(i)`` is the growth of
    the front if ``i`` were numbered next. ``gprio`` is the distance to an end vertex in Sloan's
    algorithm, or a spectral position in the hybrid of Kumfert & Pothen. Vertices not reached from
    ``start`` (another component) are started from the one with the largest global priority.

    Returns the numbering ``perm`` (position → vertex).
    """
    status = np.zeros(n, dtype=np.int8)  # 0 inactive, 1 preactive, 2 active, 3 numbered
    # the queue leaves the highest priority first, ties to the smaller index: a heap on -priority
    # with the negated index as tie (negation is exact, so the order is the same)
    key = np.empty(n, dtype=np.float64)
    for v in range(n):
        key[v] = -(w2 * gprio[v] - w1 * (indptr[v + 1] - indptr[v] + 1))
    tie = -np.arange(n, dtype=np.int64)
    heap = np.empty(n, dtype=np.int64)
    pos = np.full(n, -1, dtype=np.int64)
    perm = np.empty(n, dtype=np.int64)
    size = 0
    k = 0
    nxt = start
    while k < n:
        if size == 0:
            # (re)start: the given start first, later the best unnumbered vertex
            if status[nxt] != 0:
                best = -1
                for v in range(n):
                    if status[v] == 0 and (best < 0 or gprio[v] > gprio[best]):
                        best = v
                nxt = best
            status[nxt] = 1
            heap[0] = nxt
            pos[nxt] = 0
            size = 1
        i = heap[0]
        size -= 1
        pos[i] = -1
        if size > 0:
            heap[0] = heap[size]
            pos[heap[0]] = 0
            heap_down(0, size, heap, pos, key, tie)
        if status[i] == 1:
            for p in range(indptr[i], indptr[i + 1]):
                j = indices[p]
                if status[j] == 3:
                    continue
                key[j] -= w1
                if status[j] == 0:
                    status[j] = 1
                    heap[size] = j
                    size += 1
                    heap_up(size - 1, heap, pos, key, tie)
                elif pos[j] >= 0:
                    heap_up(pos[j], heap, pos, key, tie)
        perm[k] = i
        k += 1
        status[i] = 3
        for p in range(indptr[i], indptr[i + 1]):
            j = indices[p]
            if status[j] != 1:
                continue
            status[j] = 2
            key[j] -= w1
            heap_up(pos[j], heap, pos, key, tie)
            for q in range(indptr[j], indptr[j + 1]):
                m = indices[q]
                if status[m] == 3:
                    continue
                key[m] -= w1
                if status[m] == 0:
                    status[m] = 1
                    heap[size] = m
                    size += 1
                    heap_up(size - 1, heap, pos, key, tie)
                elif pos[m] >= 0:
                    heap_up(pos[m], heap, pos, key, tie)
    return perm
