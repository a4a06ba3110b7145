"""Reader for observed ice thickness (drill holes) in CSV.

An observation file is UTF-8 CSV: optional leading comment lines starting with
``#``, one header row, then one row per observation.

=====================  =====  ==========================================
column                 units  meaning
=====================  =====  ==========================================
``time`` (required)    ISO    ISO 8601; no offset = UTC
``ice_thickness``      m      measured ice thickness (required)
``snow_thickness``     m      measured snow thickness (optional)
=====================  =====  ==========================================

Other columns are ignored.  Every problem is an
:class:`~icecolumn.errors.InputError` whose one-line message names the file and
the physical line (1-based).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import xarray as xr

from .errors import InputError
from .textfile import read_csv
from .timeutil import format_time, parse_times

__all__ = ["read_observations"]

_REQUIRED = ("time", "ice_thickness")
_OPTIONAL = ("snow_thickness",)


def read_observations(path: str | Path, period=None) -> xr.Dataset:
    """Read observed ice (and snow) thickness from a CSV file.

    Parameters
    ----------
    path : str or pathlib.Path
        The CSV file. [1]
    period : (datetime64, datetime64), optional
        First and last time allowed; an observation outside them is an error naming
        its line. [UTC]

    Returns
    -------
    obs : xarray.Dataset
        Coordinate ``time`` (UTC, strictly increasing), ``ice_thickness`` [m],
        ``snow_thickness`` [m] when the file has it, and ``line`` (the physical
        line of each observation in the file, for messages).  Attribute
        ``source_file`` is the path as given.

    Raises
    ------
    InputError
        ``"<file>: line <n>: <problem>"`` for anything wrong with the file.
    """
    table = read_csv(path, "observation file", rows_name="observations")
    name = table.name
    for col in _REQUIRED:
        if col not in table.header:
            found = ", ".join(repr(c) for c in table.header)
            raise InputError(f"{name}: line {table.header_line}: no {col!r} column; columns found: {found}")
    lines = np.array(table.lines, dtype=np.int64)
    time_texts = table.column("time")
    for i, t in enumerate(time_texts):
        if not t:
            raise InputError(f"{name}: line {lines[i]}: column 'time' is empty")
    times = parse_times(time_texts, lambda i: f"line {lines[i]}: column 'time'", name)
    data = {col: table.numbers(col, nonnegative_unit="m")
            for col in ("ice_thickness", *_OPTIONAL) if col in table.header}
    steps = np.diff(times.astype("int64"))
    bad = np.flatnonzero(steps <= 0)
    if bad.size:
        k = int(bad[0]) + 1
        raise InputError(f"{name}: line {lines[k]}: time {format_time(times[k])} is not after "
                         f"{format_time(times[k - 1])} on line {lines[k - 1]}; times must be strictly increasing")
    if period is not None:
        first, last = (np.datetime64(t, "ns") for t in period)
        outside = np.flatnonzero((times < first) | (times > last))
        if outside.size:
            i = int(outside[0])
            raise InputError(f"{name}: line {lines[i]}: time {format_time(times[i], 'm')} is outside the period "
                             f"{format_time(first, 'm')} to {format_time(last, 'm')}")
    attrs = {
        "ice_thickness": {"units": "m", "long_name": "observed ice thickness", "standard_name": "sea_ice_thickness"},
        "snow_thickness": {"units": "m", "long_name": "observed snow thickness",
                           "standard_name": "surface_snow_thickness"},
    }
    variables = {col: ("time", values, attrs[col]) for col, values in data.items()}
    variables["line"] = ("time", lines, {"long_name": "line of the observation in the file", "units": "1"})
    return xr.Dataset(variables, coords={"time": ("time", times, {"standard_name": "time", "long_name": "time (UTC)"})},
                      attrs={"source_file": name})
