"""Symbolic Cholesky kernels: elimination tree, postorder, column counts, tree depth.

All work on a symmetric graph in CSR form (``indptr``, ``indices``, no diagonal) under a permutation
``perm`` (new position k holds old vertex ``perm[k]``) with inverse ``inv``; results are indexed by
new positions. Each kernel is near-linear: O(|E| α(|E|, n)).
"""

from __future__ import annotations

import numpy as np
from numba import njit


@njit(cache=True)
def etree(n, indptr, indices, perm, inv):
    """Elimination tree of the permuted matrix (Liu 1986, path compression).

    Returns ``parent`` with ``parent[k] = -1`` for roots.
    """
    parent = np.empty(n, dtype=np.int64)
    ancestor = np.empty(n, dtype=np.int64)
    for k in range(n):
        parent[k] = -1
        ancestor[k] = -1
        u = perm[k]
        for p in range(indptr[u], indptr[u + 1]):
            i = inv[indices[p]]
            while i != -1 and i < k:
                inext = ancestor[i]
                ancestor[i] = k
                if inext == -1:
                    parent[i] = k
                i = inext
    return parent


@njit(cache=True)
def postorder(parent):
    """Depth-first postorder of a forest; children are visited in increasing order."""
    n = parent.size
    head = np.full(n, -1, dtype=np.int64)
    nxt = np.full(n, -1, dtype=np.int64)
    for j in range(n - 1, -1, -1):
        p = parent[j]
        if p != -1:
            nxt[j] = head[p]
            head[p] = j
    post = np.empty(n, dtype=np.int64)
    stack = np.empty(n, dtype=np.int64)
    k = 0
    for root in range(n):
        if parent[root] != -1:
            continue
        top = 0
        stack[0] = root
        while top >= 0:
            p = stack[top]
            c = head[p]
            if c == -1:
                top -= 1
                post[k] = p
                k += 1
            else:
                head[p] = nxt[c]
                top += 1
                stack[top] = c
    return post


@njit(cache=True)
def column_counts(n, indptr, indices, perm, inv, parent, post):
    """Nonzeros per column of the Cholesky factor L, diagonal included.

    Skeleton-matrix / least-common-ancestor method of Gilbert, Ng & Peyton (1994), with the
    disjoint-set "leaf" test; O(|E| α) time, O(n) extra memory, L is never formed.
    """
    delta = np.zeros(n, dtype=np.int64)
    first = np.full(n, -1, dtype=np.int64)
    maxfirst = np.full(n, -1, dtype=np.int64)
    prevleaf = np.full(n, -1, dtype=np.int64)
    ancestor = np.arange(n, dtype=np.int64)
    for k in range(n):
        j = post[k]
        delta[j] = 1 if first[j] == -1 else 0  # j is a leaf of the etree
        while j != -1 and first[j] == -1:
            first[j] = k
            j = parent[j]
    for k in range(n):
        j = post[k]
        if parent[j] != -1:
            delta[parent[j]] -= 1
        u = perm[j]
        for p in range(indptr[u], indptr[u + 1]):
            i = inv[indices[p]]
            # is j a leaf of the row-subtree of i?
            if i <= j or first[j] <= maxfirst[i]:
                continue
            maxfirst[i] = first[j]
            jprev = prevleaf[i]
            prevleaf[i] = j
            delta[j] += 1
            if jprev != -1:
                q = jprev
                while q != ancestor[q]:
                    q = ancestor[q]
                s = jprev
                while s != q:
                    sp_ = ancestor[s]
                    ancestor[s] = q
                    s = sp_
                delta[q] -= 1
        if parent[j] != -1:
            ancestor[j] = parent[j]
    counts = delta.copy()
    for j in range(n):
        if parent[j] != -1:
            counts[parent[j]] += counts[j]
    return counts


@njit(cache=True)
def tree_depths(parent):
    """Depth of each node (roots have depth 1); requires ``parent[j] > j`` as in an etree."""
    n = parent.size
    depth = np.ones(n, dtype=np.int64)
    for j in range(n - 1, -1, -1):
        p = parent[j]
        if p != -1:
            depth[j] = depth[p] + 1
    return depth
