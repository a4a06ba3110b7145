"""Field profiles: thermistor-string and ice-core files (the forecast starts from them).

Two UTF-8 CSV layouts (optional leading ``#`` comment lines, one header row):

=====================  =====  ===================================================
thermistor file        units  meaning
=====================  =====  ===================================================
``depth`` (required)   m      below the snow-ice interface, positive down
                              (negative: the sensor is in the snow)
``temperature`` (req.) degC   sensor temperature
``time`` (optional)    ISO    read time; with several times the latest one at or
                              before ``at`` (or the latest of all) is used
=====================  =====  ===================================================

=======================  =====  =================================================
ice-core file            units  meaning
=======================  =====  =================================================
``depth_top`` (req.)     m      top of the core section below the snow-ice interface
``depth_bottom`` (req.)  m      bottom of the section
``salinity`` (req.)      g/kg   bulk salinity of the melted section
``time`` (optional)      ISO    as for the thermistor file
=======================  =====  =================================================

Only thermistor readings inside the ice (``0 <= depth <= ice thickness``) are used; the
number set aside (in the snow, in the water) is reported.  Without a core the salinity
is the first-year depth-mean of :func:`first_year_salinity` (uniform); without a
thermistor the model's default temperature (linear from the surface to the freezing
point) applies (:func:`icecolumn.forecast.initial_profile` builds that initial state).
The same files are drawn as points on the section figures (:func:`read_profile_points`).
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .errors import InputError
from .textfile import read_csv
from .timeutil import parse_time, parse_times

__all__ = ["ThermistorReading", "CoreReading", "ProfileTable", "read_profile_table", "read_profile_points",
           "read_thermistor", "read_core", "first_year_salinity", "FIRST_YEAR_SALINITY_SOURCE"]

#: Where the default salinity comes from (printed with forecasts that use it).
FIRST_YEAR_SALINITY_SOURCE = (
    "Cox & Weeks (1974), J. Glaciol. 13(67), 109-120: depth-mean salinity of cold first-year ice, "
    "S = 14.24 - 19.39 h for h <= 0.4 m, S = 7.88 - 1.59 h for h > 0.4 m (h in m, S in g/kg; "
    "coefficients from memory)")

#: Number columns of each kind of profile file (besides the optional ``time``).
PROFILE_COLUMNS: dict[str, tuple[str, ...]] = {
    "thermistor": ("depth", "temperature"),
    "core": ("depth_top", "depth_bottom", "salinity"),
}
_FILE_KIND = {"thermistor": "thermistor file", "core": "ice-core file"}

# plausible sensor temperatures [degC] (common practice, no source)
_TEMPERATURE_RANGE = (-60.0, 5.0)


@dataclass
class ThermistorReading:
    """In-ice thermistor readings and what was set aside."""

    depth: np.ndarray  # m, increasing
    temperature: np.ndarray  # degC
    in_snow: int  # readings with depth < 0
    in_water: int  # readings with depth > ice thickness
    time: np.datetime64 | None
    source: str

    def summary(self) -> str:
        return (f"{self.source}: {self.depth.size} thermistor readings in the ice used; set aside "
                f"{self.in_snow} in the snow and {self.in_water} in the water")


@dataclass
class CoreReading:
    """Ice-core sections: mid-depths and salinities."""

    depth: np.ndarray  # m, section mid-depths, increasing
    salinity: np.ndarray  # g/kg
    time: np.datetime64 | None
    source: str


@dataclass
class ProfileTable:
    """Every row of a thermistor or ice-core file."""

    source: str
    lines: np.ndarray  # physical line of each row
    time: np.ndarray | None  # datetime64[ns] UTC of each row, None without a time column
    values: dict[str, np.ndarray]  # the kind's number columns (PROFILE_COLUMNS)


def read_profile_table(path: str | Path, kind: str, need_time: bool = False) -> ProfileTable:
    """Read a thermistor (``kind="thermistor"``) or ice-core (``"core"``) CSV file.

    The columns are those of the module docstring; ``time`` is optional unless
    ``need_time``.  Every problem is one :class:`InputError` line naming the file, the line
    and the column.
    """
    need = (("time",) if need_time else ()) + PROFILE_COLUMNS[kind]
    table = read_csv(path, _FILE_KIND[kind], ", ".join(need))
    table.require(need)
    times = None
    if "time" in table.header:
        times = parse_times(table.column("time"), lambda i: f"line {table.lines[i]}: column 'time'", table.name)
    values = {c: table.numbers(c) for c in PROFILE_COLUMNS[kind]}
    return ProfileTable(table.name, np.asarray(table.lines), times, values)


def read_profile_points(path: str | Path, kind: str) -> dict:
    """Thermistor temperatures or ice-core salinities at their times and depths, for plotting.

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
    table = read_profile_table(path, kind, need_time=True)
    v = table.values
    if kind == "thermistor":
        return {"time": table.time, "depth": v["depth"], "temperature": v["temperature"]}
    return {"time": table.time, "depth": 0.5 * (v["depth_top"] + v["depth_bottom"]), "salinity": v["salinity"]}


def _select_time(table: ProfileTable, at) -> tuple[np.ndarray, np.datetime64 | None]:
    """Row mask of the chosen read time (all rows when there is no time column)."""
    if table.time is None:
        return np.ones(table.lines.size, bool), None
    uniq = np.unique(table.time)
    if at is not None:
        at = parse_time(at) if isinstance(at, str) else np.datetime64(at, "ns")
        ok = uniq[uniq <= at]
        if ok.size == 0:
            raise InputError(f"{table.source}: every reading is after {str(at)[:16]}; none can start the forecast")
        chosen = ok[-1]
    else:
        chosen = uniq[-1]
    return table.time == chosen, chosen


def read_thermistor(path: str | Path, ice_thickness: float, at=None) -> ThermistorReading:
    """Read a thermistor CSV and keep the readings inside the ice.

    Parameters
    ----------
    path : str or pathlib.Path
        Thermistor CSV (see the module docstring).
    ice_thickness : float
        Measured ice thickness at the read time. [m]
    at : datetime-like, optional
        Use the latest read time at or before this time (default: the latest).

    Raises
    ------
    InputError
        Bad file, or no reading with ``0 <= depth <= ice_thickness``.
    """
    table = read_profile_table(path, "thermistor")
    name = table.source
    mask, chosen = _select_time(table, at)
    depth = table.values["depth"][mask]
    temp = table.values["temperature"][mask]
    kept_lines = table.lines[mask]
    lo, hi = _TEMPERATURE_RANGE
    bad = np.flatnonzero((temp < lo) | (temp > hi))
    if bad.size:
        i = int(bad[0])
        raise InputError(f"{name}: line {kept_lines[i]}: column 'temperature': {temp[i]:g} degC is outside "
                         f"{lo:g}..{hi:g} degC")
    in_snow = depth < 0.0
    in_water = depth > ice_thickness
    inside = ~(in_snow | in_water)
    if not inside.any():
        raise InputError(f"{name}: no thermistor reading inside the ice (0 <= depth <= {ice_thickness:g} m); "
                         f"{int(in_snow.sum())} in the snow, {int(in_water.sum())} in the water")
    d, tv = depth[inside], temp[inside]
    order = np.argsort(d, kind="stable")
    d, tv = d[order], tv[order]
    if np.any(np.diff(d) == 0):
        k = int(np.flatnonzero(np.diff(d) == 0)[0])
        raise InputError(f"{name}: two readings at depth {d[k]:g} m for the same time")
    return ThermistorReading(depth=d, temperature=tv, in_snow=int(in_snow.sum()), in_water=int(in_water.sum()),
                             time=chosen, source=name)


def read_core(path: str | Path, ice_thickness: float | None = None, at=None) -> CoreReading:
    """Read an ice-core salinity CSV (sections ``depth_top`` .. ``depth_bottom``).

    Sections must not overlap and must have ``0 <= depth_top < depth_bottom``; with
    ``ice_thickness`` given, a section starting below the ice is an error.
    Salinity must lie in 0..45 g/kg.
    """
    table = read_profile_table(path, "core")
    name = table.source
    mask, chosen = _select_time(table, at)
    top = table.values["depth_top"][mask]
    bot = table.values["depth_bottom"][mask]
    sal = table.values["salinity"][mask]
    ln = table.lines[mask]
    for i in range(top.size):
        if not 0.0 <= top[i] < bot[i]:
            raise InputError(f"{name}: line {ln[i]}: need 0 <= depth_top < depth_bottom, got "
                             f"{top[i]:g} and {bot[i]:g} m")
        if not 0.0 <= sal[i] <= 45.0:
            raise InputError(f"{name}: line {ln[i]}: column 'salinity': {sal[i]:g} g/kg is outside 0..45 g/kg")
        if ice_thickness is not None and top[i] >= ice_thickness:
            raise InputError(f"{name}: line {ln[i]}: section starts at {top[i]:g} m, below the ice "
                             f"({ice_thickness:g} m thick)")
    order = np.argsort(top, kind="stable")
    top, bot, sal, ln = top[order], bot[order], sal[order], ln[order]
    overlap = np.flatnonzero(top[1:] < bot[:-1] - 1e-9)
    if overlap.size:
        k = int(overlap[0]) + 1
        raise InputError(f"{name}: line {ln[k]}: section {top[k]:g}..{bot[k]:g} m overlaps the one on line "
                         f"{ln[k - 1]}")
    return CoreReading(depth=0.5 * (top + bot), salinity=sal, time=chosen, source=name)


def first_year_salinity(thickness: float) -> float:
    """Depth-mean bulk salinity of cold first-year ice of this thickness [g/kg].

    Cox & Weeks (1974), J. Glaciol. 13(67), 109-120 (coefficients from memory):
    ``S = 14.24 - 19.39 h`` for ``h <= 0.4 m`` and ``S = 7.88 - 1.59 h`` above.
    Kept within 0..34 g/kg.
    """
    h = float(thickness)
    s = 14.24 - 19.39 * h if h <= 0.4 else 7.88 - 1.59 * h
    return float(min(max(s, 0.0), 34.0))
