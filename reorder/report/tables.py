"""The terminal's tables of a comparison (Rich): the full grid of one measure, or the best per matrix.

:class:`reorder.compare.CompareResult` shows one or the other depending on the terminal's width.
"""

from __future__ import annotations

from .formats import LABELS, _compact
from .records import _by_case, _matrices, _methods, _ok, best_methods

__all__ = ["results_table", "table_width", "best_table"]


def results_table(rows, *, key: str = "nnz_factor", title: str | None = None):
    """A Rich table: one line per matrix, one column per method, ``row[key]``; best marked ★."""
    from rich.table import Table

    matrices, methods = _matrices(rows), _methods(rows)
    best = best_methods(rows, key)
    idx = _by_case(rows)
    table = Table(title=title or f"{LABELS.get(key, key)} (★ = best)")
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
    idx = _by_case(rows)
    has_base = baseline in _methods(rows)
    table = Table(title=f"best ordering per matrix by {LABELS.get(key, key)}")
    table.add_column("matrix", style="bold", overflow="fold")
    table.add_column("n", justify="right")
    table.add_column("★ best", style="bold green", overflow="fold")
    table.add_column(LABELS.get(key, key), justify="right")
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
