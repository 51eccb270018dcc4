"""Compiled kernels for graph bisection and vertex separators (numba, ``cache=True``).

Plain NumPy arrays in and out; callers in :mod:`reorder.separators` validate. Graphs are CSR
``(indptr, indices)`` with optional edge weights ``ewgt`` (int64, aligned with ``indices``) and vertex
weights ``vweight`` (int64). A vertex partition ``part`` is int8 with 0 / 1 for the two sides and 2 for
the separator.
"""

from __future__ import annotations

import numpy as np
from numba import njit


@njit(cache=True, nogil=True)
def induced_subgraph(indptr, indices, vertices, local):
    """Induced subgraph on ``vertices`` (relabelled 0..m-1 in the given order).

    ``local`` is a scratch array of length n filled with -1; it is restored before returning, so
    one array serves every call (no O(n) allocation per subproblem). If ``vertices`` is increasing
    the neighbour lists stay sorted.
    """
    m = vertices.size
    for i in range(m):
        local[vertices[i]] = i
    sub_indptr = np.zeros(m + 1, dtype=np.int64)
    cnt = 0
    for i in range(m):
        v = vertices[i]
        for p in range(indptr[v], indptr[v + 1]):
            if local[indices[p]] >= 0:
                cnt += 1
        sub_indptr[i + 1] = cnt
    sub_indices = np.empty(cnt, dtype=np.int64)
    k = 0
    for i in range(m):
        v = vertices[i]
        for p in range(indptr[v], indptr[v + 1]):
            j = local[indices[p]]
            if j >= 0:
                sub_indices[k] = j
                k += 1
    for i in range(m):
        local[vertices[i]] = -1
    return sub_indptr, sub_indices


@njit(cache=True, nogil=True)
def component_labels(indptr, indices):
    """Connected components by breadth-first search: ``(count, labels)``, labels in order of the
    smallest vertex of each component."""
    n = indptr.size - 1
    label = np.full(n, -1, dtype=np.int64)
    queue = np.empty(n, dtype=np.int64)
    nc = 0
    for s in range(n):
        if label[s] != -1:
            continue
        label[s] = nc
        head = 0
        tail = 1
        queue[0] = s
        while head < tail:
            v = queue[head]
            head += 1
            for p in range(indptr[v], indptr[v + 1]):
                u = indices[p]
                if label[u] == -1:
                    label[u] = nc
                    queue[tail] = u
                    tail += 1
        nc += 1
    return nc, label


@njit(cache=True, nogil=True)
def heavy_edge_matching(indptr, indices, ewgt, vweight, visit, maxvweight, rank_ties):
    """Heavy-edge matching: visit vertices in ``visit`` order and match each unmatched vertex with
    the unmatched neighbour joined by the heaviest edge, subject to the coarse vertex weight staying
    at most ``maxvweight``. Ties: the lighter neighbour, then (``rank_ties``) the one visited first
    or (otherwise) the lower index.

    Returns ``(nc, cmap, match)``: number of coarse vertices, fine → coarse map and the mate of each
    vertex (itself if unmatched). Coarse vertices are numbered in the order of their smaller fine
    vertex, not in the (random) visiting order, so that coarse graphs keep the locality of the fine
    numbering (a random coarse numbering made the contraction of a 10⁶-vertex grid's hierarchy
    cache-bound: 10 s of a 42 s ordering, measured). On coarse levels ties should follow the visiting
    order: there "lower index" prefers one direction of the mesh and stretches the aggregates.
    """
    n = indptr.size - 1
    match = np.full(n, -1, dtype=np.int64)
    rank = np.arange(n, dtype=np.int64)
    if rank_ties:
        for t in range(n):
            rank[visit[t]] = t
    for t in range(n):
        v = visit[t]
        if match[v] != -1:
            continue
        best = -1
        bw = -1
        bvw = 0
        for p in range(indptr[v], indptr[v + 1]):
            u = indices[p]
            if match[u] != -1 or u == v:
                continue
            if vweight[u] + vweight[v] > maxvweight:
                continue
            w = ewgt[p]
            if w > bw or (w == bw and (vweight[u] < bvw or (vweight[u] == bvw and rank[u] < rank[best]))):
                best = u
                bw = w
                bvw = vweight[u]
        if best == -1:
            match[v] = v
        else:
            match[v] = best
            match[best] = v
    cmap = np.full(n, -1, dtype=np.int64)
    nc = 0
    for v in range(n):
        if cmap[v] == -1:
            cmap[v] = nc
            cmap[match[v]] = nc
            nc += 1
    return nc, cmap, match


@njit(cache=True, nogil=True)
def contract(indptr, indices, ewgt, vweight, cmap, match, nc):
    """Coarse graph of a matching: vertex weights and parallel edge weights are summed."""
    n = indptr.size - 1
    rep = np.full(nc, -1, dtype=np.int64)
    for v in range(n):
        c = cmap[v]
        if rep[c] == -1:
            rep[c] = v
    nnz = indptr[n]
    cindptr = np.zeros(nc + 1, dtype=np.int64)
    cind = np.empty(nnz, dtype=np.int64)
    cw = np.empty(nnz, dtype=np.int64)
    cvw = np.zeros(nc, dtype=np.int64)
    marker = np.full(nc, -1, dtype=np.int64)
    k = 0
    for c in range(nc):
        start = k
        v = rep[c]
        for t in range(2):
            if t == 0:
                u = v
            else:
                u = match[v]
                if u == v:
                    break
            cvw[c] += vweight[u]
            for p in range(indptr[u], indptr[u + 1]):
                cu = cmap[indices[p]]
                if cu == c:
                    continue
                if marker[cu] < start:
                    marker[cu] = k
                    cind[k] = cu
                    cw[k] = ewgt[p]
                    k += 1
                else:
                    cw[marker[cu]] += ewgt[p]
        cindptr[c + 1] = k
    return cindptr, cind[:k].copy(), cw[:k].copy(), cvw


@njit(cache=True, nogil=True)
def sweep_cuts(indptr, indices, ewgt, order):
    """Edge-cut weight of every prefix split of ``order``: ``cut[k]`` is the weight of the edges
    between ``order[:k]`` and ``order[k:]``, for k = 0..n (O(|E|))."""
    n = indptr.size - 1
    rank = np.empty(n, dtype=np.int64)
    for i in range(n):
        rank[order[i]] = i
    diff = np.zeros(n + 2, dtype=np.int64)
    for v in range(n):
        rv = rank[v]
        for p in range(indptr[v], indptr[v + 1]):
            ru = rank[indices[p]]
            if rv < ru:
                diff[rv + 1] += ewgt[p]
                diff[ru + 1] -= ewgt[p]
    cut = np.empty(n + 1, dtype=np.int64)
    s = 0
    for k in range(n + 1):
        s += diff[k]
        cut[k] = s
    return cut


@njit(cache=True, nogil=True)
def prefix_split(indptr, indices, ewgt, vweight, order, balance, median):
    """Two-way split of ``order`` at the best prefix: side 0 is ``order[:k]``.

    ``median``: the first k whose prefix weighs at least half the total. Otherwise, among the
    prefixes with both sides weighing at least ``balance`` of the total, the least
    ``cut · W² / (4 w0 w1)`` (first on ties), or the median when none qualifies. Returns
    ``(part, cut)`` with ``part`` int8 0 / 1 per vertex.
    """
    n = indptr.size - 1
    cut = sweep_cuts(indptr, indices, ewgt, order)
    cw = np.zeros(n + 1, dtype=np.int64)
    for i in range(n):
        cw[i + 1] = cw[i] + vweight[order[i]]
    total = cw[n]
    half = total / 2.0
    kmed = n
    for i in range(n + 1):
        if cw[i] >= half:
            kmed = i
            break
    kmed = min(max(kmed, 1), n - 1)
    k = kmed
    if not median:
        lo = balance * total
        scale = (total * total) / 4.0
        best = np.inf
        found = False
        for i in range(1, n):
            w0 = np.float64(cw[i])
            w1 = total - w0
            if w0 >= lo - 1e-9 and w1 >= lo - 1e-9:
                sc = cut[i] * scale / max(w0 * w1, 1.0)
                if not found or sc < best:
                    best = sc
                    k = i
                    found = True
        if not found:
            k = kmed
    part = np.ones(n, dtype=np.int8)
    for i in range(k):
        part[order[i]] = 0
    return part, cut[k]


@njit(cache=True, nogil=True)
def cut_bipartite(indptr, indices, part):
    """The bipartite graph of cut edges between side 0 (rows) and side 1 (columns).

    Returns ``(rows, cols, bi_indptr, bi_indices)``: boundary vertices of each side and the CSR
    of the row → column adjacency in local numbering.
    """
    n = indptr.size - 1
    loc = np.full(n, -1, dtype=np.int64)
    nr = 0
    ncl = 0
    for v in range(n):
        if part[v] > 1:
            continue
        for p in range(indptr[v], indptr[v + 1]):
            u = indices[p]
            if part[u] <= 1 and part[u] != part[v]:
                if part[v] == 0:
                    loc[v] = nr
                    nr += 1
                else:
                    loc[v] = ncl
                    ncl += 1
                break
    rows = np.empty(nr, dtype=np.int64)
    cols = np.empty(ncl, dtype=np.int64)
    for v in range(n):
        if loc[v] >= 0:
            if part[v] == 0:
                rows[loc[v]] = v
            else:
                cols[loc[v]] = v
    bptr = np.zeros(nr + 1, dtype=np.int64)
    cnt = 0
    for i in range(nr):
        v = rows[i]
        for p in range(indptr[v], indptr[v + 1]):
            if part[indices[p]] == 1:
                cnt += 1
        bptr[i + 1] = cnt
    bind = np.empty(cnt, dtype=np.int64)
    k = 0
    for i in range(nr):
        v = rows[i]
        for p in range(indptr[v], indptr[v + 1]):
            u = indices[p]
            if part[u] == 1:
                bind[k] = loc[u]
                k += 1
    return rows, cols, bptr, bind


@njit(cache=True, nogil=True)
def konig_cover(bptr, bind, row_match, ncols):
    """Minimum vertex cover of a bipartite graph from a maximum matching (König's theorem).

    ``row_match[i]`` is the column matched to row i or -1. Alternating breadth-first search from
    the unmatched rows marks the set Z; the cover is (rows not in Z) ∪ (columns in Z).
    Returns boolean masks ``(row_in_cover, col_in_cover)``.
    """
    nr = bptr.size - 1
    col_match = np.full(ncols, -1, dtype=np.int64)
    for i in range(nr):
        if row_match[i] >= 0:
            col_match[row_match[i]] = i
    zr = np.zeros(nr, dtype=np.bool_)
    zc = np.zeros(ncols, dtype=np.bool_)
    queue = np.empty(nr, dtype=np.int64)
    tail = 0
    for i in range(nr):
        if row_match[i] < 0:
            zr[i] = True
            queue[tail] = i
            tail += 1
    head = 0
    while head < tail:
        i = queue[head]
        head += 1
        for p in range(bptr[i], bptr[i + 1]):
            j = bind[p]
            if zc[j]:
                continue
            zc[j] = True
            r = col_match[j]
            if r >= 0 and not zr[r]:
                zr[r] = True
                queue[tail] = r
                tail += 1
    return ~zr, zc


@njit(cache=True, nogil=True)
def _viol(w0, w1, maxside):
    m = max(w0, w1)
    return m - maxside if m > maxside else 0


@njit(cache=True, nogil=True)
def _move_gains(indptr, indices, vweight, part, v):
    """Gains of moving separator vertex ``v`` to side 0 and to side 1: its weight minus the weight
    of the neighbours on the other side, which would have to enter the separator."""
    g0 = vweight[v]
    g1 = vweight[v]
    for p in range(indptr[v], indptr[v + 1]):
        u = indices[p]
        if part[u] == 1:
            g0 -= vweight[u]
        elif part[u] == 0:
            g1 -= vweight[u]
    return g0, g1


@njit(cache=True, nogil=True)
def _heap_push(h, size, key):
    """Push ``key`` on the binary min-heap ``h[:size]`` (grown by doubling); returns ``(h, size)``."""
    if size == h.size:
        grown = np.empty(2 * h.size, dtype=np.int64)
        grown[:size] = h[:size]
        h = grown
    i = size
    while i > 0:
        up = (i - 1) >> 1
        if h[up] <= key:
            break
        h[i] = h[up]
        i = up
    h[i] = key
    return h, size + 1


@njit(cache=True, nogil=True)
def _heap_pop(h, size):
    """Remove the least key of the binary min-heap ``h[:size]``; returns the new size."""
    size -= 1
    if size <= 0:
        return 0
    key = h[size]
    i = 0
    while True:
        c = 2 * i + 1
        if c >= size:
            break
        if c + 1 < size and h[c + 1] < h[c]:
            c += 1
        if h[c] >= key:
            break
        h[i] = h[c]
        i = c
    h[i] = key
    return size


@njit(cache=True, nogil=True)
def vertex_fm(indptr, indices, vweight, part, maxside, passes, limit):
    """Fiduccia–Mattheyses refinement of a vertex separator, in place.

    A move takes a separator vertex ``v`` to side ``s``; its neighbours on the other side join the
    separator. Gain = weight(v) − weight of those neighbours. Each pass moves unlocked separator
    vertices by best gain (lazy binary heaps, ties to the lower index), never letting a side exceed
    ``maxside``, stops after ``limit`` moves without improvement and rolls back to the best state
    seen, compared by (balance violation, separator weight, |w0 − w1|). Passes repeat while they
    improve.

    Work per pass is proportional to the separator and the moves (plus their neighbourhoods), not
    to the graph: the separator list is carried from pass to pass. Heap keys are int64
    ``(offset − gain) · n + v``, so the pop order is that of the pairs (−gain, v).

    Returns the side weights ``[w0, w1, w_sep]``.
    """
    n = indptr.size - 1
    w = np.zeros(3, dtype=np.int64)
    for v in range(n):
        w[part[v]] += vweight[v]
    sep = np.flatnonzero(part == 2).astype(np.int64)
    nsep = sep.size
    offset = w[0] + w[1] + w[2] + 1  # |gain| <= total weight: keys stay non-negative
    gain = np.empty((2, n), dtype=np.int64)
    lock = np.full(n, -1, dtype=np.int64)
    seen = np.full(n, -1, dtype=np.int64)
    moves = np.empty(n, dtype=np.int64)
    mstart = np.empty(n + 1, dtype=np.int64)
    pulled = np.empty(indptr[n] + 1, dtype=np.int64)
    h0 = np.empty(4 * nsep + 16, dtype=np.int64)
    h1 = np.empty(4 * nsep + 16, dtype=np.int64)
    for it in range(passes):
        for i in range(nsep):
            v = sep[i]
            g0, g1 = _move_gains(indptr, indices, vweight, part, v)
            gain[0, v] = g0
            gain[1, v] = g1
        if h0.size < nsep:
            h0 = np.empty(2 * nsep, dtype=np.int64)
            h1 = np.empty(2 * nsep, dtype=np.int64)
        for i in range(nsep):
            v = sep[i]
            h0[i] = (offset - gain[0, v]) * n + v
            h1[i] = (offset - gain[1, v]) * n + v
        s0 = nsep
        s1 = nsep
        h0[:s0].sort()  # a sorted array is a heap
        h1[:s1].sort()
        best_viol = _viol(w[0], w[1], maxside)
        best_sep = w[2]
        best_imb = abs(w[0] - w[1])
        best_k = 0
        nm = 0
        npl = 0
        since = 0
        while True:
            # discard stale heap tops
            while s0 > 0:
                v = h0[0] % n
                if part[v] != 2 or lock[v] == it or offset - h0[0] // n != gain[0, v]:
                    s0 = _heap_pop(h0, s0)
                else:
                    break
            while s1 > 0:
                v = h1[0] % n
                if part[v] != 2 or lock[v] == it or offset - h1[0] // n != gain[1, v]:
                    s1 = _heap_pop(h1, s1)
                else:
                    break
            ok0 = False
            ok1 = False
            v0 = -1
            v1 = -1
            g0 = 0
            g1 = 0
            if s0 > 0:
                v0 = h0[0] % n
                g0 = gain[0, v0]
                ok0 = w[0] + vweight[v0] <= maxside
            if s1 > 0:
                v1 = h1[0] % n
                g1 = gain[1, v1]
                ok1 = w[1] + vweight[v1] <= maxside
            if not ok0 and not ok1:
                break
            if ok0 and ok1:
                if g0 > g1 or (g0 == g1 and w[0] <= w[1]):
                    to = 0
                else:
                    to = 1
            elif ok0:
                to = 0
            else:
                to = 1
            if to == 0:
                v = v0
                s0 = _heap_pop(h0, s0)
            else:
                v = v1
                s1 = _heap_pop(h1, s1)
            other = 1 - to
            part[v] = to
            w[2] -= vweight[v]
            w[to] += vweight[v]
            lock[v] = it
            moves[nm] = v
            mstart[nm] = npl
            # separator neighbours of v: moving them to `other` would now pull v
            for p in range(indptr[v], indptr[v + 1]):
                x = indices[p]
                if part[x] == 2:
                    gain[other, x] -= vweight[v]
            first = npl
            for p in range(indptr[v], indptr[v + 1]):
                u = indices[p]
                if part[u] == other:
                    part[u] = 2
                    w[other] -= vweight[u]
                    w[2] += vweight[u]
                    pulled[npl] = u
                    npl += 1
            for q in range(first, npl):
                u = pulled[q]
                for p in range(indptr[u], indptr[u + 1]):
                    x = indices[p]
                    if part[x] == 2:
                        gain[to, x] += vweight[u]
            for q in range(first, npl):
                u = pulled[q]
                a, b = _move_gains(indptr, indices, vweight, part, u)
                gain[0, u] = a
                gain[1, u] = b
            # push changed entries
            for p in range(indptr[v], indptr[v + 1]):
                x = indices[p]
                if part[x] == 2 and lock[x] != it:
                    h0, s0 = _heap_push(h0, s0, (offset - gain[0, x]) * n + x)
                    h1, s1 = _heap_push(h1, s1, (offset - gain[1, x]) * n + x)
            for q in range(first, npl):
                u = pulled[q]
                for p in range(indptr[u], indptr[u + 1]):
                    x = indices[p]
                    if part[x] == 2 and lock[x] != it:
                        if to == 0:
                            h0, s0 = _heap_push(h0, s0, (offset - gain[0, x]) * n + x)
                        else:
                            h1, s1 = _heap_push(h1, s1, (offset - gain[1, x]) * n + x)
            nm += 1
            mstart[nm] = npl
            vi = _viol(w[0], w[1], maxside)
            imb = abs(w[0] - w[1])
            if vi < best_viol or (vi == best_viol and (w[2] < best_sep or (w[2] == best_sep and imb < best_imb))):
                best_viol = vi
                best_sep = w[2]
                best_imb = imb
                best_k = nm
                since = 0
            else:
                since += 1
                if since > limit:
                    break
        # roll back to the best state
        for i in range(nm - 1, best_k - 1, -1):
            v = moves[i]
            to = part[v]
            other = 1 - to
            for q in range(mstart[i], mstart[i + 1]):
                u = pulled[q]
                part[u] = other
                w[2] -= vweight[u]
                w[other] += vweight[u]
            part[v] = 2
            w[to] -= vweight[v]
            w[2] += vweight[v]
        if best_k == 0:
            break
        # the new separator: old separator vertices not moved, and the vertices pulled in by the
        # kept moves (a vertex may have been pulled twice; `seen` drops repeats)
        new = np.empty(nsep + mstart[best_k], dtype=np.int64)
        cnt = 0
        for q in range(nsep + mstart[best_k]):
            x = sep[q] if q < nsep else pulled[q - nsep]
            if part[x] == 2 and seen[x] != it:
                seen[x] = it
                new[cnt] = x
                cnt += 1
        sep = new
        nsep = cnt
    return w


@njit(cache=True, nogil=True)
def edges_cross(indptr, indices, part):
    """Number of edges joining side 0 and side 1 directly (0 for a valid separator)."""
    n = indptr.size - 1
    bad = 0
    for v in range(n):
        if part[v] != 0:
            continue
        for p in range(indptr[v], indptr[v + 1]):
            if part[indices[p]] == 1:
                bad += 1
    return bad


@njit(cache=True, nogil=True)
def boundary_cover(indptr, indices, part, vweight):
    """Cheap vertex separator from a two-way split, in place: the lighter of the two one-sided
    boundaries (vertices of one side with a neighbour on the other) becomes the separator."""
    n = indptr.size - 1
    b = np.zeros(n, dtype=np.bool_)
    w0 = 0
    w1 = 0
    for v in range(n):
        pv = part[v]
        for p in range(indptr[v], indptr[v + 1]):
            if part[indices[p]] == 1 - pv:
                b[v] = True
                if pv == 0:
                    w0 += vweight[v]
                else:
                    w1 += vweight[v]
                break
    side = 0 if w0 <= w1 else 1
    for v in range(n):
        if b[v] and part[v] == side:
            part[v] = 2


@njit(cache=True, nogil=True)
def with_halo(indptr, indices, vertices, mark):
    """``vertices`` together with their neighbours outside them (the halo), sorted, and a flag per
    returned vertex (True for ``vertices``, False for the halo). ``mark`` is an int8 scratch array
    of length n filled with 0; it is restored before returning."""
    m = vertices.size
    for i in range(m):
        mark[vertices[i]] = 1
    halo = []
    for i in range(m):
        v = vertices[i]
        for p in range(indptr[v], indptr[v + 1]):
            u = indices[p]
            if mark[u] == 0:
                mark[u] = 2
                halo.append(u)
    h = len(halo)
    out = np.empty(m + h, dtype=np.int64)
    for i in range(m):
        out[i] = vertices[i]
    for i in range(h):
        out[m + i] = halo[i]
    out.sort()
    inside = np.empty(m + h, dtype=np.bool_)
    for i in range(m + h):
        inside[i] = mark[out[i]] == 1
        mark[out[i]] = 0
    return out, inside
