"""Errors a user can fix.

Every mistake in a file the user wrote ends as one line naming the file, the key
(or ``file:line:column`` for syntax) and what was expected; the command line
turns a :class:`UserError` into that line and exit status 2, without a
traceback.
"""

from __future__ import annotations


class UserError(Exception):
    """A mistake in a user's file or command line, reported as one line.

    Parameters
    ----------
    message : str
        What was expected, in words a builder understands.
    file : str, optional
        The file the mistake is in.
    key : str, optional
        The dotted key (``rail[2].capacitor.capacitance``) or ``line:column``.
    """

    def __init__(self, message: str, file: str | None = None, key: str | None = None):
        self.message = message
        self.file = file
        self.key = key
        super().__init__(self.line())

    def line(self) -> str:
        where = ": ".join(p for p in (self.file, self.key) if p)
        return f"{where}: {self.message}" if where else self.message

    def located(self, file: str | None = None, key: str | None = None) -> UserError:
        """Return a copy with the file and/or key filled in where they were missing."""
        return UserError(self.message, self.file or file, self.key or key)


class NotConverged(RuntimeError):
    """The steady-state solver did not converge for some designs of a batch."""
