"""Exceptions and warnings of hrstage.

``HrstageInputError`` is for user mistakes (bad column, bad file, bad option): the command line
turns it into a one-line message and exit status 2, never a traceback.
"""

from __future__ import annotations


class HrstageError(Exception):
    """Base class of hrstage's own errors."""


class HrstageInputError(HrstageError, ValueError):
    """The user's input (table, column, file, option) is not what was expected.

    The message names things as the Python interface does (``overwrite=True``); where the
    command line calls them otherwise (``--overwrite``), ``cli`` holds the same message in its
    words, and the command line prints that one.
    """

    def __init__(self, message="", *, cli: str | None = None):
        super().__init__(message)
        self.cli = cli

    def cli_message(self) -> str:
        """The message in the command line's words."""
        return self.cli or str(self)


class HrstageWarning(UserWarning):
    """Base class of hrstage's warnings (extrapolation, assumptions)."""


class ExtrapolationWarning(HrstageWarning):
    """A relation was evaluated outside its published validity range."""
