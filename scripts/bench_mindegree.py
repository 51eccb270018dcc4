"""Benchmark of the minimum degree ordering against SciPy's built-in minimum degree (SuperLU).

For every matrix of the bundled suite (plus a few generated graphs) it orders the pattern with
``reorder``'s ``mindegree`` and with SciPy's ``splu(..., permc_spec="MMD_AT_PLUS_A")`` on an M-matrix
of the same pattern, counts nnz(L) of both permutations with :func:`reorder.analysis.analyse` (one
yardstick), and prints the ratios. Then it times a 10^6-row 2-D 5-point grid (SciPy's RCM timed in
the same run as a reference speed). Writes ``scripts/results/bench_mindegree.json``.

Targets (issue 4): nnz(L) <= 1.00x SciPy on every matrix, <= 0.97x in geometric mean; the 10^6 grid
ordered in <= 10 s (aim <= 5 s).

``--speed`` (issue 16) times instead, in one run, ``reorder.order(A, method=...)`` under one pivot rule
(``mindegree:score=degree`` and the cheap start of ``auto``, ``mindegree:score=fill:compress=true``)
on 5-point grids 120², 400², 1000² and on the bundled meshes of at least 5,000 rows, beside SciPy's
path (``splu`` with its own minimum degree, symmetric mode, on an M-matrix of the pattern) and SciPy's
``reverse_cuthill_mckee``, as ratios (least of several runs each), and the per-call time of
:func:`reorder.orderings.mindegree.halo_minimum_degree` on 300-vertex leaves of a grid with their
halo. Target: ``mindegree:score=degree`` <= 1.0 s on the 10^6-row grid. Writes
``scripts/results/bench_mindegree_speed.json``.

Usage::

    python scripts/bench_mindegree.py [--quick] [--grid N] [--option key=value ...]
    python scripts/bench_mindegree.py --speed [--quick]
"""

from __future__ import annotations

import argparse
import json
import platform
import time
from pathlib import Path

import numpy as np
import scipy.sparse as sp
from scipy.sparse.csgraph import reverse_cuthill_mckee
from scipy.sparse.linalg import splu

from reorder.analysis import analyse, inverse
from reorder.gallery import m_matrix
from reorder.graph import Graph, from_matrix
from reorder.orderings import order

RESULTS = Path(__file__).resolve().parent / "results" / "bench_mindegree.json"
SPEED_RESULTS = Path(__file__).resolve().parent / "results" / "bench_mindegree_speed.json"
#: one-rule specifications timed by ``--speed``
SPEED_RULES = ("mindegree:score=degree", "mindegree:score=fill:compress=true")


def scipy_min_degree(graph: Graph) -> np.ndarray:
    """SciPy SuperLU's minimum degree on A + Aᵀ; ``perm_c`` is new position of each column."""
    lu = splu(
        m_matrix(graph),
        permc_spec="MMD_AT_PLUS_A",
        diag_pivot_thresh=0,
        options={"SymmetricMode": True},
    )
    return inverse(lu.perm_c)


def generated_cases():
    import networkx as nx
    import pyamg

    yield "gen_grid2d_5pt_80x80", pyamg.gallery.poisson((80, 80))
    yield "gen_grid2d_9pt_60x60", pyamg.gallery.stencil_grid(np.ones((3, 3)), (60, 60))
    yield "gen_grid3d_7pt_16", pyamg.gallery.poisson((16, 16, 16))
    yield "gen_grid3d_27pt_12", pyamg.gallery.stencil_grid(np.ones((3, 3, 3)), (12, 12, 12))
    yield "gen_rgg_4000", nx.to_scipy_sparse_array(nx.random_geometric_graph(4000, 0.03, seed=7))
    yield "gen_ba_4000", nx.to_scipy_sparse_array(nx.barabasi_albert_graph(4000, 3, seed=7))


def suite_cases(max_n: int | None):
    from reorder.bundled import suite_files
    from reorder.io import matrix_name, read_matrix

    for path in suite_files(max_n=max_n):
        yield matrix_name(path), read_matrix(path)


def least_time(fn, repeats: int) -> float:
    """Least wall time of ``repeats`` calls (noise on a shared machine only adds time)."""
    best = float("inf")
    for _ in range(repeats):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def leaf_calls(side: int = 17, calls: int = 300) -> dict:
    """Per-call time of halo minimum degree on ``side``² leaves (289 vertices) of a grid whose
    surrounding ring of vertices is the halo, as nested dissection calls it on its leaves."""
    from reorder.gallery import grid2d
    from reorder.orderings.mindegree import halo_minimum_degree

    G = from_matrix(grid2d(side + 2))
    ij = np.arange(G.n)
    r, c = ij // (side + 2), ij % (side + 2)
    mask = (r > 0) & (r < side + 1) & (c > 0) & (c < side + 1)
    halo_minimum_degree(G, mask)
    t = least_time(lambda: [halo_minimum_degree(G, mask) for _ in range(calls)], 3) / calls
    return dict(vertices=int(mask.sum()), halo=int(G.n - mask.sum()), seconds_per_call=t,
                microseconds_per_vertex=1e6 * t / int(mask.sum()))


def speed(quick: bool, out: Path) -> None:
    """The ``--speed`` section: one-rule times beside SciPy's path and RCM (see the module notes)."""
    import reorder
    from reorder.bundled import manifest, suite_files
    from reorder.gallery import grid2d
    from reorder.io import matrix_name, read_matrix

    for spec in SPEED_RULES:  # compile / load the kernels before any clock
        reorder.order(grid2d(12), method=spec)
    sides = (120, 400) if quick else (120, 400, 1000)
    cases = [(f"grid2d_5pt_{k}x{k}", grid2d(k)) for k in sides]
    meshes = {e["name"] for e in manifest() if e["kind"] in ("grid2d", "grid3d", "fem2d", "fem3d") and e["n"] >= 5000}
    meshes -= {name for name, _ in cases}  # the bundled 120² grid is the first generated case
    cases += [(matrix_name(p), read_matrix(p)) for p in suite_files(min_n=5000) if matrix_name(p) in meshes]
    rows = []
    head = f"{'matrix':28s} {'n':>8s} {'scipy path':>10s} {'scipy rcm':>9s}"
    for spec in SPEED_RULES:
        head += f" {spec.split(':', 1)[1][:22]:>22s} {'/path':>6s}"
    print(head)
    for name, A in cases:
        G = from_matrix(A)
        repeats = 2 if G.n > 300_000 else 5
        M = m_matrix(G)
        t_path = least_time(lambda: splu(M, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0,
                                         options={"SymmetricMode": True}), 1 if G.n > 300_000 else 3)
        csr = G.to_csr()
        t_rcm = least_time(lambda: reverse_cuthill_mckee(csr, symmetric_mode=True), repeats)
        row = dict(matrix=name, n=G.n, seconds_scipy_path=t_path, seconds_scipy_rcm=t_rcm, rules={})
        line = f"{name:28s} {G.n:8d} {t_path:10.4f} {t_rcm:9.4f}"
        for spec in SPEED_RULES:
            t = least_time(lambda: reorder.order(A, method=spec), repeats)
            row["rules"][spec] = dict(seconds=t, over_scipy_path=t / t_path, over_scipy_rcm=t / t_rcm,
                                      microseconds_per_row=1e6 * t / G.n)
            line += f" {t:22.4f} {t / t_path:6.2f}"
        rows.append(row)
        print(line, flush=True)
    leaf = leaf_calls()
    print(f"halo minimum degree on {leaf['vertices']}-vertex leaves ({leaf['halo']} halo vertices): "
          f"{1e6 * leaf['seconds_per_call']:.0f} us per call, {leaf['microseconds_per_vertex']:.2f} us per vertex")
    big = [r for r in rows if r["matrix"] == "grid2d_5pt_1000x1000"]
    if big:
        t = big[0]["rules"][SPEED_RULES[0]]["seconds"]
        print(f"{SPEED_RULES[0]} on the 10^6-row grid: {t:.2f} s (target <= 1.0 s), "
              f"{t / big[0]['seconds_scipy_rcm']:.1f}x SciPy RCM")
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(json.dumps(dict(machine=platform.platform(), rules=list(SPEED_RULES), matrices=rows,
                                   leaf_calls=leaf), indent=1))
    print(f"wrote {out}")


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--quick", action="store_true", help="small matrices only, 300x300 timing grid")
    ap.add_argument("--grid", type=int, default=1000, help="side of the timing grid (default 1000)")
    ap.add_argument("--option", action="append", default=[], help="mindegree option key=value")
    ap.add_argument("--out", type=Path, default=None)
    ap.add_argument("--speed", action="store_true", help="one-rule times beside SciPy's path and RCM only")
    args = ap.parse_args()
    if args.speed:
        speed(args.quick, args.out or SPEED_RESULTS)
        return
    args.out = args.out or RESULTS
    options = {}
    for kv in args.option:
        k, v = kv.split("=", 1)
        options[k] = {"true": True, "false": False}.get(v.lower(), v)
        try:
            options[k] = float(v) if "." in v else int(v)
        except ValueError:
            pass
    grid = 300 if args.quick else args.grid
    max_n = 5000 if args.quick else None

    # warm up the compiled kernels so that compile time is not counted
    warm = from_matrix(sp.random(50, 50, density=0.1, random_state=0) + sp.eye(50))
    order(warm, "mindegree", **options)
    analyse(graph=warm)

    rows = []
    print(f"{'matrix':34s} {'n':>8s} {'nnz(L) ours':>13s} {'nnz(L) scipy':>13s} {'ratio':>6s} {'t ours':>7s} {'t scipy':>7s}")
    for name, A in list(suite_cases(max_n)) + list(generated_cases()):
        G = from_matrix(A)
        if G.n < 3 or G.nedges == 0:
            continue
        t0 = time.perf_counter()
        ours = order(G, "mindegree", **options)
        t_ours = time.perf_counter() - t0
        t0 = time.perf_counter()
        ref = scipy_min_degree(G)
        t_ref = time.perf_counter() - t0
        a = analyse(graph=G, perm=ours.perm).nnz_factor
        b = analyse(graph=G, perm=ref).nnz_factor
        rows.append(dict(matrix=name, n=G.n, edges=G.nedges, nnz_L=a, nnz_L_scipy=b, ratio=a / b,
                         seconds=t_ours, seconds_scipy_lu=t_ref))
        print(f"{name:34s} {G.n:8d} {a:13d} {b:13d} {a / b:6.3f} {t_ours:7.3f} {t_ref:7.3f}")
    ratios = np.array([r["ratio"] for r in rows])
    geo = float(np.exp(np.mean(np.log(ratios))))
    worst = rows[int(np.argmax(ratios))]
    print(f"\nnnz(L) ratio vs SciPy minimum degree: geometric mean {geo:.3f} (target <= 0.97), "
          f"worst {worst['ratio']:.3f} on {worst['matrix']} (target <= 1.00)")

    import pyamg

    G = from_matrix(pyamg.gallery.poisson((grid, grid)))
    t0 = time.perf_counter()
    ours = order(G, "mindegree", **options)
    t_md = time.perf_counter() - t0
    t0 = time.perf_counter()
    reverse_cuthill_mckee(G.to_csr(), symmetric_mode=True)
    t_rcm = time.perf_counter() - t0
    nnz_grid = analyse(graph=G, perm=ours.perm).nnz_factor
    print(f"{grid}x{grid} 5-point grid (n = {G.n}): mindegree {t_md:.2f} s (target <= 10 s, aim <= 5 s), "
          f"SciPy RCM {t_rcm:.2f} s, ratio {t_md / t_rcm:.1f}x; nnz(L) = {nnz_grid}")

    args.out.parent.mkdir(parents=True, exist_ok=True)
    args.out.write_text(json.dumps(dict(
        options=options,
        machine=platform.platform(),
        matrices=rows,
        geomean_ratio=geo,
        worst_ratio=worst["ratio"],
        worst_matrix=worst["matrix"],
        grid=dict(side=grid, n=G.n, seconds=t_md, seconds_scipy_rcm=t_rcm, nnz_L=nnz_grid,
                  info={k: v for k, v in ours.info.items() if isinstance(v, (int, float, str))}),
    ), indent=1))
    print(f"wrote {args.out}")


if __name__ == "__main__":
    main()
