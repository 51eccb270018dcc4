"""Commands over many matrices: ``methods``, ``compare`` and ``demo``."""

from __future__ import annotations

from pathlib import Path
from typing import List, Optional

import typer

from ..errors import InputError
from ._app import _check_method, app


# ------------------------------------------------------------------------------------------------
@app.command("methods")
def methods_cmd(
    settings: bool = typer.Option(False, "--settings", help="Also list each method's settings: name, values, "
                                  "default and what it does."),
):
    """List the available orderings (and, with --settings, what each takes)."""
    from ..orderings import declared_options, describe, preset_of

    for name, summary in describe().items():
        typer.echo(f"{name:<10} {summary}")
        if not settings:
            continue
        fixed = preset_of(name)
        if fixed:
            typer.echo(f"{'':<12}(fixes {', '.join(f'{k}={v}' for k, v in fixed.items())})")
        for f in declared_options(name):
            default = ",".join(f.default) if isinstance(f.default, tuple) else f.default
            default = "preset" if default is None else str(default).lower() if isinstance(default, bool) else default
            flag = f" ({f.flag})" if f.flag else ""
            typer.echo(f"{'':<12}{f.name}={f.metavar.lower() if f.kind != 'str' or not f.choices else f.metavar}"
                       f"  [default {default}]{flag}  {f.help}")


@app.command("examples")
def examples_cmd(
    kind: Optional[str] = typer.Option(None, "--kind", metavar="KIND",
                                       help="Only this kind: grid2d, grid3d, fem2d, fem3d, graph, powerlaw or pathological."),
    paths: bool = typer.Option(False, "--paths", help="Print the file path of each matrix instead of its description."),
):
    """List the bundled matrices with their size and kind; name one anywhere as bundled:NAME."""
    from .. import bundled

    if kind is not None and kind not in bundled.KINDS:
        raise InputError(f"--kind must be one of {', '.join(bundled.KINDS)}, not '{kind}'")
    try:
        entries, base = bundled.manifest(), bundled.suite_dir()
    except (FileNotFoundError, OSError, ValueError) as exc:
        raise InputError(f"cannot open the bundled matrices: {exc}") from None
    entries = sorted((e for e in entries if kind in (None, e["kind"])), key=lambda e: (e["kind"], e["n"], e["name"]))
    width = max((len(e["name"]) for e in entries), default=4) + len(bundled.PREFIX)
    typer.echo(f"{'name':<{width}}  {'rows':>7}  {'entries':>8}  {'kind':<12}  " + ("path" if paths else "description"))
    for e in entries:
        what = str(base / e["file"]) if paths else e["description"].split(". ")[0].split(" (")[0].split(": ")[0]
        what = what if len(what) <= 70 else what[:67].rsplit(" ", 1)[0] + " ..."
        typer.echo(f"{bundled.PREFIX + e['name']:<{width}}  {e['n']:>7,}  {e['nnz']:>8,}  {e['kind']:<12}  {what}")


# ------------------------------------------------------------------------------------------------
@app.command("compare")
def compare_cmd(
    inputs: List[Path] = typer.Argument(..., metavar="MATRIX",
                                        help="Matrix files, folders of matrix files, or bundled:NAME (see `reorder examples`)."),
    methods: Optional[str] = typer.Option(None, "--methods", metavar="LIST",
                                          help="Comma-separated ordering names or method specs NAME:OPTION=VALUE (e.g. nd:effort=fast).  [default: all, see `reorder methods`]"),
    output: Path = typer.Option(Path("reorder-compare"), "--output", "-o", metavar="FOLDER",
                                help="Folder for results, permutations, plots and report."),
    out_alias: Optional[Path] = typer.Option(None, "--out", hidden=True),
    workers: int = typer.Option(1, "--workers", metavar="N", help="Local worker processes."),
    resume: bool = typer.Option(False, "--resume", help="Skip cases already finished in the output folder."),
    factor: bool = typer.Option(False, "--factor", help="Also run a real factorization (SciPy SuperLU, natural order, no pivoting)."),
    cluster: Optional[str] = typer.Option(None, "--cluster", metavar="ADDRESS",
                                          help="Dask scheduler address tcp://HOST:PORT (needs the 'cluster' extra)."),
    seed: int = typer.Option(0, "--seed", metavar="N", help="Seed for every ordering."),
    plots: bool = typer.Option(True, "--plots/--no-plots", help="Draw spy plots, relative-fill plots and performance profiles."),
    factor_max_ops: float = typer.Option(5e10, "--factor-max-ops", metavar="OPS",
                                         help="Skip real factorizations needing more operations than this."),
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
    from ..io.paths import check_output_folder

    check_output_folder(out_alias or output)
    _compare.run_compare(
        inputs, methods=names, out=out_alias or output, workers=workers, resume=resume, factor=factor,
        cluster=cluster, seed=seed, progress=True, plots=plots, factor_max_ops=factor_max_ops,
    )


@app.command("demo")
def demo_cmd(
    output: Path = typer.Option(Path("reorder-demo"), "--output", "-o", metavar="FOLDER",
                                help="Folder for the demo's results and report."),
    out_alias: Optional[Path] = typer.Option(None, "--out", hidden=True),
    workers: int = typer.Option(1, "--workers", metavar="N", help="Local worker processes."),
    resume: bool = typer.Option(False, "--resume", help="Skip cases already finished in the output folder."),
):
    """Compare the orderings on a fixed set of bundled matrices (about a minute) and write a report."""
    from .. import demo as _demo

    if workers < 1:
        raise InputError(f"--workers must be at least 1, not {workers}")
    from ..io.paths import check_output_folder

    check_output_folder(out_alias or output)
    _demo.run_demo(out=out_alias or output, workers=workers, resume=resume)
