"""Exceptions raised for problems a user can cause.

Every error a user can fix (a missing file, a malformed matrix, a bad permutation) is an
:class:`InputError` whose message fits on one line; the command line prints it and exits with 2.
Non-printable characters (control bytes, NUL, stray binary read from a hostile file) are shown
escaped (``\\x00``), never raw, so a message can never garble a terminal or a log.
"""

from __future__ import annotations


def printable(text) -> str:
    """``text`` on one line with every non-printable character escaped.

    Whitespace runs (newlines and tabs included) become one space; other control and
    non-printable characters become ``\\xNN`` / ``\\uNNNN`` escapes; undecodable bytes kept by
    ``surrogateescape`` are shown as the byte they stand for.

    Examples
    --------
    >>> printable("bad\\x00byte\\n here")
    'bad\\\\x00byte here'
    """
    text = " ".join(str(text).split())
    if text.isprintable():
        return text
    out = []
    for ch in text:
        if ch.isprintable():
            out.append(ch)
            continue
        code = ord(ch)
        if 0xDC80 <= code <= 0xDCFF:  # a raw byte carried by surrogateescape
            out.append(f"\\x{code - 0xDC00:02x}")
        elif code < 0x100:
            out.append(f"\\x{code:02x}")
        else:
            out.append(f"\\u{code:04x}" if code < 0x10000 else f"\\U{code:08x}")
    return "".join(out)


class InputError(ValueError):
    """A problem with user input, described in one line.

    Parameters
    ----------
    message : str
        What is wrong, in one line (forced; non-printable characters are escaped).
    path : str or None
        The file concerned, if any; it is prefixed to the message.
    """

    def __init__(self, message: str, path: str | None = None):
        message = printable(message)  # force one line, nothing raw
        self.path = None if path is None else printable(path)
        self.reason = message
        super().__init__(f"{self.path}: {message}" if self.path else message)


class Terminated(BaseException):
    """Raised in the main thread on SIGTERM while an output is being written, so that the
    temporary file is removed on the way out (the command line exits with 143)."""
