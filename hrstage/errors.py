"""Exceptions and warnings of hrstage.

``HrstageInputError`` is for user mistakes (bad column, bad file, bad option): the command line
turns it into a one-line message and exit status 2, never a traceback.
"""


class HrstageError(Exception):
    """Base class of hrstage's own errors."""


class HrstageInputError(HrstageError, ValueError):
    """The user's input (table, column, file, option) is not what was expected."""


class HrstageWarning(UserWarning):
    """Base class of hrstage's warnings (extrapolation, assumptions)."""


class ExtrapolationWarning(HrstageWarning):
    """A relation was evaluated outside its published validity range."""
