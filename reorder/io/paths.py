"""Output paths: atomic writes (a temporary file beside the target, then a rename)."""

from __future__ import annotations

import contextlib
import os
from pathlib import Path


from ..errors import InputError


# --------------------------------------------------------------------------------------------------
# atomic output
# --------------------------------------------------------------------------------------------------
@contextlib.contextmanager
def atomic_path(path, suffix: str = ""):
    """Yield a temporary path beside ``path``; rename it onto ``path`` if the block succeeds.

    The temporary file is removed if the block raises (including ``KeyboardInterrupt``), so a failed
    or interrupted write never leaves a partial output file.

    Parameters
    ----------
    path : path-like
        The final file name.
    suffix : str
        Extra suffix for the temporary name (some writers insist on an extension, e.g. ``.npz``).
    """
    path = Path(path)
    parent = path.parent if str(path.parent) else Path(".")
    if not parent.is_dir():
        raise InputError("output folder does not exist", str(parent))
    if path.is_dir():
        raise InputError("output path is a folder", str(path))
    tmp = parent / f".{path.name}.{os.getpid()}.tmp{suffix}"
    try:
        yield tmp
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise


# --------------------------------------------------------------------------------------------------
# matrices
# --------------------------------------------------------------------------------------------------
