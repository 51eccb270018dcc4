"""Commands that hand an ordering to a solver: ``solve``, ``permcheck`` and ``sweep``."""

from __future__ import annotations

import json
import warnings
from pathlib import Path
from typing import Optional

import typer

from ..errors import InputError
from ._app import _check_method, _compiled, _jsonable, _load, _same_file, app
from ._options import flag_help, flag_options

PERM_HELP = "Permutation file to use instead of computing an ordering (header honoured; .npy too)."
INVERSE_HELP = "The --perm file holds the new position of each old index (old-to-new)."


def _perm_from(perm: Optional[Path], n: int, base: Optional[int], inverse: bool):
    from ..io import read_permutation

    if base is not None and base not in (0, 1):
        raise InputError(f"--base must be 0 or 1, not {base}")
    return read_permutation(perm, n, base=base, direction="old-to-new" if inverse else None)


def _factor(A, method, perm_arr, seed, effort):
    """Build an OrderedFactor; its pivoting warning becomes one stderr line."""
    from ..factor import OrderedFactor

    opts = {}
    if perm_arr is None:
        method = _check_method(method)
        opts = flag_options(method, effort=effort)
        _compiled(method)  # a cold kernel cache compiles first, saying so, outside the ordering time
    elif effort is not None:
        raise InputError("--effort needs --method, not --perm")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        F = OrderedFactor(A, method or "auto", perm=perm_arr, seed=seed, **opts)
    _echo_warnings(caught)
    return F


def _echo_warnings(caught) -> None:
    for w in caught:
        typer.echo(f"reorder: warning: {' '.join(str(w.message).split())}", err=True)


def _peak_rss_bytes() -> int | None:
    try:
        import resource
        import sys

        r = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
        return int(r if sys.platform == "darwin" else r * 1024)
    except (ImportError, OSError, ValueError):  # pragma: no cover - not on every platform
        return None


# ------------------------------------------------------------------------------------------------
@app.command("solve")
def solve_cmd(
    matrix: Path = typer.Argument(..., help="Matrix file (.mtx, .mtx.gz, Harwell-Boeing, .npz or bundled:NAME)."),
    method: Optional[str] = typer.Option(None, "--method", "-m", help="Ordering to compute once (default auto)."),
    perm: Optional[Path] = typer.Option(None, "--perm", "-p", help=PERM_HELP),
    base: Optional[int] = typer.Option(None, "--base", help="Base of --perm when it has no header (default: detect)."),
    inverse: bool = typer.Option(False, "--inverse", help=INVERSE_HELP),
    rhs: Optional[Path] = typer.Option(None, "--rhs", help="Right-hand side(s): .npy or Matrix Market array, n rows. "
                                       "Default: b = A x* with x* drawn from --seed (the error against x* is shown)."),
    solution: Optional[Path] = typer.Option(None, "--solution", help="Write the solution: .npy or .mtx (array)."),
    seed: int = typer.Option(0, "--seed", help="Seed of the ordering and of the generated right-hand side."),
    effort: Optional[str] = typer.Option(None, "--effort", help=flag_help("effort")),
    drop_zeros: bool = typer.Option(False, "--drop-zeros", help="Ignore explicitly stored zeros."),
    as_json: bool = typer.Option(False, "--json", help="Print one JSON object instead of a table."),
):
    """Order MATRIX once, factor it with SciPy's SuperLU in that order and solve.

    Prints ordering, factorization and solve times, the factor's fill beside the symbolic prediction,
    memory and the relative residual ||b - Ax|| / ||b||. A matrix that is not SPD is factored with
    threshold partial pivoting and a warning.
    """
    import numpy as np

    from ..io.vectors import read_vectors, write_vectors

    if perm is not None and method is not None:
        raise InputError("give --method or --perm, not both")
    if solution is not None:
        if _same_file(matrix, solution):
            raise InputError("refusing to overwrite the input matrix", str(solution))
        if not (solution.parent if str(solution.parent) else Path(".")).is_dir():
            raise InputError("output folder does not exist", str(solution.parent))
        if not solution.name.lower().endswith((".npy", ".mtx")):
            raise InputError("solution file must end in .npy or .mtx", str(solution))
    A = _load(matrix, drop_zeros)
    n = A.shape[0]
    p = _perm_from(perm, n, base, inverse) if perm is not None else None
    b = read_vectors(rhs, n) if rhs is not None else None
    x_true = None
    if b is None:
        x_true = np.random.default_rng(seed).standard_normal(n)
        b = A @ x_true
    F = _factor(A, method, p, seed, effort)
    x = F.solve(b)
    d = F.report()
    ordering = str(perm) if perm is not None else d["method"] + (f" ({d['chosen']})" if d.get("chosen") else "")
    d = {"matrix": str(matrix), "ordering": ordering, **d}
    d["error"] = (float(np.linalg.norm(x - x_true) / max(np.linalg.norm(x_true), 1e-300))
                  if x_true is not None else None)
    d["peak_memory_bytes"] = _peak_rss_bytes()
    if solution is not None:
        write_vectors(solution, x, comment=f"solution of {Path(str(matrix)).name}, ordering {d['ordering']}")
        d["solution"] = str(solution)
    if as_json:
        typer.echo(json.dumps(_jsonable(d)))
        return
    pred = d["predicted_factor_seconds"]
    lines = [
        f"{Path(str(matrix)).name}: n={n}, {d['nnz']} stored entries, ordering {d['ordering']}",
        f"  ordering         {d['order_seconds']:.3f} s",
        f"  factorization    {d['factor_seconds']:.3f} s" + (f" (cost model predicted {pred:.3f} s)" if pred else "")
        + (", threshold partial pivoting" if d["pivoting"] else ""),
        f"  solve            {d['solve_seconds']:.4f} s",
        f"  nnz(L) SuperLU   {d['nnz_l']:,} (symbolic Cholesky count {d['predicted_nnz_l']:,})",
        f"  factor memory    {d['factor_bytes'] / 2**20:.1f} MiB"
        + (f", peak process memory {d['peak_memory_bytes'] / 2**20:.0f} MiB" if d["peak_memory_bytes"] else ""),
        f"  residual         {max(d['residuals']):.2e} (||b - Ax|| / ||b||)"
        + (f", error against x* {d['error']:.2e}" if d["error"] is not None else ""),
    ]
    if solution is not None:
        lines.append(f"  solution written to {solution}")
    typer.echo("\n".join(lines))


# ------------------------------------------------------------------------------------------------
@app.command("permcheck")
def permcheck_cmd(
    matrix: Path = typer.Argument(..., help="Matrix file."),
    perm: Path = typer.Argument(..., help="Permutation file to check against MATRIX."),
    drop_zeros: bool = typer.Option(False, "--drop-zeros", help="Ignore explicitly stored zeros."),
    as_json: bool = typer.Option(False, "--json", help="Print one JSON object."),
):
    """Say whether PERM fits MATRIX: n, validity, direction and base (stated by the header, or
    guessed when there is none), and the fill it gives against the natural order.

    Without a header the direction is guessed from the fill: an ordering read the wrong way round is
    its inverse, which scatters the matrix and nearly always fills more than the ordering itself.
    Exit code 2 (one line) when the file is not a permutation of the matrix's rows.
    """
    from ..analysis import symbolic_factor
    from ..graph import from_matrix
    from ..io import read_permutation_file
    from ..io.permfile import detect_base
    from ..permutation import check_permutation, inverse_permutation

    A = _load(matrix, drop_zeros)
    g = from_matrix(A)
    pf = read_permutation_file(perm)
    n = g.n
    if pf.n is not None and pf.n != n:
        raise InputError(f"does not fit: the header says n={pf.n} but the matrix has {n} rows", str(perm))
    if pf.values.size != n:
        raise InputError(f"does not fit: {pf.values.size} entries but the matrix has {n} rows", str(perm))
    base = pf.base if pf.base is not None else detect_base(pf.values, n)
    try:
        q = check_permutation(pf.values.astype("int64") - base, n, source=str(perm))
    except InputError as exc:
        raise InputError(f"does not fit: {exc.reason}", str(perm)) from None
    natural = symbolic_factor(g).nnz_factor
    fill = {"new-to-old": symbolic_factor(g, q).nnz_factor}
    fill["old-to-new"] = symbolic_factor(g, inverse_permutation(q)).nnz_factor
    if pf.direction is not None:
        direction, how = pf.direction, "header"
    else:
        direction = min(fill, key=lambda k: (fill[k], k != "new-to-old"))
        how = "guess (less fill)" if fill["new-to-old"] != fill["old-to-new"] else "guess (either way the same)"
    d = {"matrix": str(matrix), "perm": str(perm), "n": n, "valid": True, "has_header": pf.has_header,
         "direction": direction, "direction_from": how, "base": base,
         "base_from": "header" if pf.base is not None else "detected",
         "nnz_factor": fill[direction], "nnz_factor_other_direction": fill["old-to-new" if direction == "new-to-old"
                                                                           else "new-to-old"],
         "nnz_factor_natural": natural, "fill_ratio_vs_natural": fill[direction] / natural if natural else None}
    if as_json:
        typer.echo(json.dumps(_jsonable(d)))
        return
    other = d["nnz_factor_other_direction"]
    typer.echo("\n".join([
        f"{perm.name} fits {Path(str(matrix)).name}: a valid permutation of n={n}",
        f"  direction   {direction} ({how}); base {base} ({d['base_from']})",
        f"  nnz(L)      {fill[direction]:,} = {d['fill_ratio_vs_natural']:.3f}x the natural order's {natural:,}",
        f"  read the other way round: nnz(L) {other:,}",
    ]))


# ------------------------------------------------------------------------------------------------
@app.command("sweep")
def sweep_cmd(
    pattern: str = typer.Argument(..., help="Glob of matrix files with one sparsity pattern, e.g. 'step_*.mtx' "
                                  "(quote it); taken in sorted name order."),
    method: Optional[str] = typer.Option(None, "--method", "-m", help="Ordering computed once on the first matrix (default auto)."),
    perm: Optional[Path] = typer.Option(None, "--perm", "-p", help=PERM_HELP),
    base: Optional[int] = typer.Option(None, "--base", help="Base of --perm when it has no header (default: detect)."),
    inverse: bool = typer.Option(False, "--inverse", help=INVERSE_HELP),
    rhs: Optional[Path] = typer.Option(None, "--rhs", help="One right-hand side for every matrix (default: b = A x*)."),
    seed: int = typer.Option(0, "--seed", help="Seed of the ordering and of the generated right-hand sides."),
    effort: Optional[str] = typer.Option(None, "--effort", help=flag_help("effort")),
    baseline: bool = typer.Option(True, "--baseline/--no-baseline", help="Also time SciPy's spsolve on each matrix."),
    as_json: bool = typer.Option(False, "--json", help="Print one JSON object."),
):
    """Solve a sequence of matrices with one sparsity pattern: order once, refactor each, and compare
    the total time with calling SciPy's spsolve on each (its default path, from scratch every time)."""
    from ..io.vectors import read_vectors
    from ..sequence import sequence_files, solve_sequence

    if perm is not None and method is not None:
        raise InputError("give --method or --perm, not both")
    files = sequence_files(pattern)
    first = _load(files[0])
    n = first.shape[0]
    p = _perm_from(perm, n, base, inverse) if perm is not None else None
    b = read_vectors(rhs, n) if rhs is not None else None
    name = None
    opts = {}
    if p is None:
        name = _check_method(method)
        opts = flag_options(name, effort=effort)
        _compiled(name)
    elif effort is not None:
        raise InputError("--effort needs --method, not --perm")

    def step(row):
        if not as_json:
            msg = (f"  {row['matrix']}: factor {row['factor_seconds']:.3f} s, solve {row['solve_seconds']:.4f} s, "
                   f"residual {row['residual']:.1e}")
            if "spsolve_seconds" in row:
                msg += f"; spsolve {row['spsolve_seconds']:.3f} s"
            typer.echo(msg)

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        out = solve_sequence(files, name or "given", perm=p, rhs=b, seed=seed, baseline=baseline, on_step=step,
                             **opts)
    _echo_warnings(caught[:1])
    out["pattern"] = pattern
    if as_json:
        typer.echo(json.dumps(_jsonable(out)))
        return
    chosen = f" ({out['chosen']})" if out.get("chosen") else ""
    typer.echo(f"{out['count']} matrices, n={out['n']}, ordering {out['method']}{chosen} once in {out['order_seconds']:.3f} s")
    typer.echo(f"  total with one ordering  {out['total_seconds']:.3f} s (max residual {out['max_residual']:.1e})")
    if baseline:
        typer.echo(f"  SciPy spsolve each time  {out['spsolve_total_seconds']:.3f} s "
                   f"(max residual {out['max_spsolve_residual']:.1e})")
        typer.echo(f"  ratio                    {out['ratio']:.3f}x")
