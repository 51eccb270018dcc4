"""The indexed binary heap shared by the kernels (minimum degree's degree heap, Sloan's queue).

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


@njit(cache=True)
def heap_remove(v, size, heap, pos, key, tie):
    """Remove entry ``v`` from the heap of ``size`` entries; return the new size."""
    k = pos[v]
    pos[v] = -1
    size -= 1
    if k == size:
        return size
    last = heap[size]
    heap[k] = last
    pos[last] = k
    if k > 0 and before(last, heap[(k - 1) >> 1], key, tie):
        heap_up(k, heap, pos, key, tie)
    else:
        heap_down(k, size, heap, pos, key, tie)
    return size


@njit(cache=True)
def heap_push(v, size, heap, pos, key, tie):
    """Add entry ``v`` to the heap of ``size`` entries; return the new size."""
    heap[size] = v
    pos[v] = size
    heap_up(size, heap, pos, key, tie)
    return size + 1
