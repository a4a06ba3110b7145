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

import math
from pathlib import Path

import numpy as np
import xarray as xr

from .errors import InputError
from .textfile import column_numbers, read_csv_rows
from .timeutil import format_time, parse_times

__all__ = ["read_observations"]

_REQUIRED = ("time", "ice_thickness")
_OPTIONAL = ("snow_thickness",)


def read_observations(path: str | Path) -> xr.Dataset:
    """Read observed ice (and snow) thickness from a CSV file.

    Parameters
    ----------
    path : str or pathlib.Path
        The CSV file. [1]

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
    name = str(path)
    header, header_no, rows = read_csv_rows(path, "observation file")
    for col in _REQUIRED:
        if col not in header:
            found = ", ".join(repr(c) for c in header)
            raise InputError(f"{name}: line {header_no}: no {col!r} column; columns found: {found}")
    if not rows:
        raise InputError(f"{name}: no observations after the header (line {header_no})")

    lines = np.array([no for no, _ in rows], dtype=np.int64)
    columns = {col: [cells[header.index(col)] for _, cells in rows]
               for col in (*_REQUIRED, *_OPTIONAL) if col in header}
    for col, texts in columns.items():
        for i, t in enumerate(texts):
            if not t:
                raise InputError(f"{name}: line {lines[i]}: column {col!r} is empty")
    times = parse_times(columns["time"], lambda i: f"line {lines[i]}: column 'time'", name)
    data = {}
    for col in ("ice_thickness", *_OPTIONAL):
        if col not in columns:
            continue
        data[col] = column_numbers(name, col, columns[col], lines, nonnegative_unit="m")
    steps = np.diff(times.astype("int64"))
    bad = np.flatnonzero(steps <= 0)
    if bad.size:
        k = int(bad[0]) + 1
        raise InputError(f"{name}: line {lines[k]}: time {format_time(times[k])} is not after "
                         f"{format_time(times[k - 1])} on line {lines[k - 1]}; times must be strictly increasing")
    attrs = {
        "ice_thickness": {"units": "m", "long_name": "observed ice thickness", "standard_name": "sea_ice_thickness"},
        "snow_thickness": {"units": "m", "long_name": "observed snow thickness",
                           "standard_name": "surface_snow_thickness"},
    }
    variables = {col: ("time", values, attrs[col]) for col, values in data.items()}
    variables["line"] = ("time", lines, {"long_name": "line of the observation in the file", "units": "1"})
    return xr.Dataset(variables, coords={"time": ("time", times, {"standard_name": "time", "long_name": "time (UTC)"})},
                      attrs={"source_file": name})


def read_profile_points(path: str | Path, kind: str) -> dict:
    """Read thermistor temperatures or ice-core salinities for plotting as points.

    Parameters
    ----------
    path : str or pathlib.Path
        CSV file. ``kind="thermistor"``: columns ``time``, ``depth`` [m below the ice
        surface], ``temperature`` [degC]. ``kind="core"``: ``time``, ``depth_top``,
        ``depth_bottom`` [m], ``salinity`` [g kg-1] (drawn at the section mid-depth).
    kind : str
        ``"thermistor"`` or ``"core"``.

    Returns
    -------
    dict
        ``time`` (datetime64[ns]), ``depth`` [m] and ``temperature`` or ``salinity``.
    """
    need = {"thermistor": ("time", "depth", "temperature"),
            "core": ("time", "depth_top", "depth_bottom", "salinity")}[kind]
    name = str(path)
    header, header_no, rows = read_csv_rows(path, f"{kind} file", ", ".join(need))
    missing = [c for c in need if c not in header]
    if missing:
        raise InputError(f"{name}: line {header_no}: missing column(s) {', '.join(missing)} "
                         f"(found {', '.join(header)})")
    idx = {c: header.index(c) for c in need}
    times, cols = [], {c: [] for c in need[1:]}
    for no, cells in rows:
        times.append((no, cells[idx["time"]].strip()))
        for c in need[1:]:
            try:
                v = float(cells[idx[c]])
            except ValueError:
                raise InputError(f"{name}: line {no}: column {c!r}: {cells[idx[c]].strip()!r} is not a number") from None
            if not math.isfinite(v):
                raise InputError(f"{name}: line {no}: column {c!r}: value is not finite")
            cols[c].append(v)
    if not times:
        raise InputError(f"{name}: no data rows")
    t = parse_times([s for _, s in times], label=lambda i: f"line {times[i][0]}: column 'time'", source=name)
    out = {"time": np.asarray(t, dtype="datetime64[ns]")}
    if kind == "thermistor":
        out["depth"] = np.asarray(cols["depth"])
        out["temperature"] = np.asarray(cols["temperature"])
    else:
        out["depth"] = 0.5 * (np.asarray(cols["depth_top"]) + np.asarray(cols["depth_bottom"]))
        out["salinity"] = np.asarray(cols["salinity"])
    return out
