"""Station forecasts: an ensemble of analog-year continuations with perturbed parameters.

How a forecast is built
-----------------------
* **Analog seasons.**  Each season of the station history that covers the calendar
  window ``[start, until]`` supplies one continuation of the weather (air temperature,
  and ``snowfall`` when the history has that column).  For the analog year ``Y`` the
  window starts on the same calendar date and time as ``start`` (29 February maps to
  28 February in a common year) and the analog's times are shifted by that whole number
  of days onto the forecast period.  The weather sequence is kept intact, so when a
  29 February lies inside only one of the two windows the later calendar alignment
  differs by one day.  A window that crosses the turn of the year simply spans two
  calendar years of the history.  At least 5 seasons must cover the window, and the
  forecast must start after the record ends.
* **Weather forecast.**  Given a ``weather`` Dataset (``time``, ``air_temperature``,
  e.g. from :func:`icecolumn.read_forcing`) that covers ``start``, every member uses it
  over its period; after its end the difference to the analog fades linearly to zero
  over :data:`BLEND_DAYS` days.
* **Snow is prognostic.**  Every member starts from its (perturbed) drilled snow depth
  (``[initial] snow_thickness``) and receives snowfall: the analog season's ``snowfall``
  when the history has it, else :data:`CLIMATE_SNOW_DEPTH_RATE` converted to water
  equivalent at ``[snow] density`` (or the ``snowfall_rate`` given), times the member's
  snowfall factor.  The kernel melts the snow and turns it into snow-ice when the
  freeboard is negative, so flooding uses the snow up (never a constant measured depth).
* **Perturbations** (``perturb=True``), one draw per member, from :data:`PERTURBATIONS`
  and :data:`SNOWFALL_PERTURBATION`, centred on the configured value: additive ones have
  their median there, multiplicative ones (lognormal factors) have the median of their
  logarithm at 0, so a calibrated configuration centres the ensemble.  The drilled snow
  depth gets the spatial spread of snow on sea ice (lognormal, coefficient of variation
  0.5).  With ``[snow] conductivity_model = "sturm1997"`` the member's conductivity is
  the Sturm et al. (1997) value at ``[snow] density`` times its factor, run as a
  constant (the member's configuration says so), so the value recorded is the value used.
  Unperturbed members use the configured values.
* **Members and weights.**  With ``n`` analog seasons, member ``i`` uses season
  ``years[i % n]`` (years in increasing order) and draw ``i // n``, so every season is
  used before any repeats.  When ``members`` is not a multiple of ``n`` some seasons have
  one member more; every member then weighs ``1 / (n_used x members of its season)`` so
  every season weighs the same (:func:`member_weights`).  Random numbers come from
  ``numpy.random.default_rng(seed)``, drawn per perturbation in table order for all
  members at once, so the same seed gives the same forecast.
* **Percentiles** ``<name>_percentile(percentile, time)`` for :data:`PERCENTILE_VARIABLES`
  at 5, 25, 50, 75 and 95 %, weighted by the member weights (:func:`weighted_percentile`;
  with equal weights it is ``numpy.percentile``'s ``"linear"`` method).
* **Probabilities** (:func:`exceedance`) are season-weighted fractions of members and use
  the load-bearing thickness; beside each one stands the effective number of independent
  weather samples (:func:`effective_samples`).
* **Output variables.**  A forecast keeps the time series of :data:`FORECAST_VARIABLES`
  (what the fan chart, the tables and a user need) unless asked for more; the members
  run in batches of :data:`BATCH_SIZE` so memory stays bounded.

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
from .properties import snow_conductivity_of
from .texttable import text_table
from .timeutil import parse_time

__all__ = ["PERTURBATIONS", "SNOWFALL_PERTURBATION", "CLIMATE_SNOW_DEPTH_RATE", "PERCENTILES", "BLEND_DAYS",
           "MIN_SEASONS", "FORECAST_VARIABLES", "BATCH_SIZE", "ForecastMembers", "build_forecast_members",
           "run_forecast", "exceedance", "analog_years", "default_until", "initial_profile", "check_thickness",
           "member_weights", "effective_samples", "weighted_percentile", "lognormal_sigma", "add_exceedance"]


def lognormal_sigma(cv: float) -> float:
    """Standard deviation of ln X for a lognormal X with coefficient of variation ``cv`` [1]:
    ``sqrt(ln(1 + cv^2))`` (property of the lognormal distribution; common practice, no source)."""
    return math.sqrt(math.log1p(cv * cv))


#: Coefficient of variation of snow depth on sea ice (point-to-point, metre to kilometre scales).
SNOW_DEPTH_CV = 0.5
#: Perturbed quantities: config key, distribution and its parameters, unit, source.  ``normal``
#: and ``uniform_offset`` add to the configured value (median there); ``lognormal`` multiplies it
#: by ``exp(sigma_ln z)``, z standard normal (median of the factor 1, mean of its log 0).
PERTURBATIONS: dict[str, dict] = {
    "initial.ice_thickness": {"distribution": "normal", "sd": 0.02, "minimum": 0.01, "unit": "m",
                              "source": "measurement spread of drill holes; common practice, no source"},
    "initial.snow_thickness": {
        "distribution": "lognormal", "sigma_ln": lognormal_sigma(SNOW_DEPTH_CV), "unit": "m",
        "source": "drilled depth x lognormal factor with coefficient of variation 0.5 (median: the drilled depth): "
                  "the CV of snow depth on sea ice is about 0.5 independent of ice thickness (Huang et al. 2026, "
                  "The Cryosphere 20, 2825; also the SHEBA snow survey, Sturm, Holmgren & Perovich 2002, "
                  "J. Geophys. Res. 107(C10), 8047)"},
    "ocean.heat_flux": {"distribution": "uniform_offset", "low": -2.0, "high": 2.0, "minimum": 0.0,
                        "unit": "W m-2",
                        "source": "configured (or calibrated) value +- 2 W m-2 (uniform, median at the configured "
                                  "value): a few W m-2 under winter landfast ice; common practice, no source"},
    "snow.conductivity": {
        "distribution": "lognormal", "sigma_ln": 0.2, "unit": "W m-1 K-1",
        "source": "conductivity the run uses ([snow] conductivity, or Sturm et al. 1997 at [snow] density) x "
                  "lognormal factor, sigma of ln 0.2: the 0.20 +- 0.04 W m-1 K-1 found for snow on landfast ice "
                  "by Lei et al. (2010), J. Geophys. Res. 115, C02006 (article number from memory)"},
    "surface.heat_transfer_coefficient": {
        "distribution": "lognormal", "sigma_ln": 0.2, "unit": "W m-2 K-1",
        "source": "configured value x lognormal factor, sigma of ln 0.2: about the +-20 % spread of neutral "
                  "bulk transfer coefficients over snow and sea ice, 1.0-1.5e-3 (Andreas 1987, Boundary-Layer "
                  "Meteorol. 38, 159-184; journal details from memory)"},
}
#: Future snow depth per 30 days when the history has no snowfall column: the median of the
#: snowfall perturbation, converted to water equivalent at [snow] density. [m]
CLIMATE_SNOW_DEPTH_RATE = 0.03
#: Future snowfall: a lognormal factor on the analog season's snowfall or on the climatological rate.
SNOWFALL_PERTURBATION = {
    "distribution": "lognormal", "sigma_ln": 0.5, "unit": "1",
    "source": "factor on the analog season's snowfall, or on 3 cm of snow depth per 30 days (about the mean "
              "growth of snow depth on Arctic sea ice from autumn to its May maximum of about 34 cm, Warren et al. "
              "1999, J. Climate 12, 1814, from memory) when the history has no snowfall; sigma of ln 0.5 (5-95 %: x 0.44 to "
              "x 2.3); common practice, no source"}
#: Percentiles written to the forecast Dataset [%].
PERCENTILES = (5.0, 25.0, 50.0, 75.0, 95.0)
#: Length of the linear blend from the weather forecast to the analog [days].
BLEND_DAYS = 2.0
#: Fewest analog seasons accepted.
MIN_SEASONS = 5
PERCENTILE_VARIABLES = ("ice_thickness", "load_bearing_thickness", "snow_thickness", "salt_flux")
#: The time series a forecast file keeps by default (besides percentiles and member metadata):
#: what the fan chart, the printed tables, the threshold probability and a user checking a member
#: need.  Profiles, budgets and the restart state are kept only when asked (``variables``).
FORECAST_VARIABLES = ("ice_thickness", "interface_depth", "load_bearing_thickness", "snow_thickness",
                      "snow_ice_growth", "congelation_growth", "surface_melt", "basal_melt", "growth_rate",
                      "freeboard", "surface_temperature", "air_temperature", "ocean_heat_flux", "salt_flux",
                      "salt_released", "sea_ice_area_fraction")
#: Members per kernel batch (bounded memory; every member is bitwise the same in any batch).
BATCH_SIZE = 25
#: Variable the threshold probabilities use.
THRESHOLD_VARIABLE = "load_bearing_thickness"
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
    weight: np.ndarray  # member weights, summing to 1 (every analog season weighs the same)
    values: dict  # perturbed key -> per-member value (the value each member's run uses)
    start: np.datetime64
    until: np.datetime64
    seed: int
    perturb: bool
    mapping: str
    snowfall_source: str
    notes: list = field(default_factory=list)


#: Thicker than this [m] is refused; the hint says it may be centimetres.
MAX_THICKNESS = 10.0


def check_thickness(value: float, what: str) -> float:
    """``value`` [m] as a float; an :class:`InputError` unless finite, >= 0 and <= 10 m."""
    v = float(value)
    if not math.isfinite(v) or v < 0.0:
        raise InputError(f"{what}: {value!r} m must be a finite number >= 0")
    if v > MAX_THICKNESS:
        raise InputError(f"{what}: {v:g} m is not a plausible thickness (more than {MAX_THICKNESS:g} m); "
                         f"thicknesses are in metres (if you measured {v:g} cm, give {v / 100:g})")
    return v


def member_weights(season_of_member: np.ndarray) -> np.ndarray:
    """Weights of the members [1], summing to 1, that give every analog season the same weight.

    A member of a season with ``k`` members weighs ``1 / (s k)``, ``s`` the number of
    distinct seasons among the members.
    """
    seasons, inverse, counts = np.unique(np.asarray(season_of_member), return_inverse=True, return_counts=True)
    return 1.0 / (seasons.size * counts[inverse])


def effective_samples(weights: np.ndarray, season_of_member: np.ndarray) -> float:
    """Effective number of independent weather samples: Kish's ``(sum W)^2 / sum W^2`` of the
    season weights ``W`` (member weights summed per analog season).

    The perturbation draws within one season share its weather, so the seasons, not the
    members, are the independent weather samples; with the equal season weights of
    :func:`member_weights` this is the number of distinct seasons (Kish 1965, *Survey
    Sampling*, Wiley; from memory).
    """
    w = np.asarray(weights, float)
    _, inverse = np.unique(np.asarray(season_of_member), return_inverse=True)
    ws = np.bincount(inverse, weights=w)
    return round(float(ws.sum() ** 2 / np.sum(ws**2)), 9)  # 11, not 10.999999999999998


def weighted_percentile(values: np.ndarray, weights: np.ndarray, percentiles) -> np.ndarray:
    """Weighted percentiles over the first axis.

    The sorted values ``x_k`` with weights ``w_k`` and cumulative weights ``S_k`` sit at the
    plotting positions ``p_k = (S_k - w_k/2 - w_1/2) / (S_N - w_1/2 - w_N/2)`` and the
    percentile is interpolated linearly between them; with equal weights ``p_k = (k-1)/(N-1)``,
    which is ``numpy.percentile(..., method="linear")``.  A column holding a NaN gives NaN.

    Parameters
    ----------
    values : ndarray, shape (members, ...)
    weights : ndarray, shape (members,)
        Non-negative, not all zero. [1]
    percentiles : sequence of float
        [%]

    Returns
    -------
    ndarray, shape (len(percentiles), ...)
    """
    v = np.asarray(values, float)
    w = np.asarray(weights, float)
    q = np.asarray(percentiles, float) / 100.0
    flat = v.reshape(v.shape[0], -1)
    out = np.full((q.size, flat.shape[1]), np.nan)
    if v.shape[0] == 1:
        out[:] = flat[0]
        return out.reshape((q.size, *v.shape[1:]))
    order = np.argsort(flat, axis=0, kind="stable")
    xs = np.take_along_axis(flat, order, axis=0)
    ws = w[order]
    cum = np.cumsum(ws, axis=0)
    pos = (cum - 0.5 * ws - 0.5 * ws[:1]) / (cum[-1:] - 0.5 * ws[:1] - 0.5 * ws[-1:])
    ok = np.isfinite(flat).all(axis=0)
    for j in np.flatnonzero(ok):
        out[:, j] = np.interp(q, pos[:, j], xs[:, j])
    return out.reshape((q.size, *v.shape[1:]))


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


def _draw(spec: dict, base: float, rng: np.random.Generator, n: int) -> np.ndarray:
    """``n`` values of one perturbation around ``base`` (see :data:`PERTURBATIONS`)."""
    kind = spec["distribution"]
    if kind == "normal":
        v = base + spec["sd"] * rng.standard_normal(n)
    elif kind == "uniform_offset":
        v = base + rng.uniform(spec["low"], spec["high"], n)
    elif kind == "lognormal":
        v = base * np.exp(spec["sigma_ln"] * rng.standard_normal(n))
    else:
        raise ValueError(f"unknown distribution {kind!r}")
    # a floor below the configured value never moves the median
    return np.maximum(v, min(spec.get("minimum", -np.inf), base))


def _analog_series(times, shift, ht, hv) -> np.ndarray:
    return np.interp(((times - shift) - ht[0]) / np.timedelta64(1, "s"),
                     ((ht - ht[0]) / np.timedelta64(1, "s")).astype(float), hv)


def build_forecast_members(history: xr.Dataset, start, *, ice_thickness: float, snow_thickness: float = 0.0,
                           profile: model.InitialProfile | None = None, weather: xr.Dataset | None = None,
                           until=None, members: int = 100, seed: int = 0, config: Config | None = None,
                           perturb: bool = True, leave_out: int | None = None,
                           snowfall_rate: float | None = None) -> ForecastMembers:
    """Build the forecast members (see the module docstring).

    Parameters
    ----------
    history : xarray.Dataset
        Station history from :func:`icecolumn.read_forcing` (``air_temperature`` [degC],
        optional ``snowfall`` [kg m-2 s-1]).
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
    snowfall_rate : float, optional
        Future snowfall when the history has no ``snowfall`` column [kg m-2 s-1 water
        equivalent] (default: :data:`CLIMATE_SNOW_DEPTH_RATE` at ``[snow] density``;
        0 for none).  The members' snowfall factors multiply it.
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
    if snowfall_rate is not None and not (math.isfinite(float(snowfall_rate)) and float(snowfall_rate) >= 0.0):
        raise InputError(f"snowfall rate: {snowfall_rate!r} kg m-2 s-1 must be a finite number >= 0")
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
    idx = np.arange(members)
    year_of = np.array([years[i % n_years][0] for i in idx])
    shift_of = [years[i % n_years][1] for i in idx]
    draw_of = idx // n_years
    weight = member_weights(year_of)
    used = np.unique(year_of).size
    q, r = divmod(members, n_years)
    if members < n_years:
        split = f"the first {members} of {n_years} analog seasons, 1 member each"
    elif r == 0:
        split = f"{n_years} analog seasons x {q} draws"
    else:
        split = (f"{n_years} analog seasons: {r} with {q + 1} members, {n_years - r} with {q}; members weighted so "
                 f"that every season weighs 1/{n_years}")
    mapping = (f"{members} members = {split}; member i uses analog season years[i % {n_years}] and draw "
               f"i // {n_years}")
    rng = np.random.default_rng(seed)
    sturm = cfg.snow.conductivity_model == "sturm1997"
    k_snow = snow_conductivity_of(cfg.snow.conductivity_model, cfg.snow.conductivity, cfg.snow.density)
    base = {"initial.ice_thickness": h0, "initial.snow_thickness": hs0,
            "ocean.heat_flux": cfg.ocean.heat_flux,
            "snow.conductivity": k_snow,
            "surface.heat_transfer_coefficient": cfg.surface.heat_transfer_coefficient}
    values = {}
    for key, spec in PERTURBATIONS.items():
        values[key] = _draw(spec, base[key], rng, members) if perturb else np.full(members, base[key], float)
    # drawn after the table, so the table's draws do not depend on it
    factor = _draw(SNOWFALL_PERTURBATION, 1.0, rng, members) if perturb else np.ones(members)
    times = np.arange(s, u, _HOUR).astype("datetime64[ns]")
    if times[-1] < u:
        times = np.append(times, u)
    ht = t
    hv = np.asarray(history["air_temperature"].values, float)
    has_snowfall = "snowfall" in history
    if has_snowfall:
        if snowfall_rate is not None:
            raise InputError(f"snowfall rate: {src} has a snowfall column, so every member takes its analog season's "
                             "snowfall; leave out the snowfall rate")
        snowfall_source = f"the analog season's snowfall ({src} column snowfall)"
        climate = 0.0
    else:
        climate = (CLIMATE_SNOW_DEPTH_RATE * cfg.snow.density / (30.0 * SECONDS_PER_DAY) if snowfall_rate is None
                   else float(snowfall_rate))
        snowfall_source = (f"{climate:.3g} kg m-2 s-1 ({CLIMATE_SNOW_DEPTH_RATE * 100:g} cm of snow per 30 days at "
                           f"{cfg.snow.density:g} kg m-3; the history has no snowfall column)"
                           if snowfall_rate is None else
                           f"{climate:.3g} kg m-2 s-1 as given (the history has no snowfall column)")
    run_cfg = cfg.replace("run", start=str(s)[:19], end=str(u)[:19])
    out_members, profs = [], []
    analog: dict[int, tuple[np.ndarray, np.ndarray | None, str]] = {}
    snow_mean = np.empty(members)
    for i in idx:
        y = int(year_of[i])
        if y not in analog:
            shift = shift_of[i]
            air = _analog_series(times, shift, ht, hv)
            if weather is not None:
                air = _weather_blend(times, air, weather, s)
            fall = (_analog_series(times, shift, ht, np.asarray(history["snowfall"].values, float))
                    if has_snowfall else None)
            analog[y] = (air, fall, f"{src} (analog {y}, shifted {shift / np.timedelta64(1, 'D'):g} days)")
        air, fall, label = analog[y]
        c = run_cfg
        sections: dict[str, dict] = {}
        for key in PERTURBATIONS:
            sec, name = key.split(".")
            sections.setdefault(sec, {})[name] = float(values[key][i])
        if sturm and perturb:  # run the perturbed Sturm value as a constant: what is recorded is what is used
            sections["snow"]["conductivity_model"] = "constant"
        elif not perturb:
            sections["snow"].pop("conductivity")  # the configuration's own (either model)
        for sec, kw in sections.items():
            c = c.replace(sec, **kw)
        rate = factor[i] * (fall if fall is not None else np.full(times.size, climate))
        snow_mean[i] = float(np.mean(rate))
        f = forcing_from_arrays(times, air, snowfall=rate)
        f.attrs["source_file"] = label
        out_members.append(model.Member(c, f))
        profs.append(profile)
    values["snowfall_factor"] = factor
    values["snowfall_rate"] = snow_mean
    notes = [mapping, f"analog years: {', '.join(str(y) for y, _ in years)}",
             f"snow: prognostic from the drilled depth; snowfall {snowfall_source} x the member's factor"]
    if sturm:
        notes.append(f"snow conductivity: sturm1997 at {cfg.snow.density:g} kg m-3 = {k_snow:.4g} W m-1 K-1"
                     + ("; perturbed members run it times their factor as a constant" if perturb else ""))
    if weather is not None:
        wt = weather["time"].values
        notes.append(f"weather forecast {str(wt[0])[:16]} .. {str(wt[-1])[:16]}, then a {BLEND_DAYS:g}-day linear "
                     "blend to the analog")
    if used < n_years:
        notes.append(f"only {used} of the {n_years} analog seasons are used (fewer members than seasons)")
    return ForecastMembers(members=out_members, profiles=profs, analog_year=year_of, draw=draw_of,
                           shift_days=np.array([sh / np.timedelta64(1, "D") for sh in shift_of]), weight=weight,
                           values=values, start=s, until=u, seed=int(seed), perturb=bool(perturb),
                           mapping=mapping, snowfall_source=snowfall_source, notes=notes)


def _variables_to_keep(variables, member: model.Member) -> tuple[str, ...] | None:
    """None for every variable, else the names kept (the default set plus the ones asked for)."""
    if variables is None:
        return FORECAST_VARIABLES
    asked = [variables] if isinstance(variables, str) else list(variables)
    asked = [v.strip() for a in asked for v in str(a).split(",") if v.strip()]
    if "all" in asked:
        return None
    from .ensemble import output_variable_names

    known = output_variable_names(member)
    for v in asked:
        if v not in known:
            near = [k for k in known if v.lower() in k.lower() or k.lower() in v.lower()]
            hint = f"did you mean {near[0]!r}? " if near else ""
            raise InputError(f"--variables: unknown variable {v!r}; {hint}choose from: {', '.join(known)}, or 'all'")
    return tuple(dict.fromkeys([*FORECAST_VARIABLES, *asked]))


def _reduce(ds: xr.Dataset, keep: tuple[str, ...] | None) -> xr.Dataset:
    if keep is None:
        return ds
    drop = [v for v in ds.data_vars if v not in keep]
    drop += [c for c in ds.coords if c not in ds.dims and c not in keep]
    ds = ds.drop_vars(drop)
    unused = [d for d in ("layer", "nv", "state") if d in ds.dims and not any(d in ds[v].dims for v in ds.data_vars)]
    return ds.drop_dims(unused) if unused else ds


def run_forecast(history: xr.Dataset, start, *, progress=None, variables=None, batch_size: int = BATCH_SIZE,
                 **kwargs) -> xr.Dataset:
    """Run the forecast ensemble; the ensemble Dataset plus percentiles and member mapping.

    ``variables``: ``None`` keeps :data:`FORECAST_VARIABLES`; names (a list or comma-separated
    text) are kept besides them; ``"all"`` keeps every variable a run writes (profiles,
    budgets, restart state).  The members run in batches of ``batch_size``.  Other keyword
    arguments are those of :func:`build_forecast_members`.
    """
    fm = build_forecast_members(history, start, **kwargs)
    keep = _variables_to_keep(variables, fm.members[0])
    source = str(history.attrs.get("source_file", "history"))
    n = len(fm.members)
    size = max(1, int(batch_size))
    parts = []
    steps = [0, 0, 0]
    for b0 in range(0, n, size):
        sl = slice(b0, min(n, b0 + size))
        prof = fm.profiles[sl] if any(p is not None for p in fm.profiles[sl]) else None

        def tick(i, total, b0=b0, nb=sl.stop - b0):
            if progress is not None:
                progress(int(round((b0 + nb * i / max(total, 1)) * 1000 / n)), 1000)

        raw = model.simulate(fm.members[sl], profiles=prof, progress=tick, source=source)
        part = to_dataset(raw, keep_member=True)
        for k, name in enumerate(("solver_steps_accepted", "solver_steps_rejected", "solver_newton_iterations")):
            steps[k] += int(part.attrs.get(name, 0))
        parts.append(_reduce(part, keep))
        del raw, part
    ds = parts[0] if len(parts) == 1 else xr.concat(parts, dim="member", data_vars="minimal", coords="minimal",
                                                     compat="override", join="exact", combine_attrs="override")
    del parts
    ds = ds.assign_coords(member=("member", np.arange(n, dtype=np.int32), ds["member"].attrs))
    ds.attrs.update({"solver_steps_accepted": steps[0], "solver_steps_rejected": steps[1],
                     "solver_newton_iterations": steps[2]})
    ds.attrs["forecast_variables"] = ("all variables of a run" if keep is None else
                                      "time series " + ", ".join(v for v in keep if v in ds.data_vars) +
                                      "; more with --variables NAME,... or --variables all")
    return add_forecast_summary(ds, fm)


def add_forecast_summary(ds: xr.Dataset, fm: ForecastMembers) -> xr.Dataset:
    """Add percentiles, the member mapping, weights and the perturbed values to an ensemble Dataset."""
    n_eff = effective_samples(fm.weight, fm.analog_year)
    ds = ds.assign_coords(percentile=("percentile", np.array(PERCENTILES),
                                      {"units": "%", "long_name": "percentile over ensemble members",
                                       "comment": "weighted by member_weight (every analog season weighs the "
                                                  "same); with equal weights numpy.percentile, method 'linear'"}))
    for name in PERCENTILE_VARIABLES:
        if name not in ds:
            continue
        vals = np.asarray(ds[name].values, float)  # (member, time)
        pct = weighted_percentile(vals, fm.weight, PERCENTILES)
        attrs = {k: v for k, v in ds[name].attrs.items() if k in ("units", "standard_name", "cell_methods")}
        attrs["long_name"] = f"percentiles over members of {name} (season-weighted)"
        ds[f"{name}_percentile"] = (("percentile", "time"), pct, attrs)
    ds["analog_year"] = ("member", fm.analog_year.astype(np.int32),
                         {"long_name": "calendar year of the start of the analog window", "units": "1"})
    ds["draw"] = ("member", fm.draw.astype(np.int32), {"long_name": "perturbation draw index", "units": "1"})
    ds["analog_shift"] = ("member", fm.shift_days, {"units": "days",
                                                    "long_name": "shift of the analog year onto the forecast"})
    ds["member_weight"] = ("member", np.asarray(fm.weight, float),
                           {"units": "1", "long_name": "weight of the member in percentiles and probabilities",
                            "comment": "1 / (seasons x members of its analog season): every season weighs the same"})
    for key, v in fm.values.items():
        name = "member_" + key.replace(".", "_")
        if key in PERTURBATIONS:
            unit, source = PERTURBATIONS[key]["unit"], PERTURBATIONS[key]["source"]
            long_name = f"{key.replace('_', ' ')} used by the member"
        elif key == "snowfall_factor":
            unit, source = "1", SNOWFALL_PERTURBATION["source"]
            long_name = "factor on the member's future snowfall"
        else:  # snowfall_rate
            unit, source = "kg m-2 s-1", f"snowfall: {fm.snowfall_source} x the member's snowfall factor"
            long_name = "mean snowfall rate (water equivalent) the member receives over the forecast"
        ds[name] = ("member", np.asarray(v, float), {"units": unit, "long_name": long_name,
                                                     "source_of_range": source})
    ds.attrs.update({
        "title": f"icecolumn forecast from {str(fm.start)[:16]}",
        "forecast_start": str(fm.start)[:19],
        "forecast_until": str(fm.until)[:19],
        "forecast_seed": fm.seed,
        "forecast_perturbed": int(fm.perturb),
        "forecast_member_mapping": fm.mapping,
        "forecast_notes": " | ".join(fm.notes),
        "forecast_snowfall": fm.snowfall_source,
        "forecast_percentile_method": "weighted percentiles over members (member_weight), linear between plotting "
                                      "positions; numpy.percentile 'linear' for equal weights",
        "forecast_effective_samples": n_eff,
        "forecast_effective_samples_method": _N_EFF_METHOD,
        "caution": CAUTION,
        "forecast_caution": CAUTION + " Forecast probabilities are conditional on the model and on the "
                                      "history being representative of the coming weather.",
    })
    return ds


_N_EFF_METHOD = ("Kish effective sample size (sum W)^2 / sum W^2 of the analog-season weights W: the members of one "
                 "season share its weather, so the seasons are the independent weather samples; with equal season "
                 "weights it is the number of distinct analog seasons")


def _weights(ds: xr.Dataset, n: int) -> tuple[np.ndarray, float]:
    if "member_weight" in ds:
        w = np.asarray(ds["member_weight"].values, float)
        seasons = np.asarray(ds["analog_year"].values) if "analog_year" in ds else np.arange(n)
        return w / w.sum(), effective_samples(w, seasons)
    return np.full(n, 1.0 / n), float(n)


def exceedance(ds: xr.Dataset, threshold: float, by, variable: str = THRESHOLD_VARIABLE) -> dict:
    """Probability that the load-bearing ice reaches ``threshold`` by ``by``.

    ``p_reached``: weight of the members whose ``variable`` (default the load-bearing
    thickness, ice with a liquid fraction of at most ``[output] load_bearing_liquid_fraction``)
    is at least ``threshold`` at some output time up to ``by``; ``p_thinner``: weight of
    the members still thinner than ``threshold`` at ``by`` (linear between output times).
    The weights are ``member_weight`` (equal when absent).  ``effective_samples`` is the
    effective number of independent weather samples behind the fractions
    (:func:`effective_samples`).
    """
    th = float(threshold)
    if not math.isfinite(th) or th <= 0:
        raise InputError(f"threshold: {threshold!r} m must be a positive number")
    b = _time(by, "by")
    t = ds["time"].values.astype("datetime64[ns]")
    if not t[0] <= b <= t[-1]:
        raise InputError(f"--by: {str(b)[:16]} is outside the forecast {str(t[0])[:16]} .. {str(t[-1])[:16]}")
    if variable not in ds:
        raise InputError(f"{ds.encoding.get('source', 'forecast')}: no {variable} variable for the threshold "
                         f"probability (made by an older icecolumn?)")
    h = np.asarray(ds[variable].values, float)
    if h.ndim == 1:
        h = h[None, :]
    n = h.shape[0]
    w, n_eff = _weights(ds, n)
    x = ((t - t[0]) / np.timedelta64(1, "s")).astype(float)
    xb = float((b - t[0]) / np.timedelta64(1, "s"))
    at_by = np.array([np.interp(xb, x, row) for row in h])
    upto = t <= b
    reached = np.maximum(h[:, upto].max(axis=1), at_by) >= th
    thinner = at_by < th
    return {"threshold": th, "by": str(b)[:16], "members": n, "variable": variable,
            "p_reached": float(np.sum(w[reached])), "p_thinner": float(np.sum(w[thinner])),
            "members_reached": int(reached.sum()), "members_thinner": int(thinner.sum()),
            "effective_samples": n_eff, "effective_samples_method": _N_EFF_METHOD,
            "note": f"season-weighted fractions of {n} members, resting on {n_eff:.3g} effective independent weather "
                    f"samples (analog seasons); {variable}; conditional on the model, its perturbations and the "
                    f"analog history. {CAUTION}"}


def add_exceedance(ds: xr.Dataset, ex: dict) -> xr.Dataset:
    """Record a threshold probability (:func:`exceedance`) in the forecast's attributes."""
    ds.attrs.update({
        "forecast_threshold_m": ex["threshold"],
        "forecast_threshold_by": ex["by"],
        "forecast_threshold_variable": ex["variable"],
        "forecast_threshold_variable_comment": "load-bearing thickness: ice with a liquid fraction of at most "
                                               "[output] load_bearing_liquid_fraction (the porous bottom excluded)",
        "forecast_probability_reached": ex["p_reached"],
        "forecast_probability_thinner": ex["p_thinner"],
        "forecast_probability_effective_samples": ex["effective_samples"],
        "forecast_probability_note": ex["note"],
    })
    return ds


def summary_table(ds: xr.Dataset, every_days: int = 7) -> str:
    """Text table every ``every_days``: date, median and 5-95 % range of ice thickness, and the
    median load-bearing thickness (when the forecast has it)."""
    t = ds["time"].values.astype("datetime64[ns]")
    p = ds["ice_thickness_percentile"]
    lo, med, hi = (np.asarray(p.sel(percentile=q).values, float) for q in (5.0, 50.0, 95.0))
    bearing = ("load_bearing_thickness_percentile" in ds)
    lb = np.asarray(ds["load_bearing_thickness_percentile"].sel(percentile=50.0).values, float) if bearing else None
    step = np.timedelta64(every_days, "D")
    rows = []
    target = t[0]
    for i, ti in enumerate(t):
        if ti >= target or i == t.size - 1:
            row = [str(ti)[:10], f"{med[i]:.2f}", f"{lo[i]:.2f}", f"{hi[i]:.2f}"]
            rows.append(row + [f"{lb[i]:.2f}"] if bearing else row)
            target = ti + step
    cols = [("date", "UTC"), ("median", "m"), ("5 %", "m"), ("95 %", "m")]
    if bearing:
        cols.append(("load-bearing median", "m"))
    return text_table(cols, rows)
