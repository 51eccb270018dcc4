"""Unstructured meshes and finite-element assembly with NumPy/SciPy only, for the bundled suite.

Used by ``scripts/make_suite.py`` to build the project's demo parts (a thermal plate with bolt holes, a
gusset plate, a ribbed bracket, a finned heat-sink block). Not part of the installed package.

Meshes are made the simple way: jittered lattice points inside the part plus points sampled along its
boundary curves, a Delaunay triangulation of all of them (``scipy.spatial.Delaunay``), then elements
whose centroid lies outside the part are dropped, unused nodes are removed and only the largest
connected piece is kept. The elements are not graded or optimised; they are meant to give matrices
with the sparsity pattern and spectrum of real unstructured-mesh problems, not accurate solutions.

Element matrices are the textbook ones (from memory):

* P1 triangle / tetrahedron stiffness ``|T| G Gᵀ`` with ``G`` the constant basis gradients, consistent
  mass ``|T| (1 + δ_ij) / 12`` in 2-D and ``|T| (1 + δ_ij) / 20`` in 3-D;
* P2 triangle (vertex functions ``λ_i (2λ_i − 1)``, edge functions ``4 λ_i λ_j``) integrated with the
  6-point degree-4 triangle rule of Dunavant (1985), exact for P2 mass and stiffness;
* plane-stress P1 elasticity ``t |T| Bᵀ D B`` with the constant strain-displacement matrix ``B``.

References
----------
Dunavant, D. A. (1985). High degree efficient symmetrical Gaussian quadrature rules for the triangle.
International Journal for Numerical Methods in Engineering 21(6), 1129–1148.
Zienkiewicz, O. C., Taylor, R. L., Zhu, J. Z. (2005). The Finite Element Method: Its Basis and
Fundamentals, 6th ed., Elsevier (P1/P2 elements and plane-stress elasticity).
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp
from matplotlib.path import Path as _MplPath
from scipy.sparse.csgraph import connected_components
from scipy.spatial import Delaunay, cKDTree

# --------------------------------------------------------------------------------------------------
# 2-D parts: an outer polygon minus circular and polygonal holes
# --------------------------------------------------------------------------------------------------


class Part2D:
    """A planar part: outer polygon minus circular holes and polygonal cut-outs.

    Parameters
    ----------
    outer : (m, 2) array
        Outer boundary polygon (vertices in order, not repeated).
    circles : list of (cx, cy, r)
        Circular holes.
    cutouts : list of (k, 2) arrays
        Polygonal holes (slots, windows).
    """

    def __init__(self, outer, circles=(), cutouts=()):
        self.outer = np.asarray(outer, dtype=float)
        self.circles = [tuple(map(float, c)) for c in circles]
        self.cutouts = [np.asarray(c, dtype=float) for c in cutouts]
        self._outer_path = _MplPath(self.outer)
        self._cut_paths = [_MplPath(c) for c in self.cutouts]

    def inside(self, pts) -> np.ndarray:
        """True for points strictly inside the part."""
        pts = np.asarray(pts, dtype=float)
        ok = self._outer_path.contains_points(pts)
        for p in self._cut_paths:
            ok &= ~p.contains_points(pts)
        for cx, cy, r in self.circles:
            ok &= np.hypot(pts[:, 0] - cx, pts[:, 1] - cy) > r
        return ok

    def boundary_points(self, h: float) -> np.ndarray:
        """Points spaced about ``h`` along every boundary curve."""
        out = [_polygon_points(self.outer, h)]
        out += [_polygon_points(c, h) for c in self.cutouts]
        for cx, cy, r in self.circles:
            k = max(8, int(np.ceil(2 * np.pi * r / h)))
            t = 2 * np.pi * np.arange(k) / k
            out.append(np.column_stack([cx + r * np.cos(t), cy + r * np.sin(t)]))
        return np.vstack(out)

    def bbox(self):
        return self.outer.min(axis=0), self.outer.max(axis=0)


def _polygon_points(poly: np.ndarray, h: float) -> np.ndarray:
    pts = []
    m = len(poly)
    for i in range(m):
        a, b = poly[i], poly[(i + 1) % m]
        k = max(1, int(np.ceil(np.linalg.norm(b - a) / h)))
        t = np.arange(k) / k
        pts.append(a + t[:, None] * (b - a))
    return np.vstack(pts)


def mesh_part2d(part: Part2D, h: float, seed: int = 0):
    """Triangulate a :class:`Part2D` with target edge length ``h``.

    Returns
    -------
    points : (n, 2) float array
    triangles : (m, 3) int64 array, counter-clockwise
    """
    rng = np.random.default_rng(seed)
    lo, hi = part.bbox()
    xs = np.arange(lo[0] + h / 2, hi[0], h)
    ys = np.arange(lo[1] + h / 2, hi[1], h * np.sqrt(3) / 2)
    X, Y = np.meshgrid(xs, ys)
    X = X + (np.arange(len(ys))[:, None] % 2) * h / 2  # staggered rows: near-equilateral triangles
    pts = np.column_stack([X.ravel(), Y.ravel()])
    pts += rng.uniform(-0.15 * h, 0.15 * h, size=pts.shape)
    bnd = part.boundary_points(h)
    dist, _ = cKDTree(part.boundary_points(h / 4)).query(pts)
    pts = pts[part.inside(pts) & (dist > 0.45 * h)]
    allpts = np.vstack([bnd, pts])
    tri = Delaunay(allpts).simplices.astype(np.int64)
    cent = allpts[tri].mean(axis=1)
    keep = part.inside(cent)
    tri = tri[keep]
    area = _signed_area(allpts, tri)
    tri = tri[np.abs(area) > 1e-3 * h * h]
    area = _signed_area(allpts, tri)
    tri[area < 0] = tri[area < 0][:, [0, 2, 1]]
    return _compact(allpts, tri)


def _signed_area(p, t):
    a, b, c = p[t[:, 0]], p[t[:, 1]], p[t[:, 2]]
    return 0.5 * ((b[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1]) - (b[:, 1] - a[:, 1]) * (c[:, 0] - a[:, 0]))


def _compact(points, cells):
    """Keep the largest element-connected piece and renumber its nodes by first use."""
    n = len(points)
    k = cells.shape[1]
    rows = np.repeat(cells, k, axis=1).ravel()
    cols = np.tile(cells, (1, k)).ravel()
    adj = sp.csr_matrix((np.ones(rows.size), (rows, cols)), shape=(n, n))
    ncomp, lab = connected_components(adj, directed=False)
    used = np.zeros(n, bool)
    used[cells.ravel()] = True
    sizes = np.bincount(lab[used], minlength=ncomp)
    big = int(np.argmax(sizes))
    cells = cells[lab[cells[:, 0]] == big]
    used = np.zeros(n, bool)
    used[cells.ravel()] = True
    new = -np.ones(n, np.int64)
    new[used] = np.arange(int(used.sum()))
    return points[used], new[cells]


# --------------------------------------------------------------------------------------------------
# 3-D parts: a union of boxes minus cylinders (holes along z)
# --------------------------------------------------------------------------------------------------


def inside_boxes(pts, boxes, cylinders=(), margin: float = 0.0) -> np.ndarray:
    """Points inside a union of axis-aligned boxes, minus z-axis cylinders ``(cx, cy, r)``."""
    ok = np.zeros(len(pts), bool)
    for lo, hi in boxes:
        lo = np.asarray(lo) + margin
        hi = np.asarray(hi) - margin
        ok |= np.all((pts > lo) & (pts < hi), axis=1)
    for cx, cy, r in cylinders:
        ok &= np.hypot(pts[:, 0] - cx, pts[:, 1] - cy) > r + margin
    return ok


def mesh_boxes3d(boxes, cylinders, h: float, seed: int = 0):
    """Tetrahedralise a union of boxes minus vertical cylinders with target edge length ``h``.

    Lattice points through every box face (jittered by 0.1 h) inside the closed part are tetrahedralised; tetrahedra whose
    centroid lies outside, or that are flat, are dropped.

    Returns
    -------
    points : (n, 3) float array
    tets : (m, 4) int64 array, positively oriented
    """
    rng = np.random.default_rng(seed)
    axes = [_axis_coords([b[0][d] for b in boxes] + [b[1][d] for b in boxes], h) for d in range(3)]
    X, Y, Z = np.meshgrid(*axes, indexing="ij")
    pts = np.column_stack([X.ravel(), Y.ravel(), Z.ravel()])
    closed = inside_boxes(pts, boxes, margin=-0.01 * h)
    clear = np.ones(len(pts), bool)
    for cx, cy, r in cylinders:
        clear &= np.hypot(pts[:, 0] - cx, pts[:, 1] - cy) > r + 0.3 * h
    pts = pts[closed & clear]
    # points on the cylinder walls, so that holes are round
    extra = []
    for cx, cy, r in cylinders:
        k = max(8, int(np.ceil(2 * np.pi * r / h)))
        t = 2 * np.pi * np.arange(k) / k
        for z in axes[2]:
            ring = np.column_stack([cx + r * np.cos(t), cy + r * np.sin(t), np.full(k, z)])
            extra.append(ring[inside_boxes(ring, boxes, margin=-0.01 * h)])
    if extra:
        pts = np.vstack([pts] + extra)
    pts = pts + rng.uniform(-0.1 * h, 0.1 * h, size=pts.shape)
    tets = Delaunay(pts).simplices.astype(np.int64)
    cent = pts[tets].mean(axis=1)
    tets = tets[inside_boxes(cent, boxes, cylinders)]
    vol = _signed_volume(pts, tets)
    tets = tets[np.abs(vol) > 2e-3 * h**3]
    vol = _signed_volume(pts, tets)
    tets[vol < 0] = tets[vol < 0][:, [0, 2, 1, 3]]
    return _compact(pts, tets)


def _axis_coords(faces, h):
    """Lattice coordinates along one axis: every face coordinate plus fill-in points about h apart."""
    faces = np.unique(np.round(np.asarray(faces, dtype=float), 12))
    out = [faces[:1]]
    for a, b in zip(faces[:-1], faces[1:]):
        k = max(1, int(round((b - a) / h)))
        out.append(a + (b - a) * np.arange(1, k + 1) / k)
    return np.concatenate(out)


def _signed_volume(p, t):
    a = p[t[:, 0]]
    return np.einsum("ij,ij->i", p[t[:, 1]] - a, np.cross(p[t[:, 2]] - a, p[t[:, 3]] - a)) / 6.0


# --------------------------------------------------------------------------------------------------
# assembly
# --------------------------------------------------------------------------------------------------


def _assemble(cells, elem, n):
    """Sum element matrices ``elem[e]`` (k x k) on dofs ``cells[e]`` into an n x n CSR matrix."""
    k = cells.shape[1]
    rows = np.repeat(cells, k, axis=1).ravel()
    cols = np.tile(cells, (1, k)).ravel()
    A = sp.coo_matrix((elem.ravel(), (rows, cols)), shape=(n, n)).tocsr()
    A.sum_duplicates()
    return A


def p1_heat(points, cells, conductivity: float = 1.0, capacity: float = 0.0):
    """P1 stiffness ``conductivity * K + capacity * M`` on triangles or tetrahedra."""
    d = points.shape[1]
    P = points[cells]  # (m, d+1, d)
    J = P[:, 1:, :] - P[:, :1, :]  # (m, d, d) rows = edge vectors
    det = np.linalg.det(J)
    size = np.abs(det) / (2.0 if d == 2 else 6.0)
    Jinv = np.linalg.inv(J)  # columns give gradients of λ1..λd
    G = np.empty((len(cells), d + 1, d))
    G[:, 1:, :] = np.transpose(Jinv, (0, 2, 1))
    G[:, 0, :] = -G[:, 1:, :].sum(axis=1)
    K = size[:, None, None] * np.einsum("eid,ejd->eij", G, G)
    m0 = (np.ones((d + 1, d + 1)) + np.eye(d + 1)) / (12.0 if d == 2 else 20.0)
    M = size[:, None, None] * m0
    return _assemble(cells, conductivity * K + capacity * M, len(points))


# Dunavant (1985) degree-4 rule on the reference triangle: barycentric points and weights (sum 1).
_A1, _B1, _W1 = 0.445948490915965, 0.108103018168070, 0.223381589678011
_A2, _B2, _W2 = 0.091576213509771, 0.816847572980459, 0.109951743655322
_QP = np.array(
    [[_B1, _A1, _A1], [_A1, _B1, _A1], [_A1, _A1, _B1], [_B2, _A2, _A2], [_A2, _B2, _A2], [_A2, _A2, _B2]]
)
_QW = np.array([_W1] * 3 + [_W2] * 3)
_EDGES = np.array([[1, 2], [2, 0], [0, 1]])  # edge k is opposite vertex k


def p2_nodes(points, tris):
    """Add edge midpoints: return P2 node coordinates and (m, 6) connectivity.

    Local order: the three vertices, then the midpoints of the edges opposite vertex 0, 1, 2.
    """
    e = tris[:, _EDGES].reshape(-1, 2)
    e.sort(axis=1)
    uniq, inv = np.unique(e, axis=0, return_inverse=True)
    inv = inv.reshape(-1)
    mids = 0.5 * (points[uniq[:, 0]] + points[uniq[:, 1]])
    cells = np.hstack([tris, len(points) + inv.reshape(-1, 3)])
    return np.vstack([points, mids]), cells


def p2_heat(points6, cells6, conductivity: float = 1.0, capacity: float = 0.0):
    """P2 triangle stiffness ``conductivity * K + capacity * M`` (6-point Dunavant rule, exact)."""
    P = points6[cells6[:, :3]]
    J = P[:, 1:, :] - P[:, :1, :]
    area = np.abs(np.linalg.det(J)) / 2.0
    Jinv = np.linalg.inv(J)
    GL = np.empty((len(cells6), 3, 2))  # gradients of barycentric coordinates
    GL[:, 1:, :] = np.transpose(Jinv, (0, 2, 1))
    GL[:, 0, :] = -GL[:, 1:, :].sum(axis=1)
    K = np.zeros((len(cells6), 6, 6))
    M = np.zeros((6, 6))
    for lam, w in zip(_QP, _QW):
        phi = np.concatenate([lam * (2 * lam - 1), 4 * lam[_EDGES[:, 0]] * lam[_EDGES[:, 1]]])
        # gradient coefficients: grad phi_a = sum_i C[a, i] grad λ_i
        C = np.zeros((6, 3))
        C[[0, 1, 2], [0, 1, 2]] = 4 * lam - 1
        for k, (i, j) in enumerate(_EDGES):
            C[3 + k, i] = 4 * lam[j]
            C[3 + k, j] = 4 * lam[i]
        grad = np.einsum("ai,eid->ead", C, GL)
        K += w * np.einsum("ead,ebd->eab", grad, grad)
        M += w * np.outer(phi, phi)
    elem = area[:, None, None] * (conductivity * K + capacity * M[None, :, :])
    return _assemble(cells6, elem, len(points6))


def p1_plane_stress(points, tris, E: float = 1.0, nu: float = 0.3, thickness: float = 1.0):
    """Plane-stress P1 elasticity stiffness, dofs interleaved ``(u_x, u_y)`` per node."""
    P = points[tris]
    J = P[:, 1:, :] - P[:, :1, :]
    area = np.abs(np.linalg.det(J)) / 2.0
    Jinv = np.linalg.inv(J)
    G = np.empty((len(tris), 3, 2))
    G[:, 1:, :] = np.transpose(Jinv, (0, 2, 1))
    G[:, 0, :] = -G[:, 1:, :].sum(axis=1)
    B = np.zeros((len(tris), 3, 6))
    B[:, 0, 0::2] = G[:, :, 0]
    B[:, 1, 1::2] = G[:, :, 1]
    B[:, 2, 0::2] = G[:, :, 1]
    B[:, 2, 1::2] = G[:, :, 0]
    D = E / (1 - nu**2) * np.array([[1, nu, 0], [nu, 1, 0], [0, 0, (1 - nu) / 2]])
    elem = (thickness * area)[:, None, None] * np.einsum("eki,kl,elj->eij", B, D, B)
    dofs = np.empty((len(tris), 6), np.int64)
    dofs[:, 0::2] = 2 * tris
    dofs[:, 1::2] = 2 * tris + 1
    return _assemble(dofs, elem, 2 * len(points))
