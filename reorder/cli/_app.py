"""The Typer application, shared helpers and the entry point of the command line.

Every error a user can cause ends in one line on stderr and exit code 2; no traceback.
"""

from __future__ import annotations

import json
import os
import sys
import warnings
from pathlib import Path

import typer

from .. import __version__
from ..errors import InputError

try:  # typer >= 0.17 vendors click
    from typer._click import exceptions as _cx
except ImportError:  # pragma: no cover - older typer with click as a dependency
    import click.exceptions as _cx

NOTE = (
    "An ordering changes only the speed and memory of a factorization, never the solution of a "
    "symmetric positive definite system; a solver that pivots for stability may reorder further."
)

app = typer.Typer(
    name="reorder",
    help="Fill-reducing and envelope orderings for sparse symmetric matrices, measured by exact "
    "symbolic Cholesky counts. " + NOTE,
    add_completion=False,
    no_args_is_help=True,
    pretty_exceptions_enable=False,
    rich_markup_mode=None,
)


class _Fail(Exception):
    """Internal: abort a command with a one-line message and exit code 2."""


def _err(msg: str) -> None:
    msg = " ".join(str(msg).split())
    typer.echo(f"reorder: error: {msg}", err=True)


def _load(path: Path, drop_zeros: bool = False):
    from ..bundled import resolve
    from ..io import read_matrix

    path = resolve(path)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        A = read_matrix(path, drop_zeros=drop_zeros)
    for w in caught:
        typer.echo(f"reorder: warning: {' '.join(str(w.message).split())}", err=True)
    return A


def _graph(A, weights: str = "pattern"):
    from ..graph import from_matrix

    return from_matrix(A, weights=weights)


METHOD_HELP = ("Ordering name (see `reorder methods`), or a method spec NAME:OPTION=VALUE:... "
               "(e.g. nd:effort=fast); default auto.")


def _check_method(name: str | None) -> str:
    """The method (spec) to run, default :data:`reorder.orderings.DEFAULT_METHOD`; InputError for
    an unknown name or a bad spec."""
    from ..orderings import DEFAULT_METHOD, resolve

    name = DEFAULT_METHOD if name is None else name.strip()
    resolve(name)
    return name


EFFORT_HELP = ("nd (and auto's nd candidate): fast, normal (default) or best; fast suits a single factorization. "
               "Same as NAME:effort=VALUE in a method spec.")


def _default_method() -> str:
    """The default ordering (kept for commands written before the settings records)."""
    from ..orderings import DEFAULT_METHOD

    return DEFAULT_METHOD


def _effort_option(effort: str | None, method: str) -> dict:
    """``{"effort": effort}`` checked by the settings records (InputError for a bad value or a method
    without that setting); ``{}`` when not given. Kept for ``solve``/``sweep``."""
    if effort is None:
        return {}
    from ..orderings import resolve

    resolve(method, {"effort": effort})
    return {"effort": effort}


def _compiled(method: str) -> None:
    """Compile the kernels of ``method`` first if the cache is cold (saying so on stderr), so that the
    ordering time printed afterwards is not compilation time."""
    from ..warmup import ensure_compiled

    ensure_compiled([method.split(":", 1)[0]], load=False)


def _same_file(a: Path, b: Path) -> bool:
    try:
        return b.exists() and os.path.samefile(a, b)
    except OSError:
        return False


def _jsonable(obj):
    """JSON values of a result; arrays over 64 entries become ``"<array of N>"``."""
    from ..jsonable import jsonable

    return jsonable(obj, max_array=64)


def _fmt(v) -> str:
    if isinstance(v, float):
        return f"{v:.3g}"
    if isinstance(v, list):
        return "[" + ", ".join(_fmt(x) for x in v) + "]"
    return str(v)


def _write_json(path: Path, payload) -> None:
    from ..io import atomic_path

    with atomic_path(path) as tmp:
        tmp.write_text(json.dumps(payload, indent=1, sort_keys=False) + "\n", encoding="utf-8")


@app.callback(invoke_without_command=True)
def _root(
    version: bool = typer.Option(False, "--version", help="Print the version and exit."),
):
    if version:
        typer.echo(f"reorder {__version__}")
        raise typer.Exit(0)



# ------------------------------------------------------------------------------------------------
def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``reorder`` command; returns (and exits with) the exit code."""
    args = sys.argv[1:] if argv is None else list(argv)
    code = 0
    try:
        rv = app(args=args, prog_name="reorder", standalone_mode=False)
        code = rv if isinstance(rv, int) else 0
    except InputError as exc:
        _err(str(exc))
        code = 2
    except _cx.NoArgsIsHelpError as exc:  # `reorder` alone: show the help
        ctx = getattr(exc, "ctx", None)
        typer.echo(ctx.get_help() if ctx is not None else "usage: reorder COMMAND --help")
        code = 0
    except _cx.UsageError as exc:
        _err(exc.format_message() if hasattr(exc, "format_message") else str(exc))
        code = 2
    except _cx.ClickException as exc:
        _err(exc.format_message())
        code = 2
    except KeyboardInterrupt:
        _err("interrupted")
        code = 130
    except MemoryError:
        _err("out of memory (try a smaller problem or a cheaper method)")
        code = 1
    except _Fail as exc:
        _err(str(exc))
        code = 2
    except BrokenPipeError:
        code = 0
    except SystemExit as exc:  # typer.Exit inside standalone_mode=False surfaces here on some versions
        code = exc.code if isinstance(exc.code, int) else 0
    except Exception as exc:
        if getattr(exc, "exit_code", None) is not None and exc.__class__.__name__ in ("Exit", "Abort"):
            code = int(exc.exit_code)
        elif exc.__class__.__name__ == "Abort":
            _err("aborted")
            code = 130
        else:
            raise
    if argv is None:
        sys.exit(code)
    return code

