"""The exceptions and the warning class of copse_forest.

Every error copse raises is a :class:`CopseError`; its subclasses say what kind of
thing went wrong, and the message is copse's own (naming the row's line and the
column where one applies, and saying what to do).
"""

__all__ = ["CopseError", "BadInputError", "DamagedModelError", "UsageError", "CopseWarning"]


class CopseError(Exception):
    """Base class of every error raised by copse."""


class BadInputError(CopseError, ValueError):
    """The data cannot be used: a cell its column cannot take, a column the model
    needs that is absent, too few rows, or data of a kind copse does not read.

    Messages name the data's line as in the CSV file it would make (the header is
    line 1, so the row at position ``i``, counting from 0, is line ``i + 2``) and the
    column.
    """


class DamagedModelError(CopseError):
    """A model file or its bytes cannot be read as a copse model: cut short, altered,
    not a copse model, or written in a format this copse does not read."""


class UsageError(CopseError, ValueError):
    """A setting is out of its range, or settings contradict each other or the data."""


class CopseWarning(UserWarning):
    """A note about the data or the rows scored (the notes and warnings the copse
    command prints), issued with :func:`warnings.warn`."""
