"""Initial state of a forecast from field measurements: thermistor string and ice core.

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
point) applies.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .errors import InputError
from .model import InitialProfile
from .textfile import column_numbers, read_csv_rows
from .timeutil import parse_time, parse_times

__all__ = ["ThermistorReading", "CoreReading", "read_thermistor", "read_core", "first_year_salinity",
           "initial_profile", "FIRST_YEAR_SALINITY_SOURCE"]

#: Where the default salinity comes from (printed with forecasts that use it).
FIRST_YEAR_SALINITY_SOURCE = (
    "Cox & Weeks (1974), J. Glaciol. 13(67), 109-120: depth-mean salinity of cold first-year ice, "
    "S = 14.24 - 19.39 h for h <= 0.4 m, S = 7.88 - 1.59 h for h > 0.4 m (h in m, S in g/kg; "
    "coefficients from memory)")

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


def _read_table(path, need: tuple[str, ...], what: str) -> tuple[str, dict[str, list[str]], list[int], list[str]]:
    name = str(path)
    header, header_no, rows = read_csv_rows(path, what, ", ".join(need))
    missing = [c for c in need if c not in header]
    if missing:
        raise InputError(f"{name}: line {header_no}: missing column(s) {', '.join(missing)} "
                         f"(found {', '.join(header)})")
    if not rows:
        raise InputError(f"{name}: no data rows after the header (line {header_no})")
    cols = {c: [cells[header.index(c)] for _, cells in rows] for c in header}
    return name, cols, [no for no, _ in rows], header


def _numbers(name: str, cols: dict, lines: list[int], col: str) -> np.ndarray:
    return column_numbers(name, col, cols[col], lines)


def _select_time(name: str, cols: dict, lines: list[int], at) -> tuple[np.ndarray, np.datetime64 | None]:
    """Row mask of the chosen read time (all rows when there is no time column)."""
    n = len(lines)
    if "time" not in cols:
        return np.ones(n, bool), None
    t = parse_times(cols["time"], lambda i: f"line {lines[i]}: column 'time'", name)
    uniq = np.unique(t)
    if at is not None:
        at = parse_time(at) if isinstance(at, str) else np.datetime64(at, "ns")
        ok = uniq[uniq <= at]
        if ok.size == 0:
            raise InputError(f"{name}: every reading is after {str(at)[:16]}; none can start the forecast")
        chosen = ok[-1]
    else:
        chosen = uniq[-1]
    return t == chosen, chosen


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
    name, cols, lines, _ = _read_table(path, ("depth", "temperature"), "thermistor file")
    mask, chosen = _select_time(name, cols, lines, at)
    depth = _numbers(name, cols, lines, "depth")[mask]
    temp = _numbers(name, cols, lines, "temperature")[mask]
    kept_lines = np.asarray(lines)[mask]
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
    name, cols, lines, _ = _read_table(path, ("depth_top", "depth_bottom", "salinity"), "ice-core file")
    mask, chosen = _select_time(name, cols, lines, at)
    top = _numbers(name, cols, lines, "depth_top")[mask]
    bot = _numbers(name, cols, lines, "depth_bottom")[mask]
    sal = _numbers(name, cols, lines, "salinity")[mask]
    ln = np.asarray(lines)[mask]
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


def initial_profile(ice_thickness: float, thermistor: ThermistorReading | None = None,
                    core: CoreReading | None = None) -> tuple[InitialProfile, list[str]]:
    """Build the model's initial profile and a list of notes saying what was used.

    Temperature: thermistor readings inside the ice (the model interpolates them to its
    layers and holds them constant beyond the first and last sensor), else ``None`` (the
    model's default linear profile).  Salinity: core sections at their mid-depths, else
    the uniform :func:`first_year_salinity` of this thickness.
    """
    notes = []
    prof = InitialProfile()
    if thermistor is not None:
        prof.depth = np.asarray(thermistor.depth, float)
        prof.temperature = np.asarray(thermistor.temperature, float)
        notes.append(thermistor.summary())
    else:
        notes.append("temperature: model default (linear from the surface to the freezing point)")
    if core is not None:
        prof.salinity_depth = np.asarray(core.depth, float)
        prof.salinity = np.asarray(core.salinity, float)
        notes.append(f"{core.source}: salinity from {core.depth.size} core sections")
    else:
        s = first_year_salinity(ice_thickness)
        prof.salinity_depth = np.array([0.0, max(ice_thickness, 1e-3)])
        prof.salinity = np.array([s, s])
        notes.append(f"salinity: uniform {s:.2f} g/kg, first-year depth-mean for {ice_thickness:g} m "
                     f"({FIRST_YEAR_SALINITY_SOURCE})")
    return prof, notes
