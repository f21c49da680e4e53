"""One exception base for every user-facing error, and one warning class.

The command-line layer turns any :class:`EmulateError` into one clear line and a
non-zero exit; library callers can catch it as a whole.
"""

from __future__ import annotations

__all__ = ["EmulateError", "BadValueError", "CircuitError", "AudioFileError", "PresetError",
           "EmulateWarning"]


class EmulateError(Exception):
    """Base of every error a user can cause (bad value, bad file, bad preset).

    Besides its one-line message it carries structured fields, so no caller parses
    message text: ``what`` (the name of the value, with its unit), ``value`` (what was
    given) and ``allowed`` (what is allowed: a ``(low, high)`` pair, a set of choices or
    a phrase). Fields the raiser did not know are ``None``.

    Example
    -------
    >>> err = BadValueError("mix 1.5: allowed [0, 1]", what="mix", value=1.5, allowed=(0.0, 1.0))
    >>> (str(err), err.what, err.value, err.allowed)
    ('mix 1.5: allowed [0, 1]', 'mix', 1.5, (0.0, 1.0))
    """

    def __init__(self, message: str = "", *, what: str | None = None, value=None, allowed=None):
        super().__init__(message)
        self.what = what
        self.value = value
        self.allowed = allowed


class BadValueError(EmulateError, ValueError):
    """A value is outside what is allowed; the message shows it and the allowed range."""


class CircuitError(EmulateError, ValueError):
    """The circuit cannot be analysed (floating node, no path from source to output)."""


class AudioFileError(EmulateError):
    """An audio file cannot be read or written as asked; nothing was written."""


class PresetError(EmulateError):
    """A preset is missing, malformed or would be overwritten; the store is untouched."""


class EmulateWarning(UserWarning):
    """This works but is probably not what you want (unbalanced network, heavy load...)."""
