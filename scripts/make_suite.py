"""Generate the bundled matrix suite in ``matrices/`` and its ``manifest.json``.

Run ``python scripts/make_suite.py`` from the repository root: it rewrites every bundled file and the
manifest, deterministically (fixed seeds; gzip headers without time stamps). The parts and networks are
scenarios of our own invented for demonstration; grid and gallery matrices come from pyamg's gallery;
graphs from NetworkX generators. Needs numpy, scipy, pyamg, networkx and matplotlib (already
dependencies of the project or of its tests).

Options: ``--out DIR`` (default ``matrices/`` beside this script's folder), ``--check`` (after writing,
read every file back and confirm SPD entries by an unpivoted sparse LU with positive pivots).
"""

from __future__ import annotations

import argparse
import gzip
import json
import sys
from pathlib import Path

import networkx as nx
import numpy as np
import pyamg
import scipy.io
import scipy.sparse as sp

sys.path.insert(0, str(Path(__file__).resolve().parent))
import meshes  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
SIG = 6  # significant digits stored for real values

# --------------------------------------------------------------------------------------------------
# writing
# --------------------------------------------------------------------------------------------------


def round_sig(x, digits: int = SIG):
    """Round to ``digits`` significant digits (what the text file will hold)."""
    x = np.asarray(x, dtype=float)
    return np.array([float(f"{v:.{digits}g}") for v in x]) if x.size < 64 else _round_vec(x, digits)


def _round_vec(x, digits):
    out = np.zeros_like(x)
    nz = x != 0
    e = np.floor(np.log10(np.abs(x[nz])))
    scale = 10.0 ** (digits - 1 - e)
    out[nz] = np.round(x[nz] * scale) / scale
    return out


def write_mtx_gz(path: Path, A, *, pattern: bool, comments: list[str]) -> None:
    """Write the lower triangle of symmetric ``A`` as gzip'd Matrix Market (column-major order).

    Values get ``SIG`` significant digits; values below 1e-12 times the largest magnitude (round-off
    from cancelling element contributions) are stored as explicit zeros, keeping the structure.
    """
    A = sp.csr_matrix(A)
    asym = abs(A - A.T)
    if asym.nnz and asym.max() > 1e-9 * max(abs(A).max(), 1e-300):
        raise ValueError(f"{path.name}: matrix is not symmetric")
    L = sp.tril(A).tocsc()
    L.sort_indices()
    n = A.shape[0]
    cols = np.repeat(np.arange(n), np.diff(L.indptr)) + 1
    rows = L.indices + 1
    head = ["%%MatrixMarket matrix coordinate " + ("pattern" if pattern else "real") + " symmetric"]
    head += ["% " + c for c in comments]
    head.append(f"{n} {n} {L.nnz}")
    if pattern:
        body = [f"{i} {j}" for i, j in zip(rows.tolist(), cols.tolist())]
    else:
        vals = L.data.astype(float)
        vals[np.abs(vals) < 1e-12 * np.abs(vals).max(initial=0.0)] = 0.0
        body = [f"{i} {j} {v:.{SIG}g}" for i, j, v in zip(rows.tolist(), cols.tolist(), vals.tolist())]
    text = "\n".join(head + body) + "\n"
    path.write_bytes(gzip.compress(text.encode("ascii"), compresslevel=9, mtime=0))


# --------------------------------------------------------------------------------------------------
# the cases
# --------------------------------------------------------------------------------------------------
CASES = []


def case(name, kind, tags, description, source, *, spd, pattern=False, fmt="mtx.gz"):
    """Register a generator ``f() -> sparse matrix`` for file ``name.<fmt>``."""

    def deco(f):
        CASES.append(
            dict(name=name, kind=kind, tags=list(tags), description=description, source=source, spd=spd,
                 pattern=pattern, fmt=fmt, make=f)
        )
        return f

    return deco


def _stencil_grid(stencil, grid):
    return sp.csr_matrix(pyamg.gallery.stencil_grid(np.asarray(stencil, dtype=float), grid, format="csr"))


_NINE = [[-1, -1, -1], [-1, 8, -1], [-1, -1, -1]]
_S27 = -np.ones((3, 3, 3))
_S27[1, 1, 1] = 26.0

# ---- structured grids -----------------------------------------------------------------------------
for _nx, _tags in ((120, ["large"]), (30, ["small"])):
    case(f"grid2d_5pt_{_nx}x{_nx}", "grid2d", _tags + ["stencil5", "dirichlet", "pyamg"],
         f"5-point Laplacian on a {_nx}x{_nx} grid, Dirichlet boundary (diagonal 4, off-diagonals -1).",
         f"pyamg.gallery.poisson(({_nx}, {_nx}))", spd=True)(
        lambda _nx=_nx: sp.csr_matrix(pyamg.gallery.poisson((_nx, _nx), format="csr")))

case("grid2d_9pt_110x110", "grid2d", ["large", "stencil9", "dirichlet", "pyamg"],
     "9-point Laplacian (8 on the diagonal, -1 to all eight neighbours) on a 110x110 grid, Dirichlet boundary.",
     "pyamg.gallery.stencil_grid([[-1,-1,-1],[-1,8,-1],[-1,-1,-1]], (110, 110))", spd=True)(
    lambda: _stencil_grid(_NINE, (110, 110)))

case("grid2d_9pt_aniso_40x40", "grid2d", ["small", "stencil9", "anisotropic", "dirichlet", "pyamg"],
     "Bilinear finite-element stencil of rotated anisotropic diffusion (epsilon 0.01, angle 30 degrees) "
     "on a 40x40 grid: 9 points, positive and negative off-diagonals.",
     "pyamg.gallery.stencil_grid(pyamg.gallery.diffusion_stencil_2d(0.01, pi/6, 'FE'), (40, 40))", spd=True)(
    lambda: _stencil_grid(pyamg.gallery.diffusion_stencil_2d(epsilon=0.01, theta=np.pi / 6, type="FE"),
                          (40, 40)))

for _nx, _tags in ((24, ["large"]), (10, ["small"])):
    case(f"grid3d_7pt_{_nx}x{_nx}x{_nx}", "grid3d", _tags + ["stencil7", "dirichlet", "pyamg"],
         f"7-point Laplacian on a {_nx}^3 grid, Dirichlet boundary (diagonal 6, off-diagonals -1).",
         f"pyamg.gallery.poisson(({_nx}, {_nx}, {_nx}))", spd=True)(
        lambda _nx=_nx: sp.csr_matrix(pyamg.gallery.poisson((_nx, _nx, _nx), format="csr")))

for _nx, _tags in ((22, ["large"]), (8, ["small"])):
    case(f"grid3d_27pt_{_nx}x{_nx}x{_nx}", "grid3d", _tags + ["stencil27", "dirichlet", "pyamg"],
         f"27-point stencil (26 on the diagonal, -1 to all 26 neighbours) on a {_nx}^3 grid, Dirichlet boundary.",
         f"pyamg.gallery.stencil_grid(27-point stencil, ({_nx}, {_nx}, {_nx}))", spd=True)(
        lambda _nx=_nx: _stencil_grid(_S27, (_nx, _nx, _nx)))

case("pyamg_elasticity_q1_72x72", "fem2d", ["large", "elasticity", "q1", "pyamg"],
     "Plane-strain Q1 linear elasticity on a 72x72 grid of squares (two displacement dofs per node, "
     "E=1e5, nu=0.3), Dirichlet boundary.",
     "pyamg.gallery.linear_elasticity((72, 72))", spd=True)(
    lambda: sp.csr_matrix(pyamg.gallery.linear_elasticity((72, 72), format="csr")[0]))


# ---- pyamg's shipped example matrices ------------------------------------------------------------
def _example(name):
    A = sp.csr_matrix(pyamg.gallery.load_example(name)["A"])
    return sp.csr_matrix((A + A.T) / 2)  # symmetric to round-off already; make it exact


case("pyamg_airfoil", "fem2d", ["small", "p1", "unstructured", "pyamg"],
     "P1 finite-element matrix on an unstructured triangle mesh around an airfoil, as shipped with pyamg.",
     "pyamg.gallery.load_example('airfoil')['A']", spd=True)(lambda: _example("airfoil"))
case("pyamg_bar_elastic", "fem3d", ["small", "elasticity", "hex", "pyamg"],
     "3-D linear elasticity on a hexahedral mesh of a bar (three dofs per node), as shipped with pyamg.",
     "pyamg.gallery.load_example('bar')['A']", spd=True)(lambda: _example("bar"))
case("pyamg_dg_diffusion", "fem2d", ["small", "dg", "unstructured", "pyamg"],
     "Local discontinuous Galerkin discretisation of diffusion (dense element blocks), as shipped with "
     "pyamg; symmetrised (A + A^T)/2 to remove round-off asymmetry of order 1e-12.",
     "pyamg.gallery.load_example('local_disc_galerkin_diffusion')['A']", spd=True)(
    lambda: _example("local_disc_galerkin_diffusion"))


# ---- unstructured parts (scenarios of our own) ---------------------------------------------------
def heatplate_part():
    """Mounting plate of a power converter: 3 x 2 with ten bolt holes, two bushings and a cooling slot."""
    outer = [[0.2, 0], [2.8, 0], [3, 0.2], [3, 1.8], [2.8, 2], [0.2, 2], [0, 1.8], [0, 0.2]]
    bolts = [(x, y, 0.08) for x in (0.25, 1.0, 2.0, 2.75) for y in (0.25, 1.75)]
    bolts += [(0.25, 1.0, 0.08), (2.75, 1.0, 0.08)]
    bushings = [(0.8, 1.0, 0.3), (2.2, 1.0, 0.3)]
    slot = [[1.4, 0.5], [1.6, 0.5], [1.6, 1.5], [1.4, 1.5]]
    return meshes.Part2D(outer, circles=bolts + bushings, cutouts=[slot])


def _heatplate(h, seed):
    pts, tri = meshes.mesh_part2d(heatplate_part(), h, seed=seed)
    # implicit Euler step of heat conduction: M / dt + K with dt chosen so both parts matter
    return meshes.p1_heat(pts, tri, conductivity=1.0, capacity=1.0 / (25 * h * h))


for _name, _h, _tags in (("heatplate_bolts_p1", 0.0194, ["large"]), ("heatplate_bolts_p1_small", 0.065, ["small"])):
    case(_name, "fem2d", _tags + ["p1", "unstructured", "holes", "heat"],
         f"Thermal mounting plate of a power converter (3 x 2, chamfered corners, ten bolt holes, two "
         f"bushings, a cooling slot): P1 triangles (target edge {_h}), implicit heat-conduction time step M/dt + K.",
         "scripts/make_suite.py + scripts/meshes.py (jittered points, scipy.spatial.Delaunay, NumPy assembly); "
         "invented scenario", spd=True)(lambda _h=_h: _heatplate(_h, seed=11))


def bracket_part():
    """L-shaped ribbed bracket: lightening windows leave 0.2-wide ribs; two mounting holes."""
    outer = [[0, 0], [4, 0], [4, 1], [1, 1], [1, 4], [0, 4]]
    windows = [[[1.2 + 0.7 * k, 0.2], [1.7 + 0.7 * k, 0.2], [1.7 + 0.7 * k, 0.8], [1.2 + 0.7 * k, 0.8]]
               for k in range(4)]
    windows += [[[0.2, 1.2 + 0.7 * k], [0.8, 1.2 + 0.7 * k], [0.8, 1.7 + 0.7 * k], [0.2, 1.7 + 0.7 * k]]
                for k in range(4)]
    holes = [(0.5, 0.5, 0.18), (3.85, 0.5, 0.06), (0.5, 3.85, 0.06)]
    return meshes.Part2D(outer, circles=holes, cutouts=windows)


def _bracket(h, seed):
    pts, tri = meshes.mesh_part2d(bracket_part(), h, seed=seed)
    p6, c6 = meshes.p2_nodes(pts, tri)
    return meshes.p2_heat(p6, c6, conductivity=1.0, capacity=1.0 / (25 * h * h))


for _name, _h, _tags in (("bracket_ribs_p2", 0.042, ["large"]), ("bracket_ribs_p2_small", 0.1, ["small"])):
    case(_name, "fem2d", _tags + ["p2", "unstructured", "ribs", "thin-walls", "holes", "heat"],
         f"L-shaped bracket with eight lightening windows leaving thin ribs and three holes: P2 triangles "
         f"(vertices then edge midpoints; target edge {_h}), implicit heat-conduction step M/dt + K.",
         "scripts/make_suite.py + scripts/meshes.py (P2 by edge midpoints, Dunavant 6-point rule); invented scenario",
         spd=True)(lambda _h=_h: _bracket(_h, seed=12))


def gusset_part():
    """Bridge gusset plate: chord holes along the bottom, diagonal-member holes, a web cut-out."""
    outer = [[0, 0], [3, 0], [3, 0.7], [1.7, 2.2], [0, 2.2]]
    chord = [(0.3 + 0.4 * k, 0.25, 0.06) for k in range(7)]
    vertical = [(0.3, 0.8 + 0.4 * k, 0.06) for k in range(4)]
    diagonal = [(1.3 + 0.3 * k, 1.15 - 0.0 * k, 0.06) for k in range(3)]
    cut = [[0.8, 0.9], [1.1, 0.9], [1.1, 1.6], [0.8, 1.6]]
    return meshes.Part2D(outer, circles=chord + vertical + diagonal, cutouts=[cut]), chord


def _gusset(h, seed):
    part, chord = gusset_part()
    pts, tri = meshes.mesh_part2d(part, h, seed=seed)
    K = meshes.p1_plane_stress(pts, tri, E=1.0, nu=0.3, thickness=1.0)
    # bolted to the chord: nodes on the chord bolt-hole walls are fixed (both displacements)
    fixed = np.zeros(len(pts), bool)
    for cx, cy, r in chord:
        fixed |= np.hypot(pts[:, 0] - cx, pts[:, 1] - cy) < r + 1e-9
    free = np.flatnonzero(~np.repeat(fixed, 2))
    return K[free][:, free]


for _name, _h, _tags in (("gusset_plate_p1_elastic", 0.03, ["large"]),
                         ("gusset_plate_p1_elastic_small", 0.085, ["small"])):
    case(_name, "fem2d", _tags + ["p1", "unstructured", "elasticity", "holes"],
         f"Bridge gusset plate in plane stress (nu 0.3): P1 triangles (target edge {_h}), dofs (u_x, u_y) "
         f"interleaved per node, nodes on the seven chord bolt holes clamped (their dofs removed).",
         "scripts/make_suite.py + scripts/meshes.py; invented scenario", spd=True)(
        lambda _h=_h: _gusset(_h, seed=13))


def heatsink_geometry():
    """Finned heat-sink block: 1 x 1 x 0.2 base, six 0.06-thick fins 0.7 high, four screw holes."""
    boxes = [((0.0, 0.0, 0.0), (1.0, 1.0, 0.2))]
    boxes += [((0.07 + 0.16 * i, 0.0, 0.2), (0.13 + 0.16 * i, 1.0, 0.9)) for i in range(6)]
    screws = [(x, y, 0.05) for x in (0.15, 0.85) for y in (0.1, 0.9)]
    return boxes, screws


def _heatsink(h, seed):
    boxes, screws = heatsink_geometry()
    pts, tets = meshes.mesh_boxes3d(boxes, screws, h, seed=seed)
    return meshes.p1_heat(pts, tets, conductivity=1.0, capacity=1.0 / (25 * h * h))


for _name, _h, _tags in (("heatsink_fins_p1", 0.039, ["large"]), ("heatsink_fins_p1_small", 0.08, ["small"])):
    case(_name, "fem3d", _tags + ["p1", "tetrahedra", "unstructured", "thin-walls", "holes", "heat"],
         f"Finned aluminium heat-sink block (base with four screw holes, six thin fins): P1 tetrahedra "
         f"(target edge {_h}), implicit heat-conduction time step M/dt + K.",
         "scripts/make_suite.py + scripts/meshes.py (lattice points, scipy.spatial.Delaunay); invented scenario",
         spd=True)(lambda _h=_h: _heatsink(_h, seed=14))


# ---- graphs ---------------------------------------------------------------------------------------
def _laplacian(G, n):
    A = nx.to_scipy_sparse_array(G, nodelist=range(n), format="csr", dtype=float)
    A = sp.csr_matrix(A)
    return sp.csr_matrix(sp.diags(np.asarray(A.sum(axis=1)).ravel()) - A)


def _pipe_network(nx_, ny_, seed):
    """Water distribution network of a small town: street grid with missing blocks and trunk mains.

    Junctions on a jittered street grid; each street pipe kept with probability 0.8 (a spanning tree
    is always kept, so the network is connected); a few long trunk mains; conductance ~ D^4 / length
    (Hagen-Poiseuille scaling); reservoirs at three junctions ground the Laplacian (made SPD).
    """
    rng = np.random.default_rng(seed)
    n = nx_ * ny_
    xy = np.stack(np.meshgrid(np.arange(nx_), np.arange(ny_), indexing="ij"), -1).reshape(-1, 2).astype(float)
    xy += rng.uniform(-0.25, 0.25, size=xy.shape)
    idx = np.arange(n).reshape(nx_, ny_)
    e = np.vstack([np.column_stack([idx[:-1, :].ravel(), idx[1:, :].ravel()]),
                   np.column_stack([idx[:, :-1].ravel(), idx[:, 1:].ravel()])])
    w0 = rng.uniform(0.1, 1.0, len(e))
    T = nx.minimum_spanning_tree(nx.Graph([(int(a), int(b), {"weight": float(w)}) for (a, b), w in zip(e, w0)]))
    in_tree = np.array([T.has_edge(int(a), int(b)) for a, b in e])
    e = e[in_tree | (rng.random(len(e)) < 0.8)]
    trunks = rng.choice(n, size=(max(2, n // 300), 2), replace=False) if n >= 600 else np.empty((0, 2), int)
    e = np.vstack([e, trunks])
    diam = np.concatenate([rng.choice([0.1, 0.15, 0.2, 0.3], size=len(e) - len(trunks)), np.full(len(trunks), 0.6)])
    length = np.linalg.norm(xy[e[:, 0]] - xy[e[:, 1]], axis=1)
    g = round_sig(1e3 * diam**4 / length)
    W = sp.coo_matrix((np.concatenate([g, g]), (np.concatenate([e[:, 0], e[:, 1]]),
                                                 np.concatenate([e[:, 1], e[:, 0]]))), shape=(n, n)).tocsr()
    W.sum_duplicates()
    W.data = round_sig(W.data)
    d = np.asarray(W.sum(axis=1)).ravel()
    res = rng.choice(n, size=3, replace=False)
    d[res] += 10.0
    d = round_sig(d * (1 + 1e-5))  # rounding never drops the diagonal below the row sum
    return sp.csr_matrix(sp.diags(d) - W)


case("pipe_network", "graph", ["small", "weighted", "laplacian", "network"],
     "Water distribution network of an invented town: 60x50 jittered street grid, 80% of street pipes "
     "kept (connected), trunk mains; weighted Laplacian (conductance ~ D^4/L) grounded at three reservoirs.",
     "scripts/make_suite.py (NumPy, NetworkX spanning tree); invented scenario", spd=True)(
    lambda: _pipe_network(60, 50, seed=21))

case("pipe_network_tiny", "graph", ["tiny", "weighted", "laplacian", "network", "npz"],
     "Tiny version of the pipe network (6x5 street grid) stored as a SciPy .npz file.",
     "scripts/make_suite.py; invented scenario", spd=True, fmt="npz")(lambda: _pipe_network(6, 5, seed=22))

case("geometric_rgg_3000", "graph", ["small", "laplacian", "geometric", "networkx"],
     "Graph Laplacian of a random geometric graph: 3000 points in the unit square, radius 0.035 "
     "(sensor field); may be disconnected (singular, not SPD).",
     "networkx.random_geometric_graph(3000, 0.035, seed=31)", spd=False)(
    lambda: _laplacian(nx.random_geometric_graph(3000, 0.035, seed=31), 3000))

case("planted_partition_8x250", "graph", ["small", "laplacian", "communities", "networkx"],
     "Graph Laplacian of a planted-partition graph: 8 groups of 250 vertices, p_in 0.04, p_out 0.0015.",
     "networkx.planted_partition_graph(8, 250, 0.04, 0.0015, seed=32)", spd=False)(
    lambda: _laplacian(nx.planted_partition_graph(8, 250, 0.04, 0.0015, seed=32), 2000))

for _n, _tags in ((20000, ["large"]), (2000, ["small"])):
    case(f"powerlaw_ba_{_n}", "powerlaw", _tags + ["pattern", "hubs", "networkx"],
         f"Barabasi-Albert preferential-attachment graph, {_n} vertices, 3 edges per new vertex "
         f"(power-law degrees, a few hubs); pattern only.",
         f"networkx.barabasi_albert_graph({_n}, 3, seed=33)", spd=False, pattern=True)(
        lambda _n=_n: _laplacian(nx.barabasi_albert_graph(_n, 3, seed=33), _n))


# ---- pathological cases ---------------------------------------------------------------------------
def _tridiag(n):
    return sp.csr_matrix(sp.diags([-np.ones(n - 1), 2 * np.ones(n), -np.ones(n - 1)], [-1, 0, 1]))


def _arrow(n):
    A = sp.lil_matrix((n, n))
    A.setdiag(np.full(n, 2.0))
    A[0, 1:] = -1.0
    A[1:, 0] = -1.0
    A[0, 0] = float(n)
    return sp.csr_matrix(A)


def _dominant(W):
    """SPD matrix with the pattern of graph W: diag = degree + 1, off-diagonals -1 (an M-matrix)."""
    W = sp.csr_matrix(W, dtype=float)
    W.data[:] = 1.0
    W.setdiag(0)
    W.eliminate_zeros()
    return sp.csr_matrix(sp.diags(np.asarray(W.sum(axis=1)).ravel() + 1.0) - W)


def _disconnected():
    blocks = [pyamg.gallery.poisson((12, 12), format="csr"), _tridiag(50), _arrow(20),
              _dominant(np.ones((8, 8))), sp.csr_matrix(np.array([[3.0]])),
              pyamg.gallery.poisson((5, 5, 5), format="csr"), _tridiag(2)]
    A = sp.block_diag(blocks, format="csr")
    p = np.random.default_rng(41).permutation(A.shape[0])  # interleave the components
    return sp.csr_matrix(A[p][:, p])


def _isolated():
    A = sp.lil_matrix(pyamg.gallery.poisson((20, 20), format="csr"))
    n0 = A.shape[0]
    B = sp.block_diag([A, sp.identity(40) * 2.0], format="csr")
    p = np.random.default_rng(42).permutation(n0 + 40)
    return sp.csr_matrix(B[p][:, p])


def _empty_rows():
    A = pyamg.gallery.poisson((15, 15), format="csr")
    n0 = A.shape[0]
    B = sp.block_diag([A, sp.csr_matrix((25, 25))], format="csr")
    p = np.random.default_rng(43).permutation(n0 + 25)
    p = np.concatenate([p[p != n0 + 24], [n0 + 24]])  # the last row is empty too
    return sp.csr_matrix(B[p][:, p])


def _dense_row():
    A = sp.lil_matrix(sp.block_diag([_dominant(pyamg.gallery.poisson((30, 30), format="csr")),
                                     sp.csr_matrix([[1.0]])]))
    n = A.shape[0]
    A[n - 1, : n - 1] = -0.01
    A[: n - 1, n - 1] = -0.01
    A[n - 1, n - 1] = 0.01 * n + 1
    A = sp.csr_matrix(A)
    p = np.random.default_rng(44).permutation(n)
    return sp.csr_matrix(A[p][:, p])


case("tridiag_1000", "pathological", ["small", "path", "banded"],
     "Tridiagonal 2/-1 matrix of order 1000 (a path graph): bandwidth 1 and no fill in natural order.",
     "scripts/make_suite.py", spd=True)(lambda: _tridiag(1000))
case("arrow_500", "pathological", ["small", "star", "dense-row"],
     "Arrow matrix of order 500: dense first row and column (a star graph). Natural order fills the "
     "whole matrix; ordering the hub last gives no fill.", "scripts/make_suite.py", spd=True)(lambda: _arrow(500))
case("disconnected_mix", "pathological", ["small", "disconnected"],
     "Seven components of different shapes (2-D grid, path, arrow, clique, single vertex, 3-D grid, "
     "two vertices), rows interleaved by a fixed random permutation.", "scripts/make_suite.py", spd=True)(
    _disconnected)
case("isolated_nodes", "pathological", ["small", "isolated", "disconnected"],
     "20x20 5-point grid plus 40 isolated vertices (rows holding only a diagonal entry), interleaved.",
     "scripts/make_suite.py", spd=True)(_isolated)
case("empty_rows", "pathological", ["small", "isolated", "disconnected", "pattern", "singular"],
     "15x15 5-point grid pattern plus 25 rows and columns with no entry at all (not even a diagonal), "
     "one of them last; pattern only.", "scripts/make_suite.py", spd=False, pattern=True)(_empty_rows)
case("dense_row_grid", "pathological", ["small", "dense-row", "grid"],
     "30x30 grid M-matrix plus one vertex coupled to all others (a global constraint row), interleaved.",
     "scripts/make_suite.py", spd=True)(_dense_row)
case("single_entry", "pathological", ["tiny"], "A 1x1 matrix [2].", "scripts/make_suite.py", spd=True)(
    lambda: sp.csr_matrix(np.array([[2.0]])))


# ---- tiny Harwell-Boeing example ------------------------------------------------------------------
def _truss():
    """Pratt footbridge truss, 6 panels: pinned at the left support, roller at the right one."""
    panels, w, hgt = 6, 1.0, 1.0
    bottom = [(i * w, 0.0) for i in range(panels + 1)]
    top = [(i * w, hgt) for i in range(1, panels)]
    xy = np.array(bottom + top)
    nb = panels + 1

    def t(i):  # top node above bottom node i (1..panels-1)
        return nb + i - 1

    bars = [(i, i + 1) for i in range(panels)] + [(t(i), t(i + 1)) for i in range(1, panels - 1)]
    bars += [(i, t(i)) for i in range(1, panels)] + [(0, t(1)), (panels, t(panels - 1))]
    bars += [(i + 1, t(i)) for i in range(1, panels // 2)] + [(i, t(i + 1)) for i in range(panels // 2, panels - 1)]
    K = np.zeros((2 * len(xy), 2 * len(xy)))
    for a, b in bars:
        d = xy[b] - xy[a]
        L = np.linalg.norm(d)
        c = d / L
        k = np.outer(c, c) / L
        dofs = [2 * a, 2 * a + 1, 2 * b, 2 * b + 1]
        K[np.ix_(dofs, dofs)] += np.block([[k, -k], [-k, k]])
    fixed = [0, 1, 2 * panels + 1]  # pin: x and y at node 0; roller: y at the right support
    free = np.setdiff1d(np.arange(K.shape[0]), fixed)
    K = round_sig(K[np.ix_(free, free)].ravel()).reshape(len(free), len(free))
    K[np.abs(K) < 1e-12] = 0.0
    return sp.csr_matrix(K)


case("truss_tiny", "fem2d", ["tiny", "elasticity", "truss", "hb"],
     "Stiffness of a small Pratt footbridge truss (6 panels, 21 bars, pin and roller supports), "
     "stored in Harwell-Boeing format (RUA, both triangles).",
     "scripts/make_suite.py, written with scipy.io.hb_write; invented scenario", spd=True, fmt="rua")(_truss)


# --------------------------------------------------------------------------------------------------
# driver
# --------------------------------------------------------------------------------------------------
def _check_spd(A) -> bool:
    """Symmetric A is SPD iff Gaussian elimination without pivoting has only positive pivots.

    Small matrices: NumPy dense Cholesky. Larger: SciPy's sparse LU in the reverse Cuthill-McKee order
    (SciPy), natural column order, no row pivoting (``diag_pivot_thresh=0``); the pivots are U's diagonal.
    """
    import scipy.sparse.linalg as sla
    from scipy.sparse.csgraph import reverse_cuthill_mckee

    A = sp.csr_matrix(A, dtype=float)
    if A.shape[0] <= 2000:
        try:
            np.linalg.cholesky(A.toarray())
            return True
        except np.linalg.LinAlgError:
            return False
    p = reverse_cuthill_mckee(A, symmetric_mode=True)
    B = sp.csc_matrix(A[p][:, p])
    lu = sla.splu(B, permc_spec="NATURAL", diag_pivot_thresh=0.0, options={"SymmetricMode": True})
    return bool(np.all(lu.perm_r == np.arange(B.shape[0]))) and bool(np.all(lu.U.diagonal() > 0))


README_HEAD = """\
# The bundled matrix suite

Small and medium sparse symmetric matrices for tests, examples and benchmarks of `reorder`
(about 4-5 MB in all). Every file here is generated by `python scripts/make_suite.py` (deterministic:
fixed seeds, gzip without time stamps), which also rewrites this README and `manifest.json`.
In an installed package they are found with `reorder.bundled.suite_dir()`, `manifest()` and
`suite_files(kinds=..., min_n=..., max_n=...)`.

Where they come from:

* **Structured grids** (5-, 9-, 7- and 27-point stencils) and **pyamg gallery** matrices: built with
  pyamg's gallery functions (`poisson`, `stencil_grid`, `diffusion_stencil_2d`, `linear_elasticity`)
  or taken from the example matrices that ship inside pyamg (`load_example`; pyamg is MIT-licensed).
* **Unstructured parts** (thermal plate with bolt holes, ribbed bracket, bridge gusset plate, finned
  heat sink): scenarios of our own, meshed by `scripts/meshes.py` with NumPy/SciPy only (jittered
  points, `scipy.spatial.Delaunay`, elements outside the part dropped) and assembled there (P1, P2,
  plane-stress elasticity). The meshes are not graded or optimised; the matrices have the pattern and
  spectrum of real unstructured finite-element problems. Heat problems are implicit time steps
  `M/dt + K`; the elastic plate is clamped at bolt holes (those dofs removed), so all are SPD.
* **Graphs**: a pipe network of an invented town (weighted Laplacian grounded at reservoirs, SPD),
  Laplacians of a random geometric and a planted-partition graph, and Barabási–Albert power-law
  graphs (pattern only), all from NetworkX generators or NumPy with fixed seeds.
* **Pathological cases**: tridiagonal, arrow (dense first row), disconnected components, isolated
  vertices, rows with no entry at all, one dense row, a 1x1 matrix.
* One tiny **Harwell–Boeing** file (`truss_tiny.rua`, written by `scipy.io.hb_write`) and one tiny
  **SciPy `.npz`** (`pipe_network_tiny.npz`), so that every reader has a bundled example.

Storage: gzip'd Matrix Market, `coordinate ... symmetric` (lower triangle, 1-based), real values with
6 significant digits (values below 1e-12 of the largest are stored as explicit zeros, keeping the
element structure); pure graphs as `pattern`. `nnz` in the manifest counts stored entries after
reading with `reorder.io.read_matrix`, both triangles. `spd` says that the stored values form a
symmetric positive definite matrix (checked by `make_suite.py --check` and, for the small ones, by the
tests). Tags `large` (n >= 10^4), `small` and `tiny` give size classes.

"""


def readme(entries) -> str:
    """The suite's README: fixed text plus a table generated from the manifest entries."""
    lines = [README_HEAD, "| name | kind | n | nnz | SPD | tags | source |", "|---|---|---:|---:|:-:|---|---|"]
    for e in entries:
        lines.append(f"| `{e['file']}` | {e['kind']} | {e['n']} | {e['nnz']} | {'yes' if e['spd'] else 'no'} "
                     f"| {', '.join(e['tags'])} | {e['source']} |")
    lines += ["", "## Descriptions", ""]
    lines += [f"* `{e['name']}`: {e['description']}" for e in entries]
    return "\n".join(lines) + "\n"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--out", type=Path, default=ROOT / "matrices")
    ap.add_argument("--check", action="store_true", help="read back and confirm SPD entries")
    ap.add_argument("--only", nargs="*", help="generate only these names (manifest still lists all written)")
    args = ap.parse_args(argv)
    sys.path.insert(0, str(ROOT))
    from reorder.io import read_matrix

    out = args.out
    out.mkdir(parents=True, exist_ok=True)
    names = [c["name"] for c in CASES]
    assert len(set(names)) == len(names), "duplicate names"
    entries = []
    for c in CASES:
        path = out / f"{c['name']}.{c['fmt']}"
        if not args.only or c["name"] in args.only:
            A = sp.csr_matrix(c["make"](), dtype=float)
            A.sum_duplicates()
            comments = [f"reorder bundled suite: {c['name']} ({c['kind']})", c["description"],
                        f"source: {c['source']}", "regenerate with: python scripts/make_suite.py"]
            if c["fmt"] == "mtx.gz":
                write_mtx_gz(path, A, pattern=c["pattern"], comments=comments)
            elif c["fmt"] == "npz":
                sp.save_npz(path, A, compressed=True)
            elif c["fmt"] == "rua":
                scipy.io.hb_write(str(path), sp.csc_matrix(A))
            else:
                raise ValueError(c["fmt"])
        B = read_matrix(path)
        entry = dict(name=c["name"], file=path.name, n=int(B.shape[0]), nnz=int(B.nnz), kind=c["kind"],
                     tags=c["tags"], spd=bool(c["spd"]), description=c["description"], source=c["source"],
                     bytes=path.stat().st_size)
        entries.append(entry)
        msg = f"{c['name']:34s} n={entry['n']:7d} nnz={entry['nnz']:8d} {entry['bytes'] / 1024:8.1f} KiB"
        if args.check and c["spd"]:
            ok = _check_spd(B)
            msg += "  SPD ok" if ok else "  NOT SPD"
            if not ok:
                print(msg)
                return 1
        print(msg, flush=True)
    (out / "manifest.json").write_text(json.dumps(entries, indent=1) + "\n")
    (out / "README.md").write_text(readme(entries))
    total = sum(e["bytes"] for e in entries)
    print(f"{len(entries)} matrices, {total / 2**20:.2f} MiB")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
