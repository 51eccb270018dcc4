"""The report's figures: spy plots of A and of its Cholesky factor L, relative measures, and
performance profiles. Matplotlib's Agg canvas, no pyplot state; each figure is written as PNG and SVG.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from ..io import atomic_path
from .formats import LABELS, _compact
from .profiles import performance_profile, profile_breakpoints
from .records import REFERENCES, _ok, _unique, metric_table

__all__ = ["factor_blocks", "plot_spy", "plot_relative", "plot_profiles", "profile_problems", "REFERENCES"]

#: Colours: entries of A, fill entries of L, and a palette for the methods (colour-blind safe).
A_COLOUR = (0.03, 0.27, 0.58)
FILL_COLOUR = (0.90, 0.38, 0.0)
_STYLES = ["-", "--", "-.", ":"]


def _figure(figsize):
    """A matplotlib Figure drawn by the Agg canvas, without pyplot's global state."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=figsize)
    FigureCanvasAgg(fig)
    return fig


def _save(fig, stem: Path) -> list[Path]:
    paths = []
    for ext in (".png", ".svg"):
        p = stem.with_suffix(ext)
        with atomic_path(p, suffix=ext) as tmp:
            fig.savefig(tmp, dpi=110, format=ext[1:], metadata={"Date": None} if ext == ".svg" else None)
        paths.append(p)
    return paths


# --------------------------------------------------------------------------------------------------
# spy plots of A and L
# --------------------------------------------------------------------------------------------------
def factor_blocks(graph, perm, nb: int):
    """Where L's entries fall: ``(orig, fill, nnz_factor, factor_ops)``.

    ``orig[bi, bk]`` and ``fill[bi, bk]`` count the strictly lower entries of the Cholesky factor of
    ``A[perm][:, perm]`` in row block ``bi`` and column block ``bk`` (block of index ``i`` is
    ``i * nb // n``) that are entries of A, and that are fill. Their sum plus ``n`` is nnz(L).
    """
    from ..analysis import symbolic_factor
    from ..kernels.spy import factor_blocks as _blocks

    perm = np.asarray(perm, dtype=np.int64)
    sym = symbolic_factor(graph, perm)
    inv = np.empty_like(perm)
    inv[perm] = np.arange(perm.size, dtype=np.int64)
    orig, fill = _blocks(graph.n, graph.indptr, graph.indices, perm, inv, sym.parent.astype(np.int64), nb)
    return orig, fill, sym.nnz_factor, sym.factor_ops


def _image(mask_a, mask_fill):
    """RGB image: white, A's colour where ``mask_a``, the fill colour where ``mask_fill``."""
    img = np.ones(mask_a.shape + (3,))
    img[mask_fill] = FILL_COLOUR
    img[mask_a] = A_COLOUR
    return img


def plot_spy(stem, name: str, matrix, perms: dict, *, bins: int = 200) -> list[Path]:
    """Spy plots of ``A[p][:, p]`` and of its Cholesky factor L for each permutation, side by side.

    Each ordering gets two panels on the same axes: the reordered matrix (entries of A in blue) and
    the lower triangle of L, its entries of A in blue and its fill in orange, titled with nnz(L) and
    the factor operations. Matrices with at most ``bins`` rows are drawn entry by entry; larger ones
    in ``bins × bins`` blocks: a block is drawn if it holds an entry, in orange if it holds more fill
    than entries of A (no colour scale).

    Parameters
    ----------
    stem : path-like
        Output path without extension; ``.png`` and ``.svg`` are written.
    name : str
        Matrix name for the title.
    matrix : sparse matrix
    perms : dict
        ``{method: perm}`` with ``A[perm][:, perm]`` the reordered matrix; ``natural`` is the file order.

    Returns
    -------
    list of Path
    """
    import scipy.sparse as sp
    from matplotlib.patches import Patch

    from ..graph import from_matrix

    A = sp.coo_matrix(matrix)
    n = A.shape[0]
    graph = from_matrix(sp.csr_matrix(matrix))
    nb = max(1, min(bins, n))
    exact = n <= bins
    npairs = max(1, len(perms))
    ncol_pairs = 2 if npairs > 1 else 1
    nrow = -(-npairs // ncol_pairs)
    size, gap = 2.45, 0.3
    width = 2 * ncol_pairs * size + (ncol_pairs - 1) * gap + 0.3
    height = nrow * (size + 0.32) + 0.75
    fig = _figure((width, height))
    ratios = [1, 1, gap / size, 1, 1][: 3 * ncol_pairs - 1]
    grid = fig.add_gridspec(nrow, len(ratios), width_ratios=ratios, left=0.01, right=0.99, bottom=0.01,
                            top=1 - 0.7 / height, wspace=0.05, hspace=0.32 / size)
    first = None
    axes = []
    for i in range(nrow):
        row = []
        for j in [c for c in range(len(ratios)) if c != 2]:
            ax = fig.add_subplot(grid[i, j], sharex=first, sharey=first)
            first = first or ax
            row.append(ax)
        axes.append(row)
    axes = np.array(axes, dtype=object)
    for ax in axes.ravel():
        ax.set_xticks([])
        ax.set_yticks([])
        ax.set_aspect("equal")
    diag = np.eye(nb, dtype=bool)
    lower = np.tril(np.ones((nb, nb), dtype=bool), -1)
    for k, (method, perm) in enumerate(perms.items()):
        ax_a, ax_l = axes[k // ncol_pairs][2 * (k % ncol_pairs)], axes[k // ncol_pairs][2 * (k % ncol_pairs) + 1]
        perm = np.asarray(perm, dtype=np.int64)
        inv = np.empty(n, dtype=np.int64)
        inv[perm] = np.arange(n, dtype=np.int64)
        r, c = inv[A.row], inv[A.col]
        counts = np.bincount((r * nb // n) * nb + (c * nb // n), minlength=nb * nb).reshape(nb, nb)
        orig, fill, nnz_l, ops = factor_blocks(graph, perm, nb)
        a_mask = counts > 0
        l_a = (orig > 0) | diag
        l_fill = fill > 0
        if not exact:  # a block shows its majority
            l_a = diag | ((orig > 0) & (orig >= fill))
            l_fill = (fill > orig) & lower
        ext = (0, n, n, 0)
        ax_a.imshow(_image(a_mask, np.zeros_like(a_mask)), extent=ext, interpolation="nearest")
        ax_l.imshow(_image(l_a, l_fill & ~l_a), extent=ext, interpolation="nearest")
        label = "natural (file order)" if method == "natural" else method
        ax_a.set_title(f"{label}: A, nnz {_compact(A.nnz)}", fontsize=8)
        ax_l.set_title(f"L: nnz {_compact(nnz_l)}, ops {_compact(ops)}", fontsize=8)
    for ax in axes.ravel()[2 * len(perms):]:
        ax.axis("off")
    how = "each entry" if exact else f"{nb}×{nb} blocks; orange where a block holds more fill than entries of A"
    fig.suptitle(f"{name}: n = {n:,} ({how})", fontsize=9.5)
    fig.legend(handles=[Patch(color=A_COLOUR, label="entry of A"), Patch(color=FILL_COLOUR, label="fill entry of L")],
               loc="upper center", bbox_to_anchor=(0.5, 1 - 0.28 / height), ncol=2, fontsize=8, frameon=False)
    return _save(fig, Path(stem))


# --------------------------------------------------------------------------------------------------
# relative measures and performance profiles
# --------------------------------------------------------------------------------------------------
def _compared(rows) -> list[str]:
    methods = [s for s in _unique(rows, "method") if s not in REFERENCES]
    return methods or _unique(rows, "method")


def plot_relative(stem, rows, key: str = "nnz_factor", baseline: str = "rcm") -> list[Path]:
    """``row[key]`` divided by the baseline method's value: one line per matrix, one marker per method
    (log axis), so that the figure grows with the suite only in height. Reference orderings
    (:data:`REFERENCES`) are left out."""
    matrices, methods = _unique(rows, "matrix"), _compared(rows)
    if baseline not in methods:
        baseline = methods[0]
    vals = metric_table(rows, matrices, methods, key)
    base = vals[:, methods.index(baseline)][:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        rel = vals / base
    height = 1.5 + 0.26 * len(matrices)
    fig = _figure((8.0, height))
    ax = fig.subplots()
    y = np.arange(len(matrices))
    markers = "os^Dv<>pXh*"
    for j, s in enumerate(methods):
        good = np.isfinite(rel[:, j]) & (rel[:, j] > 0)
        ax.plot(rel[good, j], y[good], markers[j % len(markers)], ms=5, alpha=0.85, label=s, ls="none")
    ax.axvline(1.0, color="k", lw=0.8)
    ax.set_xscale("log", base=2)  # ticks at powers of two, labelled as plain ratios (1/8, 1/4, ..., 2)
    from matplotlib.ticker import FuncFormatter, NullFormatter

    ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:g}" if v >= 1 else f"1/{1 / v:g}"))
    ax.xaxis.set_minor_formatter(NullFormatter())
    ax.tick_params(labelsize=8)
    ax.set_yticks(y)
    ax.set_yticklabels(matrices, fontsize=7)
    ax.set_ylim(len(matrices) - 0.5, -0.5)
    ax.grid(axis="x", alpha=0.3)
    label = LABELS.get(key, key)
    ax.set_xlabel(f"{label} / {label} of {baseline} (left of 1 is better)", fontsize=9)
    ax.set_title(f"{label} relative to {baseline}", fontsize=10)
    ax.legend(fontsize=7, loc="upper left", bbox_to_anchor=(1.01, 1.0), borderaxespad=0)
    fig.subplots_adjust(left=0.3, right=0.82, top=1 - 0.45 / height, bottom=0.6 / height)
    return _save(fig, Path(stem))


def profile_problems(rows) -> list[str]:
    """The matrices on which every compared method has a row that ran (successfully or not): the
    problem set of a performance profile, so that a case left out on purpose is not a failure."""
    methods = _compared(rows)
    ran = {(r["matrix"], r["method"]) for r in rows if r.get("status") in ("ok", "error")}
    return [m for m in _unique(rows, "matrix") if all((m, s) in ran for s in methods)]


def _with_totals(rows) -> list[dict]:
    """Rows with ``total_seconds`` = ordering + factorization time where both were measured."""
    out = []
    for r in rows:
        r = dict(r)
        if _ok(r) and r.get("factor_status") == "ok" and r.get("factor_seconds") is not None:
            r["total_seconds"] = float(r["order_seconds"]) + float(r["factor_seconds"])
        out.append(r)
    return out


def plot_profiles(stem, rows, keys=None) -> list[Path]:
    """Dolan–Moré performance profiles, one panel per measure (log2 τ axis).

    The measures are nnz(L), operations, ordering time (measured after the kernels were compiled and
    loaded) and, when the run factored, ordering + factorization time, the cost a user pays. The
    reference orderings (:data:`REFERENCES`) are left out: the file order is no competitor, and its
    near-zero time and huge fill would squeeze every other curve against one edge. The problems are
    the matrices on which every compared method was run; a case that ran and failed counts as not
    solved.
    """
    rows = _with_totals(rows)
    if keys is None:
        keys = ["nnz_factor", "factor_ops", "order_seconds"]
        if any("total_seconds" in r for r in rows):
            keys.append("total_seconds")
    every, methods = _unique(rows, "matrix"), _compared(rows)
    matrices = profile_problems(rows)
    fig = _figure((3.6 * len(keys), 3.5))
    axes = fig.subplots(1, len(keys), squeeze=False)
    colours = [f"C{j % 10}" for j in range(len(methods))]
    for ax, key in zip(axes[0], keys):
        vals = metric_table(rows, matrices, methods, key)
        if key.endswith("_seconds"):
            vals = np.maximum(vals, 1e-6)  # clock resolution: a zero time would make every ratio infinite
        taus = profile_breakpoints(vals)
        tmax = max(2.0, float(taus[-1]) * 1.15)
        taus = np.concatenate([taus, [tmax]])
        rho = performance_profile(vals, taus)
        for j, s in enumerate(methods):
            ax.step(taus, rho[:, j], where="post", label=s, color=colours[j], ls=_STYLES[(j // 10 + j) % 4], lw=1.6)
        ax.set_xscale("log", base=2)
        ax.set_xlim(2 ** -0.12, tmax)  # a little room left of τ = 1, where the winners' curves jump
        ax.set_ylim(-0.02, 1.04)
        ax.set_xlabel("τ (within a factor τ of the best)", fontsize=8)
        ax.set_title(LABELS.get(key, key), fontsize=9.5)
        ax.tick_params(labelsize=8)
        ax.grid(alpha=0.3)
    axes[0][0].set_ylabel("fraction of matrices", fontsize=8)
    handles, labels = axes[0][0].get_legend_handles_labels()
    fig.legend(handles, labels, loc="lower center", ncol=min(len(methods), 8), fontsize=8, frameon=False,
               bbox_to_anchor=(0.5, 0.0))
    scope = "" if len(matrices) == len(every) else f"; the {len(matrices)} of {len(every)} matrices every ordering ran on"
    left_out = [s for s in _unique(rows, "method") if s in REFERENCES]
    ref = f"; {', '.join(left_out)} (reference) left out" if left_out else ""
    fig.suptitle(f"Performance profiles (Dolan & Moré 2002){ref}{scope}", fontsize=9.5)
    fig.subplots_adjust(left=0.06 if len(keys) > 2 else 0.12, right=0.99, top=0.85, bottom=0.25, wspace=0.22)
    return _save(fig, Path(stem))
