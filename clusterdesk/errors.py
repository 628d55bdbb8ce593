"""Exception and warning types shared by every layer of ClusterDesk.

Every problem a user can cause (bad values, an unusable file, impossible
settings) is raised as :class:`InputError` or a subclass, with one sentence
that says what was wrong, where, and what to try.  Library tracebacks are never
the user's interface.
"""

from __future__ import annotations

__all__ = ["InputError", "FileFormatError", "Cancelled", "ClusterDeskWarning"]


class InputError(ValueError):
    """Values or settings that cannot be analysed.

    The message is a complete sentence meant for the person who supplied the
    input: what was wrong and what to try instead.
    """


class FileFormatError(InputError):
    """A file (or pasted text) that cannot be read as a table of measurements."""


class Cancelled(Exception):
    """Long work (a scan or a bootstrap) was stopped through its cancel token.

    Nothing half-finished is returned or written when this is raised.
    """


class ClusterDeskWarning(UserWarning):
    """Something the user should know about a result (e.g. no convergence)."""
