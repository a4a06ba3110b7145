"""Forcing: CSV and CF NetCDF readers and an in-memory constructor.

A forcing file is either UTF-8 CSV or CF NetCDF (see :func:`read_forcing_netcdf`).
A CSV file has optional leading comment lines starting with ``#`` (the first is
kept as the title), one header row, then one row per time.

==========================  ===========  ==========================================
column                      units        meaning
==========================  ===========  ==========================================
``time`` (required)         ISO          ISO 8601; no offset = UTC; ``Z``/``+02:00`` honoured
``air_temperature`` (req.)  degC         air temperature near the surface
``surface_temperature``     degC         ice or snow surface temperature
``ocean_heat_flux``         W m-2        heat flux from the ocean into the ice base,
                                         positive upward
``wind_speed``              m s-1        wind speed near the surface, >= 0
``relative_humidity``       %            relative humidity *with respect to liquid
                                         water* (also below 0 degC, as station
                                         hygrometers report it); 100-105 % is
                                         clipped to 100 % with a warning
``shortwave_down``          W m-2        downwelling shortwave radiation, >= 0
``longwave_down``           W m-2        downwelling longwave radiation, >= 0
``cloud_fraction``          1            cloud cover as a fraction in [0, 1]
``snow_thickness``          m            measured snow depth on the ice, >= 0
``snowfall``                kg m-2 s-1   snowfall rate as water equivalent, >= 0
``ocean_temperature``       degC         ocean temperature below the ice or open water
                                         (decides refreeze; gives the ocean heat flux
                                         when there is no ``ocean_heat_flux`` column)
``albedo``                  1            measured broadband surface albedo (replaces the
                                         model's albedos; a radiometer pair)
``sensible_heat_flux``      W m-2        measured sensible heat flux toward the surface
                                         (replaces the bulk formula)
``latent_heat_flux``        W m-2        measured latent heat flux toward the surface
                                         (replaces the bulk formula)
==========================  ===========  ==========================================

All columns but ``time`` and ``air_temperature`` are optional.  Other columns
are ignored (their names go to ``attrs["ignored_columns"]``).

Units in the header
-------------------
A header cell may declare its column's unit in brackets, e.g. ``air_temperature [K]``,
``relative_humidity [1]``, ``snowfall [mm h-1]`` or ``snow_thickness [cm]``; the values
are converted to the units above with the table the NetCDF reader uses
(:data:`UNITS`).  A column without a declared unit is in the units above.  Because a
wrong guess would go unnoticed, two undeclared columns are checked: relative humidity
whose values are all between 0 and 1 is an error (a fraction? declare ``[1]``), and an
air or surface temperature with most values above +20 degC is warned as probably
Fahrenheit (declare ``[degF]``, or ``[degC]`` to confirm).  A value outside the range in
kelvin or Fahrenheit territory gets the same hint.

Gaps
----
An empty cell, or a time step longer than 1.5 times the file's median step
("missing rows"), is a gap.  A gap is bridged by linear interpolation in time
between the last value before it and the first value after it, provided that
interval is at most ``max_gap`` (default ``"6h"``, also ``[forcing] max_gap``);
a longer gap is an :class:`~icecolumn.errors.InputError` naming the column and
the period.  Missing rows are not inserted: every consumer of a forcing
Dataset takes values as linear in time between rows, which already is the
linear fill.  Filled gaps are reported once per read as a
:class:`ForcingWarning` and counted in ``attrs["gaps_filled"]`` (each run of
empty cells in one column counts once, each over-long time step counts once)
with the longest bridged interval in ``attrs["longest_gap_filled"]`` [s].
An empty cell in the first or last row of a column cannot be interpolated and
is an error; an optional column that is entirely empty is left out with a
warning.  Texts such as ``nan`` or ``inf`` are errors, not gaps.

Both readers and :func:`forcing_from_arrays` return the same
:class:`xarray.Dataset`: coordinate ``time`` (``datetime64[ns]``, naive UTC,
strictly increasing), float64 variables (finite, in the units above) with
``units`` and ``long_name``.  Every problem is an
:class:`~icecolumn.errors.InputError` whose one-line message names the file
and the physical line (1-based) or the variable.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import math
import re
import warnings
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

import numpy as np
import xarray as xr

from .errors import InputError
from .textfile import read_csv, read_user_bytes
from .timeutil import format_duration, format_time, parse_duration, parse_times

__all__ = [
    "VARIABLES",
    "CF_STANDARD_NAMES",
    "UNITS",
    "NETCDF_UNITS",
    "unit_conversion",
    "ForcingWarning",
    "read_forcing",
    "read_forcing_netcdf",
    "forcing_from_arrays",
    "repeat_forcing",
    "DEFAULT_MAX_GAP",
]

#: Longest gap bridged by linear interpolation unless told otherwise.
DEFAULT_MAX_GAP = "6h"
#: A time step longer than this times the median step is a gap (missing rows).
GAP_STEP_FACTOR = 1.5


class ForcingWarning(UserWarning):
    """Something in a forcing file was repaired (gaps filled, values clipped)."""


#: Forcing variables other than ``time``: CF attributes and the plausible range
#: checked on input (common practice, no source: Earth's recorded air
#: temperatures lie within about -90..+57 degC; the ocean heat-flux range is a
#: generous bound around the few to tens of W m-2 reported under sea ice; the
#: other upper bounds are generous physical limits: wind 120 m s-1, the
#: top-of-atmosphere solar constant of about 1361 W m-2 for shortwave, 10 m of
#: snow, 0.1 kg m-2 s-1 = 360 mm per hour of water-equivalent snowfall).
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
    "wind_speed": {
        "attrs": {"units": "m s-1", "long_name": "wind speed", "standard_name": "wind_speed"},
        "range": (0.0, 120.0),
        "required": False,
    },
    "relative_humidity": {
        "attrs": {"units": "%", "long_name": "relative humidity with respect to liquid water",
                  "standard_name": "relative_humidity"},
        "range": (0.0, 105.0),  # 100..105 clipped to 100 with a warning
        "required": False,
    },
    "shortwave_down": {
        "attrs": {"units": "W m-2", "long_name": "downwelling shortwave radiation at the surface",
                  "standard_name": "surface_downwelling_shortwave_flux_in_air"},
        "range": (0.0, 1500.0),
        "required": False,
    },
    "longwave_down": {
        "attrs": {"units": "W m-2", "long_name": "downwelling longwave radiation at the surface",
                  "standard_name": "surface_downwelling_longwave_flux_in_air"},
        "range": (0.0, 1000.0),
        "required": False,
    },
    "cloud_fraction": {
        "attrs": {"units": "1", "long_name": "cloud cover fraction", "standard_name": "cloud_area_fraction"},
        "range": (0.0, 1.0),
        "required": False,
    },
    "snow_thickness": {
        "attrs": {"units": "m", "long_name": "measured snow depth on the ice",
                  "standard_name": "surface_snow_thickness"},
        "range": (0.0, 10.0),
        "required": False,
    },
    "snowfall": {
        "attrs": {"units": "kg m-2 s-1", "long_name": "snowfall rate (water equivalent)",
                  "standard_name": "snowfall_flux"},
        "range": (0.0, 0.1),
        "required": False,
    },
    "ocean_temperature": {
        "attrs": {"units": "degC", "long_name": "ocean temperature just below the ice or the open water surface",
                  "standard_name": "sea_water_temperature"},
        "range": (-3.0, 35.0),
        "required": False,
    },
    "albedo": {
        "attrs": {"units": "1", "long_name": "surface albedo (measured)", "standard_name": "surface_albedo"},
        "range": (0.0, 1.0),
        "required": False,
    },
    "sensible_heat_flux": {
        "attrs": {"units": "W m-2", "long_name": "sensible heat flux toward the surface (measured)",
                  "standard_name": "surface_downward_sensible_heat_flux"},
        "range": (-500.0, 500.0),
        "required": False,
    },
    "latent_heat_flux": {
        "attrs": {"units": "W m-2", "long_name": "latent heat flux toward the surface (measured)",
                  "standard_name": "surface_downward_latent_heat_flux"},
        "range": (-500.0, 500.0),
        "required": False,
    },
}

#: Relative humidity above 100 % up to this value is clipped to 100 % with a warning
#: (common practice, no source: hygrometers read a few percent high near saturation).
RH_CLIP_LIMIT = 105.0

#: Our variable name -> CF standard names accepted for it by :func:`read_forcing_netcdf`
#: (first is preferred).
CF_STANDARD_NAMES: dict[str, tuple[str, ...]] = {
    "time": ("time",),
    "air_temperature": ("air_temperature",),
    "surface_temperature": ("surface_temperature", "sea_ice_surface_temperature"),
    "ocean_heat_flux": ("upward_sea_ice_basal_heat_flux",),
    "wind_speed": ("wind_speed",),
    "relative_humidity": ("relative_humidity",),
    "shortwave_down": ("surface_downwelling_shortwave_flux_in_air", "surface_downwelling_shortwave_flux"),
    "longwave_down": ("surface_downwelling_longwave_flux_in_air", "surface_downwelling_longwave_flux"),
    "cloud_fraction": ("cloud_area_fraction",),
    "snow_thickness": ("surface_snow_thickness",),
    "snowfall": ("snowfall_flux",),
    "ocean_temperature": ("sea_water_temperature", "sea_surface_temperature"),
    "albedo": ("surface_albedo",),
    "sensible_heat_flux": ("surface_downward_sensible_heat_flux",),
    "latent_heat_flux": ("surface_downward_latent_heat_flux",),
}

_TEMPERATURE_UNITS = {
    "K": (1.0, -273.15), "kelvin": (1.0, -273.15), "degK": (1.0, -273.15),
    **{u: (1.0, 0.0) for u in ("degC", "deg_C", "degreeC", "degree_C", "degrees_C", "Celsius", "celsius",
                               "degree_Celsius", "degrees_Celsius", "°C")},
    **{u: (5.0 / 9.0, -32.0 * 5.0 / 9.0) for u in ("degF", "deg_F", "degree_F", "degrees_F", "Fahrenheit",
                                                     "fahrenheit", "degree_Fahrenheit", "degrees_Fahrenheit", "°F")},
}
_HEAT_FLUX_UNITS = {u: (1.0, 0.0) for u in ("W m-2", "W m^-2", "W m**-2", "W/m2", "W/m^2", "W.m-2", "W m-2")}

#: Our variable name -> {units text: (scale, offset)}: our value = file value * scale +
#: offset.  The one conversion table of both readers: the ``units`` attribute of a NetCDF
#: variable and the unit a CSV header declares in brackets (``air_temperature [K]``).
#: Internal white space in the text is collapsed before the look-up; any other text is an
#: error (:func:`unit_conversion`).
UNITS: dict[str, dict[str, tuple[float, float]]] = {
    "air_temperature": _TEMPERATURE_UNITS,
    "surface_temperature": _TEMPERATURE_UNITS,
    "ocean_temperature": _TEMPERATURE_UNITS,
    "ocean_heat_flux": _HEAT_FLUX_UNITS,
    "shortwave_down": _HEAT_FLUX_UNITS,
    "longwave_down": _HEAT_FLUX_UNITS,
    "wind_speed": {u: (1.0, 0.0) for u in ("m s-1", "m s^-1", "m s**-1", "m/s", "m.s-1")},
    "relative_humidity": {"%": (1.0, 0.0), "percent": (1.0, 0.0), "1": (100.0, 0.0)},
    "cloud_fraction": {"1": (1.0, 0.0), "%": (0.01, 0.0), "percent": (0.01, 0.0)},
    "snow_thickness": {"m": (1.0, 0.0), "cm": (0.01, 0.0), "mm": (0.001, 0.0)},
    "albedo": {"1": (1.0, 0.0), "%": (0.01, 0.0), "percent": (0.01, 0.0)},
    "sensible_heat_flux": _HEAT_FLUX_UNITS,
    "latent_heat_flux": _HEAT_FLUX_UNITS,
    "snowfall": {
        **{u: (1.0, 0.0) for u in ("kg m-2 s-1", "kg m^-2 s^-1", "kg m**-2 s**-1", "kg/m2/s", "kg/m^2/s",
                                   "mm s-1", "mm/s")},
        **{u: (1.0 / 3600.0, 0.0) for u in ("mm h-1", "mm hr-1", "mm/h", "mm/hr", "kg m-2 h-1")},
    },
}
#: The same table under its earlier name (NetCDF ``units`` attributes).
NETCDF_UNITS = UNITS


def unit_conversion(var: str, units: str) -> tuple[float, float] | None:
    """(scale, offset) turning values of ``var`` in ``units`` into ours (value * scale + offset),
    or None when :data:`UNITS` does not know the text (white space collapsed first)."""
    return UNITS[var].get(" ".join(str(units).split()))


_TIME_ATTRS = {"standard_name": "time", "long_name": "time (UTC)"}
# Values in this range on a degC column were probably written in kelvin.
_KELVIN_HINT_RANGE = (180.0, 330.0)
# Values above the degC range up to this were probably written in Fahrenheit (+50 degC is 122 degF).
_FAHRENHEIT_HINT_RANGE = (50.0, 180.0)
NETCDF_SUFFIXES = (".nc", ".nc4", ".cdf", ".netcdf")
_NETCDF_SIGNATURES = (b"CDF\x01", b"CDF\x02", b"CDF\x05", b"\x89HDF\r\n\x1a\n")
# datetime64[ns] holds years 1678..2261; numpy wraps silently outside.
_YEAR = re.compile(r"\s*([0-9]{4})")
_YEAR_RANGE = (1678, 2261)


def _names(items) -> str:
    return ", ".join(repr(i) for i in items) or "none"


def _unit_text(unit: str) -> str:
    return "" if unit == "1" else f" {unit}"


def _max_gap_seconds(max_gap: Any, name: str) -> float:
    """``max_gap`` as seconds: a number of seconds (>= 0) or a duration text."""
    if isinstance(max_gap, str):
        try:
            return parse_duration(max_gap)
        except InputError as err:
            raise InputError(f"{name}: max_gap: {err}") from None
    if isinstance(max_gap, bool) or not isinstance(max_gap, (int, float, np.integer, np.floating)):
        raise InputError(f"{name}: max_gap: expected seconds or a duration text such as '6h', got {max_gap!r}")
    seconds = float(max_gap)
    if not math.isfinite(seconds) or seconds < 0.0:
        raise InputError(f"{name}: max_gap: must be a finite number of seconds >= 0, got {max_gap!r}")
    return seconds


def is_netcdf(path) -> bool:
    """True for a NetCDF file: by suffix, or by the NetCDF-3 / HDF5 signature of its first bytes."""
    path = Path(path)
    if path.suffix.lower() in NETCDF_SUFFIXES:
        return True
    try:
        with open(path, "rb") as fh:
            head = fh.read(8)
    except OSError:
        return False
    return head.startswith(_NETCDF_SIGNATURES)


# --------------------------------------------------------------------------- CSV


def read_forcing(
    path: str | Path, column_map: Mapping[str, str] | None = None, max_gap: str | float = DEFAULT_MAX_GAP
) -> xr.Dataset:
    """Read a forcing file (CSV, or CF NetCDF by suffix or file signature).

    Parameters
    ----------
    path : str or pathlib.Path
        The CSV file (see the module docstring for its layout), or a NetCDF file
        (suffix ``.nc``/``.nc4``/``.cdf``/``.netcdf`` or a NetCDF/HDF5 signature),
        read by :func:`read_forcing_netcdf`. [1]
    column_map : dict, optional
        Our variable name -> the file's column (or NetCDF variable) name, e.g.
        ``{"air_temperature": "Tair_C"}``; the named column must exist (its name
        without a unit declared in brackets). [1]
    max_gap : str or float, optional
        Longest gap bridged by linear interpolation: a duration text such as
        ``"6h"`` or a number of seconds (0 fills no gap). [s]

    Returns
    -------
    forcing : xarray.Dataset
        ``time`` coordinate [UTC]; ``air_temperature`` [degC] and the optional
        variables found (units in the module docstring).  Attributes
        ``source_file`` (path as given), ``sha256`` (of the file bytes), ``title``
        (first comment line), ``ignored_columns`` (comma-separated),
        ``source_columns`` (``ours=theirs`` pairs), ``gaps_filled`` (count) and
        ``longest_gap_filled`` [s].

    Raises
    ------
    InputError
        ``"<file>: line <n>: <problem>"`` for anything wrong with the file.

    Warns
    -----
    ForcingWarning
        When gaps were filled, relative humidity was clipped or an undeclared
        temperature column looks like Fahrenheit.
    """
    name = str(path)
    if is_netcdf(path):
        return read_forcing_netcdf(path, column_map, max_gap=max_gap)
    gap_s = _max_gap_seconds(max_gap, name)
    table = read_csv(path, "forcing file")
    names, declared = _header_units(table.header, name, table.header_line)
    given = {ours: _HEADER_UNIT.sub("", theirs).strip() if theirs not in names else theirs
             for ours, theirs in (column_map or {}).items()}
    file_col = _resolve_columns(names, given, name, table.header_line)
    text_of = dict(zip(names, table.header))  # the header cell as written, units and all
    ignored = [text_of[c] for c in names if c not in file_col.values()]

    def label(i: int) -> str:
        return f"line {table.lines[i]}"

    time_col = text_of[file_col["time"]]
    time_texts = table.column(time_col)
    for i, t in enumerate(time_texts):
        if not t:
            raise InputError(f"{name}: {label(i)}: column {time_col!r} is empty")
    times = parse_times(time_texts, lambda i: f"{label(i)}: column {time_col!r}", name)
    _check_years(time_texts, name, label, f"column {time_col!r}")
    data = {var: table.numbers(text_of[file_col[var]], empty_is_gap=True) for var in VARIABLES if var in file_col}
    where = {var: f"column {text_of[file_col[var]]!r}" + (f" ({var})" if file_col[var] != var else "")
             for var in data}
    units_of = {var: declared[file_col[var]] for var in data if file_col[var] in declared}
    for var, unit in units_of.items():
        conversion = unit_conversion(var, unit)
        if conversion is None:
            distinct = {}
            for u, c in UNITS[var].items():  # one spelling of each conversion
                distinct.setdefault(c, u)
            raise InputError(f"{name}: line {table.header_line}: {where[var]}: unit [{unit}] is not known for "
                             f"{var}; declare one of {', '.join(f'[{u}]' for u in distinct.values())} (no unit: "
                             f"{VARIABLES[var]['attrs']['units']})")
        scale, offset = conversion
        if scale != 1.0 or offset != 0.0:
            data[var] = data[var] * scale + offset
    _check_undeclared_units(data, units_of, where, name, label, table.header_line)
    attrs = {
        "source_file": name,
        "sha256": hashlib.sha256(table.raw).hexdigest(),
        "title": table.comments[0] if table.comments else "",
        "ignored_columns": ",".join(ignored),
        "source_columns": ",".join(f"{v}={text_of[file_col[v]]}" for v in ("time", *data)),
    }
    return _build_dataset(times, data, attrs, name, label, where, gap_s, declared=set(units_of))


#: A unit declared at the end of a CSV header cell: ``air_temperature [K]``.
_HEADER_UNIT = re.compile(r"\s*\[([^\[\]]*)\]\s*$")
#: Undeclared relative humidity whose values are all at most this is taken for a fraction.
RH_FRACTION_LIMIT = 1.0
#: An undeclared air or surface temperature column with more than this fraction of its values
#: above :data:`FAHRENHEIT_HINT_TEMPERATURE` [degC] is warned as probably Fahrenheit (common
#: practice, no source: air over growing sea ice is rarely above +20 degC, while -6.7 degC is
#: +20 degF).
FAHRENHEIT_HINT_FRACTION = 0.5
FAHRENHEIT_HINT_TEMPERATURE = 20.0
_TEMPERATURE_VARIABLES = ("air_temperature", "surface_temperature")


def _header_units(header: list[str], name: str, header_no: int) -> tuple[list[str], dict[str, str]]:
    """Column names without their declared units, and {name: unit text} of the declared ones."""
    names: list[str] = []
    declared: dict[str, str] = {}
    for cell in header:
        m = _HEADER_UNIT.search(cell)
        base = cell[: m.start()].strip() if m else cell
        if not base:
            raise InputError(f"{name}: line {header_no}: header column {cell!r} has a unit but no name")
        if base in names:
            raise InputError(f"{name}: line {header_no}: column {base!r} appears twice ({header[names.index(base)]!r} "
                             f"and {cell!r})")
        names.append(base)
        if m:
            declared[base] = " ".join(m.group(1).split())
    return names, declared


def _check_undeclared_units(data: dict[str, np.ndarray], units_of: dict[str, str], where: Mapping[str, str],
                            name: str, label: Callable[[int], str], header_no: int) -> None:
    """Columns without a declared unit whose values look like another unit: relative humidity
    that is all <= 1 (a fraction) is an error; air or surface temperature mostly above +20
    (Fahrenheit) is a warning.  Each message says how to declare the unit in the header."""
    rh = data.get("relative_humidity")
    if rh is not None and "relative_humidity" not in units_of:
        valid = rh[np.isfinite(rh)]
        if valid.size and valid.max() <= RH_FRACTION_LIMIT and valid.min() >= 0.0:
            raise InputError(
                f"{name}: line {header_no}: {where['relative_humidity']}: every value is between 0 and "
                f"{RH_FRACTION_LIMIT:g} (largest {valid.max():g}): a fraction, not %? Declare the unit in the header: "
                "'relative_humidity [1]' for a fraction (or 'relative_humidity [%]' if these are percent)")
    for var in _TEMPERATURE_VARIABLES:
        values = data.get(var)
        if values is None or var in units_of:
            continue
        valid = values[np.isfinite(values)]
        warm = valid > FAHRENHEIT_HINT_TEMPERATURE
        if valid.size and warm.mean() > FAHRENHEIT_HINT_FRACTION and valid.max() <= VARIABLES[var]["range"][1]:
            first = int(np.flatnonzero(np.isfinite(values))[int(np.flatnonzero(warm)[0])])
            warnings.warn(
                f"{name}: {where[var]}: {100 * warm.mean():.0f} % of the values are above "
                f"+{FAHRENHEIT_HINT_TEMPERATURE:g} degC (median {np.median(valid):.1f}, first on {label(first)}): is the "
                f"file in Fahrenheit? Declare the unit in the header: '{var} [degF]' (or '{var} [degC]' if these "
                "are degrees Celsius)", ForcingWarning, stacklevel=3)


def _shown(column: str, var: str) -> str:
    return f"{column!r}" + (f" ({var})" if column != var else "")


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


def _check_years(texts: list[str], name: str, label: Callable[[int], str], what: str) -> None:
    lo, hi = _YEAR_RANGE
    for i, t in enumerate(texts):
        m = _YEAR.match(t)
        if m and not lo <= int(m.group(1)) <= hi:
            raise InputError(f"{name}: {label(i)}: {what}: {t!r}: year outside the supported {lo}..{hi}")


# --------------------------------------------------------------------------- shared checks and gap filling


def _build_dataset(
    times: np.ndarray,
    data: dict[str, np.ndarray],
    attrs: dict[str, Any],
    name: str,
    label: Callable[[int], str],
    where: Mapping[str, str],
    max_gap: float | None,
    declared: set[str] | None = None,
) -> xr.Dataset:
    """Check times and values, fill gaps (``max_gap`` seconds; ``None``: NaN is an error).

    ``declared``: the variables whose unit the file declared (a CSV header unit); an
    out-of-range value of another degC column gets a hint to declare its unit.  ``None``:
    every unit was given (NetCDF) or there is no header (arrays)."""
    n = times.size
    if n < 2:
        raise InputError(f"{name}: only {n} data row{'s' if n != 1 else ''}; at least 2 are needed")
    tint = times.astype("int64")
    steps = np.diff(tint)
    bad = np.flatnonzero(steps <= 0)
    if bad.size:
        k = int(bad[0]) + 1
        if steps[k - 1] == 0:
            raise InputError(f"{name}: {label(k)}: duplicate time {format_time(times[k])} (also on {label(k - 1)})")
        raise InputError(
            f"{name}: {label(k)}: time {format_time(times[k])} is not after {format_time(times[k - 1])} "
            f"on {label(k - 1)}; times must be strictly increasing"
        )
    notes: list[str] = []
    gaps: list[tuple[float, int, int, str]] = []  # (seconds, first index, last index, where)
    if max_gap is not None:
        typical = float(np.median(steps))
        for k in np.flatnonzero(steps > GAP_STEP_FACTOR * typical):
            k = int(k)
            seconds = steps[k] / 1e9
            if seconds > max_gap:
                raise InputError(
                    f"{name}: {label(k)}: no rows from {format_time(times[k])} to {format_time(times[k + 1])} "
                    f"({label(k + 1)}) in any column: a gap of {format_duration(seconds)}, longer than "
                    f"max_gap = {format_duration(max_gap) if max_gap else '0s'} (median step "
                    f"{format_duration(typical / 1e9)})"
                )
            gaps.append((seconds, k, k + 1, "every column"))
    variables = {}
    tsec = (tint - tint[0]) / 1e9
    for var, values in data.items():
        spec = VARIABLES[var]
        shown = where.get(var, f"column {var!r}")
        unit = spec["attrs"]["units"]
        gap = np.isnan(values) if max_gap is not None else np.zeros(n, dtype=bool)
        finite = np.isfinite(values)
        if not (finite | gap).all():
            i = int(np.flatnonzero(~(finite | gap))[0])
            raise InputError(f"{name}: {label(i)}: {shown}: {float(values[i])!r} is not a finite number")
        valid = np.flatnonzero(~gap)
        if valid.size == 0:
            if spec["required"]:
                raise InputError(f"{name}: {shown} has no values")
            notes.append(f"{name}: {shown} has no values; left out")
            continue
        lo, hi = spec["range"]
        outside = ~gap & ((values < lo) | (values > hi))
        if outside.any():
            i = int(np.flatnonzero(outside)[0])
            hint = ""
            header = declared is not None and var not in declared
            if unit == "degC" and _KELVIN_HINT_RANGE[0] <= values[i] <= _KELVIN_HINT_RANGE[1]:
                hint = f" (is the file in kelvin? declare the unit in the header: '{var} [K]')" if header else \
                    " (is the file in kelvin?)"
            elif unit == "degC" and header and _FAHRENHEIT_HINT_RANGE[0] < values[i] <= _FAHRENHEIT_HINT_RANGE[1]:
                hint = f" (is the file in Fahrenheit? declare the unit in the header: '{var} [degF]')"
            if var == "relative_humidity":
                hint = f" (up to {RH_CLIP_LIMIT:g} % is clipped to 100 %)"
            u = _unit_text(unit)
            raise InputError(f"{name}: {label(i)}: {shown}: {values[i]:g}{u} is outside {lo:g}..{hi:g}{u}{hint}")
        if var == "relative_humidity":
            high = ~gap & (values > 100.0)
            if high.any():
                i = int(np.flatnonzero(high)[0])
                notes.append(
                    f"{name}: {shown}: {int(high.sum())} value{'s' if high.sum() != 1 else ''} between 100 and "
                    f"{RH_CLIP_LIMIT:g} % clipped to 100 % (first on {label(i)}: {values[i]:g} %)"
                )
                values = np.where(high, 100.0, values)
        if gap.any():
            if gap[0]:
                raise InputError(
                    f"{name}: {label(0)}: {shown} is empty at the start of the file (up to {label(int(valid[0]) - 1)}); "
                    "a gap can only be filled between two values"
                )
            if gap[-1]:
                raise InputError(
                    f"{name}: {label(int(valid[-1]) + 1)}: {shown} is empty from here to the end of the file "
                    f"({label(n - 1)}); a gap can only be filled between two values"
                )
            jumps = np.flatnonzero(np.diff(valid) > 1)
            for j in jumps:
                a, b = int(valid[j]), int(valid[j + 1])
                seconds = (tint[b] - tint[a]) / 1e9
                if seconds > max_gap:
                    raise InputError(
                        f"{name}: {label(a + 1)}: {shown}: no value from {format_time(times[a])} ({label(a)}) to "
                        f"{format_time(times[b])} ({label(b)}): a gap of {format_duration(seconds)}, longer than "
                        f"max_gap = {format_duration(max_gap) if max_gap else '0s'}"
                    )
                gaps.append((seconds, a, b, shown))
            values = values.copy()
            values[gap] = np.interp(tsec[gap], tsec[valid], values[valid])
        variables[var] = ("time", values.astype(np.float64, copy=False), dict(spec["attrs"]))
    if gaps:
        longest = max(gaps, key=lambda g: g[0])
        count = len(gaps)
        notes.insert(0, (
            f"{name}: filled {count} gap{'s' if count != 1 else ''} by linear interpolation in time (longest "
            f"{format_duration(longest[0])}, {format_time(times[longest[1]])} to {format_time(times[longest[2]])} "
            f"in {longest[3]}; max_gap = {format_duration(max_gap)})"
        ))
    attrs = dict(attrs)
    attrs["gaps_filled"] = len(gaps)
    attrs["longest_gap_filled"] = float(max((g[0] for g in gaps), default=0.0))
    for note in notes:
        warnings.warn(note, ForcingWarning, stacklevel=3)
    return xr.Dataset(variables, coords={"time": ("time", times, dict(_TIME_ATTRS))}, attrs=attrs)


# --------------------------------------------------------------------------- CF NetCDF


def read_forcing_netcdf(
    path: str | Path, column_map: Mapping[str, str] | None = None, max_gap: str | float = DEFAULT_MAX_GAP
) -> xr.Dataset:
    """Read a CF NetCDF forcing file into the same Dataset as the CSV reader.

    Each of our variables is the file's variable whose ``standard_name`` is one
    of :data:`CF_STANDARD_NAMES` (or the variable named by ``column_map``).
    Values are converted from the ``units`` attribute with :data:`UNITS`:
    temperatures in ``K``, ``degC`` (also ``Celsius``, ``deg_C``, ...) or ``degF``;
    relative humidity in ``%`` or ``1`` (fraction, times 100); cloud fraction in
    ``1`` (a missing ``units`` is taken as ``1``) or ``%`` (divided by 100); snow
    depth in ``m``, ``cm`` or ``mm``; radiative and ocean heat fluxes in
    ``W m-2``; wind in ``m s-1``; snowfall in ``kg m-2 s-1`` (``mm s-1`` is the
    same for water) or ``mm h-1`` (divided by 3600).  The CSV reader converts a unit
    declared in a header (``air_temperature [K]``) with the same table.  Fill values (decoded to
    NaN by xarray) are gaps, filled as in the CSV reader.  Time is decoded by
    xarray from its CF ``units``; it must be one dimension and a standard
    calendar.  Variables may have extra dimensions of length 1 (e.g. a station).

    Parameters
    ----------
    path : str or pathlib.Path
        The NetCDF file (NetCDF-3 or NetCDF-4). [1]
    column_map : dict, optional
        Our variable name -> the file's variable name, used instead of the
        ``standard_name`` search (also ``"time"``). [1]
    max_gap : str or float, optional
        Longest gap bridged by linear interpolation (text or seconds). [s]

    Returns
    -------
    forcing : xarray.Dataset
        As :func:`read_forcing`; ``title`` is the global ``title`` attribute,
        ``ignored_columns`` the data variables not read, ``source_columns`` the
        ``ours=variable`` pairs and ``sha256`` the digest of the file bytes.

    Raises
    ------
    InputError
        One line naming the file and the variable, standard name or units.
    """
    name = str(path)
    gap_s = _max_gap_seconds(max_gap, name)
    raw = read_user_bytes(path, "forcing file")
    known = tuple(CF_STANDARD_NAMES)
    for ours in column_map or {}:
        if ours not in known:
            raise InputError(f"{name}: column_map: unknown variable {ours!r}; known variables: {_names(known)}")
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            ds = xr.open_dataset(path, decode_times=True, mask_and_scale=True)
            ds.load()
    except Exception as err:  # noqa: BLE001 - any failure of the NetCDF stack is a bad file
        message = " ".join(str(err).split())[:200]
        raise InputError(f"{name}: not a readable NetCDF file ({type(err).__name__}: {message})") from None
    with ds:
        return _from_netcdf(ds, raw, name, dict(column_map or {}), gap_s)


def _find_variable(ds: xr.Dataset, ours: str, column_map: dict[str, str], name: str, required: bool) -> str | None:
    everything = list(ds.variables)
    if ours in column_map:
        theirs = column_map[ours]
        if theirs not in ds.variables:
            raise InputError(f"{name}: column_map names variable {theirs!r} for {ours!r}, but the file has no such "
                             f"variable; variables found: {_names(everything)}")
        return theirs
    accepted = CF_STANDARD_NAMES[ours]
    hits = [v for v in everything if str(ds[v].attrs.get("standard_name", "")).strip() in accepted]
    if ours == "time" and not hits:
        hits = [v for v in ds.coords if str(ds[v].attrs.get("axis", "")).upper() == "T"]
        if not hits and "time" in ds.variables:
            hits = ["time"]
    if len(hits) > 1:
        raise InputError(f"{name}: variables {_names(hits)} all have standard_name "
                         f"{' or '.join(repr(a) for a in accepted)}; choose one with a column_map ({ours}=NAME)")
    if not hits:
        if required:
            raise InputError(f"{name}: no variable with standard_name {' or '.join(repr(a) for a in accepted)} "
                             f"for {ours}; variables found: {_names(everything)} (a column_map can name one)")
        return None
    return hits[0]


def _from_netcdf(ds: xr.Dataset, raw: bytes, name: str, column_map: dict[str, str], max_gap: float) -> xr.Dataset:
    tvar = _find_variable(ds, "time", column_map, name, True)
    tda = ds[tvar]
    if tda.ndim != 1:
        raise InputError(f"{name}: time variable {tvar!r} must have one dimension, found dimensions {tda.dims}")
    if tda.dtype.kind != "M":
        raise InputError(f"{name}: time variable {tvar!r} could not be decoded to dates (units "
                         f"{tda.encoding.get('units', tda.attrs.get('units'))!r}, calendar "
                         f"{tda.encoding.get('calendar', tda.attrs.get('calendar', 'standard'))!r}); "
                         "expected CF units such as 'hours since 2026-10-01 00:00:00' and a standard calendar")
    tdim = tda.dims[0]
    times = tda.values.astype("datetime64[ns]")
    nat = np.isnat(times)
    if nat.any():
        raise InputError(f"{name}: time variable {tvar!r}: time index {int(np.flatnonzero(nat)[0])} is missing")

    def label(i: int) -> str:
        return f"time index {i}"

    data: dict[str, np.ndarray] = {}
    used: dict[str, str] = {}
    for ours, spec in VARIABLES.items():
        theirs = _find_variable(ds, ours, column_map, name, spec["required"])
        if theirs is None:
            continue
        if theirs == tvar or theirs in used.values():
            other = "time" if theirs == tvar else next(o for o, t in used.items() if t == theirs)
            raise InputError(f"{name}: variable {theirs!r} is used for both {ours!r} and {other!r}")
        da = ds[theirs]
        extra = [d for d in da.dims if d != tdim and da.sizes[d] != 1]
        if tdim not in da.dims or extra:
            raise InputError(f"{name}: variable {theirs!r} ({ours}): expected dimension ({tdim!r},) "
                             f"(extra dimensions of length 1 allowed), found {da.dims} with sizes "
                             f"{tuple(da.shape)}")
        da = da.squeeze([d for d in da.dims if d != tdim], drop=True)
        if da.dtype.kind not in "fiu":
            raise InputError(f"{name}: variable {theirs!r} ({ours}): values are not numbers (type {da.dtype})")
        if "units" in da.attrs:
            units = " ".join(str(da.attrs["units"]).split())
        elif ours == "cloud_fraction":
            units = "1"
        else:
            raise InputError(f"{name}: variable {theirs!r} ({ours}) has no units attribute; expected one of "
                             f"{_names(UNITS[ours])}")
        conversion = unit_conversion(ours, units)
        if conversion is None:
            raise InputError(f"{name}: variable {theirs!r} ({ours}): units {units!r} are not known for {ours}; "
                             f"expected one of {_names(UNITS[ours])}")
        scale, offset = conversion
        with np.errstate(all="ignore"):
            values = np.asarray(da.values, dtype=np.float64)
            if scale != 1.0 or offset != 0.0:
                values = values * scale + offset
        data[ours] = values
        used[ours] = theirs
    where = {v: "variable " + _shown(t, v) for v, t in used.items()}
    taken = set(used.values()) | {tvar}
    attrs = {
        "source_file": name,
        "sha256": hashlib.sha256(raw).hexdigest(),
        "title": " ".join(str(ds.attrs.get("title", "")).split()),
        "ignored_columns": ",".join(str(v) for v in ds.data_vars if v not in taken),
        "source_columns": ",".join(f"{v}={t}" for v, t in {"time": tvar, **used}.items()),
    }
    return _build_dataset(times, data, attrs, name, label, where, max_gap)


# --------------------------------------------------------------------------- arrays


def forcing_from_arrays(time: Any, air_temperature: Any, **others: Any) -> xr.Dataset:
    """Build a forcing Dataset in memory, checked like :func:`read_forcing`.

    Arrays get no gap filling: a NaN value is an error.

    Parameters
    ----------
    time : array_like
        ``datetime64`` values (taken as UTC) or ISO 8601 texts (offsets honoured). [UTC]
    air_temperature : array_like
        Air temperature at each time. [degC]
    **others : array_like
        Optional variables of :data:`VARIABLES` in their units (e.g.
        ``surface_temperature`` [degC], ``ocean_heat_flux`` [W m-2],
        ``wind_speed`` [m s-1]); ``None`` values are skipped.

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
    attrs = {"source_file": name, "sha256": digest.hexdigest(), "title": "", "ignored_columns": "",
             "source_columns": ""}
    where = {var: f"column {var!r}" for var in data}
    return _build_dataset(times, data, attrs, name, label, where, None)


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


#: Days of a mean Gregorian year (common practice, no source).
_DAYS_PER_YEAR = 365.2425


def _is_leap(year: np.ndarray) -> np.ndarray:
    return (year % 4 == 0) & ((year % 100 != 0) | (year % 400 == 0))


def _shift_calendar_years(t: np.ndarray, years: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Times ``t`` (datetime64[ns]) moved by whole calendar ``years`` (same month, day and time).

    Returns the shifted times of the rows kept, the indices of those rows, and the indices of
    the rows to copy one day later (source 28 February moved into a leap year the source lacks
    a 29 February for).  A source 29 February that lands in a common year is left out.
    """
    month = t.astype("datetime64[M]")
    into_month = t - month.astype("datetime64[ns]")
    target = month + np.timedelta64(12 * years, "M")
    shifted = target.astype("datetime64[ns]") + into_month
    keep = np.flatnonzero(shifted.astype("datetime64[M]") == target)  # not spilled into March
    year = target.astype("datetime64[Y]").astype(np.int64) + 1970
    source_year = month.astype("datetime64[Y]").astype(np.int64) + 1970
    day = (into_month // np.timedelta64(1, "D")).astype(np.int64) + 1
    is_feb = (target.astype(np.int64) % 12) == 1
    leap_copy = np.flatnonzero(is_feb & (day == 28) & _is_leap(year) & ~_is_leap(source_year))
    return shifted[keep], keep, leap_copy


def repeat_forcing(forcing: xr.Dataset, times: int) -> xr.Dataset:
    """The forcing repeated ``times`` times (for spin-up and multi-year runs), on the calendar.

    A forcing that covers whole calendar years (its last time plus one time step is its
    first time some years later, e.g. hourly from 15 Sep 00:00 to 14 Sep 23:00) is repeated
    on the calendar: each repetition is its dates moved by that many whole calendar years,
    so 1 January stays 1 January and the seasons stay in place.  29 February: a repetition
    in a leap year that the forcing's year has no 29 February for gets one, a copy of 28
    February (24 h more of that day's weather); a 29 February of the forcing that falls in a
    common year is left out.  Any other forcing (a winter season, a few days) is repeated
    end to end with the period of its span plus one time step, as before, with a
    :class:`ForcingWarning` that its dates drift from the calendar.

    Parameters
    ----------
    forcing : xarray.Dataset
        A forcing Dataset from one of the readers.
    times : int
        Number of copies, >= 1.

    Returns
    -------
    xarray.Dataset
        Same variables; ``attrs["repeated"]`` records the count and ``attrs["repeat_mode"]``
        how the copies were placed (and what happened to 29 February).
    """
    if int(times) < 1:
        raise InputError(f"repeat_forcing: times must be at least 1, got {times}")
    t = forcing["time"].values.astype("datetime64[ns]")
    if t.size < 2:
        raise InputError("repeat_forcing: the forcing needs at least two times")
    step = t[-1] - t[-2]
    period = t[-1] - t[0] + step
    years = int(round(period / np.timedelta64(1, "D") / _DAYS_PER_YEAR))
    median_step = np.median(np.diff(t.astype(np.int64)))
    calendar = False
    if years >= 1:
        next_start = _shift_calendar_years(t[:1], years)[0]
        gap = (next_start[0] - t[-1]).astype(np.int64) if next_start.size else -1
        calendar = 0 < gap <= GAP_STEP_FACTOR * median_step
    copies = [forcing]
    leap_added = dropped = 0
    if calendar:
        for i in range(1, int(times)):
            shifted, keep, leap_copy = _shift_calendar_years(t, i * years)
            part = forcing.isel(time=keep).assign_coords(time=shifted)
            dropped += t.size - keep.size
            if leap_copy.size:
                extra = forcing.isel(time=leap_copy)
                extra = extra.assign_coords(time=_shift_calendar_years(t[leap_copy], i * years)[0]
                                            + np.timedelta64(1, "D"))
                part = xr.concat([part, extra], dim="time").sortby("time")
                leap_added += leap_copy.size
            copies.append(part)
        mode = (f"calendar: each repetition {years} calendar year{'s' if years != 1 else ''} after the one before, "
                "on the same dates; a leap year the forcing has no 29 February for gets a copy of 28 February, "
                "and a 29 February of the forcing in a common year is left out")
        if leap_added or dropped:
            mode += f" ({leap_added} rows added as 29 February, {dropped} rows of 29 February left out)"
    else:
        for i in range(1, int(times)):
            copies.append(forcing.assign_coords(time=t + i * period))
        days = period / np.timedelta64(1, "D")
        mode = f"end to end: period {days:g} days (the forcing's span plus one time step)"
        if int(times) > 1:
            warnings.warn(
                f"{forcing.attrs.get('source_file', 'forcing')}: --repeat: the forcing ({format_time(t[0])} to "
                f"{format_time(t[-1])}) does not cover whole calendar years, so its {int(times)} repetitions follow "
                f"end to end every {days:g} days and their dates drift from the calendar", ForcingWarning,
                stacklevel=2)
    out = xr.concat(copies, dim="time") if len(copies) > 1 else copies[0]
    out.attrs = dict(forcing.attrs)
    out.attrs["repeated"] = int(times)
    out.attrs["repeat_mode"] = mode
    return out
