"""One exception base for every user-facing error, and one warning class.

The command-line layer turns any :class:`EmulateError` into one clear line and a
non-zero exit; library callers can catch it as a whole.
"""


class EmulateError(Exception):
    """Base of every error a user can cause (bad value, bad file, bad preset)."""


class BadValueError(EmulateError, ValueError):
    """A value is outside what is allowed; the message shows it and the allowed range."""


class CircuitError(EmulateError, ValueError):
    """The circuit cannot be analysed (floating node, no path from source to output)."""


class AudioFileError(EmulateError):
    """An audio file cannot be read or written as asked; nothing was written."""


class PresetError(EmulateError):
    """A preset is missing, malformed or would be overwritten; the store is untouched."""


class OutputRefusedError(BadValueError):
    """An output may not be written where asked (it exists, or could never be a file); nothing was written."""


class EmulateWarning(UserWarning):
    """This works but is probably not what you want (unbalanced network, heavy load...)."""
