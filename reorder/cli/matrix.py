"""Commands that write matrices: ``apply``."""

from __future__ import annotations

from pathlib import Path
from typing import Optional

import typer

from .. import __version__
from ..errors import InputError
from ._app import _check_outputs, _load, _to_stdout, app


# ------------------------------------------------------------------------------------------------
@app.command("apply")
def apply_cmd(
    matrix: Path = typer.Argument(..., metavar="MATRIX", help="Matrix file."),
    perm: Path = typer.Argument(..., metavar="PERM", help="Permutation file (0- or 1-based, detected; .npy too)."),
    output: Path = typer.Option(..., "--output", "-o", metavar="FILE",
                                help="Permuted matrix to write (.mtx, .mtx.gz, .npz or Harwell-Boeing .rsa/.rua)."),
    base: Optional[int] = typer.Option(None, "--base", metavar="0|1", help="Force the base of PERM.  [default: detect]"),
    inverse: bool = typer.Option(False, "--inverse", help="PERM holds the inverse permutation."),
    drop_zeros: bool = typer.Option(False, "--drop-zeros", help="Ignore explicitly stored zeros."),
    both_triangles: bool = typer.Option(False, "--both-triangles",
                                        help="Store both triangles of a symmetric matrix (default: one, as symmetric storage)."),
):
    """Write the permuted matrix A[p][:, p] for a solver that takes the matrix already ordered.

    A symmetric matrix keeps symmetric storage (one triangle: Matrix Market 'symmetric',
    Harwell-Boeing type RSA); the output format follows the file ending of --output.
    """
    from ..io import read_permutation, write_matrix

    _check_outputs(matrix, output)  # before any work
    if base is not None and base not in (0, 1):
        raise InputError(f"--base must be 0 or 1, not {base}")
    A = _load(matrix, drop_zeros)
    p = read_permutation(perm, A.shape[0], base=base, direction="old-to-new" if inverse else None)
    B = A[p][:, p]
    write_matrix(output, B, comment=f"reorder {__version__}: {matrix.name} permuted by {perm.name}",
                 symmetric=False if both_triangles else None)
    typer.echo(f"wrote {output} ({B.shape[0]} rows, {B.nnz} entries)", err=_to_stdout(output))


