"""User files: reading text and CSV with one-line errors, and writing outputs safely.

One helper per job:

* :func:`read_user_text` / :func:`read_user_bytes`: a file's contents, or one line saying
  why it cannot be read;
* :func:`read_csv`: a small CSV table (``#`` comment lines, one header row) with the
  physical line number of every row; :meth:`CsvTable.numbers` turns a column into
  floats, naming the line and column of the first bad cell;
* :func:`output_path` and :func:`check_new_output`: where an output goes, and the refusal
  to replace an existing file without ``--overwrite``;
* :func:`write_atomically` / :func:`write_text_atomically` / :func:`write_files_atomically`: an
  output (or several, all or none) is written under a temporary name beside its target and
  renamed into place, so no partial file is left; outputs get the user's usual permissions
  (0o666 less the umask) and write errors name the user's path, never the temporary file.
"""
from __future__ import annotations

import csv
import errno
import os
import re
import shutil
import tempfile
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .errors import IceColumnError, InputError

__all__ = ["read_user_bytes", "read_user_text", "CsvTable", "read_csv", "output_path", "check_new_output",
           "write_atomically", "write_text_atomically", "write_files_atomically"]


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


# --------------------------------------------------------------------------- CSV


@dataclass
class CsvTable:
    """A CSV file's header and data rows (cells stripped of surrounding blanks)."""

    name: str  # the path as given, first in messages
    header: list[str]
    header_line: int  # 1-based physical line of the header
    lines: list[int]  # physical line of each row
    rows: list[list[str]]
    comments: list[str]  # text of the comment lines before the header, without '#'
    raw: bytes  # the file's bytes

    def column(self, col: str) -> list[str]:
        """The cell texts of one column."""
        j = self.header.index(col)
        return [cells[j] for cells in self.rows]

    def require(self, columns) -> None:
        """:class:`InputError` naming the header line unless every one of ``columns`` is there."""
        missing = [c for c in columns if c not in self.header]
        if missing:
            raise InputError(f"{self.name}: line {self.header_line}: missing column(s) {', '.join(missing)} "
                             f"(found {', '.join(self.header)})")

    def numbers(self, col: str, *, nonnegative_unit: str | None = None, empty_is_gap: bool = False,
                shown: str | None = None) -> np.ndarray:
        """float64 values of column ``col``; see :func:`cell_numbers`."""
        return cell_numbers(self.name, shown or col, self.column(col), self.lines,
                            nonnegative_unit=nonnegative_unit, empty_is_gap=empty_is_gap)


def cell_numbers(name: str, col: str, texts: list[str], lines, *, nonnegative_unit: str | None = None,
                 empty_is_gap: bool = False) -> np.ndarray:
    """float64 values of the cell texts of one column; the first bad cell is an :class:`InputError`
    naming the file ``name``, the line and the column ``col``.

    An empty cell is an error, or NaN (a gap) with ``empty_is_gap``; texts such as ``nan`` or
    ``inf`` are errors, not gaps.  With ``nonnegative_unit`` (e.g. ``"m"``) a negative value is
    an error too.
    """
    empty = np.array([not t for t in texts], dtype=bool)
    if empty.any() and not empty_is_gap:
        raise InputError(f"{name}: line {lines[int(np.flatnonzero(empty)[0])]}: column {col!r} is empty")
    filled = ["nan" if not t else t for t in texts] if empty.any() else texts
    try:
        values = np.array(filled, dtype=np.float64)
    except (ValueError, OverflowError):
        values = np.empty(len(texts))
        for i, t in enumerate(filled):
            try:
                values[i] = float(t)
            except (ValueError, OverflowError):
                raise InputError(f"{name}: line {lines[i]}: column {col!r}: {t!r} is not a number"
                                 f"{_decimal_comma_hint(t)}") from None
    bad = ~np.isfinite(values) & ~empty
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise InputError(f"{name}: line {lines[i]}: column {col!r}: {float(values[i])!r} is not a finite number")
    if nonnegative_unit is not None and (values < 0).any():
        i = int(np.flatnonzero(values < 0)[0])
        raise InputError(f"{name}: line {lines[i]}: column {col!r}: {values[i]:g} {nonnegative_unit} is negative")
    return values


_DECIMAL_COMMA = re.compile(r"[+-]?[0-9]+,[0-9]+")
#: Field separators other than the comma that a header may have been written with.
_OTHER_SEPARATORS = ((";", "semicolons"), ("\t", "tabs"), ("|", "vertical bars"))


def _decimal_comma_hint(text: str) -> str:
    """`` (a decimal comma? ...)`` when ``text`` is a number written with a decimal comma."""
    if _DECIMAL_COMMA.fullmatch(text.strip()):
        return f" (a decimal comma? write numbers with a decimal point, e.g. {text.strip().replace(',', '.')})"
    return ""


def _separator_hint(cells: list[str]) -> str:
    """A hint when a line's fields look split by something else than the comma: one field
    holding semicolons or tabs, or more fields than the header because of decimal commas."""
    if len(cells) == 1:
        for sep, what in _OTHER_SEPARATORS:
            if len([c for c in cells[0].split(sep) if c.strip()]) >= 2:
                return f" (fields must be separated by commas; this line seems to use {what})"
    pairs = zip(cells[:-1], cells[1:])
    if any(re.fullmatch(r"[+-]?[0-9]+", a.strip()) and re.fullmatch(r"[0-9]+", b.strip()) for a, b in pairs):
        return " (decimal commas? write numbers with a decimal point, e.g. -20.5, and separate fields by commas)"
    return ""


def _cells(line: str, name: str, no: int) -> list[str]:
    """Fields of one CSV line, by the csv module when the line holds quotes (a line without
    quotes splits at its commas, which is what the csv module would do)."""
    if '"' not in line:
        return line.split(",")
    try:
        return next(csv.reader([line], strict=True))
    except (csv.Error, StopIteration) as err:
        raise InputError(f"{name}: line {no}: malformed CSV ({err})") from None


def read_csv(path, what: str, expected: str = "", rows_name: str = "data rows") -> CsvTable:
    """Header and data rows of a UTF-8 CSV file.

    Blank lines and lines starting with ``#`` are skipped (the ``#`` lines before the header
    are kept as ``comments``); the first other line is the header.  Every problem is one
    :class:`InputError` line naming the file and the physical line: not UTF-8, malformed
    CSV, a header column without a name or named twice, a row with a different number of
    fields than the header, an empty file (``expected``, e.g. ``"time, ice_thickness"``,
    is added to that message) and a file without ``rows_name`` after the header.  A header
    of one column holding semicolons or tabs, and rows with extra fields from decimal commas,
    get a hint in their message.
    """
    name = str(path)
    text, raw = read_user_text(path, what)
    comments: list[str] = []
    header: list[str] | None = None
    header_line = 0
    lines: list[int] = []
    rows: list[list[str]] = []
    for no, line in enumerate(text.split("\n"), start=1):
        stripped = line.strip()
        if not stripped:
            continue
        if stripped.startswith("#"):
            if header is None:
                comments.append(stripped.lstrip("#").strip())
            continue
        cells = [c.strip() for c in _cells(line.rstrip("\r"), name, no)]
        if header is None:
            hint = _separator_hint(cells) if len(cells) == 1 else ""
            if hint:
                raise InputError(f"{name}: line {no}: the header has one column {cells[0]!r}{hint}")
            for j, col in enumerate(cells):
                if not col:
                    raise InputError(f"{name}: line {no}: column {j + 1} of the header has no name")
                if col in cells[:j]:
                    raise InputError(f"{name}: line {no}: column name {col!r} appears twice")
            header, header_line = cells, no
            continue
        if len(cells) != len(header):
            hint = _separator_hint(cells) if len(cells) > len(header) or len(cells) == 1 else ""
            raise InputError(f"{name}: line {no}: expected {len(header)} fields as in the header "
                             f"(line {header_line}), found {len(cells)}{hint}")
        lines.append(no)
        rows.append(cells)
    if header is None:
        if comments:
            raise InputError(f"{name}: no header row (only comments)")
        raise InputError(f"{name}: file is empty" + (f" (expected columns {expected})" if expected else ""))
    if not rows:
        raise InputError(f"{name}: no {rows_name} after the header (line {header_line})")
    return CsvTable(name, header, header_line, lines, rows, comments, raw)


# --------------------------------------------------------------------------- outputs


def output_path(given, default_name: str) -> Path:
    """Where an output goes: ``given`` (a file, or a folder to hold ``default_name``), or
    ``default_name`` in the current folder when nothing is given."""
    if given is None:
        return Path(default_name)
    path = Path(given)
    return path / default_name if path.is_dir() else path


def check_new_output(path, overwrite: bool = False) -> Path:
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


def _user_permissions(path) -> None:
    """Give ``path`` the permissions a file created normally gets (0o666 less the umask);
    :func:`tempfile.mkstemp` makes its files private (0o600)."""
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(path, 0o666 & ~umask)


#: Below this much free space in the output's folder, a failed write says the disk may be full.
_LOW_DISK_BYTES = 64 * 2**20


def _disk_hint(folder: Path) -> str:
    try:
        free = shutil.disk_usage(folder).free
    except OSError:
        return ""
    return f" (the disk may be full: {free / 2**20:.1f} MB free in {folder})" if free < _LOW_DISK_BYTES else ""


def _named_for_user(err: Exception, tmp: str, path: Path) -> Exception | None:
    """An error of writing the temporary file ``tmp`` restated for the user's ``path``, or None to
    re-raise ``err`` as it is.

    * An :class:`OSError` about the temporary file or about no file (e.g. "No space left on
      device" while writing) keeps its errno (and so its subclass, e.g. :class:`PermissionError`)
      with ``path`` as its file name.  One about another file is left as it is.
    * An error of the NetCDF library (a :class:`RuntimeError` whose text starts ``NetCDF:``) or
      any other error whose text names the temporary file becomes one
      :class:`~icecolumn.errors.IceColumnError` line ``<path>: cannot write: <its text, the
      temporary name replaced by path>``.

    A hint that the disk may be full is added when the folder has little free space left.
    """
    tmp_name = os.path.basename(tmp)
    folder = path.parent if str(path.parent) else Path(".")

    def for_user(text: str) -> str:
        return " ".join(text.replace(tmp, str(path)).replace(tmp_name, path.name).split())

    text = str(err)
    if isinstance(err, OSError):
        if err.filename is not None and tmp_name not in str(err.filename):
            return None
        reason = for_user(err.strerror or text or type(err).__name__)
        if err.errno is None or err.errno < 0 or err.errno == errno.ENOSPC:  # a library code, or a full disk
            reason += _disk_hint(folder)
        return OSError(err.errno, reason, str(path))
    netcdf = isinstance(err, RuntimeError) and text.startswith("NetCDF:")
    if not netcdf and tmp_name not in text:
        return None
    return IceColumnError(f"{path}: cannot write: {for_user(text)}{_disk_hint(folder)}")


def _write_temporary(path: Path, write, suffix: str) -> str:
    """Write one output under a temporary name beside ``path`` (user permissions, flushed to
    disk); returns the temporary name.  On failure nothing is left and the error names
    ``path``, not the temporary file."""
    folder = path.parent if str(path.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=suffix, dir=folder)
    os.close(fd)
    try:
        if isinstance(write, str):
            Path(tmp).write_text(write, encoding="utf-8", newline="\n")
        else:
            write(tmp)
        _user_permissions(tmp)  # after writing: a writer may have made the file anew
        with open(tmp, "rb") as fh:
            os.fsync(fh.fileno())
    except BaseException as err:
        if os.path.exists(tmp):
            os.unlink(tmp)
        restated = _named_for_user(err, tmp, path) if isinstance(err, Exception) else None
        if restated is None:
            raise
        raise restated from err
    return tmp


def write_atomically(path, write, suffix: str = ".tmp") -> Path:
    """Call ``write(temporary_path)`` on a temporary file beside ``path``, flush it to disk and
    rename it to ``path``; on any failure the temporary file is removed and nothing is left
    behind (an existing ``path`` is untouched).

    The file gets the user's usual permissions (0o666 less the umask), and an error while
    writing names ``path``, never the temporary file.  ``write`` may also be a ``str``: the
    text written as UTF-8.
    """
    path = Path(path)
    tmp = _write_temporary(path, write, suffix)
    try:
        os.replace(tmp, path)
    except BaseException as err:
        if os.path.exists(tmp):
            os.unlink(tmp)
        restated = _named_for_user(err, tmp, path) if isinstance(err, Exception) else None
        if restated is None:
            raise
        raise restated from err
    return path


def write_text_atomically(path, text: str, overwrite: bool = False) -> Path:
    """Write UTF-8 ``text`` to ``path`` atomically, refusing to replace a file unless ``overwrite``."""
    check_new_output(path, overwrite)
    return write_atomically(path, text)


def write_files_atomically(files: dict, overwrite: bool = False) -> list[Path]:
    """Write several files all-or-nothing.

    ``files`` maps each path to its content: ``str`` (UTF-8 text) or a callable
    ``write(temporary_path)``.  Every path is checked first (an existing file without
    ``overwrite``, a missing folder, the same path twice is an :class:`InputError`); then
    each is written to a temporary file beside it as :func:`write_atomically` does (user
    permissions, errors naming the user's path), and only when all succeeded are they
    renamed into place.  On any failure the temporary files are removed and no output
    exists that did not exist before.
    """
    paths = [Path(p) for p in files]
    seen = set()
    for p in paths:
        key = os.path.abspath(p)
        if key in seen:
            raise InputError(f"{p}: the same output file twice")
        seen.add(key)
        check_new_output(p, overwrite)
    temps: list[tuple[str, Path]] = []
    try:
        for p, content in zip(paths, files.values()):
            temps.append((_write_temporary(p, content, ".tmp" + p.suffix), p))
        for tmp, p in temps:
            os.replace(tmp, p)
        temps = []
    finally:
        for tmp, _ in temps:
            if os.path.exists(tmp):
                os.unlink(tmp)
    return paths
