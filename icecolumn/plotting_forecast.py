"""Figures of forecast ensembles (fan chart) and calibrations.

Reads Datasets only (never runs the solver); matplotlib's object-oriented API, no pyplot.

``plot_fan_chart(ds, obs, threshold, by)``  percentile bands of ice thickness
``plot_calibration(cal)``                   observations, model, baseline, residuals
``plot_forecast_file(ds, outdir, fmt, ...)``  the right figure for a forecast or calibration file
"""

from __future__ import annotations

from pathlib import Path

import matplotlib.dates as mdates
import numpy as np
import xarray as xr
from matplotlib.figure import Figure

from .errors import InputError
from .output import CAUTION

__all__ = ["plot_fan_chart", "plot_calibration", "plot_forecast_file", "is_forecast", "is_calibration"]

FORMATS = ("png", "pdf", "svg")


def is_forecast(ds: xr.Dataset) -> bool:
    return "ice_thickness_percentile" in ds.variables


def is_calibration(ds: xr.Dataset) -> bool:
    return "observed_ice_thickness" in ds.variables and "residual" in ds.variables


def _caution(fig: Figure) -> None:
    fig.text(0.5, 0.005, CAUTION, ha="center", va="bottom", fontsize=6.5, wrap=True, color="0.25")


def plot_fan_chart(ds: xr.Dataset, obs: xr.Dataset | None = None, threshold: float | None = None,
                   by=None, title: str | None = None) -> Figure:
    """Fan chart of forecast ice thickness: 5-95 % and 25-75 % bands, median, the median
    load-bearing thickness (the thickness the threshold probability uses), observations."""
    if not is_forecast(ds):
        raise InputError(f"{ds.encoding.get('source', 'dataset')}: not a forecast (no ice_thickness_percentile)")
    t = ds["time"].values
    p = ds["ice_thickness_percentile"]
    q = {float(v): np.asarray(p.sel(percentile=v).values, float) for v in ds["percentile"].values}
    fig = Figure(figsize=(8.0, 4.8))
    ax = fig.add_axes((0.1, 0.17, 0.86, 0.73))
    ax.fill_between(t, q[5.0], q[95.0], color="tab:blue", alpha=0.2, lw=0, label="5-95 %")
    ax.fill_between(t, q[25.0], q[75.0], color="tab:blue", alpha=0.4, lw=0, label="25-75 %")
    ax.plot(t, q[50.0], color="tab:blue", lw=2, label="median")
    if "load_bearing_thickness_percentile" in ds:
        lb = np.asarray(ds["load_bearing_thickness_percentile"].sel(percentile=50.0).values, float)
        ax.plot(t, lb, color="tab:green", lw=1.5, ls="--", label="median load-bearing thickness")
    if obs is not None and "ice_thickness" in obs:
        ax.plot(obs["time"].values, obs["ice_thickness"].values, "ko", ms=4, label="drill holes")
    if threshold is not None:
        ax.axhline(float(threshold), color="tab:red", ls="--", lw=1,
                   label=f"threshold {float(threshold):g} m (load-bearing)")
    if by is not None:
        ax.axvline(np.datetime64(str(by)[:16]), color="tab:red", ls=":", lw=1, label=f"by {str(by)[:10]}")
    n = ds.sizes.get("member", 1)
    ax.set_ylabel("ice thickness [m]")
    ax.set_title(title or f"{ds.attrs.get('title', 'icecolumn forecast')} ({n} members)", fontsize=10)
    ax.legend(loc="upper left", fontsize=8)
    ax.grid(alpha=0.3)
    ax.xaxis.set_major_formatter(mdates.DateFormatter("%Y-%m-%d"))
    for lab in ax.get_xticklabels():
        lab.set_rotation(20)
    _caution(fig)
    return fig


def plot_calibration(cal: xr.Dataset, title: str | None = None) -> Figure:
    """Observed, calibrated-model and baseline thickness, and the residuals."""
    if not is_calibration(cal):
        raise InputError(f"{cal.encoding.get('source', 'dataset')}: not a calibration dataset")
    t = cal["time"].values
    fig = Figure(figsize=(8.0, 6.0))
    ax = fig.add_axes((0.1, 0.45, 0.86, 0.47))
    ax2 = fig.add_axes((0.1, 0.13, 0.86, 0.25), sharex=ax)
    ax.plot(t, cal["observed_ice_thickness"].values, "ko", ms=4, label="observed")
    ax.plot(t, cal["model_ice_thickness"].values, "-", color="tab:blue", label="model (calibrated)")
    if "baseline_ice_thickness" in cal:
        ax.plot(t, cal["baseline_ice_thickness"].values, "--", color="tab:orange", label="Lebedev-type law (fitted)")
    text = ", ".join(f"{k} = {v:.3g} +/- {s:.2g}" for k, v, s in
                     zip(cal["parameter"].values, cal["fitted_value"].values, cal["sigma"].values))
    ax.set_title(title or f"calibration: {text}", fontsize=9)
    ax.set_ylabel("ice thickness [m]")
    ax.legend(fontsize=8)
    ax.grid(alpha=0.3)
    ax2.axhline(0.0, color="0.5", lw=0.8)
    ax2.plot(t, 100 * cal["residual"].values, "o-", color="tab:blue", ms=3)
    ax2.set_ylabel("model - obs [cm]")
    ax2.grid(alpha=0.3)
    ax2.xaxis.set_major_formatter(mdates.DateFormatter("%Y-%m-%d"))
    for lab in ax2.get_xticklabels():
        lab.set_rotation(20)
    for lab in ax.get_xticklabels():
        lab.set_visible(False)
    _caution(fig)
    return fig


def _save(fig: Figure, path: Path, fmt: str) -> Path:
    from .plotting import _save_atomic

    return _save_atomic(fig, path, fmt, dpi=130)


def plot_forecast_file(ds: xr.Dataset, outdir, fmt: str = "png", obs: xr.Dataset | None = None,
                       threshold: float | None = None, by=None, stem: str | None = None) -> list[Path]:
    """Write the fan chart (forecast) or the calibration figure into ``outdir``.

    Files: ``<stem>_fan.<fmt>`` for a forecast, ``<stem>_calibration.<fmt>`` for a
    calibration Dataset (``stem`` defaults to ``forecast`` / ``calibration``).
    """
    fmt = str(fmt).lower().lstrip(".")
    if fmt not in FORMATS:
        raise InputError(f"figure format {fmt!r} is not one of {', '.join(FORMATS)}")
    out = Path(outdir)
    out.mkdir(parents=True, exist_ok=True)
    if is_forecast(ds):
        return [_save(plot_fan_chart(ds, obs=obs, threshold=threshold, by=by),
                      out / f"{stem or 'forecast'}_fan.{fmt}", fmt)]
    if is_calibration(ds):
        return [_save(plot_calibration(ds), out / f"{stem or 'calibration'}_calibration.{fmt}", fmt)]
    raise InputError(f"{ds.encoding.get('source', 'dataset')}: neither a forecast nor a calibration file")
