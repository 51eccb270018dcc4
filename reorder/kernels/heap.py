"""The indexed binary heap of Sloan's queue (minimum degree writes its heap inline, see there).

Plain arrays: ``heap[:size]`` holds the entries, ``pos[v]`` the slot of entry ``v`` (-1 when absent),
and ``key[v]``, ``tie[v]`` its priority: ``v`` leaves before ``u`` if ``key[v] < key[u]``, or if the
keys are equal and ``tie[v] > tie[u]`` (a max-heap on a priority uses ``key = -priority``).
Callers change ``key`` or ``tie`` of an entry and then restore the order with :func:`heap_up` or
:func:`heap_down`.
"""

from __future__ import annotations

from numba import njit


@njit(cache=True)
def before(a, b, key, tie):
    """True if entry ``a`` leaves the heap before entry ``b``."""
    ka = key[a]
    kb = key[b]
    if ka != kb:
        return ka < kb
    return tie[a] > tie[b]


@njit(cache=True)
def heap_up(k, heap, pos, key, tie):
    """Move the entry in slot ``k`` up to its place."""
    v = heap[k]
    while k > 0:
        parent = (k - 1) >> 1
        u = heap[parent]
        if before(v, u, key, tie):
            heap[k] = u
            pos[u] = k
            k = parent
        else:
            break
    heap[k] = v
    pos[v] = k


@njit(cache=True)
def heap_down(k, size, heap, pos, key, tie):
    """Move the entry in slot ``k`` of a heap of ``size`` entries down to its place."""
    v = heap[k]
    while True:
        c = 2 * k + 1
        if c >= size:
            break
        if c + 1 < size and before(heap[c + 1], heap[c], key, tie):
            c += 1
        u = heap[c]
        if before(u, v, key, tie):
            heap[k] = u
            pos[u] = k
            k = c
        else:
            break
    heap[k] = v
    pos[v] = k
