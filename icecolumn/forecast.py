"""Station forecasts: an ensemble of analog-year continuations with perturbed parameters.

How a forecast is built
-----------------------
* **Analog seasons.**  Each season of the station history that covers the calendar
  window ``[start, until]`` supplies one continuation of the air temperature.  For the
  analog year ``Y`` the window starts on the same calendar date and time as ``start``
  (29 February maps to 28 February in a common year) and the analog's times are shifted
  by that whole number of days onto the forecast period.  The weather sequence is kept
  intact, so when a 29 February lies inside only one of the two windows the later
  calendar alignment differs by one day.  A window that crosses the turn of the year
  simply spans two calendar years of the history.  At least 5 seasons must cover the
  window, and the forecast must start after the record ends.
* **Weather forecast.**  Given a ``weather`` Dataset (``time``, ``air_temperature``,
  e.g. from :func:`icecolumn.read_forcing`) that covers ``start``, every member uses it
  over its period; after its end the difference to the analog fades linearly to zero
  over :data:`BLEND_DAYS` days.
* **Perturbations** (``perturb=True``), one draw per member, from :data:`PERTURBATIONS`,
  centred on the configured values (so a calibrated configuration centres the ensemble).
  Unperturbed members use the configured values.
* **Members.**  ``members`` maps onto analog years x draws: with ``n`` analog years,
  ``draws = ceil(members / n)``; member ``i`` uses analog year ``years[i % n]`` (years in
  increasing order) and draw ``i // n``, so every year is used before any repeats; the
  first ``members`` of that order are kept.  Random numbers come from
  ``numpy.random.default_rng(seed)``, drawn per perturbation in table order for all
  members at once, so the same seed gives the same forecast.
* **Percentiles.**  ``<name>_percentile(percentile, time)`` for ``ice_thickness``,
  ``snow_thickness`` and ``salt_flux`` at 5, 25, 50, 75 and 95 % over members
  (``numpy.percentile``, method ``"linear"``).

Every number is conditional on the model and on the history being representative; see
``output.CAUTION``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import xarray as xr

from . import model
from .config import Config, default_config
from .constants import SECONDS_PER_DAY
from .errors import InputError
from .forcing import forcing_from_arrays
from .output import CAUTION, to_dataset
from .profiles import FIRST_YEAR_SALINITY_SOURCE, CoreReading, ThermistorReading, first_year_salinity
from .texttable import text_table
from .timeutil import parse_time

__all__ = ["PERTURBATIONS", "PERCENTILES", "BLEND_DAYS", "MIN_SEASONS", "ForecastMembers",
           "build_forecast_members", "run_forecast", "exceedance", "analog_years", "default_until",
           "initial_profile", "check_thickness"]

#: Perturbed quantities: config key, distribution and its parameters, unit, source.
PERTURBATIONS: dict[str, dict] = {
    "initial.ice_thickness": {"distribution": "normal", "sd": 0.02, "minimum": 0.01, "unit": "m",
                              "source": "measurement spread of drill holes; common practice, no source"},
    "initial.snow_thickness": {"distribution": "normal", "sd": 0.03, "minimum": 0.0, "unit": "m",
                               "source": "spread of snow depth around a drill hole; common practice, no source"},
    "ocean.heat_flux": {"distribution": "uniform_offset", "low": -2.0, "high": 2.0, "minimum": 0.0,
                        "unit": "W m-2",
                        "source": "configured (or calibrated) value +- 2 W m-2: a few W m-2 under winter landfast "
                                  "ice; common practice, no source"},
    "snow.conductivity": {"distribution": "uniform_factor", "low": 0.7, "high": 1.3,
                                     "unit": "W m-1 K-1",
                                     "source": "configured value x 0.7-1.3, about the 0.15-0.35 W m-1 K-1 spread of "
                                               "seasonal-snow conductivities in Sturm et al. (1997), J. Glaciol. "
                                               "43(143), 26-41 (from memory)"},
    "surface.heat_transfer_coefficient": {"distribution": "uniform_factor", "low": 0.75, "high": 1.5,
                                          "unit": "W m-2 K-1",
                                          "source": "configured value x 0.75-1.5, within the 10-30 W m-2 K-1 of "
                                                    "Ashton (Britannica) for the default 10; common practice"},
}
#: Future snowfall, as a linear accumulation of snow depth from the measured depth (the model
#: takes a snow-depth series from the forcing; snowfall physics is not modelled yet).
SNOWFALL_PERTURBATION = {"distribution": "uniform", "low": 0.0, "high": 0.06, "unit": "m per 30 days",
                         "source": "0 to 6 cm of snow depth a month; mean Arctic snow depth grows to about "
                                   "34 cm by May (Warren et al. 1999, J. Climate 12, 1814), about 4 cm a month"}
#: Percentiles written to the forecast Dataset [%].
PERCENTILES = (5.0, 25.0, 50.0, 75.0, 95.0)
#: Length of the linear blend from the weather forecast to the analog [days].
BLEND_DAYS = 2.0
#: Fewest analog seasons accepted.
MIN_SEASONS = 5
PERCENTILE_VARIABLES = ("ice_thickness", "snow_thickness", "salt_flux")
_HOUR = np.timedelta64(1, "h")


def _time(value, what: str) -> np.datetime64:
    if value is None:
        raise InputError(f"{what}: a time is needed")
    if isinstance(value, str):
        return parse_time(value)
    try:
        return np.datetime64(value, "ns")
    except (TypeError, ValueError):
        raise InputError(f"{what}: {value!r} is not a time") from None


def _ymd(t: np.datetime64) -> tuple[int, int, int]:
    d = str(np.datetime64(t, "D"))
    y, m, dd = d.split("-")
    return int(y), int(m), int(dd)


def _same_date_in(year: int, t: np.datetime64) -> np.datetime64:
    """``t``'s calendar date and time of day in ``year`` (29 Feb -> 28 Feb in a common year)."""
    _, m, d = _ymd(t)
    tod = np.datetime64(t, "ns") - np.datetime64(np.datetime64(t, "D"), "ns")
    leap = (year % 4 == 0 and year % 100 != 0) or year % 400 == 0
    if m == 2 and d == 29 and not leap:
        d = 28
    return np.datetime64(f"{year:04d}-{m:02d}-{d:02d}", "ns") + tod


def default_until(start) -> np.datetime64:
    """31 May 00:00 UTC of the ice season of ``start`` (the same year up to May, else the next)."""
    t = _time(start, "start")
    y, m, _ = _ymd(t)
    until = np.datetime64(f"{y if m <= 5 else y + 1:04d}-05-31T00:00", "ns")
    return until if until > t else t + np.timedelta64(90, "D")


def analog_years(history: xr.Dataset, start, until, leave_out: int | None = None) -> list[tuple[int, np.timedelta64]]:
    """Analog years covering ``[start, until]``: ``(year, shift)`` with ``shift = start - analog start``.

    The "year" names the calendar year of the analog window's start.  With ``leave_out``
    (hindcast) the season whose window starts in that year is skipped.
    """
    s, u = _time(start, "start"), _time(until, "until")
    t = history["time"].values.astype("datetime64[ns]")
    out = []
    for year in range(_ymd(t[0])[0] - 1, _ymd(t[-1])[0] + 1):
        if year == leave_out:
            continue
        a0 = _same_date_in(year, s)
        shift = s - a0
        if shift == np.timedelta64(0, "ns"):
            continue  # the forecast year itself
        a1 = u - shift
        if a0 >= t[0] and a1 <= t[-1]:
            out.append((year, shift))
    return out


def initial_profile(ice_thickness: float, thermistor: ThermistorReading | None = None,
                    core: CoreReading | None = None) -> tuple[model.InitialProfile, list[str]]:
    """Build the model's initial profile and a list of notes saying what was used.

    Temperature: thermistor readings inside the ice (the model interpolates them to its
    layers and holds them constant beyond the first and last sensor), else ``None`` (the
    model's default linear profile).  Salinity: core sections at their mid-depths, else
    the uniform :func:`first_year_salinity` of this thickness.
    """
    notes = []
    prof = model.InitialProfile()
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


@dataclass
class ForecastMembers:
    """Everything needed to run a forecast ensemble, and how members were made."""

    members: list  # model.Member
    profiles: list  # model.InitialProfile | None per member
    analog_year: np.ndarray
    draw: np.ndarray
    shift_days: np.ndarray
    values: dict  # perturbed key -> per-member value
    start: np.datetime64
    until: np.datetime64
    seed: int
    perturb: bool
    mapping: str
    notes: list = field(default_factory=list)


def check_thickness(value: float, what: str) -> float:
    v = float(value)
    if not math.isfinite(v) or v < 0.0:
        raise InputError(f"{what}: {value!r} m must be a finite number >= 0")
    if v > 10.0:
        raise InputError(f"{what}: {v:g} m is not a plausible thickness (more than 10 m)")
    return v


def _weather_blend(times: np.ndarray, analog: np.ndarray, weather: xr.Dataset, start: np.datetime64) -> np.ndarray:
    wt = weather["time"].values.astype("datetime64[ns]")
    wv = np.asarray(weather["air_temperature"].values, float)
    if not (wt[0] <= start < wt[-1]):
        raise InputError(f"weather forecast: covers {str(wt[0])[:16]} to {str(wt[-1])[:16]}, which does not "
                         f"contain the forecast start {str(start)[:16]}")
    x = ((times - start) / np.timedelta64(1, "s")).astype(float)
    wx = ((wt - start) / np.timedelta64(1, "s")).astype(float)
    end = wx[-1]
    out = analog.copy()
    inside = x <= end
    out[inside] = np.interp(x[inside], wx, wv)
    offset = float(wv[-1]) - float(np.interp(end, x, analog))
    blend = (x > end) & (x < end + BLEND_DAYS * SECONDS_PER_DAY)
    out[blend] = analog[blend] + offset * (1.0 - (x[blend] - end) / (BLEND_DAYS * SECONDS_PER_DAY))
    return out


def build_forecast_members(history: xr.Dataset, start, *, ice_thickness: float, snow_thickness: float = 0.0,
                           profile: model.InitialProfile | None = None, weather: xr.Dataset | None = None,
                           until=None, members: int = 100, seed: int = 0, config: Config | None = None,
                           perturb: bool = True, leave_out: int | None = None) -> ForecastMembers:
    """Build the forecast members (see the module docstring).

    Parameters
    ----------
    history : xarray.Dataset
        Station history from :func:`icecolumn.read_forcing` (``air_temperature`` [degC]).
    start, until : time or ISO 8601 text
        Forecast period (``until`` defaults to :func:`default_until`).
    ice_thickness, snow_thickness : float
        Measured at ``start``. [m]
    profile : model.InitialProfile, optional
        Measured temperature / salinity profile (e.g. from :mod:`icecolumn.profiles`).
    members, seed, perturb
        Ensemble size, random seed, and whether to perturb (:data:`PERTURBATIONS`).
    config : Config, optional
        Base configuration (default :func:`icecolumn.default_config`).
    leave_out : int, optional
        Hindcast mode: ``start`` may lie inside the record; the analog season whose
        window starts in this year is left out (it is the year being hindcast).
    """
    cfg = config if config is not None else default_config()
    s = _time(start, "start")
    u = default_until(s) if until is None else _time(until, "until")
    if not u > s:
        raise InputError(f"until: {str(u)[:16]} must be after the start {str(s)[:16]}")
    h0 = check_thickness(ice_thickness, "ice thickness")
    if h0 < 0.01:
        raise InputError(f"ice thickness: {h0:g} m is less than the model's smallest start thickness 0.01 m")
    hs0 = check_thickness(snow_thickness, "snow thickness")
    if not isinstance(members, (int, np.integer)) or members < 1:
        raise InputError(f"members: {members!r} must be a whole number >= 1")
    t = history["time"].values.astype("datetime64[ns]")
    src = str(history.attrs.get("source_file", "history"))
    if leave_out is None and not s > t[-1]:
        raise InputError(f"{src}: the forecast start {str(s)[:16]} must be after the end of the record "
                         f"{str(t[-1])[:16]}")
    years = analog_years(history, s, u, leave_out=leave_out)
    window = f"{str(s)[5:10]} .. {str(u)[5:10]}"
    if len(years) < MIN_SEASONS:
        raise InputError(f"{src}: history has {len(years)} seasons covering {window}, at least {MIN_SEASONS} needed")
    n_years = len(years)
    draws = math.ceil(members / n_years)
    idx = np.arange(members)
    year_of = np.array([years[i % n_years][0] for i in idx])
    shift_of = [years[i % n_years][1] for i in idx]
    draw_of = idx // n_years
    mapping = (f"{members} members = {n_years} analog years x {draws} draws (ceil(members / years)); member i "
               f"uses analog year years[i % {n_years}] and draw i // {n_years}; the first {members} kept")
    rng = np.random.default_rng(seed)
    base = {"initial.ice_thickness": h0, "initial.snow_thickness": hs0,
            "ocean.heat_flux": cfg.ocean.heat_flux,
            "snow.conductivity": cfg.snow.conductivity,
            "surface.heat_transfer_coefficient": cfg.surface.heat_transfer_coefficient}
    values = {}
    for key, spec in PERTURBATIONS.items():
        if not perturb:
            values[key] = np.full(members, base[key], float)
            continue
        kind = spec["distribution"]
        if kind == "normal":
            v = base[key] + spec["sd"] * rng.standard_normal(members)
        elif kind == "uniform_offset":  # centred on the configured value
            v = base[key] + rng.uniform(spec["low"], spec["high"], members)
        else:  # "uniform_factor": a relative spread around the configured value
            v = base[key] * rng.uniform(spec["low"], spec["high"], members)
        values[key] = np.maximum(v, spec.get("minimum", -np.inf))
    # drawn after the table so adding it left the other draws unchanged
    snow_rate = (rng.uniform(SNOWFALL_PERTURBATION["low"], SNOWFALL_PERTURBATION["high"], members)
                 if perturb else np.zeros(members))
    values["snow_accumulation_per_30_days"] = snow_rate
    times = np.arange(s, u, _HOUR).astype("datetime64[ns]")
    if times[-1] < u:
        times = np.append(times, u)
    ht = t
    hv = np.asarray(history["air_temperature"].values, float)
    run_cfg = cfg.replace("run", start=str(s)[:19], end=str(u)[:19])
    out_members, profs = [], []
    forcing_cache: dict[int, xr.Dataset] = {}
    for i in idx:
        y = int(year_of[i])
        if y not in forcing_cache:
            shift = shift_of[i]
            air = np.interp(((times - shift) - ht[0]) / np.timedelta64(1, "s"),
                            ((ht - ht[0]) / np.timedelta64(1, "s")).astype(float), hv)
            if weather is not None:
                air = _weather_blend(times, air, weather, s)
            f = forcing_from_arrays(times, air)
            f.attrs["source_file"] = f"{src} (analog {y}, shifted {shift / np.timedelta64(1, 'D'):g} days)"
            forcing_cache[y] = f
        c = run_cfg
        sections: dict[str, dict] = {}
        for key in PERTURBATIONS:
            sec, name = key.split(".")
            sections.setdefault(sec, {})[name] = float(values[key][i])
        for sec, kw in sections.items():
            c = c.replace(sec, **kw)
        member_forcing = forcing_cache[y]
        if perturb:  # future snowfall: snow depth grows linearly from the member's initial depth
            days = ((times - times[0]) / np.timedelta64(1, "D")).astype(float)
            depth = c.initial.snow_thickness + snow_rate[i] * days / 30.0
            member_forcing = member_forcing.assign(snow_thickness=("time", depth, {"units": "m"}))
        out_members.append(model.Member(c, member_forcing))
        profs.append(profile)
    notes = [mapping, f"analog years: {', '.join(str(y) for y, _ in years)}"]
    if weather is not None:
        wt = weather["time"].values
        notes.append(f"weather forecast {str(wt[0])[:16]} .. {str(wt[-1])[:16]}, then a {BLEND_DAYS:g}-day linear "
                     "blend to the analog")
    return ForecastMembers(members=out_members, profiles=profs, analog_year=year_of, draw=draw_of,
                           shift_days=np.array([sh / np.timedelta64(1, "D") for sh in shift_of]),
                           values=values, start=s, until=u, seed=int(seed), perturb=bool(perturb),
                           mapping=mapping, notes=notes)


def run_forecast(history: xr.Dataset, start, *, progress=None, **kwargs) -> xr.Dataset:
    """Run the forecast ensemble; the ensemble Dataset plus percentiles and member mapping.

    Keyword arguments are those of :func:`build_forecast_members`.
    """
    fm = build_forecast_members(history, start, **kwargs)
    profiles = fm.profiles if any(p is not None for p in fm.profiles) else None
    raw = model.simulate(fm.members, profiles=profiles, progress=progress,
                         source=str(history.attrs.get("source_file", "history")))
    ds = to_dataset(raw, keep_member=True)
    return add_forecast_summary(ds, fm)


def add_forecast_summary(ds: xr.Dataset, fm: ForecastMembers) -> xr.Dataset:
    """Add percentiles, the member mapping and the perturbed values to an ensemble Dataset."""
    ds = ds.assign_coords(percentile=("percentile", np.array(PERCENTILES),
                                      {"units": "%", "long_name": "percentile over ensemble members",
                                       "comment": "numpy.percentile, method 'linear'"}))
    for name in PERCENTILE_VARIABLES:
        vals = np.asarray(ds[name].values, float)  # (member, time)
        pct = np.percentile(vals, PERCENTILES, axis=0, method="linear")
        attrs = {k: v for k, v in ds[name].attrs.items() if k in ("units", "standard_name", "cell_methods")}
        attrs["long_name"] = f"percentiles over members of {name}"
        ds[f"{name}_percentile"] = (("percentile", "time"), pct, attrs)
    ds["analog_year"] = ("member", fm.analog_year.astype(np.int32),
                         {"long_name": "calendar year of the start of the analog window", "units": "1"})
    ds["draw"] = ("member", fm.draw.astype(np.int32), {"long_name": "perturbation draw index", "units": "1"})
    ds["analog_shift"] = ("member", fm.shift_days, {"units": "days",
                                                    "long_name": "shift of the analog year onto the forecast"})
    for key, v in fm.values.items():
        name = "member_" + key.replace(".", "_")
        spec = PERTURBATIONS.get(key, SNOWFALL_PERTURBATION)
        ds[name] = ("member", np.asarray(v, float), {"units": spec["unit"],
                                                     "long_name": f"{key.replace('_', ' ')} of the member",
                                                     "source_of_range": spec["source"]})
    ds.attrs.update({
        "title": f"icecolumn forecast from {str(fm.start)[:16]}",
        "forecast_start": str(fm.start)[:19],
        "forecast_until": str(fm.until)[:19],
        "forecast_seed": fm.seed,
        "forecast_perturbed": int(fm.perturb),
        "forecast_member_mapping": fm.mapping,
        "forecast_notes": " | ".join(fm.notes),
        "forecast_percentile_method": "numpy.percentile over members, method 'linear'",
        "caution": CAUTION,
        "forecast_caution": CAUTION + " Forecast probabilities are conditional on the model and on the "
                                      "history being representative of the coming weather.",
    })
    return ds


def exceedance(ds: xr.Dataset, threshold: float, by) -> dict:
    """Probability (fraction of members) that the ice reaches ``threshold`` by ``by``.

    ``p_reached``: members whose thickness is at least ``threshold`` at some output
    time up to ``by``; ``p_thinner``: members still thinner than ``threshold`` at
    ``by`` (thickness linearly interpolated between output times).
    """
    th = float(threshold)
    if not math.isfinite(th) or th <= 0:
        raise InputError(f"threshold: {threshold!r} m must be a positive number")
    b = _time(by, "by")
    t = ds["time"].values.astype("datetime64[ns]")
    if not t[0] <= b <= t[-1]:
        raise InputError(f"--by: {str(b)[:16]} is outside the forecast {str(t[0])[:16]} .. {str(t[-1])[:16]}")
    h = np.asarray(ds["ice_thickness"].values, float)
    if h.ndim == 1:
        h = h[None, :]
    x = ((t - t[0]) / np.timedelta64(1, "s")).astype(float)
    xb = float((b - t[0]) / np.timedelta64(1, "s"))
    at_by = np.array([np.interp(xb, x, row) for row in h])
    upto = t <= b
    reached = np.maximum(h[:, upto].max(axis=1), at_by) >= th
    n = h.shape[0]
    return {"threshold": th, "by": str(b)[:16], "members": n,
            "p_reached": float(reached.mean()), "p_thinner": float((at_by < th).mean()),
            "note": f"fractions of {n} members; conditional on the model, its perturbations and the analog "
                    f"history. {CAUTION}"}


def summary_table(ds: xr.Dataset, every_days: int = 7) -> str:
    """Text table: date, median and 5-95 % range of ice thickness, every ``every_days``."""
    t = ds["time"].values.astype("datetime64[ns]")
    p = ds["ice_thickness_percentile"]
    lo, med, hi = (np.asarray(p.sel(percentile=q).values, float) for q in (5.0, 50.0, 95.0))
    step = np.timedelta64(every_days, "D")
    rows = []
    target = t[0]
    for i, ti in enumerate(t):
        if ti >= target or i == t.size - 1:
            rows.append([str(ti)[:10], f"{med[i]:.2f}", f"{lo[i]:.2f}", f"{hi[i]:.2f}"])
            target = ti + step
    return text_table([("date", "UTC"), ("median", "m"), ("5 %", "m"), ("95 %", "m")], rows)
