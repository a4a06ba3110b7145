"""Summaries of run and ensemble outputs as plain data (reductions of the output, no physics).

:func:`run_summary` gives what ``icecolumn run`` prints after a run: the period, start, end
and largest ice thickness, the season's events (snow-ice, melt-out, new ice, open water),
the salt released and the salt flux (:func:`icecolumn.brine.summary`) and the brine budget
by month.  Under a measured ``snow_thickness`` series (the forcing given to
:func:`run_summary`) it also says how much snow-ice the record implies and warns when
flooding needed more snow than the series shows (:func:`measured_snow_check`).  :func:`ensemble_summary` gives the end thickness and salt released of every
member.  Both read an output Dataset and return numbers and times; the command line
formats them.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import xarray as xr

from . import brine

__all__ = ["SeasonEvents", "RunSummary", "EnsembleSummary", "MeasuredSnow", "season_events", "measured_snow_check",
           "run_summary", "ensemble_summary"]


@dataclass
class SeasonEvents:
    """What happened to the ice cover during a run (empty when nothing did)."""

    snow_ice: float = 0.0  # snow-ice formed by flooding [m]
    melt_out: list = field(default_factory=list)  # first output times of open water after ice (datetime64)
    new_ice: list = field(default_factory=list)  # first output times of ice after open water (datetime64)
    open_water_days: float = 0.0  # time without ice [days]


@dataclass
class MeasuredSnow:
    """Snow-ice under a measured snow-depth series (see :func:`measured_snow_check`)."""

    snow_ice: float  # snow-ice formed over the run by flooding under the series [m]
    initial: float  # the series' depth at the run start [m]
    increases: float  # sum of the series' increases over the run [m]
    warning: str | None  # set when snow_ice exceeds initial + increases

    @property
    def supply(self) -> float:
        """Snow the series shows over the run: the start depth plus every increase [m]."""
        return self.initial + self.increases

    def note(self) -> str:
        """One line on what the record implies."""
        return (f"the measured snow_thickness series implies {self.snow_ice:.3f} m of snow-ice (snow_ice_growth); "
                f"it shows {self.initial:.3f} m of snow at the start plus {self.increases:.3f} m of increases")


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
    measured_snow: MeasuredSnow | None = None  # set for a run under a measured snow_thickness series
    warnings: list = field(default_factory=list)  # one-line warnings for the user


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


#: Snow-ice [m] beyond the snow a measured series shows that is not yet worth a warning
#: (round-off and the series' linear interpolation).
SNOW_SUPPLY_TOLERANCE = 1e-3


def measured_snow_check(ds: xr.Dataset, forcing: xr.Dataset) -> MeasuredSnow | None:
    """Snow-ice under a measured ``snow_thickness`` series, and whether the series can supply it.

    A measured depth is the snow on the ice at that time, after any flooding, so the model
    takes it as given and flooding does not lower it.  The snow that flooding turned into
    snow-ice must still have been there: the start depth plus the series' increases (every
    rise between consecutive values inside the run; common practice, no source) is the
    most snow the record shows.  More snow-ice than that means the record and the
    hydrostatics disagree (a series that is too deep or not updated after flooding, or
    the wrong snow or ice density), and gets a warning.

    Returns None when the forcing has no ``snow_thickness`` series or the output no
    ``snow_ice_growth``.
    """
    if "snow_thickness" not in forcing or "snow_ice_growth" not in ds:
        return None
    t = ds["time"].values.astype("datetime64[ns]")
    ft = forcing["time"].values.astype("datetime64[ns]")
    fv = np.asarray(forcing["snow_thickness"].values, dtype=float)
    inside = (ft > t[0]) & (ft < t[-1])
    x = ((ft - t[0]) / np.timedelta64(1, "s")).astype(float)
    ends = np.interp([0.0, float((t[-1] - t[0]) / np.timedelta64(1, "s"))], x, fv)
    series = np.concatenate([[ends[0]], fv[inside], [ends[1]]])
    increases = float(np.sum(np.clip(np.diff(series), 0.0, None)))
    growth = np.asarray(ds["snow_ice_growth"].values, dtype=float)
    snow_ice = max(float(growth[-1] - growth[0]), 0.0)
    m = MeasuredSnow(snow_ice=snow_ice, initial=float(ends[0]), increases=increases, warning=None)
    if m.snow_ice > m.supply + SNOW_SUPPLY_TOLERANCE:
        m.warning = (f"flooding under the measured snow_thickness series formed {m.snow_ice:.3f} m of snow-ice, more "
                     f"than the {m.supply:.3f} m of snow the series shows ({m.initial:.3f} m at the start plus "
                     f"{m.increases:.3f} m of increases): a measured depth is the snow left on the ice, so check the "
                     f"series (or the [snow] and ice densities), or give snowfall instead and let the model carry "
                     f"the snow")
    return m


def run_summary(ds: xr.Dataset, forcing: xr.Dataset | None = None) -> RunSummary:
    """Summary of one column's output (a Dataset from :func:`icecolumn.run` or its file).

    ``forcing``: the forcing of the run; with a measured ``snow_thickness`` series the
    summary says how much snow-ice the record implies and warns when flooding needed more
    snow than the series shows (:func:`measured_snow_check`).
    """
    t = ds["time"].values
    h = np.asarray(ds["ice_thickness"].values, dtype=float)
    imax = int(np.nanargmax(h))
    salt = brine.summary(ds)
    snow = measured_snow_check(ds, forcing) if forcing is not None else None
    return RunSummary(start=t[0], end=t[-1], days=float((t[-1] - t[0]) / np.timedelta64(1, "D")),
                      thickness_start=float(h[0]), thickness_end=float(h[-1]), thickness_max=float(h[imax]),
                      thickness_max_time=t[imax], events=season_events(ds),
                      salt_released=salt["salt_released_total"], salt_flux_mean=salt["salt_flux_mean"],
                      salt_flux_max=salt["salt_flux_max"], brine_by_month=brine.brine_budget(ds, "month"),
                      measured_snow=snow, warnings=[snow.warning] if snow is not None and snow.warning else [])


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
