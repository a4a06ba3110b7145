"""Reading a user's text file with one-line errors (shared by every reader)."""
from __future__ import annotations

from pathlib import Path

from .errors import InputError


def read_user_text(path, what: str) -> tuple[str, bytes]:
    """Return (text, raw bytes) of a UTF-8 file; :class:`InputError` names the file and problem.

    ``what`` names the kind of file in messages (e.g. ``"forcing file"``).
    """
    name = str(path)
    try:
        raw = Path(path).read_bytes()
    except FileNotFoundError:
        raise InputError(f"{name}: file not found") from None
    except IsADirectoryError:
        raise InputError(f"{name}: is a directory, not a {what}") from None
    except OSError as err:
        raise InputError(f"{name}: cannot read: {err.strerror}") from None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as err:
        line = raw[: err.start].count(b"\n") + 1
        raise InputError(f"{name}: line {line}: not UTF-8 text") from None
    return text, raw
