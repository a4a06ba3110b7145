"""Forcing: CSV reader and in-memory constructor for air-temperature forcing.

A forcing file is UTF-8 CSV: optional leading comment lines starting with
``#`` (the first is kept as the title), one header row, then one row per time.

==========================  ======  ==========================================
column                      units   meaning
==========================  ======  ==========================================
``time`` (required)         ISO     ISO 8601; no offset = UTC; ``Z``/``+02:00`` honoured
``air_temperature`` (req.)  degC    air temperature near the surface
``surface_temperature``     degC    ice or snow surface temperature (optional)
``ocean_heat_flux``         W m-2   heat flux from the ocean into the ice base,
                                    positive upward (optional)
==========================  ======  ==========================================

Other columns are ignored (their names go to ``attrs["ignored_columns"]``).
Both :func:`read_forcing` and :func:`forcing_from_arrays` return the same
:class:`xarray.Dataset`: coordinate ``time`` (``datetime64[ns]``, naive UTC,
strictly increasing), float64 variables with ``units`` and ``long_name``.
Every problem is an :class:`~icecolumn.errors.InputError` whose one-line
message names the file and the physical line (1-based).
"""

from __future__ import annotations

import csv
import datetime as _dt
import hashlib
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

import numpy as np
import xarray as xr

from .errors import InputError
from .textfile import read_user_text
from .timeutil import format_time, parse_times

__all__ = ["VARIABLES", "read_forcing", "forcing_from_arrays"]

#: Forcing variables other than ``time``: CF attributes and the plausible range
#: checked on input (common practice, no source: Earth's recorded air
#: temperatures lie within about -90..+57 degC; the ocean heat-flux range is a
#: generous bound around the few to tens of W m-2 reported under sea ice).
VARIABLES: dict[str, dict[str, Any]] = {
    "air_temperature": {
        "attrs": {"units": "degC", "long_name": "air temperature", "standard_name": "air_temperature"},
        "range": (-90.0, 50.0),
        "required": True,
    },
    "surface_temperature": {
        "attrs": {"units": "degC", "long_name": "ice or snow surface temperature",
                  "standard_name": "surface_temperature"},
        "range": (-90.0, 50.0),
        "required": False,
    },
    "ocean_heat_flux": {
        "attrs": {"units": "W m-2", "long_name": "ocean heat flux into the ice base (positive upward)"},
        "range": (-50.0, 500.0),
        "required": False,
    },
}
_TIME_ATTRS = {"standard_name": "time", "long_name": "time (UTC)"}
# Values in this range on a degC column were probably written in kelvin.
_KELVIN_HINT_RANGE = (180.0, 330.0)


def _names(items) -> str:
    return ", ".join(repr(i) for i in items) or "none"


def read_forcing(path: str | Path, column_map: Mapping[str, str] | None = None) -> xr.Dataset:
    """Read a CSV forcing file.

    Parameters
    ----------
    path : str or pathlib.Path
        The CSV file (see the module docstring for its layout). [1]
    column_map : dict, optional
        Our variable name -> the file's column name, e.g.
        ``{"air_temperature": "Tair_C"}``; the named column must exist. [1]

    Returns
    -------
    forcing : xarray.Dataset
        ``time`` coordinate [UTC]; ``air_temperature`` [degC] and, when present,
        ``surface_temperature`` [degC] and ``ocean_heat_flux`` [W m-2].  Attributes
        ``source_file`` (path as given), ``sha256`` (of the file bytes), ``title``
        (first comment line) and ``ignored_columns`` (comma-separated).

    Raises
    ------
    InputError
        ``"<file>: line <n>: <problem>"`` for anything wrong with the file.
    """
    name = str(path)
    text, raw = read_user_text(path, "forcing file")

    lines = text.split("\n")
    comments: list[str] = []
    header_no = 0  # 1-based physical line of the header
    for no, line in enumerate(lines, start=1):
        stripped = line.strip()
        if not stripped:
            continue
        if stripped.startswith("#"):
            comments.append(stripped.lstrip("#").strip())
            continue
        header_no = no
        break
    if header_no == 0:
        raise InputError(f"{name}: file is empty" if not comments else f"{name}: no header row (only comments)")

    columns = [c.strip() for c in _split(lines[header_no - 1], name, header_no)]
    for j, col in enumerate(columns):
        if not col:
            raise InputError(f"{name}: line {header_no}: column {j + 1} of the header has no name")
        if col in columns[:j]:
            raise InputError(f"{name}: line {header_no}: column name {col!r} appears twice")

    file_col = _resolve_columns(columns, column_map, name, header_no)
    ignored = [c for c in columns if c not in file_col.values()]

    numbers: list[int] = []
    rows: list[list[str]] = []
    for no in range(header_no + 1, len(lines) + 1):
        line = lines[no - 1]
        stripped = line.strip()
        if not stripped or stripped.startswith("#"):
            continue
        cells = _split(line, name, no)
        if len(cells) != len(columns):
            raise InputError(
                f"{name}: line {no}: expected {len(columns)} fields as in the header (line {header_no}), "
                f"found {len(cells)}"
            )
        numbers.append(no)
        rows.append(cells)
    if not rows:
        raise InputError(f"{name}: no data rows after the header (line {header_no})")

    def label(i: int) -> str:
        return f"line {numbers[i]}"

    def column_text(var: str) -> list[str]:
        j = columns.index(file_col[var])
        texts = [cells[j].strip() for cells in rows]
        for i, t in enumerate(texts):
            if not t:
                raise InputError(f"{name}: {label(i)}: column {file_col[var]!r} is empty")
        return texts

    times = parse_times(column_text("time"), lambda i: f"{label(i)}: column {file_col['time']!r}", name)
    data = {var: _to_float(column_text(var), name, label, file_col[var]) for var in VARIABLES if var in file_col}
    attrs = {
        "source_file": name,
        "sha256": hashlib.sha256(raw).hexdigest(),
        "title": comments[0] if comments else "",
        "ignored_columns": ",".join(ignored),
    }
    return _build_dataset(times, data, attrs, name, label, file_col)


def _split(line: str, name: str, no: int) -> list[str]:
    """Fields of one CSV line (quotes honoured when present)."""
    line = line.rstrip("\r")
    if '"' not in line:
        return line.split(",")
    try:
        return next(csv.reader([line], strict=True))
    except csv.Error as err:
        raise InputError(f"{name}: line {no}: malformed CSV ({err})") from None


def _resolve_columns(columns: list[str], column_map: Mapping[str, str] | None, name: str, header_no: int) -> dict[str, str]:
    """Our variable name -> file column name, for the variables present."""
    known = ("time", *VARIABLES)
    wanted = {v: v for v in known}
    for ours, theirs in (column_map or {}).items():
        if ours not in known:
            raise InputError(f"{name}: column_map: unknown variable {ours!r}; known variables: {_names(known)}")
        if theirs not in columns:
            raise InputError(
                f"{name}: line {header_no}: column_map names column {theirs!r} for {ours!r}, "
                f"but the header has no such column; columns found: {_names(columns)}"
            )
        wanted[ours] = theirs
    found = {v: c for v, c in wanted.items() if c in columns}
    for v, c in found.items():
        others = [o for o, oc in found.items() if oc == c and o != v]
        if others:
            raise InputError(f"{name}: column_map: column {c!r} is used for both {v!r} and {others[0]!r}")
    for v in ("time", *(v for v, spec in VARIABLES.items() if spec["required"])):
        if v not in found:
            raise InputError(
                f"{name}: line {header_no}: no {wanted[v]!r} column; columns found: {_names(columns)}"
                + ("" if column_map and v in column_map else " (a column_map can name another column)")
            )
    return found


def _to_float(texts: list[str], name: str, label: Callable[[int], str], column: str) -> np.ndarray:
    try:
        return np.array(texts, dtype=np.float64)
    except ValueError:
        pass
    for i, t in enumerate(texts):
        try:
            float(t)
        except ValueError:
            raise InputError(f"{name}: {label(i)}: column {column!r}: {t!r} is not a number") from None
    raise InputError(f"{name}: column {column!r}: values are not numbers")  # pragma: no cover


def _build_dataset(
    times: np.ndarray,
    data: dict[str, np.ndarray],
    attrs: dict[str, str],
    name: str,
    label: Callable[[int], str],
    column_of: Mapping[str, str],
) -> xr.Dataset:
    """Check times and values (shared by the reader and the array constructor)."""
    n = times.size
    if n < 2:
        raise InputError(f"{name}: only {n} data row{'s' if n != 1 else ''}; at least 2 are needed")
    steps = np.diff(times.astype("int64"))
    bad = np.flatnonzero(steps <= 0)
    if bad.size:
        k = int(bad[0]) + 1
        if steps[k - 1] == 0:
            raise InputError(f"{name}: {label(k)}: duplicate time {format_time(times[k])} (also on {label(k - 1)})")
        raise InputError(
            f"{name}: {label(k)}: time {format_time(times[k])} is not after {format_time(times[k - 1])} "
            f"on {label(k - 1)}; times must be strictly increasing"
        )
    variables = {}
    for var, values in data.items():
        spec = VARIABLES[var]
        column = column_of.get(var, var)
        shown = f"{column!r}" + (f" ({var})" if column != var else "")
        finite = np.isfinite(values)
        if not finite.all():
            i = int(np.flatnonzero(~finite)[0])
            raise InputError(f"{name}: {label(i)}: column {shown}: {float(values[i])!r} is not a finite number")
        lo, hi = spec["range"]
        outside = (values < lo) | (values > hi)
        if outside.any():
            i = int(np.flatnonzero(outside)[0])
            unit = spec["attrs"]["units"]
            hint = ""
            if unit == "degC" and _KELVIN_HINT_RANGE[0] <= values[i] <= _KELVIN_HINT_RANGE[1]:
                hint = " (is the file in kelvin?)"
            raise InputError(
                f"{name}: {label(i)}: column {shown}: {values[i]:g} {unit} is outside {lo:g}..{hi:g} {unit}{hint}"
            )
        variables[var] = ("time", values.astype(np.float64, copy=False), dict(spec["attrs"]))
    return xr.Dataset(variables, coords={"time": ("time", times, dict(_TIME_ATTRS))}, attrs=attrs)


def forcing_from_arrays(time: Any, air_temperature: Any, **others: Any) -> xr.Dataset:
    """Build a forcing Dataset in memory, checked like :func:`read_forcing`.

    Parameters
    ----------
    time : array_like
        ``datetime64`` values (taken as UTC) or ISO 8601 texts (offsets honoured). [UTC]
    air_temperature : array_like
        Air temperature at each time. [degC]
    **others : array_like
        Optional ``surface_temperature`` [degC] and ``ocean_heat_flux`` [W m-2];
        ``None`` values are skipped.

    Returns
    -------
    forcing : xarray.Dataset
        Same layout as :func:`read_forcing`; ``source_file`` is ``"<arrays>"`` and
        ``sha256`` is the digest of the time and value bytes.
    """
    name = "<arrays>"
    unknown = [k for k in others if k not in VARIABLES or VARIABLES[k]["required"]]
    if unknown:
        optional = [v for v, s in VARIABLES.items() if not s["required"]]
        raise InputError(f"{name}: unknown variable {unknown[0]!r}; optional variables: {_names(optional)}")

    def label(i: int) -> str:
        return f"index {i}"

    times = _times_from_any(time, name, label)
    data = {}
    for var, values in {"air_temperature": air_temperature, **others}.items():
        if values is None:
            continue
        try:
            arr = np.asarray(values, dtype=np.float64)
        except (TypeError, ValueError):
            raise InputError(f"{name}: {var}: values are not numbers") from None
        if arr.ndim != 1 or arr.size != times.size:
            raise InputError(f"{name}: {var}: expected {times.size} values (one per time), got shape {arr.shape}")
        data[var] = arr
    digest = hashlib.sha256(times.astype("int64").tobytes())
    for var in sorted(data):
        digest.update(var.encode() + data[var].tobytes())
    attrs = {"source_file": name, "sha256": digest.hexdigest(), "title": "", "ignored_columns": ""}
    return _build_dataset(times, data, attrs, name, label, {})


def _times_from_any(time: Any, name: str, label: Callable[[int], str]) -> np.ndarray:
    arr = np.asarray(time)
    if arr.ndim != 1:
        raise InputError(f"{name}: time: expected a 1-D sequence, got shape {arr.shape}")
    if arr.dtype.kind == "M":
        times = arr.astype("datetime64[ns]")
    elif arr.dtype.kind in "US" or (arr.dtype.kind == "O" and all(isinstance(t, str) for t in arr)):
        times = parse_times([str(t) for t in arr], lambda i: f"{label(i)}: time", name)
    elif arr.dtype.kind == "O":
        values = []
        for i, t in enumerate(arr):
            if not isinstance(t, _dt.datetime):
                raise InputError(f"{name}: {label(i)}: time: {t!r} is not a time")
            if t.tzinfo is not None:
                t = t.astimezone(_dt.timezone.utc).replace(tzinfo=None)
            values.append(t)
        times = np.array(values, dtype="datetime64[ns]")
    else:
        raise InputError(f"{name}: time: expected datetime64 values or ISO 8601 texts, got {arr.dtype} values")
    nat = np.isnat(times)
    if nat.any():
        raise InputError(f"{name}: {label(int(np.flatnonzero(nat)[0]))}: time is missing (NaT)")
    return times
