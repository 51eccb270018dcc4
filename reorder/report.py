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
from .plots import REFERENCES, _ok, metric_table, plot_profiles, plot_relative, plot_spy, profile_problems

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
            elif r.get("status") == "skipped":
                cells.append("[dim]skipped[/dim]")
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
                cells.append("not run")
            elif not _ok(r):
                cells.append(f"{r.get('status')}: {_short(r.get('error'), 60)}".replace("|", "/"))
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
    if any(r.get("factor_status") for r in rows):
        out += ["", "## Factorization (SciPy SuperLU, natural order on the reordered matrix, no pivoting)", "",
                "nnz(L) / seconds per ordering. " + SUPERLU_NOTE, "",
                "| matrix | " + " | ".join(methods) + " |", "|---|" + "---:|" * len(methods)]
        for m in matrices:
            cells = []
            for s in methods:
                r = idx.get((m, s))
                if r is None or not _ok(r):
                    cells.append("not run" if r is None else f"{r.get('status')}: {_short(r.get('error'), 60)}")
                elif r.get("factor_status") != "ok":
                    cells.append(_short(r.get("factor_message") or r.get("factor_status") or "not factored", 60))
                else:
                    cells.append(f"{_compact(r.get('factor_nnz_l'))} / {_fmt(r.get('factor_seconds'), '_seconds')} s"
                                 + (" (M-matrix)" if r.get("factor_matrix") == "m-matrix" else ""))
            out.append(f"| {m} | " + " | ".join(c.replace("|", "/") for c in cells) + " |")
        if any(r.get("factor_matrix") == "m-matrix" for r in rows):
            out += ["", "Where a matrix is not symmetric positive definite, the M-matrix with the same "
                        "(symmetrized) pattern was factored instead: off-diagonals −1, diagonal = degree + 1."]
    failed = [r for r in rows if r.get("status") == "error"]
    if failed:
        out += ["", "## Failures", ""]
        out += [f"- {r['matrix']} / {r['method']}: {r.get('error') or 'unknown error'}" for r in failed]
    if notes:
        out += ["", "## Notes", ""] + [f"- {n}" for n in notes]
    return "\n".join(out) + "\n"


# --------------------------------------------------------------------------------------------------
# HTML
# --------------------------------------------------------------------------------------------------
_CSS = """
body{font-family:system-ui,sans-serif;margin:2em;max-width:1200px;color:#222}
table{border-collapse:collapse;margin:0.5em 0 1.5em;font-size:0.85em}
th,td{border:1px solid #ccc;padding:3px 8px;text-align:right}
th:first-child,td:first-child{text-align:left}
td.best{background:#d8f0d8;font-weight:bold} td.err{color:#b00;text-align:left;font-size:0.9em}
td.skip{color:#777;text-align:left;font-size:0.9em;max-width:16em}
td.ref{color:#666}
img{max-width:100%;border:1px solid #eee;margin:0.3em 0}
.note{color:#555;font-size:0.9em;max-width:60em}
"""

#: Longest reason written into a table cell (the full text is in the cell's tooltip and the notes).
_CELL_REASON = 90


def _short(text, limit: int = _CELL_REASON) -> str:
    text = " ".join(str(text or "").split())
    return text if len(text) <= limit else text[: limit - 1].rsplit(" ", 1)[0] + " …"


def _html_cell(r, text: str, cls: str = "") -> str:
    """A table cell for row ``r``: ``text`` if it ran, else why not, in the cell itself."""
    e = html.escape
    if r is None:
        return '<td class="skip">not run</td>'
    if r.get("status") == "skipped":
        why = str(r.get("error") or "left out")
        return f'<td class="skip" title="{e(why)}">skipped: {e(_short(why))}</td>'
    if not _ok(r):
        why = str(r.get("error") or "unknown error")
        return f'<td class="err" title="{e(why)}">error: {e(_short(why))}</td>'
    return f"<td{f' class={chr(34)}{cls}{chr(34)}' if cls else ''}>{text}</td>"


def _html_metric(rows, matrices, methods, key, mark_best=True) -> str:
    idx = {(r["matrix"], r["method"]): r for r in rows}
    best = best_methods(rows, key) if mark_best else {}
    h = ["<table><tr><th>matrix</th>" + "".join(f"<th>{html.escape(s)}</th>" for s in methods) + "</tr>"]
    for m in matrices:
        cells = []
        for s in methods:
            r = idx.get((m, s))
            cls = "best" if s in best.get(m, []) else ("ref" if s in REFERENCES else "")
            cells.append(_html_cell(r, html.escape(_fmt((r or {}).get(key), key)), cls))
        h.append(f"<tr><td>{html.escape(m)}</td>{''.join(cells)}</tr>")
    h.append("</table>")
    return "\n".join(h)


#: Why SuperLU's count may differ from the exact symbolic one (shown with the factorization table).
SUPERLU_NOTE = ("SuperLU's nnz(L) can differ from the exact symbolic count of the nnz(L) table: it stores "
                "relaxed supernodes (neighbouring columns merged, with explicit zeros inside, dropped here "
                "before counting, together with entries that cancel numerically), and a solver that pivots "
                "for stability changes the structure; without pivoting on an M-matrix the two counts agree.")


def _html_factor_table(rows, matrices, methods) -> list[str]:
    """The factorization section: one row per matrix, one column per method (SuperLU nnz(L), time)."""
    e = html.escape
    idx = {(r["matrix"], r["method"]): r for r in rows}
    out = ["<h2>Factorization</h2>",
           "<p class='note'>SciPy SuperLU in natural order on the reordered matrix, without pivoting: nnz(L) and "
           "seconds per ordering. Where a matrix is not symmetric positive definite, the M-matrix with the same "
           f"pattern (off-diagonals −1, diagonal = degree + 1) was factored (column <i>factored</i>). "
           f"{e(SUPERLU_NOTE)}</p>",
           "<table><tr><th>matrix</th><th>n</th><th>factored</th>"
           + "".join(f"<th>{e(s)}</th>" for s in methods) + "</tr>"]
    for m in matrices:
        mrows = [idx[(m, s)] for s in methods if (m, s) in idx]
        kinds = sorted({str(r.get("factor_matrix")) for r in mrows if r.get("factor_matrix")})
        n = next((r.get("n") for r in mrows if r.get("n") is not None), None)
        cells = []
        for s in methods:
            r = idx.get((m, s))
            if r is None or not _ok(r):
                cells.append(_html_cell(r, ""))
                continue
            status, msg = r.get("factor_status"), str(r.get("factor_message") or "")
            if status != "ok":
                why = msg or status or "not factored"
                cells.append(f'<td class="skip" title="{e(why)}">{e(_short(why))}</td>')
                continue
            text = f"{e(_compact(r.get('factor_nnz_l')))}<br>{e(_fmt(r.get('factor_seconds'), '_seconds'))} s"
            if r.get("factor_nnz_l") is not None and r.get("nnz_factor") and r["factor_nnz_l"] != r["nnz_factor"]:
                text += f"<br><small>symbolic {e(_compact(r['nnz_factor']))}</small>"
            cells.append(f"<td>{text}</td>")
        out.append(f"<tr><td>{e(m)}</td><td>{e(_fmt(n))}</td><td>{e(', '.join(kinds) or '–')}</td>"
                   f"{''.join(cells)}</tr>")
    out.append("</table>")
    return out


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
    skipped = sum(1 for r in rows if r.get("status") == "skipped")
    e = html.escape
    parts = [
        "<!DOCTYPE html><html><head><meta charset='utf-8'><title>Ordering comparison</title>",
        f"<style>{_CSS}</style></head><body>",
        "<h1>Ordering comparison</h1>",
        f"<p>{len(matrices)} matrices × {len(methods)} orderings ({e(', '.join(methods))}), seed "
        f"{e(str(meta.get('seed', 0)))}: {ok} cases ok, {len(rows) - ok - skipped} failed"
        + (f", {skipped} skipped" if skipped else "") + ". "
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
                     "Failures never count. The file order (natural) is a reference, not a competitor: it is "
                     "left out here and in the relative plots, and stays in the tables.</p>")
        parts.append(_img(plots["profiles"], "performance profiles"))
    for key, label in (("relative_nnz", "nnz(L) relative to the baseline"),
                       ("relative_ops", "operations relative to the baseline")):
        if plots.get(key):
            parts.append(f"<h2>{e(label)}</h2>")
            parts.append(_img(plots[key], label))
    spy = plots.get("spy") or {}
    if spy:
        parts.append("<h2>Spy plots: A and its Cholesky factor L</h2>")
        parts.append("<p class='note'>For each ordering, the reordered matrix A[p][:, p] and, on the same axes, "
                     "the lower triangle of its Cholesky factor L: entries of A in blue, fill in orange. "
                     "The fill is what the ordering is for: less orange, less memory and work.</p>")
        for m, p in spy.items():
            parts.append(f"<h3>{e(m)}</h3>")
            parts.append(_img(p, f"spy plots of A and L for {m}"))
    for key, mark in (("order_seconds", False), ("bandwidth", True), ("profile", True), ("etree_height", True)):
        parts.append(f"<h2>{e(_LABELS[key])}</h2>")
        if key == "order_seconds":
            parts.append("<p class='note'>Measured after the kernels were compiled and loaded in the process "
                         "(compilation is never ordering time).</p>")
        parts.append(_html_metric(rows, matrices, methods, key, mark))
    if any(r.get("factor_status") for r in rows):
        parts += _html_factor_table(rows, matrices, methods)
    failed = [r for r in rows if r.get("status") == "error"]
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
