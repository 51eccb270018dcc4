"""Commands that order one matrix and measure it: ``order`` and ``stats``."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Optional

import typer

from .. import __version__
from ..errors import InputError
from ._app import (METHOD_HELP, _check_method, _check_outputs, _compiled, _fmt, _graph, _is_regular_output, _jsonable,
                   _load, _read_tree, _to_stdout, _write_json, app)
from ._options import setting_options, with_setting_flags


# ------------------------------------------------------------------------------------------------
@app.command("order")
@with_setting_flags
def order_cmd(
    matrix: Path = typer.Argument(..., help="Matrix file: .mtx, .mtx.gz, Harwell-Boeing (.rb/.rua/.rsa) or .npz."),
    output: Path = typer.Option(..., "--output", "-o", help="Permutation file to write (.txt or .npy).",
                                metavar="FILE"),
    method: Optional[str] = typer.Option(None, "--method", "-m", help=METHOD_HELP, metavar="METHOD[:NAME=VALUE...]"),
    base: int = typer.Option(0, "--base", help="Index base of the written file: 0 or 1.", metavar="0|1"),
    seed: int = typer.Option(0, "--seed", help="Seed for randomised steps; same seed, same permutation.",
                             metavar="INT"),
    inverse: bool = typer.Option(False, "--inverse", help="Write the inverse permutation (new position of each old index) instead."),
    labels: Optional[Path] = typer.Option(None, "--labels", help="Write the part label of each row (rsb) to this file.",
                                          metavar="FILE"),
    tree: Optional[Path] = typer.Option(None, "--tree", help="Write the separator tree (nd) as JSON to this file.",
                                        metavar="FILE"),
    drop_zeros: bool = typer.Option(False, "--drop-zeros", help="Ignore explicitly stored zeros (default: they are structural)."),
    info_json: bool = typer.Option(False, "--json", help="Print what the ordering reports as one JSON object."),
    flags: dict = None,
    sets: list = None,
):
    """Compute an ordering of MATRIX and write it as a permutation file.

    Line k of the file (after '#' comments) is the old index placed at position k, so the reordered
    matrix is A[p][:, p]. An ordering changes only speed and memory, never the solution of an SPD
    system; a pivoting solver may reorder further.

    The default method, auto, spends ordering time only where it pays: it starts from minimum
    degree under one pivot rule and tries costlier orderings (another rule, RCM, nd-fast, every
    rule, SciPy's minimum degree, nd, three nd restarts), the one of largest expected net gain
    first, only while the predicted saving in factorization time, times --factorizations, exceeds
    the predicted extra ordering time. --json shows which candidates ran (in order), what each cost
    and why the search stopped.
    """
    from ..analysis import symbolic_factor
    from ..io import read_permutation, write_permutation
    from ..orderings import order, resolve

    if base not in (0, 1):
        raise InputError(f"--base must be 0 or 1, not {base}")
    name = _check_method(method)
    opts = setting_options(order_cmd, name, flags, sets)
    _, record = resolve(name, opts)  # every option checked before the matrix is read
    _check_outputs(matrix, output, labels, tree)  # every output writable before any work
    A = _load(matrix, drop_zeros)
    parts = opts.get("parts") if isinstance(opts, dict) else None  # given by the user (the default adapts)
    if isinstance(parts, int) and parts > max(A.shape[0], 1):
        raise InputError(f"--parts {parts} exceeds the {A.shape[0]} rows of the matrix")
    g = _graph(A, getattr(record, "weights", "pattern"))
    _compiled(name)
    result = order(g, name, seed=seed, **opts)
    lab = result.info.get("labels")
    t = result.info.get("separator_tree")
    if labels is not None and lab is None:  # checked before anything is written
        raise InputError(f"method '{name}' produces no part labels (use --method rsb)")
    if tree is not None and t is None:
        raise InputError(f"method '{name}' produces no separator tree (use --method nd)")
    direction = "old-to-new" if inverse else "new-to-old"
    write_permutation(output, result.perm, base=base, direction=direction, method=name, seed=seed,
                      matrix=matrix.name)
    if _is_regular_output(output):
        back = read_permutation(output, g.n, base=base, direction=direction)  # verify what was written
        if not (back == result.perm).all():  # pragma: no cover - would be a bug
            raise RuntimeError("permutation file verification failed")
    if labels is not None:
        from ..io import atomic_path

        with atomic_path(labels) as tmp:
            tmp.write_text(
                f"# part label of each row (0-based rows), method={name} seed={seed}\n"
                + "\n".join(map(str, list(map(int, lab))))
                + "\n",
                encoding="utf-8",
            )
    if tree is not None:
        _write_json(tree, _jsonable(t))
    sym = symbolic_factor(g, result.perm)
    predicted = _predicted_factor_seconds(sym)
    summary = {
        "matrix": str(matrix),
        "method": name,
        "seed": seed,
        "n": g.n,
        "nnz_factor": sym.nnz_factor,
        "factor_ops": sym.factor_ops,
        "order_seconds": round(result.seconds, 4),
        "predicted_factor_seconds": predicted,
        "output": str(output),
        "base": base,
        "inverse": inverse,
        "info": _jsonable({k: v for k, v in result.info.items() if k not in ("labels", "separator_tree")}),
    }
    if info_json:
        typer.echo(json.dumps(summary), err=_to_stdout(output))
    else:
        typer.echo(
            f"{matrix.name}: {name} ordering of n={g.n} in {result.seconds:.3f} s, "
            f"nnz(L)={sym.nnz_factor}, ops={sym.factor_ops:.4g}, predicted factorization {predicted:.3g} s "
            f"-> {output}", err=_to_stdout(output)
        )



def _predicted_factor_seconds(sym) -> float:
    """Predicted seconds of one SuperLU factorization in the given order (reorder.cost; the machine
    rates are measured once per user and cached)."""
    from ..cost import predict_seconds

    return float(f"{predict_seconds(sym):.4g}")


# ------------------------------------------------------------------------------------------------
STAT_LABELS = [
    ("n", "rows"),
    ("nnz", "stored entries"),
    ("bandwidth", "bandwidth"),
    ("profile", "profile (envelope)"),
    ("nnz_factor", "nnz(L), diagonal included"),
    ("fill", "fill entries"),
    ("factor_ops", "factor operations (sum c_j^2)"),
    ("etree_height", "elimination-tree height"),
    ("components", "connected components"),
    ("pattern_symmetric", "pattern symmetric"),
]


@app.command("stats")
@with_setting_flags
def stats_cmd(
    matrix: Path = typer.Argument(..., help="Matrix file."),
    perm: Optional[Path] = typer.Option(None, "--perm", "-p", help="Permutation file (0- or 1-based, detected; .npy too).",
                                        metavar="FILE"),
    method: Optional[str] = typer.Option(None, "--method", "-m", help="Compute this ordering on the fly instead of "
                                         "reading --perm (a method spec like order's).",
                                         metavar="METHOD[:NAME=VALUE...]"),
    base: Optional[int] = typer.Option(None, "--base", help="Force the base of --perm (default: detect).", metavar="0|1"),
    inverse: bool = typer.Option(False, "--inverse", help="The --perm file holds the inverse permutation."),
    seed: int = typer.Option(0, "--seed", help="Seed for --method.", metavar="INT"),
    tree: Optional[Path] = typer.Option(None, "--tree", help="Separator-tree JSON (from `order --tree`) to summarise.",
                                        metavar="FILE"),
    drop_zeros: bool = typer.Option(False, "--drop-zeros", help="Ignore explicitly stored zeros."),
    as_json: bool = typer.Option(False, "--json", help="Print one JSON object instead of a table."),
    flags: dict = None,
    sets: list = None,
):
    """Measure MATRIX in its natural order or under a permutation: bandwidth, profile, exact nnz(L),
    factor operations and elimination-tree height (symbolic Cholesky of A[p][:, p])."""
    import time

    from ..analysis import analyse
    from ..io import read_permutation

    if perm is not None and method is not None:
        raise InputError("give --perm or --method, not both")
    given = [stats_cmd.setting_flags[k].flag for k, v in flags.items() if v is not None] + (["--set"] if sets else [])
    if given and method is None:
        raise InputError(f"{given[0]} needs --method")
    opts = {}
    if method is not None:
        from ..orderings import resolve

        method = _check_method(method)
        opts = setting_options(stats_cmd, method, flags, sets)
        resolve(method, opts)  # every option checked before the matrix is read
    if base is not None and base not in (0, 1):
        raise InputError(f"--base must be 0 or 1, not {base}")
    A = _load(matrix, drop_zeros)
    g = _graph(A)
    p = None
    ordering = "natural"
    order_seconds = None
    tree_obj = None
    if perm is not None:
        p = read_permutation(perm, g.n, base=base, direction="old-to-new" if inverse else None)
        ordering = str(perm)
    elif method is not None:
        from ..orderings import order

        _compiled(method)
        res = order(g, method, seed=seed, **opts)
        p, ordering, order_seconds = res.perm, method, res.seconds
        tree_obj = res.info.get("separator_tree")
    if tree is not None:
        tree_obj = _read_tree(tree)
    t0 = time.perf_counter()
    s = analyse(A, p, graph=g)
    d = s.to_dict()
    d["analyse_seconds"] = round(time.perf_counter() - t0, 4)
    d = {"matrix": str(matrix), "ordering": ordering, **d}
    if order_seconds is not None:
        d["order_seconds"] = round(order_seconds, 4)
    from ..analysis import symbolic_factor

    d["predicted_factor_seconds"] = _predicted_factor_seconds(symbolic_factor(g, p))
    levels = None
    if tree_obj is not None:
        try:
            from ..orderings.nd.tree import SeparatorTree

            levels = _jsonable(SeparatorTree.from_json(tree_obj).summary())
        except Exception as exc:  # malformed tree
            raise InputError(f"cannot summarise separator tree ({exc.__class__.__name__}: {exc})") from None
        d["separator_levels"] = levels
    if as_json:
        typer.echo(json.dumps(_jsonable(d)))
        return
    typer.echo(f"{matrix.name}  ordering: {ordering}")
    width = max(len(lbl) for _, lbl in STAT_LABELS)
    for key, lbl in STAT_LABELS:
        val = d[key]
        txt = f"{val:,}" if isinstance(val, int) and not isinstance(val, bool) else str(val).lower()
        typer.echo(f"  {lbl:<{width}}  {txt:>18}")
    typer.echo(f"  {'analysis time':<{width}}  {d['analyse_seconds']:>16.3f} s")
    if order_seconds is not None:
        typer.echo(f"  {'ordering time':<{width}}  {order_seconds:>16.3f} s")
    typer.echo(f"  {'predicted factorization':<{width}}  {d['predicted_factor_seconds']:>16.3g} s")
    if levels:
        typer.echo("  separator tree, top levels:")
        for lev in levels:
            typer.echo("    " + ", ".join(f"{k}={_fmt(v)}" for k, v in lev.items()))
    if not s.pattern_symmetric:
        typer.echo("  note: the pattern of A is not symmetric; measures use the pattern of A + A^T")


