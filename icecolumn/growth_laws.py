"""Freezing degree days and classical sea-ice growth laws.

Pure functions with numpy arrays in and out.  Air temperatures are in degrees
Celsius (the base temperatures of the classical laws are quoted in degrees
Celsius); degree days are in kelvin days [K day]; thicknesses are in metres.

Freezing degree days (FDD) are the accumulated daily deficit of the daily mean
air temperature below a base temperature,

    theta = sum over days of max(0, T_base - T_mean,day)       [K day]

(common practice, no source).  The base differs between laws and must be
recorded with every result (see :data:`LAW_BASE_TEMPERATURE`).

References
----------
.. [Stefan1891] Stefan, J. (1891). Ueber die Theorie der Eisbildung,
   insbesondere ueber die Eisbildung im Polarmeere. Annalen der Physik und
   Chemie 278(2), 269-286. (citation details from memory)
.. [Lebedev1938] Lebedev, V. V. (1938). Rost l'da v arkticheskikh rekakh i
   moryakh v zavisimosti ot otritsatel'nykh temperatur vozdukha [Ice growth in
   Arctic rivers and seas as a function of negative air temperatures].
   Problemy Arktiki 5, 9-25. (citation details from memory; the formula
   h = 1.33 theta^0.58 is checked against a secondary source)
.. [Anderson1961] Anderson, D. L. (1961). Growth rate of sea ice.
   J. Glaciol. 3(30), 1170-1172. (Thule, Greenland, 1956-57; constants
   from memory; base -1.8 degC from memory)
.. [Zubov1945] Zubov, N. N. (1945). L'dy Arktiki [Arctic Ice]. Izdatel'stvo
   Glavsevmorputi, Moscow. (citation details from memory; the formula
   h^2 + 50 h = 8 theta and its 0 degC base are checked against a secondary
   source)
.. [Ashton] Ashton, G. D. "Ice in lakes and rivers", Encyclopaedia
   Britannica: linearised surface heat transfer H = 10-30 W m-2 K-1 for the
   ice-air interface.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from scipy.optimize import curve_fit

from icecolumn.constants import SECONDS_PER_DAY
from icecolumn.errors import InputError

__all__ = [
    "SECONDS_PER_DAY",
    "daily_mean_temperature",
    "freezing_degree_days",
    "cumulative_fdd_knots",
    "cumulative_fdd_at",
    "stefan",
    "lebedev",
    "anderson",
    "zubov",
    "power_law",
    "fit_power_law",
    "LAWS",
    "LAW_BASE_TEMPERATURE",
    "LAW_REFERENCE",
    "fdd_for_thickness",
    "thickness_from",
]

_DAY_NS = int(SECONDS_PER_DAY) * 10**9

# Warmest air temperature accepted [degC]; anything hotter is almost surely kelvin.
_MAX_AIR_TEMPERATURE_C = 100.0


# ---------------------------------------------------------------------------
# Input helpers
# ---------------------------------------------------------------------------


def _as_ns(time, name: str) -> np.ndarray:
    """Convert times to int64 nanoseconds since 1970-01-01T00:00 UTC."""
    arr = np.asarray(time)
    if arr.dtype.kind != "M":
        try:
            arr = arr.astype("datetime64[ns]")
        except (ValueError, TypeError):
            raise InputError(
                f"{name}: expected datetime64 or ISO 8601 times, got dtype {arr.dtype}"
            ) from None
    arr = arr.astype("datetime64[ns]")
    if np.any(np.isnat(arr)):
        raise InputError(f"{name}: contains missing times (NaT)")
    return arr.astype(np.int64)


def _check_forcing(time, air_temperature) -> tuple[np.ndarray, np.ndarray]:
    """Validate a forcing series; return (int64 ns times, float temperatures)."""
    t = np.atleast_1d(_as_ns(time, "time"))
    temp = np.atleast_1d(np.asarray(air_temperature, dtype=float))
    if t.ndim != 1 or temp.ndim != 1:
        raise InputError("time/air_temperature: expected one-dimensional series")
    if t.size != temp.size:
        raise InputError(
            f"air_temperature: {temp.size} values but time has {t.size} entries"
        )
    if t.size < 2:
        raise InputError("time: need at least two samples to integrate the forcing")
    if np.any(np.diff(t) <= 0):
        i = int(np.argmax(np.diff(t) <= 0)) + 1
        raise InputError(f"time: not strictly increasing at sample {i}")
    if not np.all(np.isfinite(temp)):
        i = int(np.argmax(~np.isfinite(temp)))
        raise InputError(f"air_temperature: non-finite value at sample {i}")
    if np.max(temp) > _MAX_AIR_TEMPERATURE_C:
        raise InputError(
            f"air_temperature: maximum {np.max(temp):.1f} exceeds "
            f"{_MAX_AIR_TEMPERATURE_C:.0f} degC; give degrees Celsius, not kelvin"
        )
    return t, temp


def _check_fdd(fdd) -> np.ndarray:
    theta = np.asarray(fdd, dtype=float)
    if np.any(~np.isfinite(theta)):
        raise InputError("fdd: contains non-finite values")
    if np.any(theta < 0):
        raise InputError("fdd: negative freezing degree days; FDD must be >= 0")
    return theta


def _check_thickness(h, name: str = "thickness") -> np.ndarray:
    arr = np.asarray(h, dtype=float)
    if np.any(~np.isfinite(arr)):
        raise InputError(f"{name}: contains non-finite values")
    if np.any(arr < 0):
        raise InputError(f"{name}: negative ice thickness; must be >= 0 m")
    return arr


def _check_positive(value: float, name: str) -> float:
    v = float(value)
    if not np.isfinite(v) or v <= 0:
        raise InputError(f"{name}: must be a positive finite number, got {value!r}")
    return v


# ---------------------------------------------------------------------------
# Daily means and freezing degree days
# ---------------------------------------------------------------------------


def daily_mean_temperature(time, air_temperature):
    """Interval mean air temperature of each UTC day.

    The series is taken to vary linearly between samples.  The integral of
    that piecewise-linear series over the part of each UTC day covered by the
    samples is computed exactly (trapezoid rule with the day boundaries
    inserted as extra nodes) and divided by the covered duration.  Samples
    are never simply picked or averaged.

    Parameters
    ----------
    time : array_like of datetime64
        Sample times, strictly increasing, UTC (naive times are taken as
        UTC). Any spacing, also non-uniform [s].
    air_temperature : array_like of float
        Instantaneous air temperature at each sample [degC].

    Returns
    -------
    day : ndarray of datetime64[D]
        Start (00:00 UTC) of every day that has covered time.
    mean : ndarray of float
        Mean temperature over the covered part of each day [degC].
    coverage : ndarray of float
        Covered fraction of each day, in (0, 1] [1].

    Raises
    ------
    icecolumn.errors.InputError
        On mismatched lengths, fewer than two samples, non-increasing
        times, non-finite temperatures or values that look like kelvin.

    References
    ----------
    Trapezoid rule of a piecewise-linear interpolant (exact for it):
    common practice, no source.
    """
    t, temp = _check_forcing(time, air_temperature)
    day_first = t[0] // _DAY_NS
    day_last = (t[-1] - 1) // _DAY_NS  # last day with positive covered time
    n_days = int(day_last - day_first + 1)
    # seconds relative to 00:00 UTC of the first day
    s = (t - day_first * _DAY_NS) / 1e9
    boundaries = np.arange(1, n_days, dtype=float) * SECONDS_PER_DAY
    nodes = np.union1d(s, boundaries)
    values = np.interp(nodes, s, temp)
    dt = np.diff(nodes)
    area = 0.5 * (values[:-1] + values[1:]) * dt
    # no segment crosses a day boundary, so its left node names its day
    seg_day = np.floor(nodes[:-1] / SECONDS_PER_DAY).astype(np.int64)
    seg_day = np.clip(seg_day, 0, n_days - 1)
    covered = np.bincount(seg_day, weights=dt, minlength=n_days)
    integral = np.bincount(seg_day, weights=area, minlength=n_days)
    mean = integral / covered
    coverage = covered / SECONDS_PER_DAY
    day = (day_first + np.arange(n_days)).astype("datetime64[D]")
    return day, mean, coverage


def freezing_degree_days(time, air_temperature, base=0.0):
    """Cumulative freezing degree days at the end of each UTC day.

    Each day contributes ``coverage * max(0, base - mean)`` where ``mean`` is
    the interval mean over the covered part of the day
    (:func:`daily_mean_temperature`).  The clipping at zero is applied to the
    daily mean, not to single samples.

    Partial-day rule: a day only partly covered by the forcing (normally the
    first and the last day) contributes in proportion to its covered
    fraction, i.e. the degree days actually accumulated during the covered
    hours; nothing is extrapolated into the uncovered hours.

    Parameters
    ----------
    time : array_like of datetime64
        Sample times, strictly increasing, UTC [s].
    air_temperature : array_like of float
        Instantaneous air temperature [degC].
    base : float, optional
        Base temperature below which degree days accumulate [degC].

    Returns
    -------
    day : ndarray of datetime64[D]
        Start (00:00 UTC) of each day.
    fdd : ndarray of float
        Cumulative FDD at the end of each day (or at the last sample for a
        last partial day), counted from the first sample [K day].

    References
    ----------
    FDD = sum over days of max(0, T_f - T_mean,day): common practice, no
    source.
    """
    base = float(base)
    if not np.isfinite(base):
        raise InputError(f"base: must be a finite temperature in degC, got {base!r}")
    day, mean, coverage = daily_mean_temperature(time, air_temperature)
    increment = coverage * np.maximum(0.0, base - mean)
    return day, np.cumsum(increment)


def cumulative_fdd_knots(time, air_temperature, base=0.0):
    """Knots of the cumulative FDD curve: first sample, then each day end.

    Parameters
    ----------
    time : array_like of datetime64
        Sample times, strictly increasing, UTC [s].
    air_temperature : array_like of float
        Instantaneous air temperature [degC].
    base : float, optional
        Base temperature [degC].

    Returns
    -------
    knot_time : ndarray of datetime64[ns]
        The first sample time followed by the end of each day, the last one
        clipped to the last sample time [s].
    fdd : ndarray of float
        Cumulative FDD at each knot; 0 at the first sample [K day].
    """
    t = _as_ns(time, "time")
    day, fdd = freezing_degree_days(time, air_temperature, base)
    ends = (day.astype("datetime64[ns]").astype(np.int64) + _DAY_NS)
    ends = np.minimum(ends, t[-1])
    knot_ns = np.concatenate([[t[0]], ends])
    return knot_ns.astype("datetime64[ns]"), np.concatenate([[0.0], fdd])


def cumulative_fdd_at(query_times, time, air_temperature, base=0.0):
    """Cumulative FDD interpolated linearly to arbitrary times.

    The cumulative curve of :func:`cumulative_fdd_knots` (0 at the first
    sample, day-end values after) is interpolated linearly in time.

    Parameters
    ----------
    query_times : array_like of datetime64
        Times to evaluate, within the forcing period [s].
    time : array_like of datetime64
        Forcing sample times, strictly increasing, UTC [s].
    air_temperature : array_like of float
        Instantaneous air temperature [degC].
    base : float, optional
        Base temperature [degC].

    Returns
    -------
    ndarray of float
        Cumulative FDD at ``query_times`` [K day].

    Raises
    ------
    icecolumn.errors.InputError
        If a query time lies outside the forcing period.
    """
    q = _as_ns(query_times, "query_times")
    knot_time, fdd = cumulative_fdd_knots(time, air_temperature, base)
    k = knot_time.astype(np.int64)
    if np.any(q < k[0]) or np.any(q > k[-1]):
        raise InputError(
            f"query_times: outside the forcing period {knot_time[0]} to {knot_time[-1]}"
        )
    return np.interp((q - k[0]) / 1e9, (k - k[0]) / 1e9, fdd)


# ---------------------------------------------------------------------------
# Growth laws
# ---------------------------------------------------------------------------


def stefan(fdd, conductivity=2.2, density=917.0, latent_heat=334e3,
           surface_coefficient=None):
    """Stefan's law of ice growth, optionally with a surface resistance.

    Quasi-steady conduction through the ice (linear temperature profile, no
    heat capacity, no ocean heat flux) balances the latent heat released at
    the base::

        rho L dh/dt = k (T_f - T_s) / h

    Without a surface coefficient the ice surface is at air temperature,
    T_s = T_a, and integration over time gives (Stefan 1891)::

        h = sqrt(2 k theta 86400 / (rho L))

    With a linear surface heat-transfer coefficient H the conductive flux
    also crosses the air layer, k (T_f - T_s)/h = H (T_s - T_a), so the flux
    is (T_f - T_a) / (h/k + 1/H).  Then
    rho L (h/k + 1/H) dh = (T_f - T_a) dt; integrating from h = 0,
    rho L (h^2/(2k) + h/H) = 86400 theta, i.e.
    h^2 + 2 (k/H) h = 2 k theta 86400 / (rho L), whose positive root is::

        h = sqrt((k/H)^2 + 2 k theta 86400 / (rho L)) - k/H

    (evaluated here as c / (sqrt(a^2 + c) + a), a = k/H, to avoid
    cancellation).  The base temperature is the freezing point of the water
    (derived; the quasi-steady surface-transfer treatment follows [Ashton]).

    Parameters
    ----------
    fdd : array_like of float
        Freezing degree days theta relative to the freezing point of the
        water, >= 0 [K day].
    conductivity : float, optional
        Ice thermal conductivity k; 2.2 is common practice, no source
        [W m-1 K-1].
    density : float, optional
        Ice density rho; 917 is common practice, no source [kg m-3].
    latent_heat : float, optional
        Latent heat of fusion L; 334e3 is common practice, no source
        [J kg-1].
    surface_coefficient : float or None, optional
        Linear ice-air heat-transfer coefficient H; typically 10-30
        ([Ashton]); None for plain Stefan [W m-2 K-1].

    Returns
    -------
    ndarray of float
        Ice thickness [m].

    Notes
    -----
    With k = 2.2, rho = 917 and L = 334e3, plain Stefan is
    h = 0.03523 sqrt(theta) m (derived).  Driven with air temperature it
    overpredicts observed growth by about 35-50 % at 1000-4000 FDD (derived
    by comparison with [Anderson1961] and [Zubov1945]).

    References
    ----------
    .. [1] Stefan (1891), see module references.
    .. [2] Ashton, "Ice in lakes and rivers", Encyclopaedia Britannica.
    """
    theta = _check_fdd(fdd)
    k = _check_positive(conductivity, "conductivity")
    rho = _check_positive(density, "density")
    lat = _check_positive(latent_heat, "latent_heat")
    c = 2.0 * k * theta * SECONDS_PER_DAY / (rho * lat)  # [m2]
    if surface_coefficient is None:
        return np.sqrt(c)
    a = k / _check_positive(surface_coefficient, "surface_coefficient")  # [m]
    return c / (np.sqrt(a * a + c) + a)


def lebedev(fdd):
    """Lebedev (1938) empirical growth law.

    ``h [cm] = 1.33 theta^0.58`` with theta the freezing degree days of air
    temperature below 0 degC ([Lebedev1938]; formula checked against a
    secondary source).

    Parameters
    ----------
    fdd : array_like of float
        Freezing degree days relative to 0 degC, >= 0 [K day].

    Returns
    -------
    ndarray of float
        Ice thickness [m].

    References
    ----------
    .. [1] Lebedev (1938), see module references.
    """
    theta = _check_fdd(fdd)
    return 1.33 * theta**0.58 / 100.0


def anderson(fdd):
    """Anderson (1961) empirical growth law (Thule, Greenland).

    ``h^2 + 5.1 h = 6.7 theta`` with h in cm ([Anderson1961]; constants from
    memory; base -1.8 degC from memory).  Positive root, evaluated as
    h = 2 * 6.7 theta / (5.1 + sqrt(5.1^2 + 4 * 6.7 theta)).

    Parameters
    ----------
    fdd : array_like of float
        Freezing degree days relative to -1.8 degC, >= 0 [K day].

    Returns
    -------
    ndarray of float
        Ice thickness [m].

    References
    ----------
    .. [1] Anderson, D. L. (1961). Growth rate of sea ice. J. Glaciol.
       3(30), 1170-1172.
    """
    theta = _check_fdd(fdd)
    h_cm = 2.0 * 6.7 * theta / (5.1 + np.sqrt(5.1**2 + 4.0 * 6.7 * theta))
    return h_cm / 100.0


def zubov(fdd):
    """Zubov (1945) empirical growth law.

    ``h^2 + 50 h = 8 theta`` with h in cm and theta the sum of negative daily
    mean air temperatures, i.e. base 0 degC ([Zubov1945]; formula and base
    checked against a secondary source).  Positive root, evaluated as
    h = 2 * 8 theta / (50 + sqrt(50^2 + 4 * 8 theta)).

    Parameters
    ----------
    fdd : array_like of float
        Freezing degree days relative to 0 degC, >= 0 [K day].

    Returns
    -------
    ndarray of float
        Ice thickness [m].

    References
    ----------
    .. [1] Zubov (1945), see module references.
    """
    theta = _check_fdd(fdd)
    h_cm = 2.0 * 8.0 * theta / (50.0 + np.sqrt(50.0**2 + 4.0 * 8.0 * theta))
    return h_cm / 100.0


def power_law(fdd, a, b):
    """Power law ``h = a theta^b``.

    Parameters
    ----------
    fdd : array_like of float
        Freezing degree days, >= 0 [K day].
    a : float
        Coefficient [m (K day)^-b].
    b : float
        Exponent [1].

    Returns
    -------
    ndarray of float
        Ice thickness [m].

    References
    ----------
    Form of [Lebedev1938]; common practice, no source.
    """
    theta = np.asarray(fdd, dtype=float)
    return a * np.power(theta, b)


def fit_power_law(fdd, thickness):
    """Least-squares fit of ``h = a theta^b`` to observations.

    Points with ``fdd <= 0`` (or non-finite values) are ignored.  The fit is
    a nonlinear least-squares fit in thickness (scipy.optimize.curve_fit),
    started from a straight-line fit in log-log space.  The covariance is
    scaled by the residual variance (no prior measurement errors).

    Parameters
    ----------
    fdd : array_like of float
        Freezing degree days at each observation [K day].
    thickness : array_like of float
        Observed ice thickness [m].

    Returns
    -------
    a : float
        Coefficient [m (K day)^-b].
    b : float
        Exponent [1].
    cov : ndarray, shape (2, 2)
        Covariance matrix of (a, b); standard errors are the square roots of
        its diagonal [m^2 (K day)^-2b, m (K day)^-b, 1].

    Raises
    ------
    icecolumn.errors.InputError
        If fewer than three usable points remain or the fit fails.

    References
    ----------
    Nonlinear least squares (Levenberg-Marquardt): common practice, no
    source.
    """
    theta = np.asarray(fdd, dtype=float).ravel()
    h = np.asarray(thickness, dtype=float).ravel()
    if theta.size != h.size:
        raise InputError(f"thickness: {h.size} values but fdd has {theta.size}")
    use = np.isfinite(theta) & np.isfinite(h) & (theta > 0)
    theta, h = theta[use], h[use]
    if theta.size < 3:
        raise InputError(
            f"fdd/thickness: need at least 3 points with fdd > 0, got {theta.size}"
        )
    pos = h > 0
    if np.count_nonzero(pos) >= 2 and np.ptp(np.log(theta[pos])) > 0:
        b0, log_a0 = np.polyfit(np.log(theta[pos]), np.log(h[pos]), 1)
        p0 = (float(np.exp(log_a0)), float(b0))
    else:
        p0 = (0.01, 0.5)
    try:
        popt, pcov = curve_fit(power_law, theta, h, p0=p0, maxfev=20000)
    except (RuntimeError, ValueError) as err:
        raise InputError(f"thickness: power-law fit failed ({err})") from None
    return float(popt[0]), float(popt[1]), np.asarray(pcov, dtype=float)


#: Registry of the classical laws: name -> function(fdd, **kwargs) -> h [m].
LAWS: dict[str, Callable[..., np.ndarray]] = {
    "stefan": stefan,
    "lebedev": lebedev,
    "anderson": anderson,
    "zubov": zubov,
}

#: Base temperature each law was fitted with [degC].  None for Stefan means
#: the freezing point of the water, passed by the caller (default -1.8 degC).
#: Lebedev 0 degC (checked, secondary source); Anderson -1.8 degC (from
#: memory); Zubov 0 degC, sum of negative air temperatures (checked,
#: secondary source).
LAW_BASE_TEMPERATURE: dict[str, float | None] = {
    "stefan": None,
    "lebedev": 0.0,
    "anderson": -1.8,
    "zubov": 0.0,
}

#: Short citation of each law.
LAW_REFERENCE: dict[str, str] = {
    "stefan": "Stefan (1891), Annalen der Physik und Chemie 278(2), 269-286",
    "lebedev": "Lebedev (1938), Problemy Arktiki 5: h[cm] = 1.33 theta^0.58",
    "anderson": "Anderson (1961), J. Glaciol. 3(30), 1170-1172: h^2 + 5.1 h = 6.7 theta",
    "zubov": "Zubov (1945), L'dy Arktiki: h^2 + 50 h = 8 theta",
}


def _law_name(law_name: str) -> str:
    if law_name not in LAWS:
        raise InputError(
            f"law: unknown growth law {law_name!r}; choose one of {', '.join(LAWS)}"
        )
    return law_name


def _check_kwargs(law_name: str, law_kwargs: dict) -> None:
    allowed = {"conductivity", "density", "latent_heat", "surface_coefficient"}
    if law_name != "stefan" and law_kwargs:
        raise InputError(
            f"law: {law_name!r} takes no parameters, got {', '.join(law_kwargs)}"
        )
    extra = set(law_kwargs) - allowed
    if extra:
        raise InputError(f"law: unknown Stefan parameter(s) {', '.join(sorted(extra))}")


def fdd_for_thickness(law_name, h, **law_kwargs):
    """Freezing degree days a law needs to grow ice of thickness ``h`` from 0.

    Closed-form inverses of the laws:

    - Stefan: theta = rho L (h^2 + 2 (k/H) h) / (2 k 86400), the k/H term
      only with a surface coefficient (inverse of :func:`stefan`).
    - Lebedev: theta = (h_cm / 1.33)^(1/0.58) ([Lebedev1938]).
    - Anderson: theta = (h_cm^2 + 5.1 h_cm) / 6.7 ([Anderson1961]).
    - Zubov: theta = (h_cm^2 + 50 h_cm) / 8 ([Zubov1945]).

    Parameters
    ----------
    law_name : str
        One of the keys of :data:`LAWS`.
    h : array_like of float
        Ice thickness, >= 0 [m].
    **law_kwargs
        Parameters of :func:`stefan` (only for ``"stefan"``).

    Returns
    -------
    ndarray of float
        Freezing degree days in the law's own base [K day].
    """
    name = _law_name(law_name)
    _check_kwargs(name, law_kwargs)
    h_m = _check_thickness(h)
    h_cm = 100.0 * h_m
    if name == "stefan":
        k = _check_positive(law_kwargs.get("conductivity", 2.2), "conductivity")
        rho = _check_positive(law_kwargs.get("density", 917.0), "density")
        lat = _check_positive(law_kwargs.get("latent_heat", 334e3), "latent_heat")
        hs = law_kwargs.get("surface_coefficient")
        a = 0.0 if hs is None else k / _check_positive(hs, "surface_coefficient")
        return rho * lat * (h_m**2 + 2.0 * a * h_m) / (2.0 * k * SECONDS_PER_DAY)
    if name == "lebedev":
        return (h_cm / 1.33) ** (1.0 / 0.58)
    if name == "anderson":
        return (h_cm**2 + 5.1 * h_cm) / 6.7
    return (h_cm**2 + 50.0 * h_cm) / 8.0  # zubov


def thickness_from(law_name, fdd, initial_thickness=0.0, **law_kwargs):
    """Thickness from a law started at an initial thickness.

    ``h = law(fdd + fdd_for_thickness(law, h0))``: the law's curve is
    shifted by the degree days it needs to reach ``h0``, so that
    ``h = h0`` at ``fdd = 0``.

    Parameters
    ----------
    law_name : str
        One of the keys of :data:`LAWS`.
    fdd : array_like of float
        Freezing degree days since the start, in the law's base, >= 0
        [K day].
    initial_thickness : float, optional
        Ice thickness at the start, >= 0 [m].
    **law_kwargs
        Parameters of :func:`stefan` (only for ``"stefan"``).

    Returns
    -------
    ndarray of float
        Ice thickness [m].
    """
    name = _law_name(law_name)
    _check_kwargs(name, law_kwargs)
    theta = _check_fdd(fdd)
    offset = fdd_for_thickness(name, _check_thickness(initial_thickness,
                                                      "initial_thickness"),
                               **law_kwargs)
    return LAWS[name](theta + offset, **law_kwargs)
