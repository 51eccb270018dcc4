"""Everything at once: the data files, the figures, the Markdown summary and the HTML page of a
comparison, written into its output folder from the result rows alone.
"""

from __future__ import annotations

from pathlib import Path

from ..io import atomic_path
from .data import write_csv, write_json
from .markdown import summary_markdown
from .page import write_html
from .plots import plot_profiles, plot_relative, plot_spy
from .records import _matrices, _methods, _ok

__all__ = ["write_report"]


def _spy_plots(pdir: Path, rows, matrices, perm_dir, notes: list, spy_limit: int) -> tuple[dict, list[Path]]:
    """Spy plots of each matrix under every ordering that succeeded; ``notes`` gets why one is missing."""
    from ..io import read_matrix, read_permutation

    figs: dict = {}
    written: list[Path] = []
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
        figs[m] = written[-2]
    return figs, written


def _figures(out: Path, rows, matrices, perm_dir, notes: list, spy_limit: int) -> tuple[dict, list[Path]]:
    """All figures into ``out/plots``: ``({"profiles", "relative_nnz", "relative_ops", "spy"} → PNG, files)``."""
    pdir = out / "plots"
    pdir.mkdir(exist_ok=True)
    figs: dict = {}
    written: list[Path] = []
    written += plot_profiles(pdir / "profiles", rows)
    figs["profiles"] = written[-2]
    base = "rcm" if "rcm" in _methods(rows) else _methods(rows)[0]
    written += plot_relative(pdir / "relative_nnz", rows, "nnz_factor", base)
    figs["relative_nnz"] = written[-2]
    written += plot_relative(pdir / "relative_ops", rows, "factor_ops", base)
    figs["relative_ops"] = written[-2]
    figs["spy"], spy_files = _spy_plots(pdir, rows, matrices, perm_dir, notes, spy_limit)
    return figs, written + spy_files


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
    out = Path(out)
    rows = list(rows)
    notes = list(notes)
    paths: dict = {"csv": write_csv(out / "results.csv", rows),
                   "json": write_json(out / "results.json", rows, {**(meta or {}), "notes": notes})}
    figs: dict = {}
    written: list[Path] = []
    if plots and rows:
        figs, written = _figures(out, rows, matrices, perm_dir, notes, spy_limit)
    summary = summary_markdown(rows, notes=notes, meta=meta)
    p = out / "summary.md"
    with atomic_path(p) as tmp:
        tmp.write_text(summary, encoding="utf-8")
    paths["summary"] = p
    paths["plots"] = written
    paths["html"] = write_html(out / "report.html", rows, plots=figs, notes=notes, meta=meta,
                               links=["results.csv", "results.json", "summary.md"])
    return paths
