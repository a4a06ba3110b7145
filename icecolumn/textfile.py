"""User files: reading text with one-line errors, and writing outputs atomically."""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from .errors import InputError


def read_user_bytes(path, what: str) -> bytes:
    """The bytes of a user's file; :class:`InputError` names the file and the problem."""
    name = str(path)
    try:
        return Path(path).read_bytes()
    except FileNotFoundError:
        raise InputError(f"{name}: file not found") from None
    except IsADirectoryError:
        raise InputError(f"{name}: is a directory, not a {what}") from None
    except OSError as err:
        raise InputError(f"{name}: cannot read: {err.strerror}") from None


def read_user_text(path, what: str) -> tuple[str, bytes]:
    """Return (text, raw bytes) of a UTF-8 file; :class:`InputError` names the file and problem.

    ``what`` names the kind of file in messages (e.g. ``"forcing file"``).
    """
    name = str(path)
    raw = read_user_bytes(path, what)
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as err:
        line = raw[: err.start].count(b"\n") + 1
        raise InputError(f"{name}: line {line}: not UTF-8 text") from None
    return text, raw


def read_csv_rows(path, what: str, expected: str = "") -> tuple[list[str], int, list[tuple[int, list[str]]]]:
    """Header and data rows of a small CSV file (``#`` comment and blank lines skipped).

    Returns ``(header, header_line, [(line_number, cells), ...])``; a malformed line, a row
    with the wrong number of fields or an empty file is an :class:`InputError` naming the
    file and line. ``expected`` (e.g. ``"time, ice_thickness"``) is added to the empty-file
    message.
    """
    import csv

    name = str(path)
    text, _ = read_user_text(path, what)
    header: list[str] | None = None
    header_no = 0
    rows: list[tuple[int, list[str]]] = []
    for no, line in enumerate(text.splitlines(), start=1):
        stripped = line.strip()
        if not stripped or stripped.startswith("#"):
            continue
        try:
            cells = [c.strip() for c in next(csv.reader([line], strict=True))]
        except csv.Error as err:
            raise InputError(f"{name}: line {no}: malformed CSV ({err})") from None
        if header is None:
            header, header_no = cells, no
            continue
        if len(cells) != len(header):
            raise InputError(f"{name}: line {no}: expected {len(header)} fields as in the header "
                             f"(line {header_no}), found {len(cells)}")
        rows.append((no, cells))
    if header is None:
        raise InputError(f"{name}: file is empty" + (f" (expected columns {expected})" if expected else ""))
    return header, header_no, rows


def column_numbers(name: str, col: str, texts: list[str], lines: list[int], nonnegative_unit: str | None = None):
    """Finite float64 values of one CSV column; the first bad cell is an :class:`InputError`
    naming the file, line and column.  With ``nonnegative_unit`` (e.g. ``"m"``) a negative
    value is an error too."""
    out = np.empty(len(texts))
    for i, t in enumerate(texts):
        try:
            v = float(t)
        except ValueError:
            raise InputError(f"{name}: line {lines[i]}: column {col!r}: {t!r} is not a number") from None
        if not math.isfinite(v):
            raise InputError(f"{name}: line {lines[i]}: column {col!r}: {t!r} is not a finite number")
        if nonnegative_unit is not None and v < 0:
            raise InputError(f"{name}: line {lines[i]}: column {col!r}: {v:g} {nonnegative_unit} is negative")
        out[i] = v
    return out


def check_new_output(path, overwrite: bool = False):
    """Refuse to replace an existing file unless ``overwrite``; the folder must exist.

    Returns the folder as a :class:`pathlib.Path`.
    """
    path = Path(path)
    if path.exists() and not overwrite:
        raise InputError(f"{path}: file exists; use --overwrite to replace it")
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(f"{path}: folder {folder} does not exist")
    return folder


def write_atomically(path, write, suffix: str = ".tmp"):
    """Call ``write(temporary_path)`` on a temporary file beside ``path``, then rename it
    to ``path``; on any failure the temporary file is removed and nothing is left behind."""
    import os
    import tempfile

    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=suffix, dir=folder)
    os.close(fd)
    try:
        write(tmp)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
    return path
