"""Errors the kit raises on bad input.

Every message is one line that names what was wrong, where, and what was
expected; the command line prints it as ``error: ...`` and exits with status 2.
"""

__all__ = ["FrontshiftError", "InputError", "OutputError"]


class FrontshiftError(Exception):
    """Base class of every error the kit raises on purpose."""


class InputError(FrontshiftError, ValueError):
    """Input data, a file or an argument is unusable; the message says why."""


class OutputError(FrontshiftError, OSError):
    """A product could not be written, or would overwrite one silently."""
