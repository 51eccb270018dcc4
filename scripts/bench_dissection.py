"""Benchmark nested dissection (and auto) against SciPy's minimum degree, measured in the same run.

For each matrix: SciPy SuperLU's own minimum degree on A + Aᵀ (``permc_spec="MMD_AT_PLUS_A"``,
``diag_pivot_thresh=0``, ``SymmetricMode``; ordering = inverse of ``perm_c``, applied to an M-matrix of
the same pattern so no pivoting interferes), our ``nd`` (optionally variants and ``auto``), all counted
by :mod:`reorder.analysis` (exact nnz(L) and Σ c_j² operations). Prints ratios to SciPy and the
geometric means over the issue's target set (2-D/3-D grid and finite-element matrices with n ≥ 10⁴),
then times ``nd`` on 2-D 5-point grids of growing size. Writes ``scripts/results/bench_dissection.json``.

Usage::

    python scripts/bench_dissection.py                 # suite + scaling up to 1000x1000
    python scripts/bench_dissection.py --max-grid 500  # smaller scaling run
    python scripts/bench_dissection.py --variants      # also the plain / no-refinement variants
    python scripts/bench_dissection.py --references    # calibration: plain nd, our mindegree, geometric nd
    python scripts/bench_dissection.py --factor        # also time SuperLU factorizations on 3-D cases
    python scripts/bench_dissection.py --auto-suite    # also auto vs best of RCM / SciPy MD, whole suite
    python scripts/bench_dissection.py --efforts fast,normal  # suite rows for each nd effort
    python scripts/bench_dissection.py --factor-sweep 24,32,40,48  # time to factor, 3-D 7-point grids

Time to factor compares ``t(order by nd) + t(SuperLU, natural order, no pivoting)`` with ``t(splu
with its own minimum degree)`` (which includes SuperLU's ordering time); each is the least of
``--repeat`` runs (the machine is noisy). The sweep also prints the ordering *budget*,
``0.5 · t(splu with its own minimum degree) − t(SuperLU, natural order)``: what an ordering may cost
for the ratio to reach 0.5 with the factor time it gave.
"""

from __future__ import annotations

import argparse
import json
import math
import re
import time
from pathlib import Path

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import splu

from reorder.analysis import symbolic_factor
from reorder.gallery import m_matrix
from reorder.graph import from_matrix
from reorder.orderings import order
from reorder.permutation import inverse_permutation

TARGET_KINDS = ("grid2d", "grid3d", "fem2d", "fem3d")


def scipy_md(M):
    """SciPy SuperLU minimum degree on A+Aᵀ: returns (ordering in our convention, seconds)."""
    t = time.perf_counter()
    lu = splu(M, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0, options={"SymmetricMode": True})
    sec = time.perf_counter() - t
    return inverse_permutation(lu.perm_c), sec


def suite_cases(min_n):
    try:
        from reorder.bundled import manifest, suite_dir
        from reorder.io import read_matrix
    except ImportError:
        return []
    out = []
    d = suite_dir()
    for e in manifest():
        if e.get("kind") in TARGET_KINDS and e.get("n", 0) >= min_n:
            out.append((e["name"], e["kind"], lambda f=d / e["file"]: read_matrix(f)))
    return out


def generated_cases():
    import pyamg

    return [
        ("gen_5pt_300x300", "grid2d", lambda: pyamg.gallery.poisson((300, 300)).tocsr()),
        ("gen_9pt_300x300", "grid2d", lambda: pyamg.gallery.stencil_grid(np.ones((3, 3)), (300, 300)).tocsr()),
        ("gen_7pt_40^3", "grid3d", lambda: pyamg.gallery.poisson((40, 40, 40)).tocsr()),
        ("gen_27pt_30^3", "grid3d", lambda: pyamg.gallery.stencil_grid(np.ones((3, 3, 3)), (30, 30, 30)).tocsr()),
    ]


def gmean(x):
    return float(math.exp(np.mean(np.log(x)))) if len(x) else float("nan")


def run_suite(cases, variants, with_auto, factor, efforts=("normal",)):
    rows = []
    hdr = f"{'matrix':28s} {'kind':7s} {'n':>8s} {'method':10s} {'nnzL/md':>8s} {'ops/md':>8s} {'t_ord':>7s} {'t_md':>7s}"
    print(hdr)
    print("-" * len(hdr))
    for name, kind, load in cases:
        A = load()
        G = from_matrix(A)
        M = m_matrix(A)
        pm, t_md = scipy_md(M)
        s0 = symbolic_factor(G, pm)
        methods = [("nd" if e == "normal" else f"nd-{e}", {} if e == "normal" else {"effort": e}) for e in efforts]
        if variants:
            methods += [("nd-plain", dict(PLAIN)),
                        ("nd-norefine", dict(refine=False)), ("nd-trials1", dict(trials=1))]
        if with_auto:
            methods.append(("auto", {}))
        for label, opts in methods:
            meth = "auto" if label == "auto" else "nd"
            o = order(G, meth, **opts)
            s = symbolic_factor(G, o.perm)
            r = {"matrix": name, "kind": kind, "n": G.n, "method": label,
                 "nnz_factor": s.nnz_factor, "factor_ops": s.factor_ops, "seconds": o.seconds,
                 "md_nnz_factor": s0.nnz_factor, "md_factor_ops": s0.factor_ops, "md_seconds": t_md,
                 "nnz_ratio": s.nnz_factor / s0.nnz_factor, "ops_ratio": s.factor_ops / s0.factor_ops}
            if label == "auto":
                r["chosen"] = o.info.get("chosen")
            if factor and label == "nd" and kind in ("grid3d", "fem3d"):
                Mp = M[o.perm][:, o.perm].tocsc()
                t = time.perf_counter()
                splu(Mp, permc_spec="NATURAL", diag_pivot_thresh=0, options={"SymmetricMode": True})
                r["factor_seconds_nd"] = time.perf_counter() - t + o.seconds
                r["factor_seconds_md"] = t_md
            rows.append(r)
            extra = f"  factor {r['factor_seconds_nd']:.2f}s vs {t_md:.2f}s" if "factor_seconds_nd" in r else ""
            extra += f"  chose {r['chosen']}" if "chosen" in r else ""
            print(f"{name:28s} {kind:7s} {G.n:8d} {label:10s} {r['nnz_ratio']:8.3f} {r['ops_ratio']:8.3f} "
                  f"{o.seconds:7.2f} {t_md:7.2f}{extra}", flush=True)
    return rows


def geometric_nd(shape):
    """Textbook nested dissection of a box grid (row-major numbering): split the longest side of
    each box by its middle grid line / plane, order the two halves, then the cut, down to single
    vertices (George 1973, SIAM J. Numer. Anal. 10; George & Liu 1981, chapter 8). A middle line
    separates every 5-/9-point and 7-/27-point stencil (they reach one step)."""
    shape = tuple(int(x) for x in shape)
    idx = np.arange(int(np.prod(shape)), dtype=np.int64).reshape(shape)
    out = []
    stack = [(tuple(slice(0, k) for k in shape), False)]
    while stack:
        box, emit = stack.pop()
        if emit:
            out.append(idx[box].ravel())
            continue
        lens = [s.stop - s.start for s in box]
        if min(lens) <= 0:
            continue
        if max(lens) <= 1:
            out.append(idx[box].ravel())
            continue
        ax = int(np.argmax(lens))
        mid = (box[ax].start + box[ax].stop) // 2
        lo = box[:ax] + (slice(box[ax].start, mid),) + box[ax + 1:]
        hi = box[:ax] + (slice(mid + 1, box[ax].stop),) + box[ax + 1:]
        cut = box[:ax] + (slice(mid, mid + 1),) + box[ax + 1:]
        stack += [(cut, True), (hi, False), (lo, False)]  # popped: lo, hi, then the cut
    return np.concatenate(out)


def _grid_of(name, A):
    """(shape) of a bundled structured grid whose pattern is the row-major stencil grid, else None."""
    import pyamg

    m = re.match(r"grid([23])d_(\d+)pt_(\d+(?:x\d+)+)$", name)
    if not m:
        return None
    shape = tuple(int(x) for x in m.group(3).split("x"))
    dim, pts = int(m.group(1)), int(m.group(2))
    stencil = np.ones((3,) * dim) if pts == 3 ** dim else None
    B = pyamg.gallery.stencil_grid(stencil, shape).tocsr() if stencil is not None \
        else pyamg.gallery.poisson(shape).tocsr()
    same = (abs(B) + abs(B).T != 0).astype(np.int8)
    mine = (abs(A) + abs(A).T != 0).astype(np.int8)
    return shape if (same != mine).nnz == 0 else None


#: the "plain version" the issue describes: median split of the Fiedler vector, vertex cover of the
#: cut, no refinement, no coarsening, minimum-degree leaves (no subtree choice, no multisection)
PLAIN = dict(multilevel=False, refine=False, split="median", hybrid_max=0, multisection=False, trials=1,
             top_trials=1, leaf_order="mindegree", eigenvectors=1, top_eigenvectors=1)


def run_references(cases):
    """Calibration rows: the plain spectral nested dissection, our minimum degree and (on the
    structured grids) textbook geometric nested dissection, as ratios to SciPy's minimum degree."""
    out = []
    print(f"\n{'matrix':28s} {'reference':12s} {'nnzL/md':>8s} {'ops/md':>8s}")
    for name, kind, load in cases:
        if name.startswith("gen_"):
            continue
        A = sp.csr_matrix(load())
        G = from_matrix(A)
        pm, _ = scipy_md(m_matrix(A))
        s0 = symbolic_factor(G, pm)
        perms = [("nd-plain", order(G, "nd", **PLAIN).perm), ("mindegree", order(G, "mindegree").perm)]
        shape = _grid_of(name, A)
        if shape is not None:
            perms.append(("geometric", geometric_nd(shape)))
        for label, p in perms:
            s = symbolic_factor(G, p)
            r = {"matrix": name, "kind": kind, "n": G.n, "reference": label,
                 "nnz_ratio": s.nnz_factor / s0.nnz_factor, "ops_ratio": s.factor_ops / s0.factor_ops}
            out.append(r)
            print(f"{name:28s} {label:12s} {r['nnz_ratio']:8.3f} {r['ops_ratio']:8.3f}", flush=True)
    for label in ("nd-plain", "mindegree", "geometric"):
        sel = [r for r in out if r["reference"] == label]
        if sel:
            print(f"  {label:12s} gmean nnz {gmean([r['nnz_ratio'] for r in sel]):.3f}  "
                  f"ops {gmean([r['ops_ratio'] for r in sel]):.3f}  ({len(sel)} matrices)")
    return out


def run_auto_suite():
    """``auto`` on every bundled matrix against the better of SciPy's RCM and minimum degree."""
    from scipy.sparse.csgraph import reverse_cuthill_mckee

    from reorder.bundled import manifest, suite_dir
    from reorder.io import read_matrix

    out = []
    print(f"\n{'matrix':30s} {'kind':12s} {'n':>7s} {'auto/best(rcm,md)':>18s} chosen")
    for e in manifest():
        A = read_matrix(suite_dir() / e["file"])
        G = from_matrix(A)
        if G.n < 3:
            continue
        pm, _ = scipy_md(m_matrix(A))
        pr = np.asarray(reverse_cuthill_mckee(G.to_csr(), symmetric_mode=True), dtype=np.int64)
        best = min(symbolic_factor(G, pm).nnz_factor, symbolic_factor(G, pr).nnz_factor)
        o = order(G, "auto")
        r = symbolic_factor(G, o.perm).nnz_factor / best
        out.append({"matrix": e["name"], "kind": e["kind"], "n": G.n, "ratio": r, "chosen": o.info.get("chosen")})
        print(f"{e['name']:30s} {e['kind']:12s} {G.n:7d} {r:18.3f} {o.info.get('chosen')}", flush=True)
    return out


def _best_of(repeat, fn):
    best = None
    for _ in range(max(1, repeat)):
        t = time.perf_counter()
        out = fn()
        sec = time.perf_counter() - t
        if best is None or sec < best[0]:
            best = (sec, out)
    return best


def run_factor_sweep(sizes, efforts, repeat):
    """Time to factor on 3-D 7-point grids: nd + SuperLU natural order against splu with its own
    minimum degree (SuperLU's MMD on A + Aᵀ), same M-matrix, same run."""
    import pyamg

    out = []
    print(f"\n{'3-D grid':>10s} {'n':>8s} {'effort':>7s} {'t_order':>8s} {'t_factor':>8s} {'t_splu_md':>9s} "
          f"{'ratio':>6s} {'nnzL/md':>8s} {'ops/md':>7s} {'budget':>7s}")
    for k in sizes:
        A = pyamg.gallery.poisson((k, k, k)).tocsr()
        G = from_matrix(A)
        M = m_matrix(A)
        t_md, (pm, _) = _best_of(repeat, lambda: scipy_md(M))
        s0 = symbolic_factor(G, pm)
        for e in efforts:
            t_ord, o = _best_of(repeat, lambda: order(G, "nd", effort=e))
            Mp = M[o.perm][:, o.perm].tocsc()
            t_fac, _ = _best_of(repeat, lambda: splu(Mp, permc_spec="NATURAL", diag_pivot_thresh=0,
                                                      options={"SymmetricMode": True}))
            s = symbolic_factor(G, o.perm)
            r = {"k": k, "n": G.n, "effort": e, "order_seconds": t_ord, "factor_seconds": t_fac,
                 "splu_md_seconds": t_md, "ratio": (t_ord + t_fac) / t_md,
                 "nnz_ratio": s.nnz_factor / s0.nnz_factor, "ops_ratio": s.factor_ops / s0.factor_ops,
                 # what the ordering may cost for the ratio to reach 0.5 with this factor time
                 "order_budget_seconds": 0.5 * t_md - t_fac}
            out.append(r)
            print(f"{k:>4d}^3     {G.n:8d} {e:>7s} {t_ord:8.2f} {t_fac:8.2f} {t_md:9.2f} {r['ratio']:6.2f} "
                  f"{r['nnz_ratio']:8.3f} {r['ops_ratio']:7.3f} {r['order_budget_seconds']:7.3f}", flush=True)
    return out


def run_cli(k):
    """``reorder order --method nd`` end to end (interpreter start, reading, ordering, writing and
    verifying the file) on a k x k 5-point grid saved as .npz, with SciPy's RCM time for scale."""
    import subprocess
    import sys
    import tempfile

    import pyamg
    import scipy.sparse as sp
    from scipy.sparse.csgraph import reverse_cuthill_mckee

    A = pyamg.gallery.poisson((k, k)).tocsr()
    t_rcm, _ = _best_of(3, lambda: reverse_cuthill_mckee(A, symmetric_mode=True))
    with tempfile.TemporaryDirectory() as d:
        f = Path(d) / f"grid_{k}.npz"
        sp.save_npz(f, A)
        cmd = [sys.executable, "-m", "reorder.cli", "order", str(f), "--method", "nd", "-o", str(Path(d) / "p.txt")]
        t = time.perf_counter()
        subprocess.run(cmd, check=True, capture_output=True)
        sec = time.perf_counter() - t
    print(f"\nreorder order --method nd, {k}x{k} grid end to end: {sec:.1f} s (SciPy RCM {t_rcm:.3f} s, "
          f"ratio {sec / t_rcm:.0f})", flush=True)
    return {"k": k, "n": k * k, "seconds": sec, "rcm_seconds": t_rcm}


def run_scaling(sizes, efforts=("normal",)):
    """nd on 2-D 5-point grids of growing size; SciPy's RCM on the same graph (least of three runs)
    as the machine's speed reference, so ``t_nd / t_rcm`` can be compared across machines."""
    import pyamg
    from scipy.sparse.csgraph import reverse_cuthill_mckee

    out = []
    print(f"\n{'grid':>12s} {'n':>9s} {'effort':>7s} {'t_nd':>7s} {'t_rcm':>6s} {'t_nd/t_rcm':>10s} "
          f"{'t/(n log2 n) [us]':>18s} {'nnzL/md':>8s}")
    for k in sizes:
        A = pyamg.gallery.poisson((k, k)).tocsr()
        G = from_matrix(A)
        csr = G.to_csr()
        t_rcm, _ = _best_of(3, lambda: reverse_cuthill_mckee(csr, symmetric_mode=True))
        s0 = None
        if G.n <= 300_000:
            pm, t_md = scipy_md(m_matrix(A))
            s0 = symbolic_factor(G, pm)
        for e in efforts:
            o = order(G, "nd", effort=e)
            s = symbolic_factor(G, o.perm)
            n = G.n
            r = {"k": k, "n": n, "effort": e, "seconds": o.seconds, "rcm_seconds": t_rcm,
                 "nd_over_rcm": o.seconds / t_rcm, "nnz_factor": s.nnz_factor, "factor_ops": s.factor_ops,
                 "us_per_nlogn": 1e6 * o.seconds / (n * math.log2(n))}
            if s0 is not None:
                r.update(md_nnz_factor=s0.nnz_factor, md_seconds=t_md, nnz_ratio=s.nnz_factor / s0.nnz_factor)
            out.append(r)
            print(f"{k:>5d}x{k:<6d} {n:9d} {e:>7s} {o.seconds:7.2f} {t_rcm:6.3f} {r['nd_over_rcm']:10.0f} "
                  f"{r['us_per_nlogn']:18.3f} {r.get('nnz_ratio', float('nan')):8.3f}", flush=True)
    return out


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--min-n", type=int, default=10_000)
    ap.add_argument("--max-grid", type=int, default=1000)
    ap.add_argument("--no-generated", action="store_true")
    ap.add_argument("--variants", action="store_true")
    ap.add_argument("--no-auto", action="store_true")
    ap.add_argument("--references", action="store_true",
                    help="also the calibration rows: plain spectral nd, our mindegree, geometric nd on grids")
    ap.add_argument("--factor", action="store_true")
    ap.add_argument("--auto-suite", action="store_true", help="also run auto on every bundled matrix")
    ap.add_argument("--efforts", default="normal", help="nd efforts for the suite rows, comma-separated")
    ap.add_argument("--factor-sweep", default="", help="3-D grid sizes k (k^3 rows) for the time-to-factor sweep")
    ap.add_argument("--sweep-efforts", default="normal,fast", help="nd efforts in the time-to-factor sweep")
    ap.add_argument("--repeat", type=int, default=1, help="timed runs per measurement in the sweep (least kept)")
    ap.add_argument("--no-suite", action="store_true", help="skip the suite rows")
    ap.add_argument("--cli-grid", type=int, default=1000, help="k for the end-to-end CLI run on a k x k grid (0: skip)")
    ap.add_argument("--scaling-efforts", default="normal,fast", help="nd efforts in the 2-D grid scaling run")
    ap.add_argument("--merge", action="store_true", help="keep the sections of an existing --out file that this run skips")
    ap.add_argument("--out", default=str(Path(__file__).parent / "results" / "bench_dissection.json"))
    args = ap.parse_args()

    cases = [] if args.no_suite else suite_cases(args.min_n)
    if not args.no_generated and not args.no_suite:
        cases += generated_cases()
    efforts = tuple(e for e in args.efforts.split(",") if e)
    rows = run_suite(cases, args.variants, not args.no_auto, args.factor, efforts)
    nd = [r for r in rows if r["method"] == "nd"]
    suite_nd = [r for r in nd if not r["matrix"].startswith("gen_")]
    summary = {
        "suite_targets": {"count": len(suite_nd),
                          "gmean_nnz_ratio": gmean([r["nnz_ratio"] for r in suite_nd]),
                          "gmean_ops_ratio": gmean([r["ops_ratio"] for r in suite_nd]),
                          "max_nnz_ratio": max((r["nnz_ratio"] for r in suite_nd), default=float("nan")),
                          "max_ops_ratio": max((r["ops_ratio"] for r in suite_nd), default=float("nan"))},
        "all_nd": {"count": len(nd), "gmean_nnz_ratio": gmean([r["nnz_ratio"] for r in nd]),
                   "gmean_ops_ratio": gmean([r["ops_ratio"] for r in nd])},
    }
    for label in sorted({r["method"] for r in rows} - {"nd"}):
        sel = [r for r in rows if r["method"] == label and not r["matrix"].startswith("gen_")]
        summary[label] = {"gmean_nnz_ratio": gmean([r["nnz_ratio"] for r in sel]),
                          "gmean_ops_ratio": gmean([r["ops_ratio"] for r in sel])}
    print("\nsummary (ratios to SciPy's minimum degree, geometric means):")
    for k, v in summary.items():
        print(f"  {k:14s} " + "  ".join(f"{a}={b:.3f}" if isinstance(b, float) else f"{a}={b}" for a, b in v.items()))
    auto_rows = run_auto_suite() if args.auto_suite else []
    refs = run_references(suite_cases(args.min_n)) if args.references else []
    sweep_sizes = [int(x) for x in args.factor_sweep.split(",") if x]
    sweep = run_factor_sweep(sweep_sizes, [e for e in args.sweep_efforts.split(",") if e], args.repeat) \
        if sweep_sizes else []
    sizes = [k for k in (125, 250, 500, 1000) if k <= args.max_grid]
    scaling = run_scaling(sizes, [e for e in args.scaling_efforts.split(",") if e]) if sizes else []
    cli = run_cli(args.cli_grid) if args.cli_grid else {}
    result = {"rows": rows, "summary": summary, "scaling": scaling, "auto_suite": auto_rows,
              "factor_sweep": sweep, "cli": cli, "references": refs}
    out = Path(args.out)
    if args.merge and out.exists():  # keep the sections this run skipped
        old = json.loads(out.read_text())
        skipped = {"rows": not cases, "summary": not cases, "scaling": not sizes, "auto_suite": not args.auto_suite,
                   "factor_sweep": not sweep_sizes, "cli": not args.cli_grid,
                   "references": not args.references}
        result.update({k: old[k] for k, skip in skipped.items() if skip and k in old})
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(json.dumps(result, indent=1))
    print(f"\nwrote {args.out}")


if __name__ == "__main__":
    main()
