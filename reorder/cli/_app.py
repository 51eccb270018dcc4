"""The Typer application, shared helpers and the entry point of the command line.

Every error a user can cause ends in one line on stderr and exit code 2; no traceback.
"""

from __future__ import annotations

import contextlib
import json
import os
import sys
import warnings
from pathlib import Path
from typing import Optional

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


def _plain_argument_names() -> None:
    """Show positional arguments the usual way: ``MATRIX`` / ``MATRIX...`` in the usage line and the
    help, instead of this Typer's ``{matrix}`` and ``matrix <path>`` / ``<list[Path]>`` labels.

    Only the help text changes; a Typer without these hooks is left as it is.
    """
    try:
        from typer.core import TyperArgument
    except ImportError:  # pragma: no cover - other Typer versions
        return
    if not (hasattr(TyperArgument, "_usage_display_name") and hasattr(TyperArgument, "display_type_rich")):
        return

    def name(self) -> str:
        text = (self.metavar or (self.name or "").upper()).rstrip(".")
        return text + ("..." if self.nargs != 1 else "")

    def usage(self) -> str:
        return name(self) if self.required else f"[{name(self)}]"

    TyperArgument._usage_display_name = usage
    TyperArgument._rich_display_name = name
    TyperArgument.display_type_rich = lambda self, ctx: None


_plain_argument_names()


class _Fail(Exception):
    """Internal: abort a command with a one-line message and exit code 2."""


def _err(msg: str) -> None:
    from ..errors import printable

    msg = printable(msg)
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


def _compiled(method: str) -> None:
    """Compile the kernels of ``method`` first if the cache is cold (saying so on stderr), else load
    them, so that the ordering time printed afterwards is neither compilation nor loading (numba
    sets itself up on its first call in a process: 0.3-0.7 s, printed as ordering time before)."""
    from ..warmup import ensure_compiled

    ensure_compiled([method.split(":", 1)[0]])


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
    max_memory: Optional[str] = typer.Option(
        None, "--max-memory", metavar="SIZE",
        help="Memory budget for a matrix (e.g. 8G), instead of the memory available now; also lifts the "
             "refusal of implausibly sparse sizes. Accepted anywhere on the command line."),
):
    if version:
        typer.echo(f"reorder {__version__}")
        raise typer.Exit(0)



def _check_outputs(matrix, *outputs) -> None:
    """Before any work: no output may be the input matrix, and every output must be writable
    (folder exists and is writable; ``-`` is standard output; devices and FIFOs are written
    through). Raises InputError."""
    from ..io import check_outputs

    for out in outputs:
        if out is not None and str(out) != "-" and _same_file(matrix, out):
            raise InputError("refusing to overwrite the input matrix", str(out))
    check_outputs(*outputs)


def _to_stdout(path) -> bool:
    """True when ``path`` sends a command's data to standard output (``-``): the command's own
    summary then goes to standard error, so the pipe carries only the data."""
    return path is not None and str(path) == "-"


def _is_regular_output(path) -> bool:
    """True when ``path`` is (or will be) a regular file, so it can be read back after writing."""
    from ..io.paths import resolve_output

    return resolve_output(path)[0] == "regular"


#: Largest separator-tree JSON file read by ``stats --tree``.
MAX_TREE_BYTES = 256 << 20


def _read_tree(path: Path):
    """A separator tree written by ``order --tree``: a JSON object, size- and depth-bounded."""
    from ..io.guard import open_input

    fh, source = open_input(path, what="separator-tree JSON")
    with fh:
        data = fh.read(MAX_TREE_BYTES + 1)
    if len(data) > MAX_TREE_BYTES:
        raise InputError(f"larger than {MAX_TREE_BYTES >> 20} MiB", source)
    try:
        obj = json.loads(data.decode("utf-8"))
    except RecursionError:
        raise InputError("not a separator-tree JSON file (nested too deeply)", source) from None
    except (ValueError, UnicodeError) as exc:
        raise InputError(f"not a separator-tree JSON file ({exc.__class__.__name__})", source) from None
    if not isinstance(obj, dict):
        raise InputError(f"not a separator-tree JSON file (top level is {type(obj).__name__}, not an object)",
                         source)
    return obj


_MAX_MEMORY_FLAG = "--max-memory"


def _lift_max_memory(args: list[str]) -> list[str]:
    """Take ``--max-memory SIZE`` (or ``--max-memory=SIZE``) from anywhere before ``--`` and
    publish it as ``REORDER_MAX_MEMORY``, which the readers (and compare's workers) obey."""
    if not any(a == _MAX_MEMORY_FLAG or a.startswith(_MAX_MEMORY_FLAG + "=") for a in args):
        return args  # (no import: `reorder methods` and --help stay free of the numerical stack)
    from ..io.guard import _ENV, parse_size

    out, i = [], 0
    while i < len(args):
        a = args[i]
        if a == "--":
            out.extend(args[i:])
            break
        if a == _MAX_MEMORY_FLAG or a.startswith(_MAX_MEMORY_FLAG + "="):
            if "=" in a:
                value = a.split("=", 1)[1]
            elif i + 1 < len(args):
                value, i = args[i + 1], i + 1
            else:
                raise InputError("--max-memory needs a size such as 8G")
            os.environ[_ENV] = str(parse_size(value))
        else:
            out.append(a)
        i += 1
    return out


def _quiet_stdout() -> None:
    """After a broken pipe, point stdout at /dev/null so the interpreter's final flush is silent."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except (OSError, ValueError, AttributeError):
        pass


# ------------------------------------------------------------------------------------------------
def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``reorder`` command; returns (and exits with) the exit code.

    Exit codes: 0 success, 2 a user error (one line on stderr, never a traceback; permission
    denied and disk full included), 130 interrupted (SIGINT), 143 terminated (SIGTERM while an
    output was being written; its temporary file is removed), 1 out of memory.
    """
    import signal

    from ..errors import Terminated

    code = 0
    try:
        with contextlib.suppress(ValueError, OSError):  # ordinary Ctrl-C from here on (see _startup)
            signal.signal(signal.SIGINT, signal.default_int_handler)
        args = sys.argv[1:] if argv is None else list(argv)
        args = _lift_max_memory(args)
        rv = app(args=args, prog_name="reorder", standalone_mode=False)
        code = rv if isinstance(rv, int) else 0
        if code == 130:  # typer turns Ctrl-C inside a command into a returned 130, silently
            _err("interrupted")
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
    except Terminated:
        _err("terminated")
        code = 143
    except MemoryError:
        _err("out of memory (try a smaller problem or a cheaper method)")
        code = 1
    except _Fail as exc:
        _err(str(exc))
        code = 2
    except BrokenPipeError:
        _quiet_stdout()
        code = 0
    except RecursionError:
        _err("input nested too deeply")
        code = 2
    except OSError as exc:  # permission denied, disk full, ... somewhere outside the io gate
        from ..io.paths import _os_message

        _err(f"{exc.filename}: {_os_message(exc)}" if exc.filename else _os_message(exc))
        code = 2
    except SystemExit as exc:  # typer.Exit inside standalone_mode=False surfaces here on some versions
        code = exc.code if isinstance(exc.code, int) else 0
    except Exception as exc:
        if getattr(exc, "exit_code", None) is not None and exc.__class__.__name__ in ("Exit", "Abort"):
            code = int(exc.exit_code)
            if isinstance(exc.__cause__, KeyboardInterrupt):  # typer turns Ctrl-C into Exit(130)
                _err("interrupted")
        elif exc.__class__.__name__ == "Abort":
            _err("aborted")
            code = 130
        else:
            raise
    if argv is None:
        _leave(code)
    return code


def _leave(code: int) -> None:
    """End the ``reorder`` process with ``code``, skipping the interpreter's teardown when nothing
    still runs.

    Every output is complete and closed (written atomically) by now; what the normal exit would add
    is the finalisation of some 800 imported modules and numba's compiled-code objects, about 0.2 s
    of a 1 s later run (measured on a 10⁴-row mesh). Where a worker process or a non-daemon
    thread is still alive (never in normal operation), the ordinary exit runs instead, so that
    nothing is cut short.
    """
    import threading

    try:
        sys.stdout.flush()
    except (OSError, ValueError):  # a closed or broken pipe: nothing left to say there
        _quiet_stdout()
    with contextlib.suppress(OSError, ValueError):
        sys.stderr.flush()
    mp = sys.modules.get("multiprocessing")
    busy = mp is not None and bool(mp.active_children())
    busy = busy or any(t.is_alive() and not t.daemon for t in threading.enumerate()
                       if t is not threading.main_thread())
    if busy:
        sys.exit(code)
    os._exit(code)
