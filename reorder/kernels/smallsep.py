"""Compiled small-subproblem path of nested dissection (numba, ``cache=True``, ``nogil=True``).

Below ``spectral_min`` vertices a subproblem's separator uses breadth-first candidates only (no
eigensolver), so the whole step — coarsening, candidates, covers, FM refinement, projection — and
the recursion below it run here, in one call per subtree: no Python per subproblem, and no GIL held
(other threads order other subtrees meanwhile). The steps are the same kernels, in the same order,
with the same random stream as the Python path of :func:`reorder.separators.vertex_separator`; tests
check that both give the same separators.

Random numbers come from a SplitMix64 generator (G. L. Steele, D. Lea and C. H. Flood, "Fast
splittable pseudorandom number generators", OOPSLA 2014), which both paths share: a state is a
one-element uint64 array.
"""

from __future__ import annotations

import numpy as np
from numba import njit

from .separators import boundary_cover, component_labels, contract, heavy_edge_matching, induced_subgraph, \
    prefix_split, vertex_fm
from .traversal import bfs_levels

_MOD = 2147483647  # 2**31 - 1, as in reorder.orderings.seeds


@njit(cache=True, nogil=True)
def rng_state(seed):
    """A generator state seeded by ``seed`` (an int)."""
    st = np.empty(1, dtype=np.uint64)
    st[0] = np.uint64(seed)
    return st


@njit(cache=True, nogil=True)
def _next(st):
    st[0] += np.uint64(0x9E3779B97F4A7C15)
    z = st[0]
    z = (z ^ (z >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
    z = (z ^ (z >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
    return z ^ (z >> np.uint64(31))


@njit(cache=True, nogil=True)
def rand_below(st, k):
    """A random integer in ``0..k-1`` (k ≥ 1)."""
    return np.int64(_next(st) % np.uint64(k))


@njit(cache=True, nogil=True)
def _shuffle(a, st):
    for i in range(a.size - 1, 0, -1):
        j = rand_below(st, i + 1)
        t = a[i]
        a[i] = a[j]
        a[j] = t


@njit(cache=True, nogil=True)
def random_visit(n, st, block=256):
    """A random visiting order that keeps memory locality (see
    :func:`reorder.separators._local_random_order`): a random permutation for ``n`` ≤ 2048, else the
    blocks of ``block`` consecutive vertices in random order, each permuted by one random pattern
    composed with a random XOR mask per block."""
    if n <= 2048:
        v = np.arange(n, dtype=np.int64)
        _shuffle(v, st)
        return v
    nb = -(-n // block)
    bperm = np.arange(nb, dtype=np.int64)
    _shuffle(bperm, st)
    pattern = np.arange(block, dtype=np.int64)
    _shuffle(pattern, st)
    out = np.empty(n, dtype=np.int64)
    k = 0
    for b in range(nb):
        mask = rand_below(st, block)
        base = bperm[b] * block
        for i in range(block):
            x = base + (pattern[i] ^ mask)
            if x < n:
                out[k] = x
                k += 1
    return out


@njit(cache=True, nogil=True)
def path_index(parent, child):
    """:func:`reorder.orderings.seeds.path_index` (same values)."""
    z = np.uint64(parent) * np.uint64(0x9E3779B97F4A7C15) + np.uint64(child + 1) * np.uint64(0xBF58476D1CE4E5B9)
    z = (z ^ (z >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
    z = (z ^ (z >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
    z = z ^ (z >> np.uint64(31))
    return np.int64(z % np.uint64(_MOD))


@njit(cache=True, nogil=True)
def stable_level_order(dist):
    """Vertices sorted by an integer vector (stable: ties by index), by counting sort; equals
    ``np.argsort(dist, kind="stable")``."""
    n = dist.size
    lo = dist.min()
    hi = dist.max()
    cnt = np.zeros(hi - lo + 2, dtype=np.int64)
    for i in range(n):
        cnt[dist[i] - lo + 1] += 1
    for k in range(1, cnt.size):
        cnt[k] += cnt[k - 1]
    out = np.empty(n, dtype=np.int64)
    for i in range(n):
        d = dist[i] - lo
        out[cnt[d]] = i
        cnt[d] += 1
    return out


@njit(cache=True, nogil=True)
def max_side(total, balance):
    """``reorder.separators._max_side``."""
    a = np.floor((1.0 - balance) * total + 1e-9)
    b = (total + 1) // 2
    return np.int64(max(a, b))


@njit(cache=True, nogil=True)
def fm_limit(n):
    """The FM patience of :func:`reorder.separators.refine_separator` for a graph of ``n`` vertices."""
    return min(max(25, n // 100), 150)


@njit(cache=True, nogil=True)
def _key_less(a, b):
    """Lexicographic ``a < b`` of two score triples (violation, separator, imbalance)."""
    for i in range(3):
        if a[i] != b[i]:
            return a[i] < b[i]
    return False


@njit(cache=True, nogil=True)
def _score(w, maxside):
    out = np.empty(3, dtype=np.int64)
    m = max(w[0], w[1])
    out[0] = m - maxside if m > maxside else 0
    out[1] = w[2]
    out[2] = abs(w[0] - w[1])
    return out


@njit(cache=True, nogil=True)
def cheap_separator(indptr, indices, seed, balance, coarse_size, keep, bfs_starts, passes):
    """Vertex separator of a connected graph by the cheap path of
    :func:`reorder.separators.vertex_separator` (multilevel, refined, breadth-first candidates):
    part labels (0, 1, 2 = separator), int8."""
    n = indptr.size - 1
    st = rng_state(seed)
    # coarsening by heavy-edge matching (reorder.separators.coarsen)
    lp = [indptr]
    li = [indices]
    lw = [np.ones(indices.size, dtype=np.int64)]
    lv = [np.ones(n, dtype=np.int64)]
    lc = [np.empty(0, dtype=np.int64)]
    maxv = max(2, int(1.5 * n / max(coarse_size, 1)))
    while lp[-1].size - 1 > coarse_size:
        cp, ci, cw, cv = lp[-1], li[-1], lw[-1], lv[-1]
        cn = cp.size - 1
        visit = random_visit(cn, st)
        nc, cmap, match = heavy_edge_matching(cp, ci, cw, cv, visit, maxv, len(lp) > 1)
        if nc > 0.9 * cn:
            break
        a, b, c, d = contract(cp, ci, cw, cv, cmap, match, nc)
        lc[-1] = cmap
        lp.append(a)
        li.append(b)
        lw.append(c)
        lv.append(d)
        lc.append(np.empty(0, dtype=np.int64))
    nl = len(lp)
    cp, ci, cw, cv = lp[-1], li[-1], lw[-1], lv[-1]
    cn = cp.size - 1
    maxside = max_side(cv.sum(), balance)
    # breadth-first candidates from the farthest vertex of a random one and from random vertices
    r0 = rand_below(st, cn)
    d0 = bfs_levels(cp, ci, r0)
    starts = np.empty(max(bfs_starts, 1), dtype=np.int64)
    starts[0] = np.argmax(d0)
    for k in range(1, starts.size):
        starts[k] = rand_below(st, cn)
    cparts = []
    ckeys = []
    for j in range(starts.size):
        order = stable_level_order(bfs_levels(cp, ci, starts[j]))
        part, _ = prefix_split(cp, ci, cw, cv, order, balance, False)
        boundary_cover(cp, ci, part, cv)
        w = vertex_fm(cp, ci, cv, part, maxside, passes, fm_limit(cn))
        dup = False
        for q in cparts:
            if np.array_equal(part, q):
                dup = True
                break
        if dup:
            continue
        cparts.append(part)
        ckeys.append(_score(w, maxside))
    # the best `keep` (stable by candidate number), each projected and refined level by level
    nk = len(cparts)
    taken = np.zeros(nk, dtype=np.bool_)
    ncarry = min(max(1, keep), nk) if nl > 1 else 1
    best = np.empty(0, dtype=np.int8)
    bkey = np.zeros(3, dtype=np.int64)
    have = False
    maxside_n = max_side(n, balance)
    for _ in range(ncarry):
        pick = -1
        for j in range(nk):
            if not taken[j] and (pick < 0 or _key_less(ckeys[j], ckeys[pick])):
                pick = j
        taken[pick] = True
        part = cparts[pick]
        key = ckeys[pick]
        for lev in range(nl - 2, -1, -1):
            cmap = lc[lev]
            fine = np.empty(cmap.size, dtype=np.int8)
            for v in range(cmap.size):
                fine[v] = part[cmap[v]]
            part = fine
            vertex_fm(lp[lev], li[lev], lv[lev], part, max_side(lv[lev].sum(), balance), passes,
                      fm_limit(lp[lev].size - 1))
        if nl > 1:
            w = np.zeros(3, dtype=np.int64)
            for v in range(n):
                w[part[v]] += 1
            key = _score(w, maxside_n)
        if not have or _key_less(key, bkey):
            best = part
            bkey = key
            have = True
    return best


@njit(cache=True, nogil=True)
def _better(ok, r, imb, bok, br, bimb):
    """``(ok, r, imb) > (bok, br, bimb)`` as tuples."""
    if ok != bok:
        return ok > bok
    if r != br:
        return r > br
    return imb > bimb


@njit(cache=True, nogil=True)
def _pack(lab, ncomp, leaf_size):
    """``reorder.orderings.nd.dissect._pack_components``: (group of each local vertex list as
    (flat members, group pointer))."""
    order = stable_level_order(lab)
    bounds = np.zeros(ncomp + 1, dtype=np.int64)
    for i in range(lab.size):
        bounds[lab[i] + 1] += 1
    for c in range(ncomp):
        bounds[c + 1] += bounds[c]
    members = np.empty(lab.size, dtype=np.int64)
    pend = np.empty(lab.size, dtype=np.int64)  # small components waiting to fill a group
    gptr = [0]
    k = 0
    npend = 0
    for c in range(ncomp):
        a, b = bounds[c], bounds[c + 1]
        size = b - a
        if size > leaf_size:  # a group of its own, at once (already increasing: stable order)
            for i in range(a, b):
                members[k] = order[i]
                k += 1
            gptr.append(k)
            continue
        if npend + size > leaf_size and npend > 0:
            members[k:k + npend] = np.sort(pend[:npend])
            k += npend
            npend = 0
            gptr.append(k)
        for i in range(a, b):
            pend[npend] = order[i]
            npend += 1
    if npend > 0:
        members[k:k + npend] = np.sort(pend[:npend])
        k += npend
        gptr.append(k)
    return members, np.array(gptr, dtype=np.int64)


@njit(cache=True, nogil=True)
def dissect_small(indptr, indices, verts, start, key, connected, local, perm, leaf_key, leaf_size, bases, trials,
                  trials_min, top_trials, top_min, keep, top_keep, balance, coarse_size, ratio_key):
    """Nested dissection of one subproblem (vertices ``verts`` of the graph, increasing, placed
    from position ``start``, subproblem index ``key``) down to its leaves, as the dissection loop
    of :mod:`reorder.orderings.nd.dissect` does with :func:`cheap_separator` at every step.

    Writes the separators into ``perm`` and the leaves' start positions into ``leaf_key``.
    ``bases[t]`` is ``((seed + 7 t) · 1000003) mod (2³¹ − 1)`` (trial seeds, see
    :mod:`reorder.orderings.seeds`). Returns the nodes in depth-first preorder as arrays ``(kind
    (0 leaf, 1 separator, 2 components), parent (local, -1 for the root), start, stop, separator,
    size pointer, sizes, separator vertex count)``.
    """
    cap = 2 * verts.size + 2
    kind = np.empty(cap, dtype=np.int64)
    par = np.empty(cap, dtype=np.int64)
    nst = np.empty(cap, dtype=np.int64)
    nsp = np.empty(cap, dtype=np.int64)
    nsep = np.empty(cap, dtype=np.int64)
    sptr = np.zeros(cap + 1, dtype=np.int64)
    sizes = np.empty(cap, dtype=np.int64)
    nn = 0
    ns = 0
    total_sep = 0
    sv = [verts]
    ss = [start]
    sp = [-1]
    sk = [key]
    sc = [connected]
    while len(sv) > 0:
        v = sv.pop()
        st0 = ss.pop()
        parent = sp.pop()
        k = sk.pop()
        conn = sc.pop()
        m = v.size
        nid = nn
        nn += 1
        par[nid] = parent
        nst[nid] = st0
        nsp[nid] = st0 + m
        nsep[nid] = 0
        kind[nid] = 0
        sptr[nid + 1] = ns
        if m <= leaf_size:
            for i in range(m):
                leaf_key[v[i]] = st0
            continue
        ip, ix = induced_subgraph(indptr, indices, v, local)
        if not conn:
            ncomp, lab = component_labels(ip, ix)
            if ncomp > 1:
                members, gptr = _pack(lab, ncomp, leaf_size)
                kind[nid] = 2
                ng = gptr.size - 1
                for g in range(ng):
                    sizes[ns] = gptr[g + 1] - gptr[g]
                    ns += 1
                sptr[nid + 1] = ns
                pos = st0 + m
                for g in range(ng - 1, -1, -1):
                    a, b = gptr[g], gptr[g + 1]
                    sub = np.empty(b - a, dtype=np.int64)
                    for i in range(b - a):
                        sub[i] = v[members[a + i]]
                    pos -= b - a
                    sv.append(sub)
                    ss.append(pos)
                    sp.append(nid)
                    sk.append(path_index(k, g))
                    sc.append(b - a > leaf_size)
                continue
        top = m >= top_min
        ntr = max(1, trials) if m >= trials_min else 1
        if top:
            ntr = max(ntr, top_trials)
        best = np.empty(0, dtype=np.int8)
        bok, br, bimb = 0, 0.0, 0
        na, nb, nc = 0, 0, 0  # side and separator sizes of the best trial
        for t in range(ntr):
            seed = (bases[t] + 7919 * k) % _MOD
            part = cheap_separator(ip, ix, seed, balance, coarse_size, top_keep if top else keep, 4, 8)
            a = 0
            b = 0
            c = 0
            for i in range(m):
                if part[i] == 0:
                    a += 1
                elif part[i] == 1:
                    b += 1
                else:
                    c += 1
            ok = 1 if (c > 0 and a > 0 and b > 0) else 0
            if ratio_key:
                r = -c * float(a + b) ** 2 / max(4.0 * a * b, 1.0)
            else:
                r = -float(c)
            imb = -abs(a - b)
            if t == 0 or _better(ok, r, imb, bok, br, bimb):
                best = part
                bok, br, bimb = ok, r, imb
                na, nb, nc = a, b, c
        if na == 0 or nb == 0 or nc == 0:  # no useful separator (e.g. a clique)
            for i in range(m):
                leaf_key[v[i]] = st0
            continue
        A = np.empty(na, dtype=np.int64)
        B = np.empty(nb, dtype=np.int64)
        ia = 0
        ib = 0
        isp = st0 + m - nc
        for i in range(m):
            if best[i] == 0:
                A[ia] = v[i]
                ia += 1
            elif best[i] == 1:
                B[ib] = v[i]
                ib += 1
            else:
                perm[isp] = v[i]
                isp += 1
        kind[nid] = 1
        nsep[nid] = nc
        sizes[ns] = na
        sizes[ns + 1] = nb
        ns += 2
        sptr[nid + 1] = ns
        total_sep += nc
        sv.append(B)
        ss.append(st0 + na)
        sp.append(nid)
        sk.append(path_index(k, 1))
        sc.append(False)
        sv.append(A)
        ss.append(st0)
        sp.append(nid)
        sk.append(path_index(k, 0))
        sc.append(False)
    return (kind[:nn].copy(), par[:nn].copy(), nst[:nn].copy(), nsp[:nn].copy(), nsep[:nn].copy(),
            sptr[:nn + 1].copy(), sizes[:ns].copy(), total_sep)
