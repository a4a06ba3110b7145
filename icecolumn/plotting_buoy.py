"""Figure of a buoy analysis: temperature section with the interfaces, and the flux terms.

Reads Datasets only (the record, the interfaces of :func:`icecolumn.buoy.interfaces` and
the budget of :func:`icecolumn.buoy.heat_budget`, or the one file ``icecolumn buoy``
writes); matplotlib's object-oriented API, no pyplot.
"""

from __future__ import annotations

from pathlib import Path

import matplotlib.dates as mdates
import numpy as np
import xarray as xr
from matplotlib.figure import Figure

from .buoy import CAUTION_FLUX, WINDOW_FLAGS

__all__ = ["plot_buoy", "save_figure"]

_TERMS = (
    ("conductive_heat_flux", "F_c conduction\n(lower ice)", "tab:blue", -0.27),
    ("growth_heat_flux", "G latent heat\nof basal growth", "tab:green", -0.09),
    ("heat_storage_flux", "F_s released by\ncooling (storage)", "tab:purple", 0.09),
    ("ocean_heat_flux", "F_w ocean heat\nflux (residual)", "black", 0.27),
)

_LINES = (
    ("snow_surface", "snow surface", "white"),
    ("ice_surface", "ice surface", "0.85"),
    ("ice_bottom", "ice bottom", "cyan"),
)


def plot_buoy(ds: xr.Dataset, title: str | None = None) -> Figure:
    """Two panels: the temperature section (time x depth, depth positive down) with the
    interfaces used (solid) and detected (dotted) and the window boundaries; and the
    budget terms per window with their expanded uncertainty as error bars (windows
    without an estimate are shaded and named).  The caution is printed at the bottom.

    ``ds`` holds ``temperature`` (time, sensor), ``depth`` (sensor), the interface series
    and the budget variables on ``window`` (as :func:`icecolumn.buoy_io.budget_dataset`).
    """
    t = ds["time"].values.astype("datetime64[ns]")
    z = ds["depth"].values
    temp = ds["temperature"].values
    fig = Figure(figsize=(10.0, 8.2))
    ax1 = fig.add_axes((0.08, 0.54, 0.78, 0.38))
    cax = fig.add_axes((0.875, 0.54, 0.015, 0.38))
    ax2 = fig.add_axes((0.08, 0.13, 0.78, 0.33), sharex=ax1)
    # gaps in the record (steps over 1.5 median steps) are drawn as missing, not bridged
    tn = t.astype(np.int64).astype(float)
    tsec, shown = tn, temp
    if t.size > 2:
        step = np.median(np.diff(tn))
        gaps = np.flatnonzero(np.diff(tn) > 1.5 * step)
        if gaps.size:
            tsec = np.insert(tn, gaps + 1, 0.5 * (tn[gaps] + tn[gaps + 1]))
            shown = np.insert(temp, gaps + 1, np.nan, axis=0)
    # cell edges for pcolormesh (times and depths half-way between samples)
    if tsec.size > 1:
        te = np.concatenate([[tsec[0] - 0.5 * (tsec[1] - tsec[0])], 0.5 * (tsec[1:] + tsec[:-1]),
                             [tsec[-1] + 0.5 * (tsec[-1] - tsec[-2])]])
    else:
        te = np.array([tsec[0] - 1.8e12, tsec[0] + 1.8e12])
    ze = np.concatenate([[z[0] - 0.5 * (z[1] - z[0])], 0.5 * (z[1:] + z[:-1]), [z[-1] + 0.5 * (z[-1] - z[-2])]])
    tedges = te.astype(np.int64).astype("datetime64[ns]")
    temp = shown
    finite = temp[np.isfinite(temp)]
    vmin = float(np.percentile(finite, 1)) if finite.size else -30.0
    mesh = ax1.pcolormesh(tedges, ze, np.ma.masked_invalid(temp.T), cmap="plasma", vmin=vmin, vmax=0.0,
                          shading="flat", rasterized=True)
    ax1.set_facecolor("0.6")  # missing readings (dead sensors, gaps) show grey
    cb = fig.colorbar(mesh, cax=cax)
    cb.set_label("temperature [°C]")
    for name, label, color in _LINES:
        if name in ds:
            src = ds[name].attrs.get("source", "")
            values = np.asarray(ds[name].values, float)
            if name == "ice_surface" and "ice_surface_fill" in ds:
                filled = np.asarray(ds["ice_surface_fill"].values) > 0
                ax1.plot(t, np.where(filled, np.nan, values), color=color, lw=1.4, label=f"{label} ({src})")
                if filled.any():
                    ax1.plot(t, np.where(filled, values, np.nan), color=color, lw=1.2, ls="--",
                             label=f"{label} (filled: carried forward or snow surface)")
                continue
            ax1.plot(t, values, color=color, lw=1.4, label=f"{label} ({src})")
        det = f"{name}_detected"
        if det in ds and ds[name].attrs.get("source") == "measured":
            ax1.plot(t, ds[det].values, color=color, lw=0.9, ls=":", label=f"{label} (detected)")
    if "window_bounds" in ds:
        for b in np.unique(ds["window_bounds"].values.ravel()):
            if t[0] <= b <= t[-1]:
                ax1.axvline(b, color="0.3", lw=0.4, alpha=0.6)
    ax1.set_ylim(ze[-1], ze[0])
    ax1.set_ylabel("depth below the ice surface at deployment [m]")
    ax1.legend(loc="lower left", fontsize=7, ncol=3, framealpha=0.7)
    src = Path(str(ds.attrs.get("record_source_file", ""))).name
    ax1.set_title(title or (f"icecolumn buoy: {src}" if src else "icecolumn buoy"), fontsize=10)
    ax1.tick_params(labelbottom=False)
    if "window" in ds:
        wb = ds["window_bounds"].values
        mid = ds["window"].values
        width = (wb[:, 1] - wb[:, 0]).astype("timedelta64[ns]")
        flag = ds["window_flag"].values
        for name, label, color, off in _TERMS:
            x = mid + (width * off * 0.9).astype("timedelta64[ns]")
            ax2.errorbar(x, ds[name].values, yerr=ds[f"{name}_uncertainty"].values, fmt="o" if name != "ocean_heat_flux"
                         else "s", color=color, ms=4 if name != "ocean_heat_flux" else 5, capsize=2, lw=1,
                         label=label)
        for w in np.flatnonzero(flag != 0):
            a, b = max(wb[w, 0], t[0]), min(wb[w, 1], t[-1])  # the part inside the record
            if not b > a:
                continue
            ax2.axvspan(a, b, color="0.85", zorder=0)
            reason = WINDOW_FLAGS.get(int(flag[w]), "").replace("_", " ")
            ax2.text(a + (b - a) / 2, 0.97, f"no estimate: {reason}", transform=ax2.get_xaxis_transform(),
                     ha="center", va="top", fontsize=6, rotation=90, color="0.35")
        ax2.axhline(0.0, color="0.4", lw=0.6)
        ax2.set_ylabel("heat flux [W m$^{-2}$]")
        ax2.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=7, frameon=False, borderaxespad=0.0)
        ax2.set_title("budget per window: F_w = F_c - G - F_s; error bars: expanded uncertainty (2 sd)", fontsize=9)
    ax1.set_xlim(tedges[0], tedges[-1])
    ax2.xaxis.set_major_locator(mdates.AutoDateLocator())
    ax2.xaxis.set_major_formatter(mdates.ConciseDateFormatter(ax2.xaxis.get_major_locator()))
    fig.text(0.5, 0.012, CAUTION_FLUX, ha="center", va="bottom", fontsize=7, wrap=True, color="0.2")
    return fig


def save_figure(fig: Figure, path, fmt: str | None = None, dpi: int = 130) -> None:
    """Save a figure to ``path`` (the format from ``fmt`` or the suffix)."""
    p = Path(path)
    fig.savefig(p, format=fmt or p.suffix.lstrip(".").split(".")[-1] or "png", dpi=dpi)
