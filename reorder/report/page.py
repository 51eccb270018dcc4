"""The self-contained HTML report (``report.html``): tables inline, figures embedded as base64 PNG.

Each section is built by a function of its own; :func:`write_html` puts them in order.
"""

from __future__ import annotations

import base64
import html
from pathlib import Path

from ..io import atomic_path
from .formats import LABELS, SUPERLU_NOTE, _compact, _fmt, _short
from .records import REFERENCES, _by_case, _matrices, _methods, _ok, best_methods

__all__ = ["write_html"]

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
    """One measure as a table: a row per matrix, a column per method, the best shaded."""
    idx = _by_case(rows)
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


def _html_factor_table(rows, matrices, methods) -> list[str]:
    """The factorization section: one row per matrix, one column per method (SuperLU nnz(L), time)."""
    e = html.escape
    idx = _by_case(rows)
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


def _html_intro(rows, matrices, methods, meta, existing_links) -> list[str]:
    """Head, title, the counts of the run and the links to the data files."""
    e = html.escape
    ok = sum(1 for r in rows if _ok(r))
    skipped = sum(1 for r in rows if r.get("status") == "skipped")
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
    if existing_links:
        parts.append("<p>Data: " + ", ".join(f'<a href="{e(l)}">{e(l)}</a>' for l in existing_links) + "</p>")
    return parts


def _html_figures(plots: dict) -> list[str]:
    """The performance profiles, the relative plots and the spy plots, where they were drawn."""
    e = html.escape
    parts = []
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
    return parts


def _html_failures_and_notes(rows, notes) -> list[str]:
    e = html.escape
    parts = []
    failed = [r for r in rows if r.get("status") == "error"]
    if failed:
        parts.append("<h2>Failures</h2><ul>")
        parts += [f"<li>{e(r['matrix'])} / {e(r['method'])}: {e(str(r.get('error') or ''))}</li>" for r in failed]
        parts.append("</ul>")
    if notes:
        parts.append("<h2>Notes</h2><ul>" + "".join(f"<li>{e(str(n))}</li>" for n in notes) + "</ul>")
    return parts


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
    e = html.escape
    existing = [l for l in links if (path.parent / l).is_file()]
    parts = _html_intro(rows, matrices, methods, meta, existing)
    for key in ("nnz_factor", "factor_ops"):
        parts.append(f"<h2>{e(LABELS[key])}</h2>")
        parts.append(_html_metric(rows, matrices, methods, key))
    parts += _html_figures(plots)
    for key, mark in (("order_seconds", False), ("bandwidth", True), ("profile", True), ("etree_height", True)):
        parts.append(f"<h2>{e(LABELS[key])}</h2>")
        if key == "order_seconds":
            parts.append("<p class='note'>Measured after the kernels were compiled and loaded in the process "
                         "(compilation is never ordering time).</p>")
        parts.append(_html_metric(rows, matrices, methods, key, mark))
    if any(r.get("factor_status") for r in rows):
        parts += _html_factor_table(rows, matrices, methods)
    parts += _html_failures_and_notes(rows, notes)
    parts.append("</body></html>")
    with atomic_path(path) as tmp:
        tmp.write_text("\n".join(parts) + "\n", encoding="utf-8")
    return path
