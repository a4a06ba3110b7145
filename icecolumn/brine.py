"""Brine and salt budget of a run, per calendar period, from its cumulative variables.

All functions are pure: they read a run Dataset (:func:`icecolumn.run`) and return new
objects; nothing is written to disk.

Budget relation (per unit area, over any period)::

    salt entrained by new ice = salt released to the ocean + change of salt kept in the ice

``salt_entrained`` is the salt in the sea water the ice takes up (at its base and in
flooded snow), ``salt_released`` the net salt that left the ice for the ocean, and
``salt_content`` the salt in the column.  The release is split into its four parts, which
add up to it::

    released = drainage (brine out minus sea water in) + basal melt + surface melt + flushing  The model closes this relation to round-off, so the residual reported here is a
check of the output, not a model error estimate.

Periods are calendar periods in UTC (``month``, ``week`` starting Monday 00:00, ``day``).
A period is bounded by output times: it runs from the first output time at or after its
calendar start (the run start for the first period) to the first output time at or after
the next period's calendar start (the run end for the last period), so consecutive periods
share their boundary record and the first and last periods may be partial.  Sums over
the periods equal the run totals.
"""
from __future__ import annotations

import numpy as np
import xarray as xr

from .texttable import text_table

__all__ = ["brine_budget", "format_brine_budget", "summary", "PERIODS"]

#: Accepted period names and when each calendar period starts (UTC).
PERIODS = {"month": "first day of the month, 00:00", "week": "Monday 00:00", "day": "00:00"}

_CUMULATIVE = ("salt_entrained", "salt_released", "salt_released_drainage", "salt_released_melt",
               "salt_content")
#: The parts of ``salt_released`` (they add up to it), with their budget names and meanings.
RELEASE_PARTS = (
    ("salt_released_drainage", "drainage", "net salt released to the ocean by gravity drainage"),
    ("salt_released_melt", "basal melt", "salt released to the ocean by basal melt"),
    ("salt_released_surface_melt", "surface melt", "salt carried to the ocean by surface melt water"),
    ("salt_released_flushing", "flushing", "salt flushed out of the ice base by melt water"),
)


def _check(ds: xr.Dataset) -> None:
    if "member" in ds.dims:
        raise ValueError("brine budget: the Dataset has a 'member' dimension; select one member first "
                         "(ds.isel(member=i))")
    missing = [v for v in _CUMULATIVE if v not in ds]
    if missing:
        raise ValueError(f"brine budget: the Dataset lacks {', '.join(missing)} (not an icecolumn run?)")
    if ds.sizes.get("time", 0) < 2:
        raise ValueError("brine budget: the Dataset needs at least two output times")


def _period_bounds(times: np.ndarray, period: str) -> tuple[np.ndarray, np.ndarray]:
    """Indices (into ``times``) of the first and last record of each period."""
    if period not in PERIODS:
        raise ValueError(f"brine budget: period must be one of {', '.join(PERIODS)}, not {period!r}")
    day0 = times[0].astype("datetime64[D]")
    day1 = times[-1].astype("datetime64[D]")
    if period == "month":
        starts = np.arange(day0.astype("datetime64[M]"), day1.astype("datetime64[M]") + 1)
    elif period == "week":
        monday = day0 - (day0.astype(np.int64) + 3) % 7  # 1970-01-01 was a Thursday
        starts = np.arange(monday, day1 + 1, 7)
    else:
        starts = np.arange(day0, day1 + 1)
    starts = starts.astype("datetime64[ns]")  # every calendar start from the first period's on
    # boundary record of each calendar start: the first output time at or after it
    idx = np.searchsorted(times, starts, side="left")
    idx[0] = 0
    idx = np.append(idx, times.size - 1)
    idx = np.minimum(idx, times.size - 1)
    lo, hi = idx[:-1], idx[1:]
    keep = hi > lo  # drop periods without any output interval
    return lo[keep], hi[keep]


def brine_budget(ds: xr.Dataset, period: str = "month") -> xr.Dataset:
    """Salt budget per calendar period (UTC).

    Parameters
    ----------
    ds : xarray.Dataset
        One run from :func:`icecolumn.run` (no ``member`` dimension).
    period : {"month", "week", "day"}
        Calendar period; the first and last periods may be partial.

    Returns
    -------
    xarray.Dataset
        Dimension ``period`` with coordinates ``period_start`` and ``period_end`` (the
        bounding output times [UTC]) and variables ``salt_entrained``, the parts of the
        release ``salt_released_drainage``, ``salt_released_melt``,
        ``salt_released_surface_melt`` and ``salt_released_flushing`` (0 when a file
        has no such variable, with a note in ``attrs["comment"]``), ``salt_released``
        (their sum), ``salt_kept_change`` and ``budget_residual`` [kg m-2], and
        ``salt_flux_mean`` [kg m-2 s-1].
    """
    _check(ds)
    times = ds["time"].values.astype("datetime64[ns]")
    lo, hi = _period_bounds(times, period)

    def diff(name):
        v = ds[name].values.astype(float)
        return v[hi] - v[lo]

    seconds = ((times[hi] - times[lo]) / np.timedelta64(1, "s")).astype(float)
    ent = diff("salt_entrained")
    rel = diff("salt_released")
    kept = diff("salt_content")
    missing = [name for name, _, _ in RELEASE_PARTS if name not in ds]
    out = {"salt_entrained": (ent, "kg m-2", "salt in sea water taken up by the ice during the period")}
    for name, _, meaning in RELEASE_PARTS:
        out[name] = (diff(name) if name in ds else np.zeros(lo.size), "kg m-2", f"{meaning} during the period")
    out.update({
        "salt_released": (rel, "kg m-2", "net salt released to the ocean during the period (the sum of drainage, "
                                         "basal melt, surface melt and flushing)"),
        "salt_kept_change": (kept, "kg m-2", "change of the salt kept in the ice during the period"),
        "salt_flux_mean": (rel / seconds, "kg m-2 s-1",
                           "time-mean net salt flux from the ice base into the ocean over the period"),
        "budget_residual": (ent - rel - kept, "kg m-2",
                            "salt entrained minus salt released minus change of salt kept (should be ~0)"),
    })
    data = {k: ("period", v, {"units": u, "long_name": ln}) for k, (v, u, ln) in out.items()}
    data["period_seconds"] = ("period", seconds, {"units": "s", "long_name": "length of the period covered"})
    bds = xr.Dataset(
        data,
        coords={"period_start": ("period", times[lo], {"long_name": "first output time of the period (UTC)"}),
                "period_end": ("period", times[hi], {"long_name": "last output time of the period (UTC)"})})
    comment = ("differences of the run's cumulative variables between the output times bounding each calendar "
               "period (UTC); first and last periods may be partial")
    if missing:
        comment += f"; the file has no {', '.join(missing)} (taken as 0)"
    bds.attrs = {"period": period, "comment": comment}
    return bds


def format_brine_budget(bds: xr.Dataset) -> str:
    """Plain-text table of a :func:`brine_budget` Dataset, with a total row: entrained, the four
    parts of the release (drainage, basal melt, surface melt, flushing) that add up to
    "released", the change of salt kept and the residual."""
    cols = [("salt_entrained", "entrained"), *((name, label) for name, label, _ in RELEASE_PARTS),
            ("salt_released", "released"), ("salt_kept_change", "kept chg"), ("budget_residual", "residual")]
    columns = [("period start", "(UTC)"), ("period end", "(UTC)"), *((lab, "kg m-2") for _, lab in cols),
               ("mean flux", "kg m-2 s-1")]
    rows = []
    for i in range(bds.sizes["period"]):
        a = str(bds["period_start"].values[i])[:16].replace("T", " ")
        b = str(bds["period_end"].values[i])[:16].replace("T", " ")
        rows.append([a, b, *(f"{float(bds[v].values[i]):.4g}" for v, _ in cols),
                     f"{float(bds['salt_flux_mean'].values[i]):.3e}"])
    secs = float(bds["period_seconds"].values.sum())
    mean = float(bds["salt_released"].values.sum()) / secs if secs > 0 else float("nan")
    total = ["total", "", *(f"{float(bds[v].values.sum()):.4g}" for v, _ in cols), f"{mean:.3e}"]
    return text_table(columns, rows, footer=total, title=f"Salt budget per {bds.attrs.get('period', 'period')}")


def summary(ds: xr.Dataset) -> dict:
    """Salt released over the run and the mean and largest salt flux.

    Returns
    -------
    dict
        ``salt_released_total`` [kg m-2] (change of ``salt_released`` over the run),
        ``salt_flux_mean`` [kg m-2 s-1] (that total over the run length), ``start_time`` and
        ``end_time`` (numpy datetime64, UTC) of the run, ``salt_flux_max`` [kg m-2 s-1] (the
        largest output interval mean) and ``salt_flux_max_time`` (end of that interval).
    """
    _check(ds)
    times = ds["time"].values.astype("datetime64[ns]")
    rel = ds["salt_released"].values.astype(float)
    total = float(rel[-1] - rel[0])
    seconds = float((times[-1] - times[0]) / np.timedelta64(1, "s"))
    sf = ds["salt_flux"].values.astype(float)
    if np.isfinite(sf).any():
        imax = int(np.nanargmax(sf))
        fmax, tmax = float(sf[imax]), times[imax]
    else:
        fmax, tmax = float("nan"), None
    return {"salt_released_total": total, "salt_flux_mean": total / seconds,
            "start_time": times[0], "end_time": times[-1],
            "salt_flux_max": fmax, "salt_flux_max_time": tmax}
