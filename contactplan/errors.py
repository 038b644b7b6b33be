"""Errors that reach the user as one line: ``FILE:LINE: what is wrong``.

Every parser and validator raises :class:`InputError` for bad input; the CLI
prints ``contactplan: error: <str(error)>`` and exits with status 2, the app
shows the same line in a dialog.
"""

from __future__ import annotations

from pathlib import Path

#: ids and names echoed in messages are cut to this many characters
ID_SHOWN_MAX = 40


def escape_text(text) -> str:
    """``text`` with control characters, terminal escapes, line breaks and bidirectional
    overrides written as escapes (``\\n``, ``\\x1b``, ``\\u202e``): safe to print on one line."""
    out = []
    for ch in str(text):
        if ch.isprintable():
            out.append(ch)
        else:
            code = ord(ch)
            out.append({"\n": "\\n", "\r": "\\r", "\t": "\\t"}.get(ch)
                       or (f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}" if code < 0x10000
                           else f"\\U{code:08x}"))
    return "".join(out)


def show_id(value, limit: int = ID_SHOWN_MAX) -> str:
    """An id or name as it may appear in a message: escaped (:func:`escape_text`) and cut to
    ``limit`` characters with an ellipsis."""
    shown = escape_text(value)
    return shown if len(shown) <= limit else shown[: max(limit - 1, 1)] + "\u2026"


class InputError(Exception):
    """Bad input: names the file, the line (or TOML field path) and what is wrong.

    ``where`` is a line number (int) or a field path such as
    ``stations[2].latitude_deg``; either may be omitted.
    """

    def __init__(self, message: str, path: str | Path | None = None, where: int | str | None = None):
        self.message = escape_text(" ".join(str(message).split()))  # always one line, no terminal escapes
        self.path = None if path is None else str(path)
        self.where = where
        super().__init__(str(self))

    def __str__(self) -> str:
        where = "" if self.where is None else show_id(self.where, 120)
        head = ":".join(p for p in (show_id(self.path or "", 400), where) if p)
        return f"{head}: {self.message}" if head else self.message

    def at(self, path: str | Path | None = None, where: int | str | None = None) -> "InputError":
        """Return a copy with the file and/or location filled in where missing."""
        return InputError(self.message, self.path or path, self.where if self.where is not None else where)


class OutOfSpanError(InputError):
    """A time asked for lies outside what an ephemeris or table covers."""


class Cancelled(Exception):
    """Raised inside long engine work when the caller's cancel flag is set."""
