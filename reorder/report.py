"""Present a comparison of orderings: CSV/JSON tables, Markdown summary, plots, a self-contained HTML page.

Everything here is a pure function of the result rows (one dict per matrix × method, as written by
:mod:`reorder.compare`), the saved permutations and the matrix files, so a resumed run rebuilds the
same files. Plots use matplotlib's Agg backend and are written as PNG and SVG.
"""

from __future__ import annotations

import base64
import csv
import html
import json
import math
from pathlib import Path

import numpy as np

from .io import atomic_path
from .jsonable import jsonable as _jsonable

__all__ = [
    "COLUMNS",
    "FACTOR_COLUMNS",
    "MEASURED_COLUMNS",
    "performance_ratios",
    "performance_profile",
    "profile_breakpoints",
    "profile_problems",
    "metric_table",
    "best_methods",
    "results_table",
    "write_csv",
    "write_json",
    "summary_markdown",
    "plot_spy",
    "plot_relative",
    "plot_profiles",
    "write_html",
    "write_report",
]

#: Columns of ``results.csv`` (one row per matrix × method), in this order.
COLUMNS = [
    "matrix",
    "method",
    "seed",
    "status",
    "error",
    "n",
    "nnz",
    "nnz_factor",
    "factor_ops",
    "bandwidth",
    "profile",
    "etree_height",
    "fill",
    "components",
    "order_seconds",
    "order_peak_mb",
    "order_peak_source",
    "analyse_seconds",
]
#: Extra columns present when the run factored the matrices (``factor=True``).
FACTOR_COLUMNS = [
    "factor_status",
    "factor_matrix",
    "factor_nnz_l",
    "factor_mb",
    "factor_peak_mb",
    "factor_seconds",
    "factor_message",
]
#: Columns measured from the clock or the memory of a process: they differ from run to run.
MEASURED_COLUMNS = frozenset(
    {"order_seconds", "order_peak_mb", "analyse_seconds", "factor_seconds", "factor_peak_mb"}
)

_LABELS = {
    "nnz_factor": "nnz(L)",
    "factor_ops": "factor operations",
    "order_seconds": "ordering time (s)",
    "bandwidth": "bandwidth",
    "profile": "profile",
    "etree_height": "elimination-tree height",
}


# --------------------------------------------------------------------------------------------------
# performance profiles
# --------------------------------------------------------------------------------------------------
def performance_ratios(values) -> np.ndarray:
    """Performance ratios ``r[p, s] = t[p, s] / min_s t[p, s]``; failures give ``inf``.

    Parameters
    ----------
    values : array_like, shape (n_problems, n_solvers)
        A cost per problem and solver (smaller is better). NaN, inf or negative entries mark a
        failure of that solver on that problem.

    Returns
    -------
    ndarray of float64, same shape
        ``r[p, s] >= 1`` where solver ``s`` solved problem ``p``, ``inf`` where it failed (Dolan &
        Moré's ``r_M``: larger than any ratio, so a failed solver never counts as solved). A zero
        cost gives ratio 1 if it is the best and ``inf`` against a best of zero otherwise; a problem
        that no solver solved has ``inf`` everywhere.

    References
    ----------
    E. D. Dolan and J. J. Moré, "Benchmarking optimization software with performance profiles",
    Math. Programming 91 (2002) 201–213.
    """
    t = np.array(values, dtype=np.float64, copy=True)
    if t.ndim != 2:
        raise ValueError(f"values must be two-dimensional (problems × solvers), got shape {t.shape}")
    bad = ~np.isfinite(t) | (t < 0)
    t[bad] = np.inf
    best = t.min(axis=1, keepdims=True) if t.shape[1] else np.zeros((t.shape[0], 1))
    with np.errstate(divide="ignore", invalid="ignore"):
        r = t / best
    r[t == best] = 1.0  # covers 0/0 for a best cost of zero
    r[bad | ~np.isfinite(best) | ~np.isfinite(r)] = np.inf
    return r


def performance_profile(values, taus) -> np.ndarray:
    """Dolan–Moré performance profile ``ρ_s(τ) = |{p : r[p, s] <= τ}| / n_problems``.

    Parameters
    ----------
    values : array_like, shape (n_problems, n_solvers)
        Costs as for :func:`performance_ratios`.
    taus : array_like of float
        The factors ``τ >= 1`` at which to evaluate the profile.

    Returns
    -------
    ndarray, shape (len(taus), n_solvers)
        The fraction of problems that each solver solved within a factor ``τ`` of the best.

    References
    ----------
    E. D. Dolan and J. J. Moré, "Benchmarking optimization software with performance profiles",
    Math. Programming 91 (2002) 201–213, equation (1).
    """
    r = performance_ratios(values)
    taus = np.atleast_1d(np.asarray(taus, dtype=np.float64))
    if r.shape[0] == 0:
        return np.zeros((taus.size, r.shape[1]))
    return (r[None, :, :] <= taus[:, None, None]).mean(axis=1)


def profile_breakpoints(values) -> np.ndarray:
    """The sorted distinct finite ratios (at least ``[1.0]``): where a profile can change."""
    r = performance_ratios(values)
    finite = r[np.isfinite(r)]
    return np.unique(np.concatenate([[1.0], finite]))


# --------------------------------------------------------------------------------------------------
# tables
# --------------------------------------------------------------------------------------------------
def _ok(row) -> bool:
    return row.get("status") == "ok"


def _matrices(rows) -> list[str]:
    seen: dict[str, None] = {}
    for r in rows:
        seen.setdefault(r["matrix"], None)
    return list(seen)


def _methods(rows) -> list[str]:
    seen: dict[str, None] = {}
    for r in rows:
        seen.setdefault(r["method"], None)
    return list(seen)


def metric_table(rows, matrices, methods, key: str) -> np.ndarray:
    """``(len(matrices), len(methods))`` array of ``row[key]``; NaN where missing or failed."""
    idx = {(r["matrix"], r["method"]): r for r in rows}
    out = np.full((len(matrices), len(methods)), np.nan)
    for i, m in enumerate(matrices):
        for j, s in enumerate(methods):
            r = idx.get((m, s))
            if r is not None and _ok(r) and r.get(key) is not None:
                out[i, j] = float(r[key])
    return out


def best_methods(rows, key: str = "nnz_factor") -> dict[str, list[str]]:
    """``{matrix: [methods with the smallest row[key]]}`` over successful rows (ties all listed)."""
    best: dict[str, list[str]] = {}
    value: dict[str, float] = {}
    for r in rows:
        if not _ok(r) or r.get(key) is None:
            continue
        m, v = r["matrix"], float(r[key])
        if m not in value or v < value[m]:
            value[m], best[m] = v, [r["method"]]
        elif v == value[m]:
            best[m].append(r["method"])
    return best


def _fmt(v, key: str = "") -> str:
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "–"
    if key.endswith("_seconds"):
        return f"{v:.3g}"
    if key.endswith("_mb"):
        return f"{v:.1f}"
    if isinstance(v, (int, np.integer)) or (isinstance(v, float) and v.is_integer() and abs(v) < 1e15):
        v = int(v)
        return f"{v:.3e}" if abs(v) >= 10**9 else f"{v:,}"
    if isinstance(v, float):
        return f"{v:.4g}"
    return str(v)


def _compact(v) -> str:
    """Three significant digits with a k/M/G/T suffix: 1234567 → '1.23M'."""
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "–"
    v = float(v)
    for div, suffix in ((1e12, "T"), (1e9, "G"), (1e6, "M"), (1e3, "k")):
        if abs(v) >= div:
            return f"{v / div:.3g}{suffix}"
    return f"{v:.3g}" if not v.is_integer() else str(int(v))


def results_table(rows, *, key: str = "nnz_factor", title: str | None = None):
    """A Rich table: one line per matrix, one column per method, ``row[key]``; best marked ★."""
    from rich.table import Table

    matrices, methods = _matrices(rows), _methods(rows)
    best = best_methods(rows, key)
    idx = {(r["matrix"], r["method"]): r for r in rows}
    table = Table(title=title or f"{_LABELS.get(key, key)} (★ = best)")
    table.add_column("matrix", style="bold", overflow="fold")
    table.add_column("n", justify="right")
    for s in methods:
        table.add_column(s, justify="right")
    for m in matrices:
        n = next((idx[(m, s)].get("n") for s in methods if (m, s) in idx and idx[(m, s)].get("n") is not None), None)
        cells = []
        for s in methods:
            r = idx.get((m, s))
            if r is None:
                cells.append("")
            elif not _ok(r):
                cells.append("[red]error[/red]")
            elif s in best.get(m, []):
                cells.append(f"[bold green]★ {_compact(r.get(key))}[/bold green]")
            else:
                cells.append(_compact(r.get(key)))
        table.add_row(m, _compact(n), *cells)
    return table


def table_width(rows) -> int:
    """Characters the full :func:`results_table` needs (to choose :func:`best_table` when narrower)."""
    names = max((len(r["matrix"]) for r in rows), default=6)
    return names + 4 + 8 + sum(max(len(s), 7) + 3 for s in _methods(rows)) + 1


def best_table(rows, *, key: str = "nnz_factor", baseline: str = "rcm"):
    """A narrow Rich table: per matrix the best method(s) by ``row[key]``, its value and its ratio to
    the baseline method (when that ran)."""
    from rich.table import Table

    best = best_methods(rows, key)
    idx = {(r["matrix"], r["method"]): r for r in rows}
    has_base = baseline in _methods(rows)
    table = Table(title=f"best ordering per matrix by {_LABELS.get(key, key)}")
    table.add_column("matrix", style="bold", overflow="fold")
    table.add_column("n", justify="right")
    table.add_column("★ best", style="bold green", overflow="fold")
    table.add_column(_LABELS.get(key, key), justify="right")
    if has_base:
        table.add_column(f"vs {baseline}", justify="right")
    for m in _matrices(rows):
        n = next((r.get("n") for (mm, _), r in idx.items() if mm == m and r.get("n") is not None), None)
        b = best.get(m)
        if not b:
            table.add_row(m, _compact(n), "[red]all failed[/red]", "–", *(["–"] if has_base else []))
            continue
        v = idx[(m, b[0])][key]
        cells = [m, _compact(n), ", ".join(b), _compact(v)]
        if has_base:
            r = idx.get((m, baseline))
            cells.append(f"{v / r[key]:.2f}" if r is not None and _ok(r) and r.get(key) else "–")
        table.add_row(*cells)
    return table


def _columns(rows) -> list[str]:
    cols = list(COLUMNS)
    if any("factor_status" in r for r in rows):
        cols += FACTOR_COLUMNS
    return cols


def write_csv(path, rows, columns=None) -> Path:
    """Write ``rows`` to ``path`` as CSV (atomic); missing values are empty cells."""
    path = Path(path)
    columns = columns or _columns(rows)
    with atomic_path(path) as tmp:
        with open(tmp, "w", newline="", encoding="utf-8") as fh:
            w = csv.writer(fh, lineterminator="\n")
            w.writerow(columns)
            for r in rows:
                out = []
                for c in columns:
                    v = _jsonable(r.get(c))
                    out.append("" if v is None else (repr(v) if isinstance(v, float) else v))
                w.writerow(out)
    return path


def write_json(path, rows, meta=None) -> Path:
    """Write ``{"columns", "rows", **meta}`` to ``path`` (atomic, NaN written as null)."""
    path = Path(path)
    doc = {"columns": _columns(rows), **_jsonable(meta or {}), "rows": _jsonable(list(rows))}
    with atomic_path(path) as tmp:
        tmp.write_text(json.dumps(doc, indent=1, allow_nan=False) + "\n", encoding="utf-8")
    return path


# --------------------------------------------------------------------------------------------------
# Markdown
# --------------------------------------------------------------------------------------------------
def _md_metric(rows, matrices, methods, key, mark_best: bool) -> list[str]:
    idx = {(r["matrix"], r["method"]): r for r in rows}
    best = best_methods(rows, key) if mark_best else {}
    lines = ["| matrix | " + " | ".join(methods) + " |", "|---|" + "---:|" * len(methods)]
    for m in matrices:
        cells = []
        for s in methods:
            r = idx.get((m, s))
            if r is None:
                cells.append("")
            elif not _ok(r):
                cells.append("error")
            else:
                txt = _fmt(r.get(key), key)
                cells.append(f"**{txt}**" if s in best.get(m, []) else txt)
        lines.append(f"| {m} | " + " | ".join(cells) + " |")
    return lines


def summary_markdown(rows, *, notes=(), meta=None) -> str:
    """The Markdown summary: best method per matrix, nnz(L), operations, time, failures, notes."""
    matrices, methods = _matrices(rows), _methods(rows)
    meta = meta or {}
    idx = {(r["matrix"], r["method"]): r for r in rows}
    ok = sum(1 for r in rows if _ok(r))
    out = [
        "# Ordering comparison",
        "",
        f"{len(matrices)} matrices × {len(methods)} orderings ({', '.join(methods)}), seed {meta.get('seed', 0)}: "
        f"{ok} cases ok, {len(rows) - ok} failed.",
        "",
        "## Best ordering per matrix (smallest nnz(L))",
        "",
        "| matrix | n | nnz | best | nnz(L) | vs RCM |" if "rcm" in methods else "| matrix | n | nnz | best | nnz(L) |",
        "|---|---:|---:|---|---:|---:|" if "rcm" in methods else "|---|---:|---:|---|---:|",
    ]
    best = best_methods(rows)
    for m in matrices:
        b = best.get(m)
        first = next((idx[(m, s)] for s in methods if (m, s) in idx), {})
        if not b:
            line = f"| {m} | {_fmt(first.get('n'))} | {_fmt(first.get('nnz'))} | (all failed) | – |"
            out.append(line + (" – |" if "rcm" in methods else ""))
            continue
        v = idx[(m, b[0])]["nnz_factor"]
        line = f"| {m} | {_fmt(first.get('n'))} | {_fmt(first.get('nnz'))} | {', '.join(b)} | {_fmt(v)} |"
        if "rcm" in methods:
            rr = idx.get((m, "rcm"))
            line += f" {v / rr['nnz_factor']:.3f} |" if rr and _ok(rr) and rr["nnz_factor"] else " – |"
        out.append(line)
    for key, mark in (("nnz_factor", True), ("factor_ops", True), ("order_seconds", False),
                      ("bandwidth", True), ("profile", True), ("etree_height", True)):
        out += ["", f"## {_LABELS[key]}" + (" (best in bold)" if mark else ""), ""]
        out += _md_metric(rows, matrices, methods, key, mark)
    frows = [r for r in rows if r.get("factor_status")]
    if frows:
        out += ["", "## Factorization (SciPy SuperLU, natural order on the reordered matrix, no pivoting)", "",
                "| matrix | method | status | factored | nnz(L) | storage MB | seconds | note |",
                "|---|---|---|---|---:|---:|---:|---|"]
        for r in frows:
            out.append(
                f"| {r['matrix']} | {r['method']} | {r['factor_status']} | {r.get('factor_matrix') or '–'} | "
                f"{_fmt(r.get('factor_nnz_l'))} | {_fmt(r.get('factor_mb'), '_mb')} | "
                f"{_fmt(r.get('factor_seconds'), '_seconds')} | {r.get('factor_message') or ''} |"
            )
        if any(r.get("factor_matrix") == "m-matrix" for r in frows):
            out += ["", "Where a matrix is not symmetric positive definite, the M-matrix with the same "
                        "(symmetrized) pattern was factored instead: off-diagonals −1, diagonal = degree + 1."]
    failed = [r for r in rows if not _ok(r)]
    if failed:
        out += ["", "## Failures", ""]
        out += [f"- {r['matrix']} / {r['method']}: {r.get('error') or 'unknown error'}" for r in failed]
    if notes:
        out += ["", "## Notes", ""] + [f"- {n}" for n in notes]
    return "\n".join(out) + "\n"


# --------------------------------------------------------------------------------------------------
# plots
# --------------------------------------------------------------------------------------------------
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


def _pattern(matrix):
    import scipy.sparse as sp

    A = sp.coo_matrix(matrix)
    return A.shape[0], A.row.astype(np.int64), A.col.astype(np.int64)


def plot_spy(stem, name: str, matrix, perms: dict, *, bins: int = 200) -> list[Path]:
    """Spy plots of ``matrix`` in its own order and reordered by each permutation.

    Matrices with at most ``bins`` rows are drawn exactly, one image cell per entry; larger ones as
    density images: the reordered matrix is cut into ``bins × bins`` blocks and each block is shaded
    by its number of nonzeros (log scale). ``bins`` stays below the pixel size of a panel so that no
    entry is lost to resampling.

    Parameters
    ----------
    stem : path-like
        Output path without extension; ``.png`` and ``.svg`` are written.
    name : str
        Matrix name for the title.
    matrix : sparse matrix
    perms : dict
        ``{method: perm}`` with ``A[perm][:, perm]`` the reordered matrix.

    Returns
    -------
    list of Path
    """
    from matplotlib.colors import LogNorm

    n, rows, cols = _pattern(matrix)
    panels = [("original", None)] + list(perms.items())
    ncol = min(4, len(panels))
    nrow = -(-len(panels) // ncol)
    fig = _figure((3.0 * ncol, 3.1 * nrow))
    axes = fig.subplots(nrow, ncol, squeeze=False)
    for ax in axes.ravel()[len(panels):]:
        ax.axis("off")
    exact = n <= bins
    nb = max(1, min(bins, n))
    for ax, (label, perm) in zip(axes.ravel(), panels):
        if perm is None:
            r, c = rows, cols
        else:
            inv = np.empty(n, dtype=np.int64)
            inv[np.asarray(perm, dtype=np.int64)] = np.arange(n, dtype=np.int64)
            r, c = inv[rows], inv[cols]
        counts = np.bincount((r * nb // n) * nb + (c * nb // n), minlength=nb * nb).reshape(nb, nb)
        img = np.ma.masked_equal(counts.astype(float), 0)
        if exact:
            ax.imshow(img, cmap="Blues", vmin=0, vmax=1.2, extent=(0, n, n, 0), interpolation="none")
        else:
            vmax = max(float(counts.max()), 2.0)
            ax.imshow(img, cmap="viridis", norm=LogNorm(vmin=1, vmax=vmax), extent=(0, n, n, 0),
                      interpolation="none")
        ax.set_aspect("equal")
        ax.set_title(label, fontsize=9)
        ax.set_xticks([])  # tick labels would cost most of the drawing time and say little
        ax.set_yticks([])
    kind = "nonzeros" if exact else f"nonzeros per block, {nb}×{nb} blocks, log scale"
    fig.suptitle(f"{name}: n = {n:,}, {kind}", fontsize=10)
    fig.subplots_adjust(left=0.02, right=0.98, bottom=0.02, top=1 - 0.6 / (3.1 * nrow), wspace=0.08,
                        hspace=0.12 / nrow + 0.1)
    return _save(fig, Path(stem))


def plot_relative(stem, rows, key: str = "nnz_factor", baseline: str = "rcm") -> list[Path]:
    """``row[key]`` divided by the baseline method's value: one line per matrix, one marker per method
    (log axis), so that the figure grows with the suite only in height."""
    matrices, methods = _matrices(rows), _methods(rows)
    if baseline not in methods:
        baseline = methods[0]
    vals = metric_table(rows, matrices, methods, key)
    base = vals[:, methods.index(baseline)][:, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        rel = vals / base
    fig = _figure((8.0, 1.3 + 0.26 * len(matrices)))
    ax = fig.subplots()
    y = np.arange(len(matrices))
    markers = "os^Dv<>pXh*"
    for j, s in enumerate(methods):
        good = np.isfinite(rel[:, j]) & (rel[:, j] > 0)
        ax.plot(rel[good, j], y[good], markers[j % len(markers)], ms=5, alpha=0.85, label=s, ls="none")
    ax.axvline(1.0, color="k", lw=0.8)
    ax.set_xscale("log")
    ax.set_yticks(y)
    ax.set_yticklabels(matrices, fontsize=7)
    ax.set_ylim(len(matrices) - 0.5, -0.5)
    ax.grid(axis="x", alpha=0.3)
    ax.set_xlabel(f"{_LABELS.get(key, key)} / {_LABELS.get(key, key)} of {baseline} (left of 1 is better)")
    ax.set_title(f"{_LABELS.get(key, key)} relative to {baseline}", fontsize=10)
    ax.legend(fontsize=7, loc="upper left", bbox_to_anchor=(1.01, 1.0), borderaxespad=0)
    fig.subplots_adjust(left=0.3, right=0.82, top=1 - 0.45 / (1.3 + 0.26 * len(matrices)),
                        bottom=0.55 / (1.3 + 0.26 * len(matrices)))
    return _save(fig, Path(stem))


def profile_problems(rows) -> list[str]:
    """The matrices on which every method has a row (ran, successfully or not): the problem set of a
    performance profile, so that a case left out on purpose does not count as a failure."""
    methods = _methods(rows)
    ran = {(r["matrix"], r["method"]) for r in rows}
    return [m for m in _matrices(rows) if all((m, s) in ran for s in methods)]


def plot_profiles(stem, rows, keys=("nnz_factor", "factor_ops", "order_seconds")) -> list[Path]:
    """Dolan–Moré performance profiles, one panel per measure (log2 τ axis).

    The problems are the matrices on which every method was run (a case left out on purpose is not a
    failure); a case that ran and failed counts as not solved.
    """
    every, methods = _matrices(rows), _methods(rows)
    matrices = profile_problems(rows)
    fig = _figure((4.2 * len(keys), 3.6))
    axes = fig.subplots(1, len(keys), squeeze=False)
    for ax, key in zip(axes[0], keys):
        vals = metric_table(rows, matrices, methods, key)
        if key.endswith("_seconds"):
            vals = np.maximum(vals, 1e-6)  # clock resolution: a zero time would make every ratio infinite
        taus = profile_breakpoints(vals)
        tmax = max(2.0, float(taus[-1]) * 1.1)
        taus = np.concatenate([taus, [tmax]])
        rho = performance_profile(vals, taus)
        for j, s in enumerate(methods):
            ax.step(taus, rho[:, j], where="post", label=s)
        ax.set_xscale("log", base=2)
        ax.set_xlim(1.0, tmax)
        ax.set_ylim(0, 1.02)
        ax.set_xlabel("τ (within a factor τ of the best)")
        ax.set_ylabel("fraction of matrices")
        ax.set_title(_LABELS.get(key, key), fontsize=10)
        ax.grid(alpha=0.3)
    axes[0][0].legend(fontsize=7, loc="lower right")
    scope = "" if len(matrices) == len(every) else f", over the {len(matrices)} of {len(every)} matrices every ordering ran on"
    fig.suptitle(f"Performance profiles (Dolan & Moré 2002){scope}", fontsize=10)
    fig.tight_layout()
    return _save(fig, Path(stem))


# --------------------------------------------------------------------------------------------------
# HTML
# --------------------------------------------------------------------------------------------------
_CSS = """
body{font-family:system-ui,sans-serif;margin:2em;max-width:1200px;color:#222}
table{border-collapse:collapse;margin:0.5em 0 1.5em;font-size:0.85em}
th,td{border:1px solid #ccc;padding:3px 8px;text-align:right}
th:first-child,td:first-child{text-align:left}
td.best{background:#d8f0d8;font-weight:bold} td.err{color:#b00}
img{max-width:100%;border:1px solid #eee;margin:0.3em 0}
.note{color:#555;font-size:0.9em}
"""


def _html_metric(rows, matrices, methods, key, mark_best=True) -> str:
    idx = {(r["matrix"], r["method"]): r for r in rows}
    best = best_methods(rows, key) if mark_best else {}
    h = ["<table><tr><th>matrix</th>" + "".join(f"<th>{html.escape(s)}</th>" for s in methods) + "</tr>"]
    for m in matrices:
        cells = []
        for s in methods:
            r = idx.get((m, s))
            if r is None:
                cells.append("<td></td>")
            elif not _ok(r):
                cells.append(f'<td class="err" title="{html.escape(str(r.get("error") or ""))}">error</td>')
            else:
                cls = ' class="best"' if s in best.get(m, []) else ""
                cells.append(f"<td{cls}>{html.escape(_fmt(r.get(key), key))}</td>")
        h.append(f"<tr><td>{html.escape(m)}</td>{''.join(cells)}</tr>")
    h.append("</table>")
    return "\n".join(h)


def _img(path: Path, alt: str) -> str:
    data = base64.b64encode(Path(path).read_bytes()).decode("ascii")
    return f'<img alt="{html.escape(alt)}" src="data:image/png;base64,{data}">'


def write_html(path, rows, *, plots: dict | None = None, notes=(), meta=None, links=()) -> Path:
    """Write a self-contained HTML report: tables inline, plots embedded as base64 PNG.

    Parameters
    ----------
    path : path-like
    rows : list of dict
    plots : dict
        ``{"profiles": png, "relative_nnz": png, "relative_ops": png, "spy": {matrix: png}}``.
    notes : list of str
    meta : dict
    links : list of str
        File names, relative to the report, of files that exist (e.g. ``results.csv``); they are
        linked. Nothing else outside the page is referred to.
    """
    path = Path(path)
    plots = plots or {}
    meta = meta or {}
    matrices, methods = _matrices(rows), _methods(rows)
    ok = sum(1 for r in rows if _ok(r))
    e = html.escape
    parts = [
        "<!DOCTYPE html><html><head><meta charset='utf-8'><title>Ordering comparison</title>",
        f"<style>{_CSS}</style></head><body>",
        "<h1>Ordering comparison</h1>",
        f"<p>{len(matrices)} matrices × {len(methods)} orderings ({e(', '.join(methods))}), seed "
        f"{e(str(meta.get('seed', 0)))}: {ok} cases ok, {len(rows) - ok} failed. "
        "Best value per matrix is shaded. nnz(L) counts the Cholesky factor with its diagonal; "
        "operations are Σ c<sub>j</sub>² over the column counts of L.</p>",
    ]
    existing = [l for l in links if (path.parent / l).is_file()]
    if existing:
        parts.append("<p>Data: " + ", ".join(f'<a href="{e(l)}">{e(l)}</a>' for l in existing) + "</p>")
    for key in ("nnz_factor", "factor_ops"):
        parts.append(f"<h2>{e(_LABELS[key])}</h2>")
        parts.append(_html_metric(rows, matrices, methods, key))
    if plots.get("profiles"):
        parts.append("<h2>Performance profiles</h2>")
        parts.append("<p class='note'>ρ(τ) = fraction of matrices on which an ordering is within a factor τ "
                     "of the best ordering for that matrix (Dolan &amp; Moré, Math. Programming 91, 2002). "
                     "Failures never count.</p>")
        parts.append(_img(plots["profiles"], "performance profiles"))
    for key, label in (("relative_nnz", "nnz(L) relative to the baseline"),
                       ("relative_ops", "operations relative to the baseline")):
        if plots.get(key):
            parts.append(f"<h2>{e(label)}</h2>")
            parts.append(_img(plots[key], label))
    for key, mark in (("order_seconds", False), ("bandwidth", True), ("profile", True), ("etree_height", True)):
        parts.append(f"<h2>{e(_LABELS[key])}</h2>")
        parts.append(_html_metric(rows, matrices, methods, key, mark))
    frows = [r for r in rows if r.get("factor_status")]
    if frows:
        parts.append("<h2>Factorization</h2><p class='note'>SciPy SuperLU in natural order on the reordered "
                     "matrix, without pivoting. Where the matrix is not symmetric positive definite, the "
                     "M-matrix with the same pattern (off-diagonals −1, diagonal = degree + 1) was factored, "
                     "as the column <i>factored</i> says.</p>")
        parts.append("<table><tr><th>matrix</th><th>method</th><th>status</th><th>factored</th><th>nnz(L)</th>"
                     "<th>storage MB</th><th>seconds</th><th>note</th></tr>")
        for r in frows:
            parts.append(
                f"<tr><td>{e(r['matrix'])}</td><td>{e(r['method'])}</td><td>{e(str(r['factor_status']))}</td>"
                f"<td>{e(str(r.get('factor_matrix') or '–'))}</td><td>{e(_fmt(r.get('factor_nnz_l')))}</td>"
                f"<td>{e(_fmt(r.get('factor_mb'), '_mb'))}</td><td>{e(_fmt(r.get('factor_seconds'), '_seconds'))}</td>"
                f"<td>{e(str(r.get('factor_message') or ''))}</td></tr>"
            )
        parts.append("</table>")
    spy = plots.get("spy") or {}
    if spy:
        parts.append("<h2>Spy plots</h2>")
        for m, p in spy.items():
            parts.append(f"<h3>{e(m)}</h3>")
            parts.append(_img(p, f"spy plots of {m}"))
    failed = [r for r in rows if not _ok(r)]
    if failed:
        parts.append("<h2>Failures</h2><ul>")
        parts += [f"<li>{e(r['matrix'])} / {e(r['method'])}: {e(str(r.get('error') or ''))}</li>" for r in failed]
        parts.append("</ul>")
    if notes:
        parts.append("<h2>Notes</h2><ul>" + "".join(f"<li>{e(str(n))}</li>" for n in notes) + "</ul>")
    parts.append("</body></html>")
    with atomic_path(path) as tmp:
        tmp.write_text("\n".join(parts) + "\n", encoding="utf-8")
    return path


# --------------------------------------------------------------------------------------------------
# everything at once
# --------------------------------------------------------------------------------------------------
def write_report(out, rows, *, matrices: dict | None = None, perm_dir=None, notes=(), meta=None,
                 plots: bool = True, spy_limit: int = 2_000_000) -> dict[str, Path]:
    """Write ``results.csv``, ``results.json``, ``summary.md``, plots and ``report.html`` into ``out``.

    Parameters
    ----------
    out : path-like
        An existing folder.
    rows : list of dict
        Result rows in their final order (sorted by matrix, then method order).
    matrices : dict, optional
        ``{matrix name: path}`` of the matrix files, for the spy plots.
    perm_dir : path-like, optional
        Folder of ``<matrix>.<method>.txt`` permutations, for the spy plots.
    notes : list of str
        Lines for the notes section (skipped cases, how memory was measured, …).
    meta : dict
        Facts about the run stored in ``results.json`` (methods, seed, …).
    plots : bool
        Draw the plots (matplotlib, Agg backend).
    spy_limit : int
        Matrices with more stored entries get no spy plot (reading them again would cost time).

    Returns
    -------
    dict
        ``{"csv", "json", "summary", "html", "plots": [...]}`` → paths written.
    """
    from .io import read_matrix, read_permutation

    out = Path(out)
    rows = list(rows)
    notes = list(notes)
    paths: dict = {"csv": write_csv(out / "results.csv", rows),
                   "json": write_json(out / "results.json", rows, {**(meta or {}), "notes": notes})}
    figs: dict = {}
    written: list[Path] = []
    if plots and rows:
        pdir = out / "plots"
        pdir.mkdir(exist_ok=True)
        written += plot_profiles(pdir / "profiles", rows)
        figs["profiles"] = written[-2]
        base = "rcm" if "rcm" in _methods(rows) else _methods(rows)[0]
        written += plot_relative(pdir / "relative_nnz", rows, "nnz_factor", base)
        figs["relative_nnz"] = written[-2]
        written += plot_relative(pdir / "relative_ops", rows, "factor_ops", base)
        figs["relative_ops"] = written[-2]
        figs["spy"] = {}
        for m in _matrices(rows):
            src = (matrices or {}).get(m)
            mrows = [r for r in rows if r["matrix"] == m and _ok(r)]
            if src is None or perm_dir is None or not mrows:
                continue
            if (mrows[0].get("nnz") or 0) > spy_limit:
                notes.append(f"no spy plot for {m}: more than {spy_limit:,} entries")
                continue
            try:
                A = read_matrix(src)
                perms = {r["method"]: read_permutation(Path(perm_dir) / f"{m}.{r['method']}.txt", A.shape[0], base=0)
                         for r in mrows}
            except Exception as exc:  # a missing file must not stop the report
                notes.append(f"no spy plot for {m}: {exc}")
                continue
            written += plot_spy(pdir / f"spy_{m}", m, A, perms)
            figs["spy"][m] = written[-2]
    summary = summary_markdown(rows, notes=notes, meta=meta)
    p = out / "summary.md"
    with atomic_path(p) as tmp:
        tmp.write_text(summary, encoding="utf-8")
    paths["summary"] = p
    paths["plots"] = written
    paths["html"] = write_html(out / "report.html", rows, plots=figs, notes=notes, meta=meta,
                               links=["results.csv", "results.json", "summary.md"])
    return paths
