"""Figures from icecolumn NetCDF output.

This module only reads model output (an :class:`xarray.Dataset` that follows
the icecolumn output contract); it never runs the solver.  All figures are
built with matplotlib's object-oriented API (``matplotlib.figure.Figure``), so
no pyplot global state is touched and the functions are safe to call from a
headless process or from tests.

Output files are opened and checked by :mod:`icecolumn.output_io`.

Public functions
----------------
``plot_thickness(ds, laws, obs, title)``   ice and snow thickness against time
``plot_sections(ds, thermistor, core, title)``  depth-time sections of four fields
``plot_salt(ds, title)``                   salt flux and cumulative salt released
``plot_profiles(ds, dates, title)``        vertical profiles at chosen dates
``plot_run(ds, outdir, fmt, ...)``         write all four figures to a directory

Ensemble output (a ``member`` dimension in front of ``time``) is summarised as
the member median with a 5-95 % band in time-series panels; depth-resolved
panels show member 0 and say so in the title.
"""

from __future__ import annotations

import os
import re
import warnings
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import matplotlib
import matplotlib.dates as mdates
import numpy as np
import xarray as xr
from matplotlib.figure import Figure

from icecolumn.constants import SECONDS_PER_DAY
from icecolumn.errors import InputError
from icecolumn.output_io import check_output_dataset
from icecolumn.textfile import check_new_output, write_atomically, write_files_atomically

__all__ = [
    "FIELDS",
    "FIGURE_NAMES",
    "LAW_LABELS",
    "OUTPUT_VARIABLES",
    "plot_profiles",
    "plot_run",
    "plot_salt",
    "plot_sections",
    "plot_thickness",
]

#: Depth-resolved fields drawn in sections and profiles: (variable, short label, colormap).
FIELDS: tuple[tuple[str, str, str], ...] = (
    ("temperature", "temperature", "plasma"),
    ("bulk_salinity", "bulk salinity", "viridis"),
    ("liquid_fraction", "liquid fraction", "cividis"),
    ("brine_salinity", "brine salinity", "magma"),
)

#: Legend text for the growth laws a ``laws`` dataset may hold, used when its variable has no
#: ``label`` attribute (a :func:`icecolumn.laws.laws_table` Dataset has one, the name its
#: table shows, e.g. "Stefan with surface transfer").
LAW_LABELS: dict[str, str] = {
    "stefan": "Stefan (1891)",
    "lebedev": "Lebedev (1938)",
    "anderson": "Anderson (1961)",
    "zubov": "Zubov (1945)",
}

THICKNESS_VARIABLES = ("ice_thickness",)
SECTION_VARIABLES = tuple(f[0] for f in FIELDS) + ("depth_bounds",)
SALT_VARIABLES = ("salt_flux", "salt_released")
PROFILE_VARIABLES = tuple(f[0] for f in FIELDS) + ("depth",)
#: Everything :func:`plot_run` needs.
OUTPUT_VARIABLES = tuple(
    dict.fromkeys(THICKNESS_VARIABLES + SECTION_VARIABLES + SALT_VARIABLES + PROFILE_VARIABLES)
)

FORMATS = ("png", "pdf", "svg")
BAND_PERCENTILES = (5.0, 95.0)
#: The figures :func:`plot_run` writes, ``<name>.<format>``.
FIGURE_NAMES = ("thickness", "sections", "salt", "profiles")

_SUPERSCRIPT = str.maketrans("-0123456789", "\u207b\u2070\u00b9\u00b2\u00b3\u2074\u2075\u2076\u2077\u2078\u2079")


# --------------------------------------------------------------------------- input


def _source(ds: xr.Dataset) -> str:
    """Name of the file a dataset came from, for error messages."""
    return str(ds.encoding.get("source", "output dataset"))


# --------------------------------------------------------------------------- helpers


def _is_ensemble(ds: xr.Dataset) -> bool:
    return "member" in ds.dims


def _member0(ds: xr.Dataset) -> xr.Dataset:
    return ds.isel(member=0) if _is_ensemble(ds) else ds


def _run_name(ds: xr.Dataset) -> str:
    parts = []
    if ds.attrs.get("forcing_file"):
        parts.append(f"forcing {Path(str(ds.attrs['forcing_file'])).name}")
    if ds.attrs.get("config_file"):
        parts.append(f"config {Path(str(ds.attrs['config_file'])).name}")
    if parts:
        return ", ".join(parts)
    return str(ds.attrs.get("title") or "icecolumn run")


def _title(ds: xr.Dataset, what: str, title: str | None, depth_resolved: bool) -> str:
    run = title if title is not None else _run_name(ds)
    text = f"{what}: {run}" if run else what
    if _is_ensemble(ds):
        n = ds.sizes["member"]
        if depth_resolved:
            text += f"\n(ensemble of {n} members: member 0 shown)"
        else:
            lo, hi = BAND_PERCENTILES
            text += f"\n(ensemble of {n} members: median and {lo:g}\u2013{hi:g} % range)"
    return text


def _pretty_units(units: str) -> str:
    """UDUNITS text for display: 'kg m-2 s-1' -> 'kg m⁻² s⁻¹', 'degC' -> '°C'."""
    units = units.strip()
    if units in ("degC", "degree_Celsius", "Celsius"):
        return "\u00b0C"
    return re.sub(r"(?<=[A-Za-z])(-?\d+)", lambda m: m.group(1).translate(_SUPERSCRIPT), units)


def _label(name: str, units: str | None) -> str:
    if units is None or units.strip() in ("", "1"):
        return name
    return f"{name} ({_pretty_units(units)})"


def _units(da: xr.DataArray, default: str) -> str:
    return str(da.attrs.get("units", default))


def _datenum(times: Any) -> np.ndarray:
    arr = np.asarray(times)
    if not np.issubdtype(arr.dtype, np.datetime64):
        try:
            arr = arr.astype("datetime64[ns]")
        except (TypeError, ValueError):
            raise InputError(f"cannot read times {arr[:3]!r} as dates") from None
    return np.asarray(mdates.date2num(arr.astype("datetime64[ns]")), dtype=float)


def _time_edges(x: np.ndarray) -> np.ndarray:
    """Cell edges from cell centres: midpoints, ends extended by half a spacing."""
    if x.size == 1:
        return np.array([x[0] - 0.5, x[0] + 0.5])
    mid = 0.5 * (x[1:] + x[:-1])
    return np.concatenate([[x[0] - (mid[0] - x[0])], mid, [x[-1] + (x[-1] - mid[-1])]])


def _date_axis(ax) -> None:
    locator = mdates.AutoDateLocator()
    ax.xaxis.set_major_locator(locator)
    ax.xaxis.set_major_formatter(mdates.ConciseDateFormatter(locator))


def _time_strings(times: np.ndarray) -> list[str]:
    t = np.asarray(times).astype("datetime64[m]")
    whole_days = bool(np.all(t == t.astype("datetime64[D]")))
    return [str(v) for v in np.datetime_as_string(t, unit="D" if whole_days else "m")]


def _series(ds: xr.Dataset, name: str) -> tuple[np.ndarray, np.ndarray | None, np.ndarray | None]:
    """(central line, lower band, upper band) of a time series; bands None unless ensemble."""
    da = ds[name]
    if _is_ensemble(ds) and "member" in da.dims:
        vals = da.transpose("member", "time").values.astype(float)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            mid = np.nanmedian(vals, axis=0)
            lo, hi = np.nanpercentile(vals, BAND_PERCENTILES, axis=0)
        return mid, lo, hi
    return np.asarray(da.values, dtype=float), None, None


def _points(obj: Any, value_name: str, what: str) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Flatten (time, depth, value) point data given as a Dataset or mapping."""
    try:
        t = np.asarray(obj["time"])
        d = np.asarray(obj["depth"], dtype=float)
        v = np.asarray(obj[value_name], dtype=float)
    except (KeyError, TypeError, ValueError):
        raise InputError(f"{what}: needs time, depth and {value_name}") from None
    if v.ndim == 2 and t.ndim == 1 and d.ndim == 1 and v.shape == (t.size, d.size):
        t, d = np.meshgrid(t, d, indexing="ij")
    if not (t.size == d.size == v.size):
        raise InputError(
            f"{what}: time, depth and {value_name} have different lengths "
            f"({t.size}, {d.size}, {v.size})"
        )
    return _datenum(t.ravel()), d.ravel(), v.ravel()


#: Percentiles of the interior ice that bound the section colour scales.
ROBUST_PERCENTILES = (2.0, 98.0)


def _interior_fraction(ds: xr.Dataset) -> float:
    """Largest liquid fraction of "interior" ice: the run's ``[output] load_bearing_liquid_fraction``
    (the default when the file has no readable configuration)."""
    from icecolumn.config import config_from_toml_text, default_config

    try:
        cfg = config_from_toml_text(str(ds.attrs.get("icecolumn_config", "")), _source(ds))
    except InputError:
        cfg = default_config()
    return cfg.output.load_bearing_liquid_fraction


def _robust_limits(values: np.ndarray, interior: np.ndarray) -> tuple[float, float, str]:
    """Colour limits of a section: the :data:`ROBUST_PERCENTILES` of the interior cells (all
    finite cells when there are none), and the colour bar's ``extend`` ("neither", "min",
    "max" or "both") for the values beyond them."""
    finite = np.isfinite(values)
    use = finite & interior
    if not use.any():
        use = finite
    if not use.any():
        return 0.0, 1.0, "neither"
    lo, hi = (float(v) for v in np.percentile(values[use], ROBUST_PERCENTILES))
    if not hi > lo:
        lo, hi = float(values[use].min()), float(values[use].max())
    below = bool((values[finite] < lo).any())
    above = bool((values[finite] > hi).any())
    extend = {(False, False): "neither", (True, False): "min", (False, True): "max", (True, True): "both"}
    return lo, hi, extend[(below, above)]


def _moving_mesh(
    t_edges: np.ndarray, bounds: np.ndarray, values: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ma.MaskedArray]:
    """Quadrilateral mesh where each time column has its own layer bounds.

    ``bounds`` is (time, layer, 2), ``values`` (time, layer).  Every time column
    and every layer gets its own pair of vertex columns/rows, so neighbouring
    columns need not share interfaces (the grid moves with the ice).  The
    zero-width cells that join them are masked.
    """
    nt, nl = values.shape
    x = np.repeat(t_edges, 2)[1:-1]  # t0, t1, t1, t2, t2, ..., tn
    y = bounds.reshape(nt, 2 * nl)  # top0, bot0, top1, bot1, ...
    y = np.repeat(y, 2, axis=0)  # two vertex columns per time column
    X = np.broadcast_to(x[:, None], y.shape)
    c = np.full((2 * nt - 1, 2 * nl - 1), np.nan)
    c[::2, ::2] = values
    bad = ~np.isfinite(y)
    if bad.any():  # pcolormesh needs finite vertices; mask the cells touching them
        cell_bad = bad[:-1, :-1] | bad[1:, :-1] | bad[:-1, 1:] | bad[1:, 1:]
        c[cell_bad] = np.nan
        y = np.where(bad, 0.0, y)
    # pcolormesh wants (rows=y, cols=x): transpose to (depth, time).
    return X.T, y.T, np.ma.masked_invalid(c.T)


# --------------------------------------------------------------------------- figures


def plot_thickness(
    ds: xr.Dataset,
    laws: xr.Dataset | Mapping[str, Any] | None = None,
    obs: xr.Dataset | Mapping[str, Any] | None = None,
    title: str | None = None,
) -> Figure:
    """Ice thickness (top panel) and snow thickness (bottom panel) against time.

    ``laws``: Dataset/mapping with ``time`` and any of ``stefan``, ``lebedev``,
    ``anderson``, ``zubov`` [m], drawn as thin dashed lines, labelled as the laws table
    names them (``label`` and ``base_temperature_degC`` attributes of
    :func:`icecolumn.laws.laws_table`).  ``obs``:
    Dataset/mapping with ``time``, ``ice_thickness`` and optionally
    ``snow_thickness``, drawn as markers labelled "drill holes".
    """
    check_output_dataset(ds, _source(ds), THICKNESS_VARIABLES)
    has_snow = "snow_thickness" in ds.variables
    fig = Figure(figsize=(8.0, 6.0 if has_snow else 4.5), layout="constrained")
    if has_snow:
        ax, ax_snow = fig.subplots(2, 1, sharex=True, height_ratios=[3, 1])
    else:
        ax, ax_snow = fig.subplots(1, 1), None
    x = _datenum(ds["time"].values)

    def draw_series(axis, name, label, color):
        mid, lo, hi = _series(ds, name)
        if lo is not None:
            axis.fill_between(x, lo, hi, color=color, alpha=0.25, linewidth=0,
                              label=f"{BAND_PERCENTILES[0]:g}\u2013{BAND_PERCENTILES[1]:g} % range",
                              gid=f"band:{name}")
            label = f"{label}, median"
        (line,) = axis.plot(x, mid, color=color, linewidth=2.0, label=label, gid=name)
        return line

    draw_series(ax, "ice_thickness", "model", "tab:blue")
    if laws is not None:
        found = [k for k in LAW_LABELS if k in laws]
        if not found:
            raise InputError(
                f"growth laws: none of {', '.join(LAW_LABELS)} found"
            )
        xl = _datenum(laws["time"])
        colors = ("tab:orange", "tab:green", "tab:red", "tab:purple")
        for key, color in zip(LAW_LABELS, colors):
            if key in laws:
                ax.plot(xl, np.asarray(laws[key], dtype=float), linestyle="--",
                        linewidth=1.0, color=color, label=_law_legend(laws, key), gid=f"law:{key}")
    if obs is not None:
        if "time" not in obs or "ice_thickness" not in obs:
            raise InputError("observations: need time and ice_thickness")
        xo = _datenum(obs["time"])
        ax.plot(xo, np.asarray(obs["ice_thickness"], dtype=float), linestyle="none",
                marker="o", markersize=6, markerfacecolor="white", markeredgecolor="black",
                label="drill holes", gid="obs:ice_thickness")
    units = _units(ds["ice_thickness"], "m")
    ax.set_ylabel(_label("ice thickness", units))
    ax.set_ylim(bottom=0.0)
    ax.grid(True, alpha=0.3)
    ax.legend(loc="upper left", fontsize="small", framealpha=0.9)

    if ax_snow is not None:
        draw_series(ax_snow, "snow_thickness", "snow", "0.35")
        if obs is not None and "snow_thickness" in obs:
            ax_snow.plot(_datenum(obs["time"]), np.asarray(obs["snow_thickness"], dtype=float),
                         linestyle="none", marker="s", markersize=5, markerfacecolor="white",
                         markeredgecolor="black", label="drill holes", gid="obs:snow_thickness")
        ax_snow.set_ylabel(_label("snow", _units(ds["snow_thickness"], "m")))
        ax_snow.set_ylim(bottom=0.0)
        ax_snow.grid(True, alpha=0.3)
        ax_snow.legend(loc="upper left", fontsize="small", framealpha=0.9)

    bottom = ax_snow if ax_snow is not None else ax
    for a in (ax, ax_snow):
        if a is not None:
            _date_axis(a)
    bottom.set_xlabel("time")
    _set_run_xlim(ax, x)
    fig.suptitle(_title(ds, "Ice and snow thickness", title, depth_resolved=False))
    return fig


def _law_legend(laws, key: str) -> str:
    """Legend text of one law: the ``label`` attribute of its variable (the name the laws
    table prints) and the base of its freezing degree days, else :data:`LAW_LABELS`."""
    attrs = getattr(laws[key], "attrs", {}) or {}
    label = str(attrs.get("label", LAW_LABELS[key]))
    base = attrs.get("base_temperature_degC")
    if base is None:
        return label
    b = float(base)
    return f"{label}, base {b:g} \u00b0C" if round(b, 1) == b else f"{label}, base {b:.2f} \u00b0C"


def _set_run_xlim(ax, x: np.ndarray) -> None:
    if x.size > 1 and x[-1] > x[0]:
        ax.set_xlim(x[0], x[-1])
    else:
        ax.set_xlim(x[0] - 0.5, x[0] + 0.5)


def plot_sections(
    ds: xr.Dataset,
    thermistor: xr.Dataset | Mapping[str, Any] | None = None,
    core: xr.Dataset | Mapping[str, Any] | None = None,
    title: str | None = None,
) -> Figure:
    """Depth-time sections of temperature, bulk salinity, liquid fraction, brine salinity.

    Each output time is a column spanning the midpoints to its neighbours and
    its own layer bounds (``depth_bounds``).  Snow on the ice (``snow_thickness``) is a
    hatched band above the ice surface (negative depths).  Colour limits are the
    :data:`ROBUST_PERCENTILES` of the interior ice (layers with a liquid fraction up to the
    run's ``[output] load_bearing_liquid_fraction``), so the porous bottom and slush do not
    set the scale; the colour bars have arrows where values lie beyond.  ``thermistor``
    (time, depth, temperature) and ``core`` (time, depth, salinity) points are overlaid with
    the same colour scale.
    """
    check_output_dataset(ds, _source(ds), SECTION_VARIABLES)
    d = _member0(ds)
    x = _datenum(d["time"].values)
    edges = _time_edges(x)
    bounds = d["depth_bounds"].transpose("time", "layer", "nv").values.astype(float)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)
        base = np.nanmax(bounds[:, :, 1], axis=1)
    overlay = {}
    if thermistor is not None:
        overlay["temperature"] = ("thermistor", _points(thermistor, "temperature", "thermistor"), "o")
    if core is not None:
        overlay["bulk_salinity"] = ("ice core", _points(core, "salinity", "ice core"), "s")

    snow = None
    if "snow_thickness" in d.variables:
        snow = np.asarray(d["snow_thickness"].values, dtype=float)
        if not (np.isfinite(snow) & (snow > 0)).any():
            snow = None
    phi = d["liquid_fraction"].transpose("time", "layer").values.astype(float)
    interior_limit = _interior_fraction(ds)
    interior = np.isfinite(phi) & (phi <= interior_limit)

    fig = Figure(figsize=(9.0, 10.0), layout="constrained")
    axes = fig.subplots(len(FIELDS), 1, sharex=True, sharey=True)
    depth_units = _units(d["depth_bounds"], "m")
    x_steps = np.repeat(edges, 2)[1:-1]
    for ax, (name, short, cmap) in zip(axes, FIELDS):
        da = d[name].transpose("time", "layer")
        vals = da.values.astype(float)
        vmin, vmax, extend = _robust_limits(vals, interior)
        X, Y, C = _moving_mesh(edges, bounds, vals)
        mesh = ax.pcolormesh(X, Y, C, cmap=cmap, vmin=vmin, vmax=vmax, shading="flat",
                             rasterized=True, gid=f"section:{name}")
        if vmin == vmax:  # constant field: keep the limits, widen only the drawing norm
            mesh.norm.vmin, mesh.norm.vmax = vmin - 0.5, vmax + 0.5
        # the base follows the column edges, so it sits exactly on the mesh bottom
        ax.plot(x_steps, np.repeat(base, 2), color="black", linewidth=1.2,
                label="ice base", gid="ice_base")
        handles = []
        if snow is not None:  # snow on the ice: a band above the ice surface (depth 0)
            band = ax.fill_between(x_steps, -np.repeat(np.nan_to_num(snow), 2), 0.0,
                                   facecolor="#e8eef5", edgecolor="0.45", linewidth=0.6, hatch="..",
                                   label="snow", gid="snow")
            if ax is axes[0]:
                handles.append(band)
        if name in overlay:
            label, (px, pd, pv), marker = overlay[name]
            handles.append(ax.scatter(px, pd, c=pv, cmap=cmap, norm=mesh.norm, marker=marker, s=28,
                                      edgecolors="black", linewidths=0.6, label=label, zorder=3,
                                      gid=f"points:{label}"))
        if handles:
            ax.legend(handles=handles, loc="lower left", fontsize="small", framealpha=0.9)
        cbar = fig.colorbar(mesh, ax=ax, pad=0.01, aspect=12, extend=extend)
        cbar.set_label(_label(short, _units(da, "")))
        ax.set_title(str(da.attrs.get("long_name", short)), loc="left", fontsize="medium")
        ax.set_ylabel(_label("depth below ice surface", depth_units))
        _date_axis(ax)
    finite_base = base[np.isfinite(base)]
    ymax = float(finite_base.max()) * 1.05 if finite_base.size and finite_base.max() > 0 else 1.0
    top = -1.1 * float(np.nanmax(snow)) if snow is not None else 0.0
    axes[0].set_ylim(ymax, top)  # shared y: depth increases downward on every panel, snow above 0
    if snow is not None:
        for ax in axes:
            ax.axhline(0.0, color="0.45", linewidth=0.6)
    axes[0].set_xlim(edges[0], edges[-1])
    axes[-1].set_xlabel("time")
    fig.suptitle(_title(ds, "Ice column sections", title, depth_resolved=True))
    fig.supxlabel(f"colour scales: {ROBUST_PERCENTILES[0]:g}\u2013{ROBUST_PERCENTILES[1]:g} % of the interior ice "
                  f"(liquid fraction \u2264 {interior_limit:g}: the porous bottom and slush left out); arrows: "
                  "values beyond", fontsize="x-small", color="0.3")
    return fig


def plot_salt(ds: xr.Dataset, title: str | None = None) -> Figure:
    """Salt flux to the ocean (top) and cumulative salt (bottom) against time."""
    check_output_dataset(ds, _source(ds), SALT_VARIABLES)
    x = _datenum(ds["time"].values)
    fig = Figure(figsize=(8.0, 6.0), layout="constrained")
    ax_f, ax_c = fig.subplots(2, 1, sharex=True)

    mid, lo, hi = _series(ds, "salt_flux")
    if lo is not None:
        ax_f.fill_between(x, lo, hi, step="pre", color="tab:blue", alpha=0.25, linewidth=0,
                          label=f"{BAND_PERCENTILES[0]:g}\u2013{BAND_PERCENTILES[1]:g} % range",
                          gid="band:salt_flux")
    ax_f.step(x, mid, where="pre", color="tab:blue", linewidth=1.5,
              label="salt flux to ocean" + (", median" if lo is not None else ""),
              gid="salt_flux")
    ax_f.axhline(0.0, color="0.5", linewidth=0.6)
    ax_f.set_ylabel(_label("salt flux", _units(ds["salt_flux"], "kg m-2 s-1")))
    ax_f.ticklabel_format(axis="y", style="sci", scilimits=(-3, 3), useMathText=True)
    factor = 1000.0 * SECONDS_PER_DAY  # kg m-2 s-1 -> g m-2 day-1
    sec = ax_f.secondary_yaxis("right", functions=(lambda v: v * factor, lambda v: v / factor))
    sec.set_ylabel(_label("salt flux", "g m-2 day-1"))
    ax_f.grid(True, alpha=0.3)
    ax_f.legend(loc="upper right", fontsize="small", framealpha=0.9)
    ax_f.set_title("interval mean, positive into the ocean", loc="left", fontsize="small")

    cumulative = [("salt_released", "released to ocean", "tab:blue", "-"),
                  ("salt_entrained", "entrained (sea water at the base and in flooded snow)", "tab:orange", "--"),
                  ("salt_content", "held in the ice", "tab:green", ":")]
    for name, label, color, style in cumulative:
        if name not in ds.variables:
            continue
        mid, lo, hi = _series(ds, name)
        if lo is not None:
            ax_c.fill_between(x, lo, hi, color=color, alpha=0.2, linewidth=0, gid=f"band:{name}")
        ax_c.plot(x, mid, color=color, linestyle=style,
                  linewidth=2.0 if name == "salt_released" else 1.2, label=label, gid=name)
    ax_c.set_ylabel(_label("salt", _units(ds["salt_released"], "kg m-2")))
    ax_c.set_ylim(bottom=0.0)
    ax_c.grid(True, alpha=0.3)
    ax_c.legend(loc="upper left", fontsize="small", framealpha=0.9)
    ax_c.set_title("cumulative since start", loc="left", fontsize="small")
    for a in (ax_f, ax_c):
        _date_axis(a)
    ax_c.set_xlabel("time")
    _set_run_xlim(ax_f, x)
    fig.suptitle(_title(ds, "Salt budget", title, depth_resolved=False))
    return fig


def _select_times(ds: xr.Dataset, dates: Sequence[Any]) -> list[int]:
    times = ds["time"].values
    x = _datenum(times)
    step = float(np.median(np.diff(x))) if x.size > 1 else 1.0
    chosen: list[int] = []
    for raw in dates:
        try:
            want = float(_datenum(np.atleast_1d(np.datetime64(raw, "ns")))[0])
        except (TypeError, ValueError, InputError):
            raise InputError(f"profile dates: cannot read {raw!r} as an ISO 8601 date") from None
        if not (x[0] - step <= want <= x[-1] + step):
            first, last = _time_strings(times[[0, -1]])
            raise InputError(
                f"{_source(ds)}: profile date {raw} is outside the run ({first} to {last})"
            )
        idx = int(np.argmin(np.abs(x - want)))
        if idx not in chosen:
            chosen.append(idx)
    if not chosen:
        raise InputError("profile dates: no dates given")
    return chosen


def default_profile_indices(n_time: int, count: int = 4) -> list[int]:
    """``count`` evenly spaced output-time indices ending at the last time.

    The first output time is skipped (the ice is thinnest there); with fewer
    times than ``count`` every time is used.
    """
    if n_time <= count:
        return list(range(n_time))
    picks = np.round(np.linspace(0, n_time - 1, count + 1)[1:]).astype(int)
    return list(dict.fromkeys(int(i) for i in picks))


def plot_profiles(ds: xr.Dataset, dates: Sequence[Any] | None, title: str | None = None) -> Figure:
    """Vertical profiles of the four fields at the output times nearest ``dates``.

    ``dates``: ISO 8601 strings, ``datetime`` or ``numpy.datetime64`` values;
    ``None`` picks four evenly spaced output times.
    """
    check_output_dataset(ds, _source(ds), PROFILE_VARIABLES)
    d = _member0(ds)
    if dates is None:
        idx = default_profile_indices(d.sizes["time"])
    else:
        idx = _select_times(d, list(dates))
    labels = _time_strings(d["time"].values[idx])
    fig = Figure(figsize=(11.0, 5.0), layout="constrained")
    axes = fig.subplots(1, len(FIELDS), sharey=True)
    cmap = matplotlib.colormaps["viridis"]
    colors = [cmap(v) for v in np.linspace(0.0, 0.85, max(len(idx), 1))]
    depth_units = _units(d["depth"], "m")
    deepest = 0.0
    for ax, (name, short, _cm) in zip(axes, FIELDS):
        da = d[name].transpose("time", "layer")
        for i, label, color in zip(idx, labels, colors):
            z = d["depth"].transpose("time", "layer").values[i].astype(float)
            ax.plot(da.values[i].astype(float), z, marker="o", markersize=3, color=color,
                    linewidth=1.5, label=label, gid=f"profile:{name}:{label}")
            if np.isfinite(z).any():
                deepest = max(deepest, float(np.nanmax(z)))
        ax.set_xlabel(_label(short, _units(da, "")))
        ax.grid(True, alpha=0.3)
    if "depth_bounds" in d.variables:
        db = d["depth_bounds"].transpose("time", "layer", "nv").values[idx].astype(float)
        if np.isfinite(db).any():
            deepest = max(deepest, float(np.nanmax(db)))
    axes[0].set_ylim(deepest * 1.03 if deepest > 0 else 1.0, 0.0)
    axes[0].set_ylabel(_label("depth below ice surface", depth_units))
    axes[0].legend(loc="lower left", fontsize="small", framealpha=0.9, title="date")
    fig.suptitle(_title(ds, "Ice column profiles", title, depth_resolved=True))
    return fig


def _saver(fig: Figure, fmt: str, dpi: int = 150):
    """``write(path)`` saving ``fig`` in ``fmt`` (for the atomic writers of :mod:`icecolumn.textfile`)."""
    return lambda tmp: fig.savefig(tmp, format=fmt, dpi=dpi)


def _save_atomic(fig: Figure, path: Path, fmt: str, dpi: int = 150) -> Path:
    return write_atomically(path, _saver(fig, fmt, dpi), suffix=f".{fmt}")


def plot_run(
    ds: xr.Dataset,
    outdir: str | os.PathLike,
    fmt: str = "png",
    laws: xr.Dataset | Mapping[str, Any] | None = None,
    obs: xr.Dataset | Mapping[str, Any] | None = None,
    profiles: Sequence[Any] | None = None,
    thermistor: xr.Dataset | Mapping[str, Any] | None = None,
    core: xr.Dataset | Mapping[str, Any] | None = None,
    title: str | None = None,
    overwrite: bool = True,
) -> list[Path]:
    """Write thickness, sections, salt and profiles figures into ``outdir``.

    All four figures are drawn first and then written all or none
    (:func:`icecolumn.textfile.write_files_atomically`: temporary names in ``outdir``, then
    renamed), so a reader never sees a half-written figure and a failure leaves no new
    file.  An existing figure is replaced unless ``overwrite`` is False (then it is an
    :class:`InputError` before anything is written).  Returns the written paths.
    """
    fmt = str(fmt).lower().lstrip(".")
    if fmt not in FORMATS:
        raise InputError(f"figure format {fmt!r} is not one of {', '.join(FORMATS)}")
    check_output_dataset(ds, _source(ds), OUTPUT_VARIABLES)
    out = Path(outdir)
    if out.is_dir():  # refuse before drawing
        for name in FIGURE_NAMES:
            check_new_output(out / f"{name}.{fmt}", overwrite)
    figures = (plot_thickness(ds, laws=laws, obs=obs, title=title),
               plot_sections(ds, thermistor=thermistor, core=core, title=title),
               plot_salt(ds, title=title),
               plot_profiles(ds, profiles, title=title))
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"{out}: cannot create figure directory ({exc.strerror})") from None
    if not out.is_dir():
        raise InputError(f"{out}: not a directory")
    files = {out / f"{name}.{fmt}": _saver(fig, fmt) for name, fig in zip(FIGURE_NAMES, figures)}
    return write_files_atomically(files, overwrite=overwrite)
