"""Benchmark: profile of the `spectral` ordering against SciPy's RCM on meshes and geometric graphs.

Uses the bundled suite (``reorder.bundled``) when it exists, restricted to the kinds grid2d, grid3d,
fem2d, fem3d and the graphs tagged geometric; otherwise (or with ``--generated``) generated matrices: 2-D 5-/9-point and
3-D 7-/27-point grids (pyamg.gallery), P2 triangle meshes, Delaunay meshes of random points and
random geometric graphs. Prints per matrix the profile ratios spectral/RCM (refined, and the plain
Fiedler sort), the winning candidate and times, the geometric mean, and writes a JSON file.

Usage::

    python scripts/bench_envelope.py [--size small|medium] [--generated] [--big] [--json out.json]

``--big`` adds the 10^6-vertex 2-D grid end to end (``order(graph, "spectral")``).
"""

from __future__ import annotations

import argparse
import json
import os
import time

import numpy as np
import pyamg
from scipy.sparse.csgraph import reverse_cuthill_mckee
from scipy.spatial import Delaunay, cKDTree

from reorder import gallery
from reorder.graph import Graph, component_lists, from_edges, from_matrix, subgraph
from reorder.orderings import order
from reorder.orderings.envelope import profile_of


# ------------------------------------------------------------------------------------------ generators


def grid2d(k: int, points: int = 5) -> Graph:
    return from_matrix(gallery.grid2d(k, points=points))


def grid3d(k: int, points: int = 7) -> Graph:
    return from_matrix(gallery.grid3d(k, points=points))


def _elements_graph(n: int, elems: np.ndarray) -> Graph:
    m = elems.shape[1]
    i, j = np.meshgrid(np.arange(m), np.arange(m), indexing="ij")
    mask = i != j
    rows = elems[:, i[mask]].ravel()
    cols = elems[:, j[mask]].ravel()
    return from_edges(n, rows, cols)


def p2_mesh(k: int) -> Graph:
    """P2 (6-node) triangles on a k×k square split into 2k² triangles: nodes on a (2k+1)² lattice."""
    m = 2 * k + 1
    idx = np.arange(m * m).reshape(m, m)
    I, J = np.meshgrid(np.arange(k), np.arange(k), indexing="ij")
    a, b = 2 * I.ravel(), 2 * J.ravel()
    # lower-left triangle (a,b),(a+2,b),(a,b+2); upper-right (a+2,b),(a+2,b+2),(a,b+2) plus midpoints
    t1 = np.stack([idx[a, b], idx[a + 2, b], idx[a, b + 2], idx[a + 1, b], idx[a + 1, b + 1], idx[a, b + 1]], 1)
    t2 = np.stack([idx[a + 2, b], idx[a + 2, b + 2], idx[a, b + 2], idx[a + 2, b + 1], idx[a + 1, b + 2],
                   idx[a + 1, b + 1]], 1)
    return _elements_graph(m * m, np.vstack([t1, t2]))


def _largest_component(g: Graph) -> Graph:
    comps = component_lists(g)
    big = max(comps, key=len)
    return g if big.size == g.n else subgraph(g, big)


def delaunay2d(n: int, seed: int = 0) -> Graph:
    pts = np.random.default_rng(seed).random((n, 2))
    tri = Delaunay(pts).simplices
    # random point order: the file order carries no locality, as in unstructured mesh generators
    return _elements_graph(n, tri)


def delaunay3d(n: int, seed: int = 0) -> Graph:
    pts = np.random.default_rng(seed).random((n, 3))
    return _elements_graph(n, Delaunay(pts).simplices)


def geometric(n: int, dim: int = 2, degree: float = 8.0, seed: int = 0) -> Graph:
    """Random geometric graph: uniform points, edges within the radius giving the mean degree."""
    pts = np.random.default_rng(seed).random((n, dim))
    vol = np.pi if dim == 2 else 4.0 / 3.0 * np.pi
    r = (degree / (n * vol)) ** (1.0 / dim)
    pairs = cKDTree(pts).query_pairs(r, output_type="ndarray")
    return _largest_component(from_edges(n, pairs[:, 0], pairs[:, 1]))


def generated_suite(size: str = "small"):
    s = {"small": 1, "medium": 2}[size]
    return [
        ("grid2d-5pt", "2d-mesh", grid2d(60 * s)),
        ("grid2d-9pt", "2d-mesh", grid2d(60 * s, 9)),
        ("rect2d-5pt", "2d-mesh", from_matrix(pyamg.gallery.poisson((30 * s, 150 * s)))),
        ("grid3d-7pt", "3d-mesh", grid3d(14 * s)),
        ("grid3d-27pt", "3d-mesh", grid3d(12 * s, 27)),
        ("p2-mesh", "2d-mesh", p2_mesh(25 * s)),
        ("delaunay2d", "2d-mesh", delaunay2d(4000 * s * s)),
        ("delaunay3d", "3d-mesh", delaunay3d(3000 * s * s)),
        ("geometric2d", "geometric", geometric(5000 * s * s, 2)),
        ("geometric3d", "geometric", geometric(5000 * s * s, 3, degree=12.0)),
    ]


def bundled_suite(size: str = "small"):
    """The bundled 2-D/3-D mesh and geometric-graph matrices (None if the suite is absent)."""
    try:
        from reorder import bundled
        from reorder.io import read_matrix

        kinds = {e["name"]: e["kind"] for e in bundled.manifest()}
        max_n = 5000 if size == "small" else None
        files = bundled.suite_files(["grid2d", "grid3d", "fem2d", "fem3d"], min_n=100, max_n=max_n)
        files += bundled.suite_files("graph", min_n=100, max_n=max_n, tags="geometric")
    except (ImportError, FileNotFoundError):
        return None
    out = []
    for path in files:
        name = path.name.split(".")[0]
        out.append((name, kinds.get(name, "?"), from_matrix(read_matrix(path))))
    return out or None


# ------------------------------------------------------------------------------------------ main


def run_case(name, kind, g, **opts):
    t = time.perf_counter()
    rcm = np.asarray(reverse_cuthill_mckee(g.to_csr(), symmetric_mode=True), dtype=np.int64)
    t_rcm = time.perf_counter() - t
    o = order(g, "spectral", **opts)
    plain = order(g, "spectral", refine=False, **opts)
    p_rcm = profile_of(g, rcm)
    p_spec = profile_of(g, o.perm)
    p_plain = profile_of(g, plain.perm)
    return {
        "name": name, "kind": kind, "n": g.n, "nnz": int(g.indptr[-1]),
        "profile_rcm": p_rcm, "profile_spectral": p_spec, "profile_fiedler_sort": p_plain,
        "ratio": p_spec / p_rcm, "ratio_fiedler_sort": p_plain / p_rcm,
        "winner": o.info.get("winner"), "fiedler_path": o.info.get("fiedler_path"),
        "seconds_rcm": t_rcm, "seconds_spectral": o.seconds,
    }


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--size", default="small", choices=["small", "medium"],
                    help="small: bundled matrices up to 5000 rows (generated: ~4000); medium: all")
    ap.add_argument("--generated", action="store_true", help="ignore the bundled suite")
    ap.add_argument("--big", action="store_true", help="also time the 10^6-vertex grid end to end")
    ap.add_argument("--json", default=os.path.join(os.path.dirname(__file__), "results", "bench_envelope.json"))
    args = ap.parse_args()
    suite = None if args.generated else bundled_suite(args.size)
    source = "bundled" if suite else "generated"
    if suite is None:
        suite = generated_suite(args.size)
    rows = []
    print(f"suite: {source}")
    print(f"{'matrix':16s} {'kind':10s} {'n':>8s} {'spec/RCM':>9s} {'sort/RCM':>9s} {'winner':24s} {'t_spec':>7s} {'t_rcm':>7s}")
    for name, kind, g in suite:
        r = run_case(name, kind, g)
        rows.append(r)
        print(f"{name:16s} {kind:10s} {r['n']:8d} {r['ratio']:9.3f} {r['ratio_fiedler_sort']:9.3f} "
              f"{r['winner']:24s} {r['seconds_spectral']:7.2f} {r['seconds_rcm']:7.3f}")
    gm = float(np.exp(np.mean(np.log([r["ratio"] for r in rows]))))
    gm_plain = float(np.exp(np.mean(np.log([r["ratio_fiedler_sort"] for r in rows]))))
    worse = [r["name"] for r in rows if r["ratio"] > 1.0]
    print(f"geometric mean profile ratio spectral/RCM: {gm:.3f} (target <= 0.75); plain Fiedler sort: "
          f"{gm_plain:.3f}; worse than RCM on: {worse or 'none'}")
    out = {"suite": source, "rows": rows, "geomean_ratio": gm, "geomean_ratio_fiedler_sort": gm_plain,
           "worse_than_rcm": worse}
    if args.big:
        g = grid2d(1000)
        t = time.perf_counter()
        rcm = reverse_cuthill_mckee(g.to_csr(), symmetric_mode=True)
        t_rcm = time.perf_counter() - t
        o = order(g, "spectral")
        big = {"n": g.n, "seconds_spectral": o.seconds, "seconds_rcm": t_rcm,
               "seconds_fiedler": o.info.get("seconds_fiedler"), "seconds_refine": o.info.get("seconds_refine"),
               "ratio": profile_of(g, o.perm) / profile_of(g, np.asarray(rcm, dtype=np.int64)),
               "winner": o.info.get("winner"), "fiedler_path": o.info.get("fiedler_path"),
               "fiedler_iterations": o.info.get("fiedler_iterations")}
        print(f"10^6 grid: spectral {o.seconds:.2f} s (Fiedler {big['seconds_fiedler']:.2f} s, refine "
              f"{big['seconds_refine']:.2f} s; target <= 15 s), RCM {t_rcm:.2f} s, profile ratio "
              f"{big['ratio']:.3f}, winner {big['winner']}")
        out["big"] = big
    out["loadavg"] = os.getloadavg()
    os.makedirs(os.path.dirname(os.path.abspath(args.json)), exist_ok=True)
    with open(args.json, "w") as fh:
        json.dump(out, fh, indent=1)
    print(f"wrote {args.json}")


if __name__ == "__main__":
    main()
