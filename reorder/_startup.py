"""Start-up guard of the ``reorder`` command: Ctrl-C while the heavy modules are still being
imported ends in one line and exit code 130 instead of a long traceback. Installed by the package's
``__init__`` only when the running program is the ``reorder`` console script; ``main()`` puts the
ordinary handler back as soon as it starts."""

from __future__ import annotations

import os
import signal


def _interrupted(signum, frame):  # pragma: no cover - exercised through a subprocess in the tests
    try:
        os.write(2, b"reorder: error: interrupted\n")
    finally:
        os._exit(130)


def guard() -> None:
    """Make SIGINT end the process at once with one line and exit code 130."""
    try:
        signal.signal(signal.SIGINT, _interrupted)
    except (ValueError, OSError):  # pragma: no cover - not the main thread
        pass
