"""The error of a bad command-line flag or flag combination (exit code 2, one line)."""

from models.errors import DesignError

__all__ = ["UsageError"]


class UsageError(DesignError):
    """A command-line flag, its value or a combination of flags is not allowed.

    A subclass of the design error so that every command reports it the same way: one line naming
    the flag, the value and what is allowed, exit code 2."""
