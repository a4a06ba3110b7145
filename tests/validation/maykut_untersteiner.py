"""Forcing and configuration of the Maykut & Untersteiner (1971) standard case.

Source: G. A. Maykut and N. Untersteiner (1971), "Some results from a time-dependent
thermodynamic model of sea ice", J. Geophys. Res. 76(6), 1550-1575 (the fuller report is
Maykut & Untersteiner 1969, RAND RM-6093-PR).  Their standard case drives a column of
perennial Arctic sea ice with monthly mean radiation and turbulent fluxes after Fletcher
(1965, RAND R-444-PR), a monthly surface albedo, a snow accumulation schedule and a constant
ocean heat flux of 1.5 kcal cm-2 yr-1.

**Every number of the paper below is "from memory"**: the monthly table was not at hand
when this module was written.  Each value carries its tag beside it.  Values that are not the
paper's are tagged "model choice" or "common practice, no source".  Read the paper before
tightening any tolerance that rests on them.

Units: the paper gives the fluxes as monthly totals [kcal cm-2 per month]; they are turned into
monthly mean fluxes [W m-2] with 1 kcal cm-2 = 4.1868e7 J m-2 (international-table calorie,
exact) and the calendar month lengths of a common year.  Turbulent fluxes are positive toward
the surface (the sign convention of the ``sensible_heat_flux`` and ``latent_heat_flux``
forcing columns).

Interpolation (model choice of this test, not the paper's, whose own is not remembered): the
daily values (00:00 UTC) are a periodic piecewise-linear curve through one node at the middle
of each month, with the node values solved so that each month's mean of the daily values equals
the table (``method="mean_preserving"``, the default: smooth, exactly periodic, and true to the
table, which gives monthly means).  Shortwave, longwave and albedo nodes are kept >= 0 (the
shortwave of February and October, next to dark months, is then 1.5 and 1.1 W m-2 above the
table).  Two alternatives measure how much the unknown interpolation matters:
``method="linear"`` puts the table values themselves at the nodes (smooth but it rounds the
extremes off: the June shortwave mean drops by 16 W m-2 and July's albedo rises by 0.025), ``method="monthly"`` holds each
month's value constant (exact means, a jump at each month boundary).  See
docs/validation_mu71.md for their equilibria.

The forcing covers one common calendar year (1 January 00:00 to 31 December 00:00, daily),
so :func:`icecolumn.forcing.repeat_forcing` repeats it on the calendar (a leap year gets a copy
of 28 February as its 29 February).
"""
from __future__ import annotations

import numpy as np
import xarray as xr
from scipy.optimize import nnls

import icecolumn as ic
from icecolumn.forcing import forcing_from_arrays, repeat_forcing

#: Days of the months of a common year (calendar).
MONTH_DAYS = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
#: 1 kcal cm-2 in J m-2 (international-table calorie 4.1868 J; exact).
KCAL_PER_CM2 = 4.1868e7
#: 1 kcal cm-2 yr-1 in W m-2 (365.25-day year).
KCAL_PER_CM2_YEAR = KCAL_PER_CM2 / (365.25 * 86400.0)

# --- Maykut & Untersteiner (1971), monthly input table (after Fletcher 1965) -----------------
# Monthly totals [kcal cm-2 per month], January first.  All from memory.
#: Incoming shortwave radiation (MU71 table of inputs; from memory).
SHORTWAVE_KCAL = np.array([0.0, 0.0, 1.9, 9.9, 17.7, 19.2, 13.6, 9.0, 3.7, 0.4, 0.0, 0.0])
#: Incoming longwave radiation (MU71 table of inputs; from memory).  February's 10.3 gives
#: 178 W m-2 between 163 (Jan) and 161 (Mar) in the coldest month; it may be a slip of memory
#: for 9.3 (161 W m-2); see docs/validation_mu71.md for the effect of either.
LONGWAVE_KCAL = np.array([10.4, 10.3, 10.3, 11.6, 15.1, 18.0, 19.1, 18.7, 16.5, 13.9, 11.2, 10.9])
#: Sensible heat flux toward the surface (MU71 table of inputs; from memory).
SENSIBLE_KCAL = np.array([1.18, 0.76, 0.72, 0.29, -0.45, -0.39, -0.30, -0.40, -0.17, 0.10, 0.56, 0.79])
#: Latent heat flux toward the surface (MU71 table of inputs; from memory).
LATENT_KCAL = np.array([0.0, -0.02, -0.03, -0.09, -0.46, -0.70, -0.64, -0.66, -0.39, -0.19, -0.01, -0.01])
#: Surface albedo, monthly mean (MU71 table of inputs; from memory).
ALBEDO = np.array([0.85, 0.85, 0.83, 0.81, 0.82, 0.78, 0.64, 0.69, 0.84, 0.85, 0.85, 0.85])

#: Ocean heat flux of the standard case: 1.5 kcal cm-2 yr-1 (MU71; from memory) = 1.99 W m-2.
OCEAN_HEAT_FLUX_KCAL = 1.5
OCEAN_HEAT_FLUX = OCEAN_HEAT_FLUX_KCAL * KCAL_PER_CM2_YEAR

#: Snow accumulation schedule of MU71 (from memory): 30 cm between 20 August and 30 October,
#: 5 cm between 1 November and 30 April, 5 cm in May (40 cm at the May maximum).  Periods as
#: (first day, day after the last) in day-of-year of a common year (0 = 1 January), depth [m].
SNOW_SCHEDULE = (
    (231, 304, 0.30),  # 20 Aug .. 31 Oct (MU71's "20 August to 30 October"; from memory), to meet 1 Nov
    (304, 365, 0.05 * 61 / 181),  # 1 Nov .. 31 Dec: this year's share of the 5 cm (from memory)
    (0, 120, 0.05 * 120 / 181),  # 1 Jan .. 30 Apr: the rest of the 5 cm (from memory)
    (120, 151, 0.05),  # 1 .. 31 May (MU71; from memory)
)
#: Snow density of MU71 [kg m-3] (from memory).
SNOW_DENSITY = 330.0
#: Snow conductivity of MU71 [W m-1 K-1] (from memory).
SNOW_CONDUCTIVITY = 0.31
#: Fraction of the absorbed shortwave that penetrates bare ice, i0 (MU71; from memory); the
#: model's value is icecolumn.surface.PENETRATION_ICE (a test checks they agree).
PENETRATION_FRACTION = 0.17
#: Equilibrium mean annual thickness of the standard case [m] (MU71; from memory: about
#: 2.9-3.0 m, the value usually quoted is 2.88 m).
PUBLISHED_MEAN_THICKNESS = 2.88

#: Air temperature, monthly mean [degC], January first: NOT from MU71.  A plausible central
#: Arctic Ocean cycle as remembered from drifting-station climatologies (from memory; e.g.
#: about -33 degC in late winter, near 0 degC in July).  With prescribed radiation and
#: turbulent fluxes the model uses it only for the initial temperature profile (and would use
#: it for longwave or bulk fluxes that are not given).
AIR_TEMPERATURE = np.array([-31.0, -33.0, -32.0, -24.0, -11.0, -2.0, 0.0, -1.0, -8.0, -19.0, -27.0, -30.0])

#: Year of the forcing: a common year (any would do; the dates only place the seasons).
YEAR = 2001


def kcal_per_month_to_watts(kcal: np.ndarray) -> np.ndarray:
    """Monthly totals [kcal cm-2 per month] -> monthly mean fluxes [W m-2]."""
    return np.asarray(kcal, dtype=float) * KCAL_PER_CM2 / (MONTH_DAYS * 86400.0)


def monthly_means() -> dict[str, np.ndarray]:
    """The monthly mean forcing [W m-2, 1, degC] by forcing-column name (January first)."""
    return {
        "shortwave_down": kcal_per_month_to_watts(SHORTWAVE_KCAL),
        "longwave_down": kcal_per_month_to_watts(LONGWAVE_KCAL),
        "sensible_heat_flux": kcal_per_month_to_watts(SENSIBLE_KCAL),
        "latent_heat_flux": kcal_per_month_to_watts(LATENT_KCAL),
        "albedo": ALBEDO.astype(float),
        "air_temperature": AIR_TEMPERATURE.astype(float),
    }


#: Interpolation methods of :func:`daily_from_monthly`.
METHODS = ("mean_preserving", "linear", "monthly")
#: First day (day of year, 0 = 1 January) of each month and the month of each day.
MONTH_STARTS = np.concatenate([[0], np.cumsum(MONTH_DAYS)[:-1]])
DAY_MONTH = np.searchsorted(MONTH_STARTS, np.arange(365), side="right") - 1


def _linear_basis() -> np.ndarray:
    """(365, 12) matrix: daily values of the periodic linear interpolation between mid-month nodes."""
    day = np.arange(365, dtype=float)
    mid = MONTH_STARTS + MONTH_DAYS / 2.0
    return np.stack([np.interp(day, mid, np.eye(12)[j], period=365.0) for j in range(12)], axis=1)


def monthly_mean_of_days(daily: np.ndarray) -> np.ndarray:
    """Mean of the daily values of each month (January first)."""
    return np.array([np.asarray(daily)[DAY_MONTH == m].mean() for m in range(12)])


def daily_from_monthly(values: np.ndarray, method: str = "mean_preserving", nonnegative: bool = False) -> np.ndarray:
    """Daily values (00:00 of each day of a common year) from 12 monthly means.

    ``mean_preserving``: periodic linear interpolation between mid-month nodes (the middle of
    month m is at day ``start_m + days_m / 2``) whose node values are solved so that the mean of
    each month's daily values equals the table (a 12 x 12 linear system); with ``nonnegative``
    the nodes are kept >= 0 by non-negative least squares (then a month next to a zero month
    can only be met approximately).  ``linear``: the same interpolation with the table values
    themselves at the nodes (rounds the extremes off).  ``monthly``: each day takes its month's
    value (exact means, a jump at each month boundary).
    """
    values = np.asarray(values, dtype=float)
    if method == "monthly":
        return values[DAY_MONTH]
    basis = _linear_basis()
    if method == "linear":
        return basis @ values
    if method != "mean_preserving":
        raise ValueError(f"method must be one of {METHODS}, got {method!r}")
    means = np.stack([monthly_mean_of_days(basis[:, j]) for j in range(12)], axis=1)  # (month, node)
    if nonnegative:
        nodes = nnls(means, values)[0]
    else:
        nodes = np.linalg.solve(means, values)
    return basis @ nodes


def daily_snowfall(density: float = SNOW_DENSITY) -> np.ndarray:
    """Snowfall [kg m-2 s-1 water equivalent] at 00:00 of each day of a common year that lays down
    the depths of :data:`SNOW_SCHEDULE` at ``density`` [kg m-3] (before any melt).

    The model takes the rate as linear between daily rows; the year being periodic, the amount
    over each period is then exactly its row sum times one day (the edges spread half a day
    into the neighbouring days).
    """
    rate = np.zeros(365)
    for first, end, depth in SNOW_SCHEDULE:
        rate[first:end] += depth * density / ((end - first) * 86400.0)
    return rate


def forcing_year(method: str = "mean_preserving", longwave_kcal: np.ndarray | None = None) -> xr.Dataset:
    """One periodic year of the standard-case forcing (daily, 1 Jan .. 31 Dec of :data:`YEAR`).

    ``longwave_kcal`` replaces the monthly longwave totals (for sensitivity runs).
    """
    means = monthly_means()
    if longwave_kcal is not None:
        means["longwave_down"] = kcal_per_month_to_watts(longwave_kcal)
    time = np.datetime64(f"{YEAR}-01-01T00:00", "ns") + np.arange(365) * np.timedelta64(1, "D")
    positive = ("shortwave_down", "longwave_down", "albedo")
    daily = {name: daily_from_monthly(v, method, nonnegative=name in positive) for name, v in means.items()}
    return forcing_from_arrays(time, daily.pop("air_temperature"), snowfall=daily_snowfall(), **daily)


def forcing(years: int, method: str = "mean_preserving", longwave_kcal: np.ndarray | None = None) -> xr.Dataset:
    """The standard-case year repeated on the calendar ``years`` times."""
    return repeat_forcing(forcing_year(method, longwave_kcal), years)


def config(ocean_heat_flux: float = OCEAN_HEAT_FLUX, layers: int = 20, initial_thickness: float = 3.0,
           initial_salinity: float = 3.0, output_interval: str = "1D") -> ic.Config:
    """Configuration of the standard case (the rest are the model's defaults, nothing tuned).

    Parameters
    ----------
    ocean_heat_flux : float
        [W m-2] (the standard case: :data:`OCEAN_HEAT_FLUX`).
    layers : int
        Ice layers (20 of about 15 cm in 3 m of ice; see docs/validation_mu71.md for 40).
    initial_thickness, initial_salinity : float
        Uniform starting ice [m] and its bulk salinity [g/kg] (model choice: about the mean
        salinity of multi-year ice; the equilibrium does not depend on it).
    output_interval : str
        Output interval (a duration text).
    """
    cfg = ic.default_config()
    return cfg.updated({
        "grid": {"layers": layers},
        "initial": {"ice_thickness": initial_thickness, "bulk_salinity": initial_salinity,
                    "snow_thickness": 0.0},
        "ocean": {"heat_flux": float(ocean_heat_flux)},
        "surface": {"scheme": "energy_balance"},
        "snow": {"density": SNOW_DENSITY, "conductivity_model": "constant", "conductivity": SNOW_CONDUCTIVITY},
        "output": {"interval": output_interval},
    }, "Maykut & Untersteiner (1971) standard case")


def annual_statistics(ds: xr.Dataset, variable: str = "ice_thickness") -> dict[str, np.ndarray]:
    """Per calendar year of a run: mean, maximum, minimum of ``variable`` and the days of year
    (1-based) of the maximum and minimum; only whole years (365 or 366 records at 1D output)."""
    t = ds["time"].values
    year = t.astype("datetime64[Y]").astype(int) + 1970
    out: dict[str, list] = {k: [] for k in ("year", "mean", "max", "min", "day_max", "day_min")}
    values = ds[variable].values
    for y in np.unique(year):
        sel = np.flatnonzero(year == y)
        if sel.size < 365:
            continue
        v = values[sel]
        doy = (t[sel] - np.datetime64(f"{y}-01-01", "ns")) / np.timedelta64(1, "D") + 1
        out["year"].append(y)
        out["mean"].append(float(v.mean()))
        out["max"].append(float(v.max()))
        out["min"].append(float(v.min()))
        out["day_max"].append(float(doy[np.argmax(v)]))
        out["day_min"].append(float(doy[np.argmin(v)]))
    return {k: np.array(v) for k, v in out.items()}
