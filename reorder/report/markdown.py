"""The Markdown summary of a comparison (``summary.md``): best ordering per matrix, one table per
measure, the factorizations, failures and notes.
"""

from __future__ import annotations

from .formats import LABELS, SUPERLU_NOTE, _compact, _fmt, _short
from .records import _by_case, _matrices, _methods, _ok, best_methods

__all__ = ["summary_markdown"]


def _md_metric(rows, matrices, methods, key, mark_best: bool) -> list[str]:
    """One measure: a line per matrix, a column per method (best in bold if ``mark_best``)."""
    idx = _by_case(rows)
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


def _md_best(rows, matrices, methods) -> list[str]:
    """The table of the best ordering per matrix by nnz(L), with its ratio to RCM when that ran."""
    idx = _by_case(rows)
    out = [
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
    return out


def _md_factor(rows, matrices, methods) -> list[str]:
    """The factorization section: SuperLU's nnz(L) and seconds per matrix and ordering."""
    idx = _by_case(rows)
    out = ["", "## Factorization (SciPy SuperLU, natural order on the reordered matrix, no pivoting)", "",
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
    return out


def summary_markdown(rows, *, notes=(), meta=None) -> str:
    """The Markdown summary: best method per matrix, nnz(L), operations, time, failures, notes."""
    matrices, methods = _matrices(rows), _methods(rows)
    meta = meta or {}
    ok = sum(1 for r in rows if _ok(r))
    out = [
        "# Ordering comparison",
        "",
        f"{len(matrices)} matrices × {len(methods)} orderings ({', '.join(methods)}), seed {meta.get('seed', 0)}: "
        f"{ok} cases ok, {len(rows) - ok} failed.",
        "",
        "## Best ordering per matrix (smallest nnz(L))",
        "",
    ]
    out += _md_best(rows, matrices, methods)
    for key, mark in (("nnz_factor", True), ("factor_ops", True), ("order_seconds", False),
                      ("bandwidth", True), ("profile", True), ("etree_height", True)):
        out += ["", f"## {LABELS[key]}" + (" (best in bold)" if mark else ""), ""]
        out += _md_metric(rows, matrices, methods, key, mark)
    if any(r.get("factor_status") for r in rows):
        out += _md_factor(rows, matrices, methods)
    failed = [r for r in rows if r.get("status") == "error"]
    if failed:
        out += ["", "## Failures", ""]
        out += [f"- {r['matrix']} / {r['method']}: {r.get('error') or 'unknown error'}" for r in failed]
    if notes:
        out += ["", "## Notes", ""] + [f"- {n}" for n in notes]
    return "\n".join(out) + "\n"
