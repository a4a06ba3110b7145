"""Calibration of the column against drill-hole thickness by least squares.

:func:`calibrate` fits the ocean heat flux (and optionally one more parameter) so that
the model thickness at the observation times matches the observations in the least-
squares sense (``scipy.optimize.least_squares``, trust-region reflective with bounds).

* The model runs with a coarse output (:data:`COARSE_INTERVAL`) and the thickness is
  interpolated linearly in time to the observation times.
* The Jacobian is a forward difference with the steps of :data:`FIT_PARAMETERS`; the
  base point and the perturbed points run as one batch (``model.run_ensemble``), each
  member being bitwise what it would be alone.
* Uncertainty: ``cov = (J^T J)^-1 s^2`` with ``s^2 = sum r^2 / (n - p)`` at the
  solution (common practice, no source); 1-sigma = sqrt of the diagonal.
* Baseline: the Lebedev-type law ``h = a (theta + theta_0)^0.58`` (exponent of Lebedev
  1938, see :mod:`icecolumn.growth_laws`), theta the freezing degree days below 0 degC
  since the run start and theta_0 chosen so that ``h = h_0`` at the start, with the
  coefficient ``a`` fitted to the same observations.
  ``skill = 1 - RMSE_model / RMSE_baseline``.

* A fit that ends on a bound of :data:`FIT_PARAMETERS` is not a fit: the result lists
  the parameters in ``at_bound`` and carries a warning (the command writes no file then
  unless ``--force``).
* Observed thicknesses above :data:`MAX_OBSERVED_ICE` (ice) or :data:`MAX_OBSERVED_SNOW`
  (snow) are refused with a hint that they look like centimetres.

The fitted values are written into the user's configuration (only the fitted keys
change), so ``icecolumn run`` and ``icecolumn forecast`` accept the TOML it writes.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import xarray as xr
from scipy.optimize import least_squares

from ._version import __version__
from . import model
from .config import Config, default_config
from .errors import InputError
from .growth_laws import cumulative_fdd_at
from .output import CAUTION
from .textfile import write_text_atomically
from .texttable import text_table

__all__ = ["FIT_PARAMETERS", "COARSE_INTERVAL", "LEBEDEV_EXPONENT", "MAX_OBSERVED_ICE", "MAX_OBSERVED_SNOW",
           "CalibrationResult", "calibrate", "write_fitted_config", "format_calibration", "bound_warning"]

#: Parameters that can be fitted: finite-difference step, bounds and unit.
FIT_PARAMETERS: dict[str, dict] = {
    "ocean.heat_flux": {"step": 0.5, "bounds": (-20.0, 100.0), "unit": "W m-2"},
    "surface.heat_transfer_coefficient": {"step": 0.5, "bounds": (1.0, 200.0), "unit": "W m-2 K-1"},
    "snow.conductivity": {"step": 0.01, "bounds": (0.03, 2.0), "unit": "W m-1 K-1"},
}
#: Output interval of the calibration runs.
COARSE_INTERVAL = "1D"
#: Exponent of the Lebedev (1938) law h[cm] = 1.33 theta^0.58 (see growth_laws.LAW_REFERENCE).
LEBEDEV_EXPONENT = 0.58
#: Thickest drill-hole ice accepted [m]; more looks like centimetres (the model's own limit for
#: an initial thickness is 10 m too).
MAX_OBSERVED_ICE = 10.0
#: Deepest observed snow accepted [m]; more looks like centimetres (snow on sea ice is rarely
#: deeper than about 1 m; common practice, no source).
MAX_OBSERVED_SNOW = 3.0


@dataclass
class CalibrationResult:
    """Fitted parameters and diagnostics (see :func:`calibrate`)."""

    names: tuple
    values: np.ndarray
    sigma: np.ndarray
    covariance: np.ndarray
    correlation: np.ndarray
    rmse: float
    bias: float
    baseline_coefficient: float
    baseline_rmse: float
    skill: float
    config: Config  # the user's configuration with the fitted values
    dataset: xr.Dataset
    at_bound: tuple = ()  # fitted parameters that ended on a bound of FIT_PARAMETERS


def _get(cfg: Config, key: str) -> float:
    sec, name = key.split(".")
    return float(getattr(getattr(cfg, sec), name))


def _set(cfg: Config, key: str, value: float) -> Config:
    sec, name = key.split(".")
    return cfg.replace(sec, **{name: float(value)})


def _names(fit, extra, cfg: Config, obs: xr.Dataset) -> tuple[str, ...]:
    names = list((fit,) if isinstance(fit, str) else fit)
    if extra:
        names.append(extra)
    if not names:
        raise InputError("calibrate: nothing to fit")
    if "ocean.heat_flux" not in names:
        raise InputError("calibrate: the fit always includes ocean.heat_flux")
    for n in names:
        if n not in FIT_PARAMETERS:
            raise InputError(f"--fit: {n!r} cannot be fitted; choose one of {', '.join(FIT_PARAMETERS)}")
    if len(set(names)) != len(names):
        raise InputError(f"--fit: a parameter is named twice ({', '.join(names)})")
    if len(names) > 2:
        raise InputError("--fit: at most ocean.heat_flux and one more parameter can be fitted")
    if "snow.conductivity" in names:
        if cfg.initial.snow_thickness <= 0 or "snow_thickness" not in obs:
            raise InputError("--fit snow.conductivity needs snow on the ice ([initial] snow_thickness "
                             "> 0) and observed snow_thickness")
    return tuple(names)


def _check_obs(obs: xr.Dataset, t0, t1) -> None:
    src = obs.attrs.get("source_file", "observations")
    t = obs["time"].values.astype("datetime64[ns]")
    if t.size < 1:
        raise InputError(f"{src}: no observations")
    for name, limit in (("ice_thickness", MAX_OBSERVED_ICE), ("snow_thickness", MAX_OBSERVED_SNOW)):
        if name not in obs:
            continue
        v = np.asarray(obs[name].values, float)
        big = np.flatnonzero(v > limit)
        if big.size:
            k = int(big[0])
            where = f"line {int(obs['line'].values[k])}" if "line" in obs else f"observation {k + 1}"
            raise InputError(f"{src}: {where}: {name} {v[k]:g} m is more than {limit:g} m and looks like "
                             f"centimetres; give thicknesses in metres ({v[k]:g} cm = {v[k] / 100:g} m)")
    if np.any(np.diff(t.astype("int64")) <= 0):
        k = int(np.flatnonzero(np.diff(t.astype("int64")) <= 0)[0]) + 1
        raise InputError(f"{src}: observation {k + 1} ({str(t[k])[:16]}) is not after the one before; "
                         "observations must be in time order")
    if t[0] < t0 or t[-1] > t1:
        raise InputError(f"{src}: observations {str(t[0])[:16]} .. {str(t[-1])[:16]} are outside the run "
                         f"{str(t0)[:16]} .. {str(t1)[:16]}")


def _lebedev_baseline(forcing: xr.Dataset, start, obs_t, h_obs, h0: float) -> tuple[float, np.ndarray]:
    ft = forcing["time"].values.astype("datetime64[ns]")
    fv = np.asarray(forcing["air_temperature"].values, float)
    keep = ft >= start
    tt = np.concatenate([[start], ft[keep]]) if ft[keep][0] > start else ft[keep]
    vv = np.concatenate([[np.interp(0.0, ((ft - start) / np.timedelta64(1, "s")).astype(float), fv)], fv[keep]]) \
        if ft[keep][0] > start else fv[keep]
    theta = cumulative_fdd_at(obs_t, tt, vv, base=0.0)
    b = LEBEDEV_EXPONENT

    def pred(a):
        return a * (theta + (h0 / a) ** (1.0 / b)) ** b

    res = least_squares(lambda p: pred(p[0]) - h_obs, x0=[0.0133], bounds=([1e-5], [1.0]))
    a = float(res.x[0])
    return a, pred(a)


def calibrate(forcing: xr.Dataset, obs: xr.Dataset, config: Config | None = None,
              fit=("ocean.heat_flux",), extra: str | None = None, *, max_evaluations: int = 30) -> CalibrationResult:
    """Fit model parameters to observed ice thickness.

    Parameters
    ----------
    forcing : xarray.Dataset
        Air-temperature forcing (:func:`icecolumn.read_forcing`).
    obs : xarray.Dataset
        Observations (:func:`icecolumn.observations.read_observations`): ``time``,
        ``ice_thickness`` [m]; inside the run period, in time order.
    config : Config, optional
        Starting configuration (initial thickness, run period, first guesses).
    fit : tuple of str
        Always contains ``"ocean.heat_flux"``.
    extra : str, optional
        One more parameter: ``"surface.heat_transfer_coefficient"`` or
        ``"snow.conductivity"`` (needs snow and observed snow thickness).

    Returns
    -------
    CalibrationResult
    """
    cfg = config if config is not None else default_config()
    names = _names(fit, extra, cfg, obs)
    t0, t1 = model.run_period(cfg, forcing, str(forcing.attrs.get("source_file", "forcing")))
    _check_obs(obs, t0, t1)
    obs_t = obs["time"].values.astype("datetime64[ns]")
    h_obs = np.asarray(obs["ice_thickness"].values, float)
    n, p = h_obs.size, len(names)
    if n <= p:
        raise InputError(f"calibrate: {n} observations cannot fit {p} parameters with an uncertainty "
                         f"(need more than {p})")
    end = max(obs_t[-1], t0 + np.timedelta64(1, "D"))
    end = min(end + np.timedelta64(1, "D"), t1)
    work = cfg.replace("output", interval=COARSE_INTERVAL).replace("run", start=str(t0)[:19], end=str(end)[:19])
    # a fit to drill holes resolves the forcing in time: the step is at most the forcing's own
    # time step (with 6-hour steps on hourly air temperature the thickness differs by ~1e-3
    # relative, which exact twin holes would see as a bias of ~0.05 W m-2)
    forcing_step = float(np.median(np.diff(forcing["time"].values).astype("timedelta64[s]").astype(float)))
    if 60.0 <= forcing_step < work.solver.max_step_seconds:
        initial = min(work.solver.initial_step_seconds, forcing_step)
        work = work.replace("solver", max_step=f"{forcing_step:g}s", initial_step=f"{initial:g}s")
    x_obs = ((obs_t - t0) / np.timedelta64(1, "s")).astype(float)
    steps = np.array([FIT_PARAMETERS[k]["step"] for k in names])
    lo = np.array([FIT_PARAMETERS[k]["bounds"][0] for k in names])
    hi = np.array([FIT_PARAMETERS[k]["bounds"][1] for k in names])
    cache: dict[tuple, tuple[np.ndarray, np.ndarray]] = {}
    count = [0]

    def config_at(x) -> Config:
        c = work
        for k, v in zip(names, x):
            c = _set(c, k, v)
        return c

    def evaluate(x):
        key = tuple(np.round(x, 12))
        if key in cache:
            return cache[key]
        points = [np.asarray(x, float)]
        for j in range(p):
            xj = np.array(x, float)
            # step inwards at an upper bound
            xj[j] += steps[j] if xj[j] + steps[j] <= hi[j] else -steps[j]
            points.append(xj)
        ds = model.run_ensemble([model.Member(config_at(pt), forcing) for pt in points])
        count[0] += 1
        tt = ((ds["time"].values - t0) / np.timedelta64(1, "s")).astype(float)
        hm = np.asarray(ds["ice_thickness"].values, float)
        at_obs = np.array([np.interp(x_obs, tt, row) for row in hm])
        r = at_obs[0] - h_obs
        jac = np.empty((n, p))
        for j in range(p):
            jac[:, j] = (at_obs[j + 1] - at_obs[0]) / (points[j + 1][j] - points[0][j])
        cache[key] = (r, jac, at_obs[0])
        return cache[key]

    x0 = np.clip([_get(cfg, k) for k in names], lo, hi)
    sol = least_squares(lambda x: evaluate(x)[0], x0, jac=lambda x: evaluate(x)[1], bounds=(lo, hi),
                        method="trf", x_scale=steps, max_nfev=max_evaluations)
    r, jac, h_mod = evaluate(sol.x)
    dof = n - p
    s2 = float(r @ r) / dof
    try:
        cov = np.linalg.inv(jac.T @ jac) * s2
    except np.linalg.LinAlgError:
        raise InputError("calibrate: the observations do not constrain the parameters (singular Jacobian); "
                         "fit fewer parameters or add observations") from None
    sigma = np.sqrt(np.diag(cov))
    corr = cov / np.outer(sigma, sigma)
    rmse = float(np.sqrt(np.mean(r**2)))
    bias = float(np.mean(r))
    a, h_base = _lebedev_baseline(forcing, t0, obs_t, h_obs, cfg.initial.ice_thickness)
    rmse_base = float(np.sqrt(np.mean((h_base - h_obs) ** 2)))
    skill = 1.0 - rmse / rmse_base if rmse_base > 0 else float("nan")
    fitted = cfg
    for k, v in zip(names, sol.x):
        fitted = _set(fitted, k, float(v))
    # on a bound: within a thousandth of a finite-difference step of it
    at_bound = tuple(k for k, v, a, b, st in zip(names, sol.x, lo, hi, steps)
                     if v <= a + 1e-3 * st or v >= b - 1e-3 * st)
    ds = xr.Dataset(
        {"observed_ice_thickness": ("time", h_obs, {"units": "m", "long_name": "observed ice thickness"}),
         "model_ice_thickness": ("time", h_mod, {"units": "m", "long_name": "calibrated model ice thickness at the "
                                                 "observation times (linear in time between daily outputs)"}),
         "residual": ("time", r, {"units": "m", "long_name": "model minus observed ice thickness"}),
         "baseline_ice_thickness": ("time", h_base, {"units": "m", "long_name": "Lebedev-type law h = a (theta + "
                                                     "theta_0)^0.58 fitted to the observations"}),
         "fitted_value": ("parameter", np.asarray(sol.x, float), {"long_name": "fitted parameter value"}),
         "sigma": ("parameter", sigma, {"long_name": "1-sigma uncertainty, sqrt diag((J^T J)^-1 s^2)"}),
         "covariance": (("parameter", "parameter_2"), cov, {"long_name": "covariance of the fitted parameters"}),
         "correlation": (("parameter", "parameter_2"), corr, {"long_name": "correlation of the fitted parameters",
                                                              "units": "1"})},
        coords={"time": ("time", obs_t, {"standard_name": "time", "long_name": "time (UTC)"}),
                "parameter": ("parameter", np.array(names, dtype=object)),
                "parameter_2": ("parameter_2", np.array(names, dtype=object)),
                "parameter_unit": ("parameter", np.array([FIT_PARAMETERS[k]["unit"] for k in names], dtype=object))},
        attrs={"Conventions": "CF-1.8", "title": "icecolumn calibration", "icecolumn_version": __version__,
               "icecolumn_calibration": 1, "rmse_m": rmse, "bias_m": bias,
               "baseline": "Lebedev-type law h = a (theta + theta_0)^0.58, theta = FDD below 0 degC since the run "
                           "start, a fitted to the same observations",
               "baseline_coefficient_a": a, "baseline_rmse_m": rmse_base, "skill": skill,
               "skill_definition": "1 - RMSE_model / RMSE_baseline",
               "uncertainty_method": "(J^T J)^-1 s^2 at the solution, forward-difference Jacobian",
               "degrees_of_freedom": dof, "model_evaluations": count[0],
               "fitted_config": fitted.to_toml(), "caution": CAUTION,
               "fit_at_bound": ", ".join(at_bound),
               "forcing_file": str(forcing.attrs.get("source_file", "<in memory>")),
               "observation_file": str(obs.attrs.get("source_file", "<in memory>"))})
    return CalibrationResult(names=names, values=np.asarray(sol.x, float), sigma=sigma, covariance=cov,
                             correlation=corr, rmse=rmse, bias=bias, baseline_coefficient=a,
                             baseline_rmse=rmse_base, skill=skill, config=fitted, dataset=ds, at_bound=at_bound)


def bound_warning(result: CalibrationResult) -> str | None:
    """One line when the fit ended on a bound (then it is not a fit), else None."""
    if not result.at_bound:
        return None
    parts = []
    for k in result.at_bound:
        j = result.names.index(k)
        lo, hi = FIT_PARAMETERS[k]["bounds"]
        v = float(result.values[j])
        side = lo if abs(v - lo) <= abs(v - hi) else hi
        parts.append(f"{k} = {v:.4g} {FIT_PARAMETERS[k]['unit']} (bound {side:g})")
    return ("the fit ended on a bound: " + "; ".join(parts) + "; the observations are not matched inside the "
            "allowed range (check the observations, the forcing and the initial state), and the value and its "
            "uncertainty are not a fit")


def write_fitted_config(result: CalibrationResult, path, overwrite: bool = False):
    """Write the fitted configuration as TOML, atomically (refuses to overwrite unless asked)."""
    head = "".join(f"# fitted: {k} = {v:.4g} +/- {s:.2g} {FIT_PARAMETERS[k]['unit']} (1 sigma)\n"
                   for k, v, s in zip(result.names, result.values, result.sigma))
    return write_text_atomically(path, head + result.config.to_toml(), overwrite=overwrite)


def format_calibration(result: CalibrationResult) -> str:
    """Text summary of a calibration."""
    rows = [[k, f"{v:.4g}", f"{s:.2g}", FIT_PARAMETERS[k]["unit"]]
            for k, v, s in zip(result.names, result.values, result.sigma)]
    lines = [text_table([("parameter", ""), ("value", ""), ("1-sigma", ""), ("unit", "")], rows).rstrip("\n")]
    if len(result.names) == 2:
        lines.append(f"correlation: {result.correlation[0, 1]:+.2f}")
    n = result.dataset.sizes["time"]
    warn = bound_warning(result)
    if warn is not None:
        lines.append(f"warning: {warn}")
    lines += [f"observations: {n}; rmse {result.rmse:.3f} m; bias (model - obs) {result.bias:+.3f} m",
              f"baseline Lebedev-type law a = {result.baseline_coefficient:.4g}: rmse {result.baseline_rmse:.3f} m; "
              f"skill 1 - rmse/rmse_baseline = {result.skill:.2f}",
              CAUTION]
    return "\n".join(lines)
