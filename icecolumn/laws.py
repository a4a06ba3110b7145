"""Comparison table of the classical growth laws (and optionally a model run).

:func:`laws_table` builds a daily :class:`xarray.Dataset` of freezing degree
days and the thickness predicted by Stefan's law, Lebedev (1938), Anderson
(1961) and Zubov (1945), each started from the same initial thickness;
:func:`format_laws_table` prints it weekly or monthly, :func:`write_laws_csv`
writes it as CSV, and :func:`fit_observations` fits a power law to observed
thickness.  Formulas and sources are in :mod:`icecolumn.growth_laws`.
"""

from __future__ import annotations

import csv
from dataclasses import dataclass
from typing import Any

import numpy as np
import xarray as xr

from icecolumn.config import Config, config_from_toml_text, default_config
from icecolumn.constants import SECONDS_PER_DAY
from icecolumn.errors import InputError
from icecolumn.phase import liquidus_temperature
from icecolumn import properties
from icecolumn.textfile import check_new_output, write_atomically
from icecolumn.texttable import text_table
from icecolumn.growth_laws import (
    LAW_BASE_TEMPERATURE,
    LAW_REFERENCE,
    LAWS,
    _as_ns,
    cumulative_fdd_knots,
    fit_power_law,
    thickness_from,
)

__all__ = ["laws_table", "format_laws_table", "write_laws_csv", "fit_observations", "laws_for_run",
           "air_from_run", "run_surface_coefficient", "fit_table_to_observations", "RUN_VARIABLES",
           "StefanInputs", "stefan_inputs", "run_conductivity", "STEFAN_LABELS", "LAW_SHORT_LABEL"]

_LAW_LABEL = {
    "stefan": "Stefan's law",
    "lebedev": "Lebedev (1938) law",
    "anderson": "Anderson (1961) law",
    "zubov": "Zubov (1945) law",
}

#: The short name of each law in tables and figure legends (``label`` attribute of its
#: variable); Stefan's depends on its form (:data:`STEFAN_LABELS`).
LAW_SHORT_LABEL = {"lebedev": "Lebedev (1938)", "anderson": "Anderson (1961)", "zubov": "Zubov (1945)"}
#: Stefan's law with the ice surface at air temperature, and with the linear surface transfer.
STEFAN_LABELS = {"plain": "Stefan, surface = air", "transfer": "Stefan with surface transfer"}
#: Stefan's conductivity when there is neither a run nor a constant configured conductivity
#: [W m-1 K-1] (common practice, no source).
DEFAULT_STEFAN_CONDUCTIVITY = 2.2


def _trim_to_start(t_ns: np.ndarray, temp: np.ndarray, start):
    """Drop forcing before ``start``, inserting an interpolated sample at it."""
    s_arr = np.atleast_1d(_as_ns(start, "start"))
    if s_arr.size != 1:
        raise InputError(f"start: expected one time, got {s_arr.size}")
    s = int(s_arr[0])
    if s < t_ns[0] or s >= t_ns[-1]:
        raise InputError(
            f"start: {np.datetime64(s, 'ns')} is outside the forcing period "
            f"{np.datetime64(int(t_ns[0]), 'ns')} to {np.datetime64(int(t_ns[-1]), 'ns')}"
        )
    keep = t_ns > s
    t_start = np.interp(0.0, (t_ns - s) / 1e9, temp)
    return (np.concatenate([[s], t_ns[keep]]),
            np.concatenate([[t_start], temp[keep]]))


def laws_table(air_time, air_temperature, *, base=None, initial_thickness=0.0,
               start=None, model_time=None, model_thickness=None,
               conductivity=2.2, density=917.0, latent_heat=334e3,
               surface_coefficient=None, freezing_point=-1.8, freezing_point_note=None,
               conductivity_note=None) -> xr.Dataset:
    """Daily table of freezing degree days and growth-law thickness.

    Parameters
    ----------
    air_time : array_like of datetime64
        Forcing sample times, strictly increasing, UTC [s].
    air_temperature : array_like of float
        Instantaneous air temperature [degC].
    base : float or None, optional
        One base temperature for every law; None gives each law the base it
        was fitted with (:data:`~icecolumn.growth_laws.LAW_BASE_TEMPERATURE`,
        Stefan's base being ``freezing_point``) [degC].
    initial_thickness : float, optional
        Ice thickness at the start; each law is offset by the degree days it
        needs to reach it [m].
    start : datetime64 or str or None, optional
        Start of accumulation (ISO 8601, UTC); default the first sample [s].
    model_time : array_like of datetime64 or None, optional
        Times of a model thickness series [s].
    model_thickness : array_like of float or None, optional
        Model ice thickness at ``model_time`` [m].
    conductivity : float, optional
        Ice conductivity for Stefan's law [W m-1 K-1].
    density : float, optional
        Ice density for Stefan's law [kg m-3].
    latent_heat : float, optional
        Latent heat of fusion for Stefan's law [J kg-1].
    surface_coefficient : float or None, optional
        Linear ice-air heat-transfer coefficient H for Stefan's law; None
        for plain Stefan [W m-2 K-1].
    freezing_point : float, optional
        Freezing point of the sea water, Stefan's base when ``base`` is None
        [degC].
    freezing_point_note : str or None, optional
        Where ``freezing_point`` comes from, for the table (e.g. "the run's
        freezing point ...") [1].
    conductivity_note : str or None, optional
        Where ``conductivity`` comes from, for the table [1].

    Returns
    -------
    xarray.Dataset
        ``time`` coordinate: the start time, then the end of each UTC day
        (the last row at the last forcing sample if that day is partial).
        Variables ``fdd`` (with ``base``) or ``fdd_<law>`` (without),
        ``stefan``, ``lebedev``, ``anderson``, ``zubov`` [m] (each with a
        ``label`` attribute, the name tables and legends show: Stefan's is
        :data:`STEFAN_LABELS` ``"plain"`` or ``"transfer"``), and with a
        model ``model`` [m] (NaN outside the model period) and
        ``ratio_<law>`` = model / law [1].  Attributes record each law's
        base and where it comes from (``base_temperature_<law>_degC``,
        ``base_source_<law>``) and Stefan's form and parameters.
    """
    t_ns = np.atleast_1d(_as_ns(air_time, "air_time"))
    temp = np.atleast_1d(np.asarray(air_temperature, dtype=float))
    if t_ns.size != temp.size:
        raise InputError(
            f"air_temperature: {temp.size} values but air_time has {t_ns.size}"
        )
    if t_ns.size >= 2 and np.any(np.diff(t_ns) <= 0):
        raise InputError("air_time: not strictly increasing")
    if start is not None:
        t_ns, temp = _trim_to_start(t_ns, temp, start)
    h0 = float(initial_thickness)
    if not np.isfinite(h0) or h0 < 0:
        raise InputError(f"initial_thickness: must be >= 0 m, got {initial_thickness!r}")
    fp = float(freezing_point)
    if not np.isfinite(fp):
        raise InputError(f"freezing_point: must be a finite temperature, got {freezing_point!r}")
    if (model_time is None) != (model_thickness is None):
        raise InputError("model_time/model_thickness: give both or neither")

    if base is None:
        bases = {name: (fp if b is None else float(b))
                 for name, b in LAW_BASE_TEMPERATURE.items()}
        fp_note = freezing_point_note or "the freezing point of the water"
        base_source = {name: (fp_note if b is None else "the law's published base")
                       for name, b in LAW_BASE_TEMPERATURE.items()}
    else:
        b = float(base)
        if not np.isfinite(b):
            raise InputError(f"base: must be a finite temperature, got {base!r}")
        bases = {name: b for name in LAWS}
        base_source = {name: "one base for every law (--base)" for name in LAWS}

    air_time_dt = t_ns.astype("datetime64[ns]")
    fdd_by_base: dict[float, np.ndarray] = {}
    knot_time = None
    for b in set(bases.values()):
        knot_time, fdd_by_base[b] = cumulative_fdd_knots(air_time_dt, temp, b)

    stefan_kwargs = dict(conductivity=conductivity, density=density,
                         latent_heat=latent_heat,
                         surface_coefficient=surface_coefficient)
    data_vars = {}
    fdd_attrs = {"units": "K day"}
    if base is not None:
        data_vars["fdd"] = ("time", fdd_by_base[bases["stefan"]], {
            **fdd_attrs,
            "long_name": f"cumulative freezing degree days below {bases['stefan']:g} degC",
            "base_temperature_degC": bases["stefan"]})
    else:
        for name in LAWS:
            data_vars[f"fdd_{name}"] = ("time", fdd_by_base[bases[name]], {
                **fdd_attrs,
                "long_name": (f"cumulative freezing degree days below "
                              f"{bases[name]:g} degC ({_LAW_LABEL[name]} base)"),
                "base_temperature_degC": bases[name]})
    stefan_label = STEFAN_LABELS["plain" if surface_coefficient is None else "transfer"]
    labels = {"stefan": stefan_label, **LAW_SHORT_LABEL}
    for name in LAWS:
        kwargs = stefan_kwargs if name == "stefan" else {}
        h = thickness_from(name, fdd_by_base[bases[name]], h0, **kwargs)
        data_vars[name] = ("time", h, {
            "units": "m", "standard_name": "sea_ice_thickness",
            "long_name": f"sea ice thickness from {_LAW_LABEL[name]}" + (
                f" ({stefan_label})" if name == "stefan" else ""),
            "label": labels[name],
            "base_temperature_degC": bases[name],
            "references": LAW_REFERENCE[name]})

    if model_time is not None:
        mt = np.atleast_1d(_as_ns(model_time, "model_time"))
        mh = np.atleast_1d(np.asarray(model_thickness, dtype=float))
        if mt.size != mh.size or mt.size < 1:
            raise InputError(
                f"model_thickness: {mh.size} values but model_time has {mt.size}"
            )
        if np.any(np.diff(mt) <= 0):
            raise InputError("model_time: not strictly increasing")
        k = knot_time.astype(np.int64)
        ref = k[0]
        model = np.interp((k - ref) / 1e9, (mt - ref) / 1e9, mh,
                          left=np.nan, right=np.nan)
        data_vars["model"] = ("time", model, {
            "units": "m", "standard_name": "sea_ice_thickness",
            "long_name": "sea ice thickness from the column model, "
                         "interpolated linearly in time"})
        for name in LAWS:
            law_h = data_vars[name][1]
            with np.errstate(divide="ignore", invalid="ignore"):
                ratio = np.where(law_h > 0, model / law_h, np.nan)
            data_vars[f"ratio_{name}"] = ("time", ratio, {
                "units": "1",
                "long_name": f"ratio of model thickness to {_LAW_LABEL[name]}"})

    if surface_coefficient is None:
        stefan_form = (f"{stefan_label}: plain Stefan's law (ice surface at air temperature, no "
                       "surface resistance); plain Stefan with air temperature "
                       "overpredicts by 35-50 %")
    else:
        stefan_form = (f"{stefan_label}: Stefan's law with the surface resistance 1/H of the linear "
                       f"surface coefficient H = {float(surface_coefficient):g} W m-2 K-1")
    attrs = {
        "title": "classical sea-ice growth laws driven by air temperature",
        "Conventions": "CF-1.8",
        "stefan_form": stefan_form,
        "stefan_surface_coefficient": ("none" if surface_coefficient is None
                                       else float(surface_coefficient)),
        "stefan_label": stefan_label,
        "stefan_conductivity_W_m-1_K-1": float(conductivity),
        "stefan_conductivity_source": conductivity_note or "given",
        "stefan_density_kg_m-3": float(density),
        "stefan_latent_heat_J_kg-1": float(latent_heat),
        "initial_thickness_m": h0,
        "base_mode": "common" if base is not None else "per_law",
        "start_time": _iso(knot_time[0]),
    }
    for name in LAWS:
        attrs[f"base_temperature_{name}_degC"] = bases[name]
        attrs[f"base_source_{name}"] = base_source[name]
    attrs["base_temperatures"] = "; ".join(
        f"{name}: {_fmt_base(bases[name])} degC" for name in LAWS)
    coords = {"time": ("time", knot_time, {
        "long_name": "time (start, then end of each UTC day)",
        "standard_name": "time"})}
    return xr.Dataset(data_vars, coords=coords, attrs=attrs)


def _fmt_base(value: float) -> str:
    """A base temperature for tables: two decimals unless it is a round published value."""
    return f"{value:g}" if round(value, 1) == value else f"{value:.2f}"


def _fdd_names(ds: xr.Dataset) -> list[str]:
    if "fdd" in ds:
        return ["fdd"]
    return [f"fdd_{name}" for name in LAWS if f"fdd_{name}" in ds]


def _iso(t) -> str:
    return np.datetime_as_string(np.datetime64(t, "s"), unit="s") + "Z"


def _select_rows(times: np.ndarray, every: str) -> np.ndarray:
    """Row indices: the first row, each period boundary, and the last row."""
    n = times.size
    t = times.astype("datetime64[ns]").astype(np.int64)
    if every == "week":
        step = int(7 * SECONDS_PER_DAY) * 10**9
        idx = [i for i in range(n) if (t[i] - t[0]) % step == 0]
    elif every == "month":
        ts = times.astype("datetime64[ns]")
        is_month_start = (ts.astype("datetime64[M]").astype("datetime64[ns]") == ts)
        idx = [0] + [i for i in range(1, n) if is_month_start[i]]
    else:
        raise InputError(f"every: expected 'week' or 'month', got {every!r}")
    if idx[-1] != n - 1:
        idx.append(n - 1)
    return np.asarray(sorted(set(idx)), dtype=int)


def format_laws_table(ds: xr.Dataset, every: str = "week") -> str:
    """Plain-text table of a :func:`laws_table` result, weekly or monthly.

    Lines starting with ``#`` (:func:`law_lines`) name each law, its base and where the base
    comes from, and Stefan's form and parameters; then
    come a column-name line, a units line, a rule and one line per row.  For
    ``every="week"`` the rows are the start and every 7 days after it; for
    ``every="month"`` the start and each 00:00 UTC of the first of a month.
    The last row of the table is always included.

    Parameters
    ----------
    ds : xarray.Dataset
        Output of :func:`laws_table`.
    every : {"week", "month"}
        Row spacing.

    Returns
    -------
    str
        The table, newline-terminated.
    """
    rows = _select_rows(ds["time"].values, every)
    columns: list[tuple[str, str, str]] = [("time", "UTC", "")]
    columns += [(n, "K day", "{:.1f}") for n in _fdd_names(ds)]
    columns += [(n, "m", "{:.3f}") for n in LAWS]
    if "model" in ds:
        columns.append(("model", "m", "{:.3f}"))
        columns += [(f"ratio_{n}", "1", "{:.2f}") for n in LAWS if f"ratio_{n}" in ds]
    cells = []
    for i in rows:
        line = []
        for name, _unit, fmt in columns:
            if name == "time":
                line.append(np.datetime_as_string(
                    ds["time"].values[i].astype("datetime64[m]"), unit="m") + "Z")
            else:
                v = float(ds[name].values[i])
                line.append("nan" if not np.isfinite(v) else fmt.format(v))
        cells.append(line)
    return law_lines(ds) + text_table([(name, unit) for name, unit, _ in columns], cells)


def law_lines(ds: xr.Dataset) -> str:
    """The ``#`` lines above a :func:`format_laws_table` table: per law (column) its name as in
    the figure legend and the base of its freezing degree days with where that base comes
    from; Stefan's form and parameters; the initial thickness."""
    width = max(len(n) for n in LAWS)
    lines = ["# laws (column: name; base of its freezing degree days):"]
    for name in LAWS:
        if name not in ds:
            continue
        label = ds[name].attrs.get("label", _LAW_LABEL[name])
        base = float(ds.attrs.get(f"base_temperature_{name}_degC", float("nan")))
        source = ds.attrs.get(f"base_source_{name}", "")
        lines.append(f"#   {name:<{width}}  {label}; base {_fmt_base(base)} degC" + (f", {source}" if source else ""))
    coeff = ds.attrs.get("stefan_surface_coefficient", "none")
    form = ("surface at air temperature (no surface resistance)" if coeff == "none"
            else f"surface transfer H = {float(coeff):g} W m-2 K-1 ([surface] heat_transfer_coefficient of the run)")
    lines.append(f"# Stefan: {form}; k = {float(ds.attrs.get('stefan_conductivity_W_m-1_K-1', 2.2)):.3g} W m-1 K-1 "
                 f"({ds.attrs.get('stefan_conductivity_source', 'given')}), rho = "
                 f"{float(ds.attrs.get('stefan_density_kg_m-3', 917.0)):g} kg m-3, L = "
                 f"{float(ds.attrs.get('stefan_latent_heat_J_kg-1', 334e3)):g} J kg-1")
    if coeff == "none":
        lines.append("# (Stefan with the surface at air temperature overpredicts observed growth by 35-50 %)")
    lines.append(f"# initial thickness: {ds.attrs.get('initial_thickness_m', 0.0):g} m")
    return "\n".join(lines) + "\n"


def write_laws_csv(ds: xr.Dataset, path, overwrite: bool = False) -> None:
    """Write the full daily table of :func:`laws_table` as CSV, atomically.

    Columns: ``time`` (ISO 8601 UTC, e.g. ``2024-01-01T00:00:00Z``), ``fdd``
    or ``fdd_stefan, fdd_lebedev, fdd_anderson, fdd_zubov`` [K day],
    ``stefan, lebedev, anderson, zubov`` [m] and ``model`` [m] when present
    (empty field where the model has no value).  An existing file is replaced only
    with ``overwrite`` (:func:`icecolumn.textfile.check_new_output`); the file is
    written by :func:`icecolumn.textfile.write_atomically`.

    Parameters
    ----------
    ds : xarray.Dataset
        Output of :func:`laws_table`.
    path : str or os.PathLike
        Destination file.
    overwrite : bool
        Replace an existing file.
    """
    check_new_output(path, overwrite)
    names = _fdd_names(ds) + list(LAWS) + (["model"] if "model" in ds else [])
    values = [np.asarray(ds[n].values, dtype=float) for n in names]
    times = ds["time"].values

    def write(tmp: str) -> None:
        with open(tmp, "w", newline="", encoding="utf-8") as fh:
            writer = csv.writer(fh, lineterminator="\n")
            writer.writerow(["time", *names])
            for i in range(times.size):
                row = [_iso(times[i])]
                row += ["" if not np.isfinite(v[i]) else repr(float(v[i])) for v in values]
                writer.writerow(row)

    write_atomically(path, write, suffix=".csv.tmp")


def fit_observations(fdd_at_obs, thickness_obs) -> dict:
    """Fit ``h = a theta^b`` to observed thickness and report uncertainties.

    Parameters
    ----------
    fdd_at_obs : array_like of float
        Freezing degree days at each observation; points <= 0 are ignored
        [K day].
    thickness_obs : array_like of float
        Observed ice thickness [m].

    Returns
    -------
    dict
        ``a`` [m (K day)^-b], ``b`` [1], their standard errors ``sigma_a``,
        ``sigma_b`` (square roots of the covariance diagonal), ``corr`` (the
        correlation of a and b) [1] and ``rmse`` of the fit over the used
        points [m].
    """
    theta = np.asarray(fdd_at_obs, dtype=float).ravel()
    h = np.asarray(thickness_obs, dtype=float).ravel()
    a, b, cov = fit_power_law(theta, h)
    sigma_a = float(np.sqrt(cov[0, 0])) if cov[0, 0] >= 0 else float("nan")
    sigma_b = float(np.sqrt(cov[1, 1])) if cov[1, 1] >= 0 else float("nan")
    denom = sigma_a * sigma_b
    corr = float(cov[0, 1] / denom) if denom > 0 and np.isfinite(denom) else float("nan")
    use = np.isfinite(theta) & np.isfinite(h) & (theta > 0)
    resid = h[use] - a * theta[use] ** b
    rmse = float(np.sqrt(np.mean(resid**2)))
    return {"a": a, "b": b, "sigma_a": sigma_a, "sigma_b": sigma_b,
            "corr": corr, "rmse": rmse}


# --------------------------------------------------------------------------- runs and observations

#: What a run output needs for the growth-law comparison (:func:`air_from_run`, :func:`laws_for_run`).
RUN_VARIABLES = ("ice_thickness", "air_temperature")


def air_from_run(ds: xr.Dataset) -> tuple[np.ndarray, np.ndarray]:
    """Air temperature samples from a run output.

    The output's ``air_temperature`` holds means over the interval ending at each
    time (NaN at the first time).  Each mean is placed at the middle of its
    interval, and the first and last means are repeated at the run start and end,
    so the piecewise-linear curve through these samples has the same time
    integral as the interval means.

    Returns
    -------
    time : ndarray of datetime64[ns]
        Sample times. [UTC]
    air_temperature : ndarray
        Air temperature at those times. [degC]
    """
    t = ds["time"].values.astype("datetime64[ns]")
    mean = np.asarray(ds["air_temperature"].values, dtype=float)[1:]
    if t.size < 2 or not np.isfinite(mean).all():
        raise InputError(f"{ds.encoding.get('source', 'run output')}: air_temperature needs at least two "
                         "output times with finite values")
    mid = t[:-1] + (t[1:] - t[:-1]) // 2
    times = np.concatenate([t[:1], mid, t[-1:]])
    values = np.concatenate([mean[:1], mean, mean[-1:]])
    keep = np.concatenate([[True], np.diff(times.astype(np.int64)) > 0])
    return times[keep], values[keep]


def run_surface_coefficient(ds: xr.Dataset, source: str) -> float | None:
    """H of the run's linear surface scheme [W m-2 K-1], or None (another scheme, or no
    configuration in the file)."""
    text = ds.attrs.get("icecolumn_config")
    if not text:
        return None
    cfg = config_from_toml_text(str(text), f"{source}: attribute icecolumn_config")
    ran = str(ds.attrs.get("surface_scheme", cfg.surface.scheme))  # the scheme that ran ("auto" resolved)
    return cfg.surface.heat_transfer_coefficient if ran == "linear" else None


#: Profiles of a run from which Stefan's conductivity is taken (:func:`run_conductivity`).
PROFILE_VARIABLES = ("temperature", "liquid_fraction", "bulk_salinity")


def run_conductivity(run: xr.Dataset, cfg: Config) -> float | None:
    """The conductivity of a run's ice column for Stefan's law [W m-1 K-1], or None when the
    output has no profiles.

    Each layer's conductivity is :func:`icecolumn.properties.conductivity` of its
    temperature, liquid fraction and bulk salinity with the run's ``[properties]
    conductivity_model`` (and ``ice_conductivity``).  The layers are equal fractions of the
    thickness and conduct in series, so the column's conductivity at one output time is
    their harmonic mean (layers from the surface to the ice-ocean interface, the porous
    bottom included); the value returned is the mean of that over the output times with
    ice.
    """
    if any(v not in run for v in PROFILE_VARIABLES):
        return None
    t, phi, sal = (np.asarray(run[v].transpose("time", "layer").values, dtype=float) for v in PROFILE_VARIABLES)
    ok = np.isfinite(t) & np.isfinite(phi) & np.isfinite(sal)
    rows = ok.all(axis=1) & ok.any(axis=1)  # output times with ice (open water has no layers)
    if not rows.any():
        return None
    k = properties.conductivity(t[rows], phi[rows], sal[rows], model=cfg.properties.conductivity_model,
                                constant_value=cfg.properties.ice_conductivity)
    column = k.shape[1] / np.sum(1.0 / k, axis=1)
    return float(np.mean(column))


@dataclass(frozen=True)
class StefanInputs:
    """What Stefan's law (and its base) takes from a run or a configuration, with where each
    value comes from (for the table)."""

    freezing_point: float  # [degC]
    freezing_point_note: str
    conductivity: float  # [W m-1 K-1]
    conductivity_note: str
    density: float  # [kg m-3]
    latent_heat: float  # [J kg-1]


def stefan_inputs(run: xr.Dataset | None = None, source: str = "", config: Config | None = None) -> StefanInputs:
    """Freezing point, conductivity, density and latent heat for Stefan's law.

    The freezing point is the model liquidus (:func:`icecolumn.phase.liquidus_temperature`)
    of ``[ocean] salinity``; density and latent heat are ``[properties] ice_density`` and
    ``latent_heat``.  With ``run`` these come from the run's configuration (its
    ``icecolumn_config`` attribute) and the conductivity from its profiles
    (:func:`run_conductivity`); without one from ``config`` (default: the defaults), the
    conductivity being ``[properties] ice_conductivity`` of the ``constant`` model or else
    :data:`DEFAULT_STEFAN_CONDUCTIVITY`.
    """
    cfg = None
    where = "the configuration"
    if run is not None and run.attrs.get("icecolumn_config"):
        cfg = config_from_toml_text(str(run.attrs["icecolumn_config"]), f"{source}: attribute icecolumn_config")
        where = "the run"
    if cfg is None:
        cfg = config if config is not None else default_config()
        if config is None:
            where = "the default configuration"
    sal = cfg.ocean.salinity
    fp = float(liquidus_temperature(sal))
    fp_note = f"the freezing point of {where}'s water (model liquidus at [ocean] salinity {sal:g} g/kg)"
    k = run_conductivity(run, cfg) if run is not None else None
    if k is not None:
        k_note = (f"the run's: harmonic mean over the layers of [properties] conductivity_model = "
                  f"{cfg.properties.conductivity_model} at the run's temperature, liquid fraction and bulk "
                  "salinity, averaged over the output times with ice")
    elif cfg.properties.conductivity_model == "constant":
        k, k_note = cfg.properties.ice_conductivity, f"[properties] ice_conductivity of {where}"
    else:
        k = DEFAULT_STEFAN_CONDUCTIVITY
        k_note = ("common practice" + ("" if run is not None else "; give --run to use a run's own conductivity"))
    return StefanInputs(fp, fp_note, float(k), k_note, cfg.properties.ice_density, cfg.properties.latent_heat)


def laws_for_run(air_time, air_temperature, run: xr.Dataset | None = None, run_source: str = "",
                 base: float | None = None, config: Config | None = None) -> tuple[xr.Dataset, float | None]:
    """The growth-law table on this air temperature, compared with a run when one is given.

    With ``run`` (one column of an icecolumn output) the laws start from the run's initial
    thickness at its start, the table gets the ``model`` column and Stefan's law includes
    the run's linear surface coefficient when that scheme ran.  Stefan's base (unless
    ``base``), conductivity, density and latent heat are the run's, or without a run those of
    ``config`` (:func:`stefan_inputs`); the empirical laws keep their published bases.

    Returns
    -------
    table : xarray.Dataset
        :func:`laws_table`.
    surface_coefficient : float or None
        The H used in Stefan's law. [W m-2 K-1]
    """
    inputs = stefan_inputs(run, run_source, config)
    kwargs: dict[str, Any] = dict(freezing_point=inputs.freezing_point, freezing_point_note=inputs.freezing_point_note,
                                  conductivity=inputs.conductivity, conductivity_note=inputs.conductivity_note,
                                  density=inputs.density, latent_heat=inputs.latent_heat)
    coeff = None
    if run is not None:
        h = np.asarray(run["ice_thickness"].values, dtype=float)
        coeff = run_surface_coefficient(run, run_source)
        kwargs.update(initial_thickness=float(h[0]), start=run["time"].values[0],
                      model_time=run["time"].values, model_thickness=h, surface_coefficient=coeff)
    return laws_table(air_time, air_temperature, base=base, **kwargs), coeff


def fit_table_to_observations(table: xr.Dataset, obs: xr.Dataset) -> dict:
    """Fit ``h = a theta^b`` to observed thickness, theta the table's freezing degree days at
    the observation times (linear in time).

    Returns
    -------
    dict
        :func:`fit_observations` plus ``count`` (observations) [1] and
        ``base_temperature`` of theta [degC].
    """
    name = "fdd" if "fdd" in table else "fdd_stefan"
    tt = table["time"].values.astype("datetime64[ns]").astype(np.int64)
    ot = obs["time"].values.astype("datetime64[ns]").astype(np.int64)
    fdd = np.interp(ot, tt, table[name].values)
    fit = fit_observations(fdd, obs["ice_thickness"].values)
    fit["count"] = int(obs.sizes["time"])
    fit["base_temperature"] = float(table[name].attrs.get("base_temperature_degC", float("nan")))
    return fit
