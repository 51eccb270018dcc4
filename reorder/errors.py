"""Exceptions raised for problems a user can cause.

Every error a user can fix (a missing file, a malformed matrix, a bad permutation) is an
:class:`InputError` whose message fits on one line; the command line prints it and exits with 2.
"""

from __future__ import annotations


class InputError(ValueError):
    """A problem with user input, described in one line.

    Parameters
    ----------
    message : str
        What is wrong, in one line.
    path : str or None
        The file concerned, if any; it is prefixed to the message.
    """

    def __init__(self, message: str, path: str | None = None):
        message = " ".join(str(message).split())  # force one line
        self.path = None if path is None else str(path)
        self.reason = message
        super().__init__(f"{self.path}: {message}" if self.path else message)
