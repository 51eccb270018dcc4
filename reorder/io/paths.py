"""Output paths: the one mechanism every writer goes through.

* A regular file (or a name that does not exist yet) is written atomically: a temporary file beside
  the target, then a rename. A failed or interrupted write leaves the target untouched and no
  temporary behind (SIGTERM included, see :func:`atomic_path`).
* ``-`` is standard output.
* A path that exists and is not a regular file (a character device such as ``/dev/null``, a FIFO)
  is written in place, through it; it is never replaced. A symlink is followed: the file it points
  to is written (atomically if that is a regular file) and the link itself stays.
* Permission denied, disk full and other operating-system failures end in a one-line
  :class:`~reorder.errors.InputError`.

:func:`check_outputs` runs the same resolution without writing, so a command can check all of its
outputs before any work starts.
"""

from __future__ import annotations

import contextlib
import errno
import os
import shutil
import signal
import stat
import sys
import tempfile
import threading
from pathlib import Path

from ..errors import InputError, Terminated

#: The path name meaning standard input (for a matrix) or standard output (for an output).
STDIO = "-"

_LIVE: set = set()  # temporaries being written right now (removed on SIGTERM)
_LIVE_LOCK = threading.Lock()


def is_stdio(path) -> bool:
    """True when ``path`` is ``-`` (standard input or output)."""
    return path is not None and os.fspath(path) == STDIO


def remove_temporaries() -> None:
    """Delete every temporary file that an :func:`atomic_path` block is writing right now."""
    with _LIVE_LOCK:
        live = list(_LIVE)
    for tmp in live:
        with contextlib.suppress(OSError):
            os.unlink(tmp)


def _on_sigterm(signum, frame):  # pragma: no cover - exercised through a subprocess in the tests
    remove_temporaries()
    raise Terminated()


@contextlib.contextmanager
def _sigterm_cleans():
    """While a temporary exists, SIGTERM removes it and raises :class:`Terminated` in the main
    thread. Outside writes SIGTERM keeps its previous action (an immediate end by default), so a
    long compiled kernel is never made to wait for a Python-level handler."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    try:
        previous = signal.signal(signal.SIGTERM, _on_sigterm)
    except (ValueError, OSError):  # pragma: no cover - no signals in this interpreter
        yield
        return
    try:
        yield
    finally:
        with contextlib.suppress(ValueError, OSError, TypeError):
            signal.signal(signal.SIGTERM, previous if previous is not None else signal.SIG_DFL)


def _os_message(exc: OSError) -> str:
    if exc.errno in (errno.ENOSPC, errno.EDQUOT, errno.EFBIG):
        return "disk full (no space left for the output)"
    if exc.errno in (errno.EACCES, errno.EPERM):
        return "permission denied"
    if exc.errno == errno.EROFS:
        return "read-only file system"
    return f"cannot write ({exc.strerror or exc.__class__.__name__})"


def resolve_output(path) -> tuple[str, Path]:
    """Classify an output path without writing anything.

    Returns
    -------
    (kind, target)
        ``kind`` is ``"stdout"`` for ``-``, ``"regular"`` for a regular file or a new name (written
        atomically at ``target``, symlinks resolved), ``"special"`` for an existing device or FIFO
        (written in place at ``target``).

    Raises
    ------
    InputError
        The path is a folder or a socket, its folder is missing, or it cannot be written.
    """
    if is_stdio(path):
        return "stdout", Path(STDIO)
    path = Path(path)
    target = Path(os.path.realpath(path)) if path.is_symlink() else path
    try:
        st = os.stat(target)
    except FileNotFoundError:
        st = None
    except OSError as exc:
        raise InputError(_os_message(exc), str(path)) from None
    if st is not None and stat.S_ISDIR(st.st_mode):
        raise InputError("output path is a folder", str(path))
    if st is not None and stat.S_ISSOCK(st.st_mode):
        raise InputError("output path is a socket; give a file, a FIFO or '-'", str(path))
    if st is not None and not stat.S_ISREG(st.st_mode):
        if not os.access(target, os.W_OK):
            raise InputError("permission denied", str(path))
        return "special", target
    parent = target.parent if str(target.parent) else Path(".")
    if not parent.is_dir():
        raise InputError("output folder does not exist", str(parent))
    if not os.access(parent, os.W_OK | os.X_OK):
        raise InputError("permission denied: cannot write in this folder", str(parent))
    return "regular", target


def check_outputs(*paths) -> None:
    """Check every output of a command before any work starts (``None`` entries are skipped).

    Raises
    ------
    InputError
        One output cannot be written (see :func:`resolve_output`), or two outputs name the same
        file or both go to standard output.
    """
    seen = {}
    for p in paths:
        if p is None:
            continue
        kind, target = resolve_output(p)
        key = STDIO if kind == "stdout" else os.path.abspath(target)
        if key in seen and not (kind == "special" and target == Path(os.devnull)):
            what = "standard output" if kind == "stdout" else "the same file"
            raise InputError(f"two outputs go to {what} ({seen[key]} and {p})")
        seen[key] = p


def check_output_folder(folder) -> None:
    """Check that a results folder exists and is writable, or can be created."""
    probe = Path(os.path.abspath(folder))
    while not probe.exists() and probe != probe.parent:
        probe = probe.parent
    if not probe.is_dir():
        raise InputError("output folder path is not a folder", str(probe))
    if not os.access(probe, os.W_OK | os.X_OK):
        raise InputError("permission denied: cannot write in this folder", str(probe))


@contextlib.contextmanager
def atomic_path(path, suffix: str = ""):
    """Yield a temporary path to write; publish it at ``path`` if the block succeeds.

    A regular target is replaced by a rename; ``-`` is copied to standard output; a device or
    FIFO is written in place, through it (see the module docstring). The temporary file is removed
    whatever happens (exception, ``KeyboardInterrupt``, SIGTERM in the main thread), so a failed or
    interrupted write never leaves a partial output or a stray temporary.

    Parameters
    ----------
    path : path-like or ``"-"``
        The final file name.
    suffix : str
        Extra suffix for the temporary name (some writers insist on an extension, e.g. ``.npz``).

    Raises
    ------
    InputError
        The target cannot be written: folder missing, permission denied, disk full, …
    """
    kind, target = resolve_output(path)
    if kind == "regular":
        tmp = target.parent / f".{target.name}.{os.getpid()}.{threading.get_ident() % 10**6}.tmp{suffix}"
    else:  # stdout or a device/FIFO: build the content aside, then stream it through
        try:
            fd, name = tempfile.mkstemp(prefix=".reorder-", suffix=suffix)
        except OSError as exc:
            raise InputError(_os_message(exc), tempfile.gettempdir()) from None
        os.close(fd)
        tmp = Path(name)
    with _LIVE_LOCK:
        _LIVE.add(str(tmp))
    try:
        with _sigterm_cleans():
            try:
                yield tmp
                if kind == "regular":
                    os.replace(tmp, target)
                elif kind == "stdout":
                    sys.stdout.flush()
                    with open(tmp, "rb") as src:
                        shutil.copyfileobj(src, sys.stdout.buffer, 1 << 20)
                    sys.stdout.buffer.flush()
                else:
                    with open(tmp, "rb") as src, open(target, "wb") as dst:
                        shutil.copyfileobj(src, dst, 1 << 20)
            except BrokenPipeError:
                raise
            except OSError as exc:
                raise InputError(_os_message(exc), str(path)) from None
    finally:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        with _LIVE_LOCK:
            _LIVE.discard(str(tmp))
