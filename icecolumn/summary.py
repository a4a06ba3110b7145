"""Summaries of run and ensemble outputs as plain data (reductions of the output, no physics).

:func:`run_summary` gives what ``icecolumn run`` prints after a run: the period, start, end
and largest ice thickness, the season's events (snow-ice, melt-out, new ice, open water),
the salt released and the salt flux (:func:`icecolumn.brine.summary`) and the brine budget
by month.  :func:`ensemble_summary` gives the end thickness and salt released of every
member.  Both read an output Dataset and return numbers and times; the command line
formats them.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import xarray as xr

from . import brine

__all__ = ["SeasonEvents", "RunSummary", "EnsembleSummary", "season_events", "run_summary", "ensemble_summary"]


@dataclass
class SeasonEvents:
    """What happened to the ice cover during a run (empty when nothing did)."""

    snow_ice: float = 0.0  # snow-ice formed by flooding [m]
    melt_out: list = field(default_factory=list)  # first output times of open water after ice (datetime64)
    new_ice: list = field(default_factory=list)  # first output times of ice after open water (datetime64)
    open_water_days: float = 0.0  # time without ice [days]


@dataclass
class RunSummary:
    """The numbers ``icecolumn run`` reports for one column."""

    start: np.datetime64
    end: np.datetime64
    days: float  # run length [days]
    thickness_start: float  # [m]
    thickness_end: float  # [m]
    thickness_max: float  # [m]
    thickness_max_time: np.datetime64
    events: SeasonEvents
    salt_released: float  # net salt released over the run [kg m-2]
    salt_flux_mean: float  # [kg m-2 s-1]
    salt_flux_max: float  # largest output-interval mean [kg m-2 s-1]
    brine_by_month: xr.Dataset  # icecolumn.brine.brine_budget(ds, "month")


@dataclass
class EnsembleSummary:
    """End values of every member of an ensemble output."""

    start: np.datetime64
    end: np.datetime64
    names: list[str]
    thickness_end: np.ndarray  # [m] (NaN when the output does not hold ice_thickness)
    salt_released: np.ndarray  # [kg m-2] (NaN when the output does not hold salt_released)


def season_events(ds: xr.Dataset) -> SeasonEvents:
    """Snow-ice formed, melt-out and new-ice times and days of open water of one column."""
    events = SeasonEvents()
    t = ds["time"].values
    if "snow_ice_growth" in ds:
        events.snow_ice = max(float(ds["snow_ice_growth"].values[-1]), 0.0)
    if "sea_ice_area_fraction" in ds:
        ice = np.asarray(ds["sea_ice_area_fraction"].values) > 0
        events.melt_out = [t[i] for i in np.flatnonzero(ice[:-1] & ~ice[1:]) + 1]
        events.new_ice = [t[i] for i in np.flatnonzero(~ice[:-1] & ice[1:]) + 1]
        events.open_water_days = float(np.sum(~ice[1:] * np.diff(t) / np.timedelta64(1, "D")))
    return events


def run_summary(ds: xr.Dataset) -> RunSummary:
    """Summary of one column's output (a Dataset from :func:`icecolumn.run` or its file)."""
    t = ds["time"].values
    h = np.asarray(ds["ice_thickness"].values, dtype=float)
    imax = int(np.nanargmax(h))
    salt = brine.summary(ds)
    return RunSummary(start=t[0], end=t[-1], days=float((t[-1] - t[0]) / np.timedelta64(1, "D")),
                      thickness_start=float(h[0]), thickness_end=float(h[-1]), thickness_max=float(h[imax]),
                      thickness_max_time=t[imax], events=season_events(ds),
                      salt_released=salt["salt_released_total"], salt_flux_mean=salt["salt_flux_mean"],
                      salt_flux_max=salt["salt_flux_max"], brine_by_month=brine.brine_budget(ds, "month"))


def ensemble_summary(ds: xr.Dataset) -> EnsembleSummary:
    """End thickness and salt released of every member (reads only those last values)."""
    n = ds.sizes["member"]
    names = [str(v) for v in ds["member_name"].values] if "member_name" in ds else [str(i) for i in range(n)]

    def last(name: str) -> np.ndarray:
        if name not in ds:
            return np.full(n, np.nan)
        return np.asarray(ds[name].isel(time=-1).values, dtype=float)

    t = ds["time"].values
    return EnsembleSummary(start=t[0], end=t[-1], names=names, thickness_end=last("ice_thickness"),
                           salt_released=last("salt_released"))
