"""Minimum degree elimination under the exact-degree rules (numba kernel; scores 3, 4 and 5).

Exact external degrees updated once per stage of multiple elimination: J. W. H. Liu, "Modification
of the minimum-degree algorithm by multiple elimination", ACM Trans. Math. Software 11 (1985)
141–153. The quotient graph, its workspace and the steps shared with the approximate rules are
those of :mod:`reorder.kernels.mindegree` (see its notes). This loop is a module of its own so that
it compiles only where an exact rule is used (the multi-rule search of ``mindegree`` and nested
dissection): the default ordering never needs it, and its first run compiles that much less.
Nothing here validates input. All kernels release the GIL.
"""

from __future__ import annotations

from numba import njit

from .mindegree import (_BNEXT, _BPREV, _CLIQ, _DEAD, _DEG, _EDEG, _ELEM, _LEN, _NEL, _PEND, _S_HSIZE, _S_INIT, _S_MASK,
                        _S_MINDEG, _S_NEL, _S_NLEFT, _S_NPEND, _S_NPIV, _S_NTODO, _S_RESUME, _S_SEQ, _S_STAGEDEG,
                        _S_TICK, _S_TOCK, _S_USED, _START, _STATE, _VAR, _WT, _clique_degrees, _degree_bound,
                        _fill_score, _finish, _grow, _new_element, _setup, _supervariables)

__all__ = ["exact_min_degree"]


@njit(cache=True, nogil=True)
def _eliminate_exact(n, role, fifo, score, delta, aggressive, st, stf, counters, ws, V, flag, hhead, mnext, mlast,
                     xfirst, xlast, bhead, btail, pivots, heap, hpos, hval, hseq, plist, tie):
    """The elimination loop of :func:`exact_min_degree` (scores 3-5), resumable as the loop of
    :func:`reorder.kernels.mindegree.approximate_min_degree` (``stf`` keeps the stage's score)."""
    mindeg = st[_S_MINDEG]
    nel = st[_S_NEL]
    npiv = st[_S_NPIV]
    tick = st[_S_TICK]
    tock = st[_S_TOCK]
    used = st[_S_USED]
    hsize = st[_S_HSIZE]
    seq = st[_S_SEQ]
    npend = st[_S_NPEND]
    stagedeg = st[_S_STAGEDEG]
    nleft = st[_S_NLEFT]
    ntodo = st[_S_NTODO]
    resume = st[_S_RESUME]
    mask = st[_S_MASK]
    stageval = stf[0]
    useheap = score >= 4
    dlim = delta if delta >= 0 else -delta - 1

    if st[_S_INIT] == 0:
        # ---- the initial queue, in tie order
        st[_S_INIT] = 1
        for k in range(n):
            v = tie[k] if fifo else tie[n - 1 - k]
            if role[v] != 1 or V[v, _STATE] != _VAR:
                continue
            if useheap:
                if score == 4:
                    hkv = V[v, _DEG] + 0.5
                else:
                    hkv = _fill_score(float(V[v, _DEG]), 0.0, float(V[v, _WT]))
                sq = seq
                seq += 1
                kk = hsize
                hsize += 1
                while kk > 0:
                    pk = (kk - 1) >> 1
                    if hkv < hval[pk] or (hkv == hval[pk] and sq > hseq[pk]):
                        u = heap[pk]
                        heap[kk] = u
                        hval[kk] = hval[pk]
                        hseq[kk] = hseq[pk]
                        hpos[u] = kk
                        kk = pk
                    else:
                        break
                heap[kk] = v
                hval[kk] = hkv
                hseq[kk] = sq
                hpos[v] = kk
            else:
                d = V[v, _DEG]
                if fifo:
                    t = btail[d]
                    V[v, _BNEXT] = -1
                    V[v, _BPREV] = t
                    if t == -1:
                        bhead[d] = v
                    else:
                        V[t, _BNEXT] = v
                    btail[d] = v
                else:
                    h0 = bhead[d]
                    V[v, _BPREV] = -1
                    V[v, _BNEXT] = h0
                    if h0 != -1:
                        V[h0, _BPREV] = v
                    else:
                        btail[d] = v
                    bhead[d] = v

    while nel < ntodo:
        if resume >= 0:
            me = resume
            resume = -1
        else:
            # ---- pivot: a variable of least exact external degree (or score), in stages
            if npend > 0:
                if useheap:
                    if score == 5:
                        stage_over = hsize == 0 or hval[0] > stageval
                    else:
                        stage_over = hsize == 0 or V[heap[0], _DEG] > stagedeg + dlim
                else:
                    while mindeg <= n and bhead[mindeg] == -1:
                        mindeg += 1
                    stage_over = mindeg > stagedeg + dlim
                if stage_over:
                    # end of a multiple-elimination stage: exact external degrees of the neighbours
                    cap = 4 * stagedeg + 64
                    for t in range(npend):
                        i = plist[t] if delta >= 0 else plist[npend - 1 - t]
                        V[i, _PEND] = 0
                        if V[i, _STATE] != _VAR:
                            continue
                        if V[i, _DEG] > cap:
                            # far above the least degree: keep the approximate degree (saves the
                            # scans around hubs; such a vertex is not a pivot candidate soon)
                            d = V[i, _DEG]
                            big = V[i, _CLIQ]
                        else:
                            # exact external degree of i and the weight of its largest element
                            tock += 1
                            flag[i] = tock
                            d = 0
                            big = 0
                            s = V[i, _START]
                            nei = V[i, _NEL]
                            for k in range(V[i, _LEN]):
                                x = ws[s + k]
                                if k < nei:
                                    if V[x, _STATE] != _ELEM:
                                        continue
                                    we = 0
                                    for p in range(V[x, _START], V[x, _START] + V[x, _LEN]):
                                        j = ws[p]
                                        if V[j, _STATE] == _VAR and j != i:
                                            we += V[j, _WT]
                                            if flag[j] != tock:
                                                flag[j] = tock
                                                d += V[j, _WT]
                                    if we > big:
                                        big = we
                                elif V[x, _STATE] == _VAR and flag[x] != tock:
                                    flag[x] = tock
                                    d += V[x, _WT]
                        if useheap:
                            V[i, _DEG] = d
                            if score == 5:
                                hkv = _fill_score(float(d), float(big), float(V[i, _WT]))
                            else:
                                hkv = d + 0.5 * (1.0 - big / (d + 1.0))
                            sq = seq
                            seq += 1
                            kk = hsize
                            hsize += 1
                            while kk > 0:
                                pk = (kk - 1) >> 1
                                if hkv < hval[pk] or (hkv == hval[pk] and sq > hseq[pk]):
                                    u = heap[pk]
                                    heap[kk] = u
                                    hval[kk] = hval[pk]
                                    hseq[kk] = hseq[pk]
                                    hpos[u] = kk
                                    kk = pk
                                else:
                                    break
                            heap[kk] = i
                            hval[kk] = hkv
                            hseq[kk] = sq
                            hpos[i] = kk
                        else:
                            V[i, _DEG] = d
                            if fifo:
                                t2 = btail[d]
                                V[i, _BNEXT] = -1
                                V[i, _BPREV] = t2
                                if t2 == -1:
                                    bhead[d] = i
                                else:
                                    V[t2, _BNEXT] = i
                                btail[d] = i
                            else:
                                h0 = bhead[d]
                                V[i, _BPREV] = -1
                                V[i, _BNEXT] = h0
                                if h0 != -1:
                                    V[h0, _BPREV] = i
                                else:
                                    btail[d] = i
                                bhead[d] = i
                            if d < mindeg:
                                mindeg = d
                    npend = 0
            if useheap:
                me = heap[0]
                mekey = hval[0]
                rm = me
            else:
                while bhead[mindeg] == -1:
                    mindeg += 1
                if npend == 0:
                    stagedeg = mindeg
                me = bhead[mindeg]
                mekey = 0.0
                rm = -1
                # bucket removal of the pivot
                pb = V[me, _BPREV]
                qb = V[me, _BNEXT]
                if pb == -1:
                    bhead[V[me, _DEG]] = qb
                else:
                    V[pb, _BNEXT] = qb
                if qb != -1:
                    V[qb, _BPREV] = pb
                else:
                    btail[V[me, _DEG]] = pb
            if rm >= 0:
                # heap removal of the pivot
                kk = hpos[rm]
                hpos[rm] = -1
                hsize -= 1
                if kk != hsize:
                    last = heap[hsize]
                    lk = hval[hsize]
                    ls = hseq[hsize]
                    up = False
                    if kk > 0:
                        pk = (kk - 1) >> 1
                        up = lk < hval[pk] or (lk == hval[pk] and ls > hseq[pk])
                    if up:
                        while kk > 0:
                            pk = (kk - 1) >> 1
                            if lk < hval[pk] or (lk == hval[pk] and ls > hseq[pk]):
                                u = heap[pk]
                                heap[kk] = u
                                hval[kk] = hval[pk]
                                hseq[kk] = hseq[pk]
                                hpos[u] = kk
                                kk = pk
                            else:
                                break
                    else:
                        while True:
                            c = 2 * kk + 1
                            if c >= hsize:
                                break
                            if c + 1 < hsize:
                                if hval[c + 1] < hval[c] or (hval[c + 1] == hval[c] and hseq[c + 1] > hseq[c]):
                                    c += 1
                            if hval[c] < lk or (hval[c] == lk and hseq[c] > ls):
                                u = heap[c]
                                heap[kk] = u
                                hval[kk] = hval[c]
                                hseq[kk] = hseq[c]
                                hpos[u] = kk
                                kk = c
                            else:
                                break
                    heap[kk] = last
                    hval[kk] = lk
                    hseq[kk] = ls
                    hpos[last] = kk
                if npend == 0:
                    stagedeg = V[me, _DEG]
                    stageval = mekey
            pivots[npiv] = me
            npiv += 1
            nvp = V[me, _WT]
            nel += nvp
            nleft -= nvp
            V[me, _STATE] = _ELEM


        # ---- the new element's variables Lme: A_me plus the variables of the adjacent elements
        degme, used, want = _new_element(me, ws, V, used, counters)
        if want > 0:
            # the caller grows the workspace and calls again with this pivot
            st[_S_MINDEG] = mindeg
            st[_S_NEL] = nel
            st[_S_NPIV] = npiv
            st[_S_TICK] = tick
            st[_S_TOCK] = tock
            st[_S_USED] = used
            st[_S_HSIZE] = hsize
            st[_S_SEQ] = seq
            st[_S_NPEND] = npend
            st[_S_STAGEDEG] = stagedeg
            st[_S_NLEFT] = nleft
            st[_S_RESUME] = me
            stf[0] = stageval
            return want
        lme0 = V[me, _START]
        lme1 = lme0 + V[me, _LEN]

        # ---- take the variables of Lme out of the queue (their degrees change; those still
        # waiting for the end of the stage are not in it)
        for p in range(lme0, lme1):
            i = ws[p]
            if role[i] != 1 or V[i, _PEND] != 0:
                continue
            if useheap:
                kk = hpos[i]
                hpos[i] = -1
                hsize -= 1
                if kk != hsize:
                    last = heap[hsize]
                    lk = hval[hsize]
                    ls = hseq[hsize]
                    up = False
                    if kk > 0:
                        pk = (kk - 1) >> 1
                        up = lk < hval[pk] or (lk == hval[pk] and ls > hseq[pk])
                    if up:
                        while kk > 0:
                            pk = (kk - 1) >> 1
                            if lk < hval[pk] or (lk == hval[pk] and ls > hseq[pk]):
                                u = heap[pk]
                                heap[kk] = u
                                hval[kk] = hval[pk]
                                hseq[kk] = hseq[pk]
                                hpos[u] = kk
                                kk = pk
                            else:
                                break
                    else:
                        while True:
                            c = 2 * kk + 1
                            if c >= hsize:
                                break
                            if c + 1 < hsize:
                                if hval[c + 1] < hval[c] or (hval[c + 1] == hval[c] and hseq[c + 1] > hseq[c]):
                                    c += 1
                            if hval[c] < lk or (hval[c] == lk and hseq[c] > ls):
                                u = heap[c]
                                heap[kk] = u
                                hval[kk] = hval[c]
                                hseq[kk] = hseq[c]
                                hpos[u] = kk
                                kk = c
                            else:
                                break
                    heap[kk] = last
                    hval[kk] = lk
                    hseq[kk] = ls
                    hpos[last] = kk
            else:
                pb = V[i, _BPREV]
                qb = V[i, _BNEXT]
                if pb == -1:
                    bhead[V[i, _DEG]] = qb
                else:
                    V[pb, _BNEXT] = qb
                if qb != -1:
                    V[qb, _BPREV] = pb
                else:
                    btail[V[i, _DEG]] = pb


        # ---- |Le \ Lme|, external degrees, absorption, mass elimination; supervariables
        tick, degme, nel, nleft = _clique_degrees(me, lme0, lme1, tick, degme, nel, nleft, aggressive, mask, role, ws,
                                                  V, hhead, mnext, mlast, xfirst, xlast, counters)
        tock = _supervariables(lme0, lme1, tock, mask, role, ws, V, flag, hhead, mnext, mlast, counters)

        # ---- finish the element; its variables wait for the exact degrees at the end of the stage
        q = lme0
        for p in range(lme0, lme1):
            i = ws[p]
            if V[i, _STATE] != _VAR:
                continue
            nvi = -V[i, _WT]
            V[i, _WT] = nvi
            ws[q] = i
            q += 1
            if role[i] != 1:
                continue
            V[i, _DEG] = _degree_bound(i, nvi, degme, nleft, V)
            if V[i, _PEND] == 0:
                V[i, _PEND] = 1
                plist[npend] = i
                npend += 1
        V[me, _LEN] = q - lme0
        V[me, _EDEG] = degme
        if V[me, _LEN] == 0:
            V[me, _STATE] = _DEAD

    st[_S_NPIV] = npiv
    st[_S_USED] = used
    return 0


@njit(cache=True, nogil=True)
def exact_min_degree(n, indptr, indices, role, tie, aggressive, fifo, elbow, score, delta, compress):
    """:func:`reorder.kernels.mindegree.quotient_min_degree` under the exact rules (``score`` 3, 4
    or 5)."""
    ws, V, flag, hhead, mnext, mlast, xfirst, xlast, bhead, btail, pivots, heap, hpos, hval, hseq, plist, \
        counters, st, stf = _setup(n, indptr, indices, role, tie, elbow, score, compress)
    while True:
        want = _eliminate_exact(n, role, fifo, score, delta, aggressive, st, stf, counters, ws, V, flag, hhead, mnext,
                                mlast, xfirst, xlast, bhead, btail, pivots, heap, hpos, hval, hseq, plist, tie)
        if want == 0:
            break
        ws = _grow(ws, st[_S_USED], want, n)
    out, group = _finish(st[_S_NTODO], st[_S_NPIV], indptr, xfirst, mnext, pivots)
    counters[0] = st[_S_NPIV]
    counters[5] = ws.size
    return out, counters, group
