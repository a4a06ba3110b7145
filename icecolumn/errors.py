"""User-facing error types.

Every problem with what a user gave (forcing file, configuration, observations,
command-line arguments) is raised as :class:`InputError` with a one-line message
that names the file, the line or field, and what is wrong.  The CLI prints that
line and exits with code 2; nothing else may be shown unless ``--debug`` is set.
"""


class IceColumnError(Exception):
    """Base class of every error icecolumn raises on purpose."""


class InputError(IceColumnError, ValueError):
    """Bad user input. ``str(err)`` is a single line fit for the terminal."""


class IceColumnWarning(UserWarning):
    """Something a user should know about a run that still goes ahead (one line of text)."""
