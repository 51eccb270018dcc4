"""Commands over many matrices: ``methods``, ``compare`` and ``demo``."""

from __future__ import annotations

from pathlib import Path
from typing import List, Optional

import typer

from ..errors import InputError
from ._app import _check_method, app


# ------------------------------------------------------------------------------------------------
@app.command("methods")
def methods_cmd():
    """List the available orderings."""
    from ..orderings import describe

    for name, summary in describe().items():
        typer.echo(f"{name:<10} {summary}")


# ------------------------------------------------------------------------------------------------
@app.command("compare")
def compare_cmd(
    inputs: List[Path] = typer.Argument(..., help="Matrix files or folders of matrix files."),
    methods: Optional[str] = typer.Option(None, "--methods", help="Comma-separated ordering names (default: all available)."),
    out: Path = typer.Option(Path("reorder-compare"), "--out", help="Folder for results, permutations, plots and report."),
    workers: int = typer.Option(1, "--workers", help="Local worker processes."),
    resume: bool = typer.Option(False, "--resume", help="Skip cases already finished in OUT."),
    factor: bool = typer.Option(False, "--factor", help="Also run a real factorization (SciPy SuperLU, natural order, no pivoting)."),
    cluster: Optional[str] = typer.Option(None, "--cluster", help="Dask scheduler address tcp://HOST:PORT (needs the 'cluster' extra)."),
    seed: int = typer.Option(0, "--seed", help="Seed for every ordering."),
    plots: bool = typer.Option(True, "--plots/--no-plots", help="Draw spy plots, relative-fill plots and performance profiles."),
    factor_max_ops: float = typer.Option(5e10, "--factor-max-ops", help="Skip real factorizations needing more operations than this."),
):
    """Run every method on every matrix; write results.csv/json, permutations, plots and report.html.

    Orderings change only the speed and memory of a factorization, never the solution of an SPD
    system; a pivoting solver may reorder further.
    """
    from .. import compare as _compare
    from ..orderings import available

    names = [m.strip() for m in methods.split(",") if m.strip()] if methods else available()
    for m in names:
        _check_method(m)
    if workers < 1:
        raise InputError(f"--workers must be at least 1, not {workers}")
    _compare.run_compare(
        inputs, methods=names, out=out, workers=workers, resume=resume, factor=factor,
        cluster=cluster, seed=seed, progress=True, plots=plots, factor_max_ops=factor_max_ops,
    )


@app.command("demo")
def demo_cmd(
    out: Path = typer.Option(Path("reorder-demo"), "--out", help="Folder for the demo's results and report."),
    workers: int = typer.Option(1, "--workers", help="Local worker processes."),
    resume: bool = typer.Option(False, "--resume", help="Skip cases already finished in OUT."),
):
    """Compare every ordering on the bundled matrices and write a report."""
    from .. import compare as _compare

    if workers < 1:
        raise InputError(f"--workers must be at least 1, not {workers}")
    _compare.run_demo(out=out, workers=workers, resume=resume)


