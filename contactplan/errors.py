"""Errors that reach the user as one line: ``FILE:LINE: what is wrong``.

Every parser and validator raises :class:`InputError` for bad input; the CLI
prints ``contactplan: error: <str(error)>`` and exits with status 2, the app
shows the same line in a dialog.
"""

from __future__ import annotations

from pathlib import Path


class InputError(Exception):
    """Bad input: names the file, the line (or TOML field path) and what is wrong.

    ``where`` is a line number (int) or a field path such as
    ``stations[2].latitude_deg``; either may be omitted.
    """

    def __init__(self, message: str, path: str | Path | None = None, where: int | str | None = None):
        self.message = " ".join(str(message).split())  # always one line
        self.path = None if path is None else str(path)
        self.where = where
        super().__init__(str(self))

    def __str__(self) -> str:
        head = ":".join(
            p for p in (self.path or "", "" if self.where is None else str(self.where)) if p
        )
        return f"{head}: {self.message}" if head else self.message

    def at(self, path: str | Path | None = None, where: int | str | None = None) -> "InputError":
        """Return a copy with the file and/or location filled in where missing."""
        return InputError(self.message, self.path or path, self.where if self.where is not None else where)


class OutOfSpanError(InputError):
    """A time asked for lies outside what an ephemeris or table covers."""


class Cancelled(Exception):
    """Raised inside long engine work when the caller's cancel flag is set."""
