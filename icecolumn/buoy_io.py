"""Thermistor-string (ice mass-balance buoy) files: readers and the writers of ``icecolumn buoy``.

Buoy record, CSV
----------------
UTF-8 CSV with ``#`` comment lines at the top, one header row and one row per profile::

    # INVENTED DATA: ...                       (free comment lines)
    # first_sensor_depth: -0.80 m
    # sensor_spacing: 0.02 m
    time,snow_surface,ice_bottom,T1,T2,...,T116
    2026-11-15T00:00Z,-0.132,0.427,-24.81,...

=========================  =====  ========================================================
item                       units  meaning
=========================  =====  ========================================================
``# first_sensor_depth:``  m      depth of sensor ``T1`` (required); depths are positive
                                  down from the ice surface at deployment (negative: above
                                  it, in snow or air); ``cm`` is accepted too
``# sensor_spacing:``      m      distance between neighbouring sensors (required, > 0)
``# missing_value:``       degC   optional: a number that marks a missing reading
``time`` (required)        ISO    ISO 8601; no offset = UTC; strictly increasing
``T1`` .. ``Tn`` (req.)    degC   sensor temperatures, ``T1`` the top sensor, numbered
                                  without gaps; an empty cell is a missing reading
``snow_surface``,          m      optional measured interface depths (acoustic sounders,
``ice_surface``,                  same depth coordinate); an empty cell: not measured
``ice_bottom``                    then
=========================  =====  ========================================================

Missing readings are kept as missing: a sensor without any reading is reported as dead,
one with some missing readings as partly missing (``sensor_flag``), and time steps longer
than 1.5 times the median step are reported as gaps.  Nothing is interpolated here.

Buoy record, CF NetCDF
----------------------
A variable ``temperature`` (``time`` x a sensor dimension) in ``degC`` or ``K``, a depth
coordinate on the sensor dimension in ``m`` or ``cm`` (attribute ``positive``: ``down``, the
default, or ``up``, which is turned into down), and optionally ``snow_surface``,
``ice_surface``, ``ice_bottom`` on ``time`` (in ``m``; variables whose attribute
``source`` is ``detected`` are ignored, so a budget file of ``icecolumn buoy`` reads back
with its measured interfaces only).  Fill values are missing readings.

Writers
-------
:func:`write_outputs` writes several files all-or-nothing (temporary files, then renames);
:func:`budget_dataset` joins record, interfaces and budget into the CF file;
:func:`forcing_csv_text` is a forcing CSV with the ``ocean_heat_flux`` column;
:func:`observations_csv_text` a drill-hole-like thickness CSV for ``icecolumn calibrate --obs``;
:func:`format_budget` the text table.
"""

from __future__ import annotations

import math
import re
from pathlib import Path

import numpy as np
import xarray as xr

from ._version import __version__
from .buoy import CAUTION_FLUX, WINDOW_FLAGS, SalinityProfile, position_at, record_mean
from .errors import InputError
from .textfile import read_csv, read_user_text, write_files_atomically
from .timeutil import format_time, parse_times

__all__ = ["read_buoy", "read_buoy_csv", "read_buoy_netcdf", "record_summary", "salinity_from_core",
           "budget_dataset", "write_budget_netcdf", "forcing_csv_text", "observations_csv_text", "format_budget", "write_outputs",
           "INTERFACES", "TEMPERATURE_RANGE"]

#: Interface columns a record may carry (measured positions, m, positive down).
INTERFACES = ("snow_surface", "ice_surface", "ice_bottom")
#: Plausible sensor temperatures [degC] in air, snow, ice and water (common practice, no source).
TEMPERATURE_RANGE = (-70.0, 15.0)
#: Plausible interface depths [m] relative to the deployment surface (common practice, no source).
INTERFACE_RANGE = (-20.0, 20.0)
GAP_FACTOR = 1.5

_META = re.compile(r"#\s*(first_sensor_depth|sensor_spacing|missing_value)\s*[:=]\s*(\S+)\s*(\S*)\s*$")
_SENSOR = re.compile(r"T(\d+)$")


def _number(name: str, line: int, key: str, text: str) -> float:
    try:
        v = float(text)
    except ValueError:
        raise InputError(f"{name}: line {line}: {key}: {text!r} is not a number") from None
    if not math.isfinite(v):
        raise InputError(f"{name}: line {line}: {key}: {text!r} is not a finite number")
    return v


def _metadata(name: str, text: str) -> dict[str, tuple[float, int]]:
    meta: dict[str, tuple[float, int]] = {}
    for no, line in enumerate(text.splitlines(), start=1):
        s = line.strip()
        if not s:
            continue
        if not s.startswith("#"):
            break
        m = _META.match(s)
        if not m:
            continue
        key, value, unit = m.group(1), m.group(2), m.group(3)
        v = _number(name, no, key, value)
        if key != "missing_value":
            if unit in ("", "m"):
                pass
            elif unit == "cm":
                v /= 100.0
            else:
                raise InputError(f"{name}: line {no}: {key}: unit {unit!r} is not m or cm")
        if key in meta:
            raise InputError(f"{name}: line {no}: {key} is given twice (first on line {meta[key][1]})")
        meta[key] = (v, no)
    return meta


def _finish(name: str, times, depth, temp, measured: dict[str, np.ndarray], title: str = "") -> xr.Dataset:
    """The record Dataset, with sensor flags and gaps (no values changed)."""
    if times.size < 2:
        raise InputError(f"{name}: {times.size} profile(s); a record needs at least two")
    steps = np.diff(times.astype("datetime64[ns]").astype(np.int64)) / 1e9
    median = float(np.median(steps)) if steps.size else float("nan")
    gaps = np.flatnonzero(steps > GAP_FACTOR * median) if steps.size else np.array([], int)
    valid = np.isfinite(temp)
    frac = valid.mean(axis=0)
    flag = np.where(frac == 0, 2, np.where(frac < 1, 1, 0)).astype(np.int8)
    last = np.full(depth.size, np.datetime64("NaT", "ns"))
    for k in np.flatnonzero(valid.any(axis=0)):
        last[k] = times[np.flatnonzero(valid[:, k])[-1]]
    data = {
        "temperature": (("time", "depth"), temp, {"units": "degC", "long_name": "thermistor temperature",
                                                   "comment": "missing readings are NaN (not interpolated)"}),
        "sensor_flag": ("depth", flag, {"long_name": "sensor quality over the record",
                                         "flag_values": np.array([0, 1, 2], np.int8),
                                         "flag_meanings": "complete some_readings_missing no_readings"}),
        "sensor_valid_fraction": ("depth", frac, {"units": "1", "long_name": "fraction of profiles with a reading"}),
    }
    for key, values in measured.items():
        data[key] = ("time", values, {"units": "m", "positive": "down", "source": "measured",
                                      "long_name": f"measured depth of the {key.replace('_', ' ')}"})
    ds = xr.Dataset(data, coords={
        "time": ("time", times.astype("datetime64[ns]"), {"standard_name": "time", "long_name": "time (UTC)"}),
        "depth": ("depth", depth, {"units": "m", "positive": "down", "standard_name": "depth", "axis": "Z",
                                    "long_name": "sensor depth below the ice surface at deployment"}),
        "sensor": ("depth", np.arange(1, depth.size + 1, dtype=np.int32), {"long_name": "sensor number (1: top)",
                                                                           "units": "1"}),
    })
    ds.attrs["source_file"] = name
    if title:
        ds.attrs["title"] = title
    ds.attrs["median_step_s"] = median
    ds.attrs["gaps"] = "; ".join(f"{format_time(times[i])} to {format_time(times[i + 1])}" for i in gaps)
    ds.attrs["last_reading"] = [str(x)[:16] if not np.isnat(x) else "" for x in last]
    return ds


def read_buoy_csv(path: str | Path) -> xr.Dataset:
    """Read a thermistor-string CSV (layout in the module docstring).

    Returns
    -------
    xarray.Dataset
        ``temperature`` (time, sensor) [degC] with NaN for missing readings; coordinates
        ``time`` (UTC), ``depth`` (sensor) [m, positive down], ``sensor`` (1 = top); measured
        interfaces present in the file [m]; ``sensor_flag`` and ``sensor_valid_fraction``;
        attributes ``source_file``, ``gaps``, ``median_step_s``.

    Raises
    ------
    InputError
        One line naming the file, the line and the column for anything wrong.
    """
    name = str(path)
    text, _ = read_user_text(path, "buoy record")
    meta = _metadata(name, text)
    table = read_csv(path, "buoy record", "time, T1, T2, ...")
    header, header_no, rows = table.header, table.header_line, list(zip(table.lines, table.rows))
    for key in ("first_sensor_depth", "sensor_spacing"):
        if key not in meta:
            raise InputError(f"{name}: no '# {key}: <value> m' line before the header (line {header_no})")
    first, spacing = meta["first_sensor_depth"][0], meta["sensor_spacing"][0]
    if not spacing > 0:
        raise InputError(f"{name}: line {meta['sensor_spacing'][1]}: sensor_spacing: {spacing:g} m must be positive")
    missing = meta.get("missing_value", (None, 0))[0]
    if "time" not in header:
        raise InputError(f"{name}: line {header_no}: no 'time' column; columns found: {', '.join(header)}")
    twice = sorted({c for c in header if header.count(c) > 1})
    if twice:
        raise InputError(f"{name}: line {header_no}: column {twice[0]!r} appears twice")
    sensors = []
    for i, col in enumerate(header):
        m = _SENSOR.match(col)
        if m:
            sensors.append((int(m.group(1)), i, col))
        elif col not in ("time", *INTERFACES):
            pass  # other columns are ignored
    if not sensors:
        raise InputError(f"{name}: line {header_no}: no sensor columns T1, T2, ... in the header")
    numbers = sorted(s[0] for s in sensors)
    if numbers != list(range(1, len(numbers) + 1)):
        gap = next(k for k, n in enumerate(numbers, start=1) if n != k)
        raise InputError(f"{name}: line {header_no}: sensor columns must be T1 to T{len(numbers)} without gaps; "
                         f"T{gap} is missing")
    sensors.sort()
    if not rows:
        raise InputError(f"{name}: no data rows after the header (line {header_no})")
    lines = [no for no, _ in rows]
    it = header.index("time")
    for no, cells in rows:
        if not cells[it]:
            raise InputError(f"{name}: line {no}: column 'time' is empty")
    times = parse_times([cells[it] for _, cells in rows], lambda i: f"line {lines[i]}: column 'time'", name)
    dt = np.diff(times.astype(np.int64))
    bad = np.flatnonzero(dt <= 0)
    if bad.size:
        k = int(bad[0]) + 1
        raise InputError(f"{name}: line {lines[k]}: time {format_time(times[k])} is not after "
                         f"{format_time(times[k - 1])} on line {lines[k - 1]}; times must be strictly increasing")
    lo, hi = TEMPERATURE_RANGE
    temp = np.full((len(rows), len(sensors)), np.nan)
    for r, (no, cells) in enumerate(rows):
        for c, (_, i, col) in enumerate(sensors):
            cell = cells[i]
            if cell == "":
                continue
            v = _number(name, no, f"column {col!r}", cell)
            if missing is not None and v == missing:
                continue
            if not lo <= v <= hi:
                raise InputError(f"{name}: line {no}: column {col!r}: {v:g} degC is outside {lo:g}..{hi:g} degC")
            temp[r, c] = v
    measured = {}
    for key in INTERFACES:
        if key not in header:
            continue
        i = header.index(key)
        vals = np.full(len(rows), np.nan)
        for r, (no, cells) in enumerate(rows):
            if cells[i] != "":
                v = _number(name, no, f"column {key!r}", cells[i])
                if not INTERFACE_RANGE[0] <= v <= INTERFACE_RANGE[1]:
                    raise InputError(f"{name}: line {no}: column {key!r}: {v:g} m is not a plausible depth")
                vals[r] = v
        if np.isfinite(vals).any():
            measured[key] = vals
    depth = np.round(first + spacing * np.arange(len(sensors)), 6)
    title = next((ln.strip().lstrip("#").strip() for ln in text.splitlines() if ln.strip().startswith("#")), "")
    return _finish(name, times, depth, temp, measured, title)


def read_buoy_netcdf(path: str | Path) -> xr.Dataset:
    """Read a thermistor-string CF NetCDF file (layout in the module docstring)."""
    name = str(path)
    if not Path(path).is_file():
        raise InputError(f"{name}: file not found")
    try:
        with xr.open_dataset(path) as src:
            ds = src.load()
    except (OSError, ValueError) as err:
        raise InputError(f"{name}: cannot read as NetCDF ({err})") from None
    if "temperature" not in ds:
        raise InputError(f"{name}: no variable 'temperature' (time x sensor depth)")
    var = ds["temperature"]
    if var.ndim != 2 or "time" not in var.dims:
        raise InputError(f"{name}: variable 'temperature' must have dimensions (time, sensor), found {var.dims}")
    sdim = [d for d in var.dims if d != "time"][0]
    var = var.transpose("time", sdim)
    depth_var = None
    for cand in ds.variables:
        v = ds[cand]
        if v.dims == (sdim,) and (cand == "depth" or v.attrs.get("standard_name") == "depth"):
            depth_var = v
            break
    if depth_var is None:
        raise InputError(f"{name}: no depth coordinate on the sensor dimension {sdim!r} (variable 'depth')")
    unit = str(depth_var.attrs.get("units", "m"))
    scale = {"m": 1.0, "cm": 0.01}.get(unit)
    if scale is None:
        raise InputError(f"{name}: variable {depth_var.name!r}: units {unit!r} are not m or cm")
    depth = np.asarray(depth_var.values, float) * scale
    if str(depth_var.attrs.get("positive", "down")).lower() == "up":
        depth = -depth
    tunit = str(var.attrs.get("units", "degC"))
    if tunit in ("K", "kelvin", "Kelvin"):
        offset = -273.15
    elif tunit in ("degC", "Celsius", "celsius", "deg_C", "degree_Celsius", "degrees_Celsius", "C"):
        offset = 0.0
    else:
        raise InputError(f"{name}: variable 'temperature': units {tunit!r} are not degC or K")
    temp = np.asarray(var.values, float) + offset
    order = np.argsort(depth, kind="stable")
    depth, temp = depth[order], temp[:, order]
    if np.any(np.diff(depth) <= 0):
        raise InputError(f"{name}: two sensors at the same depth")
    lo, hi = TEMPERATURE_RANGE
    bad = np.argwhere(np.isfinite(temp) & ((temp < lo) | (temp > hi)))
    if bad.size:
        i, k = bad[0]
        raise InputError(f"{name}: variable 'temperature' at time index {i}, sensor at {depth[k]:g} m: "
                         f"{temp[i, k]:g} degC is outside {lo:g}..{hi:g} degC")
    times = ds["time"].values
    if not np.issubdtype(times.dtype, np.datetime64):
        raise InputError(f"{name}: variable 'time' is not a CF time")
    if np.any(np.diff(times.astype("datetime64[ns]").astype(np.int64)) <= 0):
        raise InputError(f"{name}: times must be strictly increasing")
    measured = {}
    for key in INTERFACES:
        if key in ds and ds[key].dims == ("time",) and ds[key].attrs.get("source") != "detected":
            vals = np.asarray(ds[key].values, float)
            if np.isfinite(vals).any():
                measured[key] = vals
    return _finish(name, times.astype("datetime64[ns]"), depth, temp, measured, str(ds.attrs.get("title", "")))


def read_buoy(path: str | Path) -> xr.Dataset:
    """Read a buoy record: NetCDF by suffix or signature, else CSV."""
    p = Path(path)
    sig = b""
    if p.is_file():
        with open(p, "rb") as f:
            sig = f.read(8)
    if p.suffix.lower() in (".nc", ".nc4", ".cdf", ".netcdf") or sig.startswith((b"CDF", b"\x89HDF")):
        return read_buoy_netcdf(path)
    return read_buoy_csv(path)


#: Sections of a core whose mid-depth lies within this distance of the core's bottom are not
#: used [m]: the youngest ice is still draining (its salinity falls for days to weeks after it
#: forms; Notz & Worster 2009, JGR 114, C05006, from memory), and the residual counts the
#: latent heat of new ice at the salinity it keeps (steady-growth approximation, see
#: icecolumn.buoy).  The lowest section above them is held down to the bottom instead.
DRAINING_BOTTOM = 0.10


def salinity_from_core(path: str | Path, draining_bottom: float = DRAINING_BOTTOM) -> SalinityProfile:
    """Bulk-salinity profile from an ice-core CSV (the layout of
    :func:`icecolumn.profiles.read_core`: depth_top, depth_bottom, salinity).

    Sections with their mid-depth within ``draining_bottom`` [m] of the core's bottom are
    left out (:data:`DRAINING_BOTTOM`), unless no other section is left.
    """
    from .profiles import read_core

    core = read_core(path)  # checks the file
    d = np.asarray(core.depth, float)
    sal = np.asarray(core.salinity, float)
    table = read_csv(path, "ice-core file")
    header, rows = table.header, list(zip(table.lines, table.rows))
    ib = header.index("depth_bottom")
    if "time" in header and core.time is not None:
        it = header.index("time")
        times = parse_times([c[it] for _, c in rows], source=str(path))
        rows = [r for r, t in zip(rows, times) if t == core.time]
    bottom = max(float(c[ib]) for _, c in rows)
    keep = d < bottom - draining_bottom
    note = ""
    if keep.any() and not keep.all():
        note = f", {int((~keep).sum())} section(s) of the draining bottom left out"
        d, sal = d[keep], sal[keep]
    return SalinityProfile(depth=d, salinity=sal, source=f"{path}{note}")


def record_summary(record: xr.Dataset, iface: xr.Dataset | None = None) -> list[str]:
    """Lines describing a record: period, sensors, dead sensors, gaps, interface sources."""
    t = record["time"].values
    z = record["depth"].values
    days = (t[-1] - t[0]) / np.timedelta64(1, "D")
    lines = [f"record:     {record.attrs.get('source_file', '')}",
             f"period:     {format_time(t[0])} to {format_time(t[-1])} ({days:.1f} days, {t.size} profiles, "
             f"median step {record.attrs.get('median_step_s', float('nan')) / 3600:g} h)",
             f"sensors:    {z.size}, {z[0]:+.2f} to {z[-1]:+.2f} m (spacing {np.median(np.diff(z)):.3f} m; "
             "depth positive down from the ice surface at deployment)"]
    flag = record["sensor_flag"].values
    last = record.attrs.get("last_reading", [""] * z.size)
    for k in np.flatnonzero(flag > 0):
        f = record["sensor_valid_fraction"].values[k]
        what = "dead (no readings)" if flag[k] == 2 else f"{100 * (1 - f):.0f} % of readings missing"
        lines.append(f"sensor:     T{k + 1} at {z[k]:+.2f} m: {what}"
                     + (f", last reading {last[k]}" if flag[k] == 1 and last[k] else "")
                     + " (missing readings are left out, not filled)")
    if record.attrs.get("gaps"):
        spans = "; ".join(f"between {g.replace(' to ', ' and ')}" for g in record.attrs["gaps"].split("; "))
        lines.append(f"gaps:       no profiles {spans} (windows with too few are not estimated)")
    if iface is not None:
        src = ", ".join(f"{n.replace('_', ' ')} {iface[n].attrs.get('source', '?')}" for n in INTERFACES)
        lines.append(f"interfaces: {src}")
    return lines


# --------------------------------------------------------------------------- outputs


def budget_dataset(record: xr.Dataset, iface: xr.Dataset, budget: xr.Dataset, station=None) -> xr.Dataset:
    """One CF-1.8 Dataset: the record, the interfaces and the budget per window.

    ``station``: the configuration's :class:`~icecolumn.config.StationSection`, whose name and
    position become global attributes (:meth:`~icecolumn.config.StationSection.attributes`).
    """
    ds = xr.merge([record.drop_vars([v for v in INTERFACES if v in record]), iface, budget],
                  combine_attrs="drop_conflicts", compat="override")
    ds.attrs = {
        "Conventions": "CF-1.8",
        "title": f"icecolumn buoy: ocean heat flux and growth budget of {record.attrs.get('source_file', '')}",
        "institution": "icecolumn user",
        "source": f"icecolumn {__version__} buoy analysis (residual method)",
        "history": f"{format_time(np.datetime64('now'))} created by icecolumn {__version__} buoy",
        "references": "McPhee & Untersteiner 1982, JGR 87(C3); Perovich & Elder 2002, GRL 29(9); see icecolumn.buoy",
        "comment": "depths are positive down from the ice surface at deployment (the string moves with the ice)",
        "icecolumn_version": __version__,
        "record_source_file": str(record.attrs.get("source_file", "")),
        "record_gaps": str(record.attrs.get("gaps", "")),
        **{k: v for k, v in budget.attrs.items()},
        **(station.attributes() if station is not None else {}),
    }
    return ds


def write_budget_netcdf(ds: xr.Dataset, path) -> None:
    """Write the budget Dataset as NetCDF-4 (CF-1.8): float64, compressed; NaN as the fill
    value of data variables, none for coordinates and bounds; times in hours since the
    record's start."""
    units = f"hours since {str(ds['time'].values[0])[:19].replace('T', ' ')}"
    no_fill = set(ds.coords) | {"window_bounds"}
    enc = {}
    for name, var in ds.variables.items():
        if np.issubdtype(var.dtype, np.datetime64):
            enc[name] = {"units": units, "calendar": "standard", "dtype": "float64", "_FillValue": None}
        elif var.dtype.kind == "f":
            enc[name] = {"dtype": "float64", "zlib": True, "complevel": 1,
                         "_FillValue": None if name in no_fill else np.nan}
        elif name in no_fill:
            enc[name] = {"_FillValue": None}
    ds.to_netcdf(path, format="NETCDF4", engine="netcdf4", encoding=enc)


def forcing_csv_text(forcing: xr.Dataset, budget: xr.Dataset, fill: float, source: str = "") -> str:
    """A forcing CSV: every variable of ``forcing`` and the buoy's ``ocean_heat_flux`` [W m-2].

    At every forcing time in a window with an estimate the value is that window's mean
    F_w (a step function, so each window's mean is kept); at other times ``fill`` (e.g.
    ``[ocean] heat_flux``).  ``icecolumn run`` uses the column in place of ``[ocean]
    heat_flux``.
    """
    t = forcing["time"].values.astype("datetime64[ns]")
    values = np.full(t.size, float(fill))
    wb = budget["window_bounds"].values.astype("datetime64[ns]")
    ok = budget["window_flag"].values == 0
    fw = budget["ocean_heat_flux"].values
    used = 0
    for w in np.flatnonzero(ok):
        sel = (t >= wb[w, 0]) & (t < wb[w, 1])
        values[sel] = fw[w]
        used += int(sel.sum())
    names = [v for v in forcing.data_vars if v != "ocean_heat_flux"]
    lines = [
        f"# forcing {forcing.attrs.get('source_file', '')} with ocean_heat_flux from icecolumn buoy {source}",
        f"# ocean_heat_flux [W m-2, positive upward into the ice]: window means of the residual method at "
        f"{used} of {t.size} times; {float(fill):g} W m-2 elsewhere (outside the buoy windows with an estimate)",
        f"# {CAUTION_FLUX}",
        "# Columns: time (UTC); " + "; ".join(f"{v} [{forcing[v].attrs.get('units', '')}]" for v in names)
        + "; ocean_heat_flux [W m-2]",
        ",".join(["time", *names, "ocean_heat_flux"]),
    ]
    cols = [np.asarray(forcing[v].values, float) for v in names]
    for i in range(t.size):
        cells = [np.datetime_as_string(t[i].astype("datetime64[m]"), unit="m") + "Z"]
        cells += [f"{c[i]:.6g}" for c in cols]
        cells.append(f"{values[i]:.4g}")
        lines.append(",".join(cells))
    return "\n".join(lines) + "\n"


def observations_csv_text(iface: xr.Dataset, every: float = 86400.0, source: str = "") -> tuple[str, int]:
    """Ice (and snow) thickness of the buoy for ``icecolumn calibrate --obs``, as drill holes.

    One row every ``every`` [s] from 00:00 UTC of the first day, where the ice bottom and
    ice surface are both known (the positions from a local linear fit within ``every``
    of the time, :func:`icecolumn.buoy.position_at`); ``snow_thickness`` only when it is
    known at every row.  Returns the text and the number of rows.
    """
    t = iface["time"].values.astype("datetime64[ns]")
    start = t[0].astype("datetime64[D]").astype("datetime64[ns]")
    step = np.timedelta64(int(round(every * 1e9)), "ns")
    at = start + step * np.arange(int((t[-1] - start) // step) + 1)
    at = at[(at >= t[0]) & (at <= t[-1])]
    span = 0.5 * every
    zb = position_at(t, iface["ice_bottom"].values, at, span)
    zi = position_at(t, iface["ice_surface"].values, at, span)
    zs = position_at(t, iface["snow_surface"].values, at, span)
    h = zb - zi
    ok = np.isfinite(h) & (h > 0)
    hs = np.maximum(zi - zs, 0.0)
    with_snow = bool(ok.any() and np.isfinite(hs[ok]).all())
    lines = [f"# ice thickness from the buoy record {source} (icecolumn buoy): ice bottom minus ice surface "
             f"({iface['ice_bottom'].attrs.get('source', '?')} bottom, {iface['ice_surface'].attrs.get('source', '?')} "
             "surface)",
             f"# {CAUTION_FLUX}",
             "# Columns: time (UTC); ice_thickness [m]" + ("; snow_thickness [m]" if with_snow else ""),
             "time,ice_thickness" + (",snow_thickness" if with_snow else "")]
    for i in np.flatnonzero(ok):
        row = [np.datetime_as_string(at[i].astype("datetime64[m]"), unit="m") + "Z", f"{h[i]:.3f}"]
        if with_snow:
            row.append(f"{hs[i]:.3f}")
        lines.append(",".join(row))
    return "\n".join(lines) + "\n", int(ok.sum())


def format_budget(budget: xr.Dataset) -> str:
    """The text table of the budget per window (one line per window)."""
    wb = budget["window_bounds"].values
    flag = budget["window_flag"].values
    head = [
        "# ocean heat flux by the residual method: F_w = F_c - G - F_s  [W m-2]",
        "#   F_c conductive flux in the lower ice (upward), G = rho L_eff dh/dt latent heat of basal growth,",
        "#   F_s heat released by the cooling of the ice below the flux level, F_w ocean heat flux (upward)",
        f"#   gradient band {budget.attrs.get('budget_gradient_band_m', '')}; salinity: "
        f"{budget.attrs.get('budget_salinity', '')}",
        f"#   +/- expanded uncertainty, 2 sd: {budget.attrs.get('budget_uncertainty', '')}",
        "#   dF_w/dS: change of F_w per g/kg of salinity error (large in warm ice, where a salinity fixed in time",
        "#   cannot follow flushing; give a core taken in that season)",
    ]
    cols = ("start", "end", "h_end", "dh/dt", "F_c", "G", "F_s", "F_w", "dF_w/dS", "note")
    units = ("UTC", "UTC", "m", "cm/day", "W m-2", "W m-2", "W m-2", "W m-2", "per g/kg", "")
    rows = []
    for w in range(flag.size):
        r = [str(wb[w, 0])[:10], str(wb[w, 1])[:10]]
        if flag[w] != 0:
            r += ["", "", "", "", "", "", "", "no estimate: " + WINDOW_FLAGS[int(flag[w])].replace("_", " ")]
        else:
            h = budget["ice_thickness_end"].values[w]
            r.append(f"{h:.3f}" if np.isfinite(h) else "nan")
            g = budget["basal_growth_rate"].values[w] * 8.64e6
            gu = budget["basal_growth_rate_uncertainty"].values[w] * 8.64e6
            r.append(f"{g:.2f}+/-{gu:.2f}")
            for n in ("conductive_heat_flux", "growth_heat_flux", "heat_storage_flux", "ocean_heat_flux"):
                r.append(f"{budget[n].values[w]:.1f}+/-{budget[n + '_uncertainty'].values[w]:.1f}")
            r.append(f"{budget['ocean_heat_flux_salinity_sensitivity'].values[w]:+.2f}")
            r.append("")
        rows.append(r)
    widths = [max(len(x) for x in col) for col in zip(cols, units, *rows)]

    def fmt(r):
        return "  ".join(c.ljust(wd) for c, wd in zip(r, widths)).rstrip()

    out = head + [fmt(cols), fmt(units), "-" * (sum(widths) + 2 * (len(widths) - 1))] + [fmt(r) for r in rows]
    mean, unc, n = record_mean(budget)
    if n:
        out.append(f"mean F_w over the {n} windows with an estimate: {mean:.1f} +/- {unc:.1f} W m-2")
    else:
        out.append("no window has an estimate")
    return "\n".join(out) + "\n"


def write_outputs(files: dict[Path, object], overwrite: bool = False) -> list[Path]:
    """Write several files all-or-nothing (:func:`icecolumn.textfile.write_files_atomically`).

    ``files`` maps each path to its content: ``str`` (UTF-8 text), or a callable
    ``write(temporary_path)``.  Every path is checked first (an existing file without
    ``overwrite``, a missing folder, twice the same path is an :class:`InputError`);
    then each is written to a temporary file beside it, and only when all succeeded
    are they renamed into place.  On any failure the temporary files are removed and
    no output exists that did not exist before.  The files get the user's usual
    permissions (0o666 less the umask); write errors name the output, not a temporary file.
    """
    return write_files_atomically(files, overwrite=overwrite)
