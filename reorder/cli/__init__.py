"""Command line: a thin Typer layer over the Python API.

Every error a user can cause ends in one line on stderr and exit code 2; no traceback. Each module
holds a group of commands; importing it registers them on :data:`app`.
"""

from ._app import app, main
from . import matrix, ordering, solve, suite  # noqa: F401  (importing registers the commands)

__all__ = ["app", "main"]
