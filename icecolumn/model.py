"""Run pipeline: configuration + forcing -> kernel -> xarray.Dataset.

This module assembles the parameter vectors and the initial state, walks the output
times and calls the compiled kernel (:mod:`icecolumn.kernel`) for a batch of members,
then hands the collected arrays to :mod:`icecolumn.output` to build the CF Dataset.
A single run is a batch of one through the same code.
"""
from __future__ import annotations

import warnings
from dataclasses import dataclass, field
from typing import Callable, Sequence

import numpy as np
import xarray as xr

from . import kernel as K
from .config import Config, default_config
from .constants import SEAWATER_DENSITY
from .errors import IceColumnError, IceColumnWarning, InputError
from .kernel.params import SURFACE_MELTING_POINT
from .phase import liquidus_temperature, liquidus_temperature_scalar, state_enthalpy
from .properties import snow_conductivity_of


@dataclass
class Member:
    """One column of a batch: its configuration and forcing."""

    config: Config
    forcing: xr.Dataset


@dataclass
class InitialProfile:
    """Optional measured initial state (depths below the ice surface)."""

    depth: np.ndarray | None = None  # m
    temperature: np.ndarray | None = None  # degC
    salinity_depth: np.ndarray | None = None  # m
    salinity: np.ndarray | None = None  # g/kg


@dataclass
class RawResult:
    """Arrays collected from the kernel at every output time (members first)."""

    times: np.ndarray
    layers: int
    state: np.ndarray  # (member, time, state)
    temperature: np.ndarray
    liquid_fraction: np.ndarray
    brine_salinity: np.ndarray
    bulk_salinity: np.ndarray
    surface_temperature: np.ndarray
    air_temperature_mean: np.ndarray
    ocean_heat_flux_source: list
    configs: list
    forcings: list
    counters: np.ndarray
    extra: dict = field(default_factory=dict)


def parameter_vector(cfg: Config, surface_scheme: str | None = None) -> np.ndarray:
    """Kernel parameter row for one member (:func:`icecolumn.kernel.parameter_row`)."""
    return K.parameter_row(cfg, surface_scheme)


def resolve_surface_scheme(cfg: Config, forcing: xr.Dataset) -> str:
    """The surface scheme that runs: ``auto`` becomes ``energy_balance`` when the forcing has
    shortwave_down or cloud_fraction (what the balance needs at least), else ``linear``."""
    if cfg.surface.scheme != "auto":
        return cfg.surface.scheme
    return "energy_balance" if ("shortwave_down" in forcing or "cloud_fraction" in forcing) else "linear"


def snow_conductivity(cfg: Config) -> float:
    """Snow conductivity [W m-1 K-1] of the configuration: constant, or Sturm et al. (1997) at
    the configured density."""
    return snow_conductivity_of(cfg.snow.conductivity_model, cfg.snow.conductivity, cfg.snow.density)


def ocean_freezing_temperature(cfg: Config) -> float:
    """Freezing temperature of the ocean [degC] on the model liquidus."""
    return float(liquidus_temperature_scalar(cfg.ocean.salinity))


def initial_state(cfg: Config, surface_temperature: float, profile: InitialProfile | None = None) -> np.ndarray:
    """Initial state vector of one member.

    Temperature is linear between ``surface_temperature`` and the ocean freezing point
    at the base, salinity uniform (``[initial] bulk_salinity``), unless ``profile``
    supplies measured values (interpolated to the layer centres).
    """
    n = cfg.grid.layers
    h = cfg.initial.ice_thickness
    if h <= 0.0:
        return open_water_state(cfg)
    tf = ocean_freezing_temperature(cfg)
    z = (np.arange(n) + 0.5) / n * h
    ts = min(surface_temperature, tf)
    temp = ts + (tf - ts) * z / h
    sal = np.full(n, cfg.initial.bulk_salinity)
    if profile is not None:
        if profile.temperature is not None:
            temp = np.interp(z, profile.depth, profile.temperature)
        if profile.salinity is not None:
            sal = np.interp(z, profile.salinity_depth, profile.salinity)
    return state_from_profile(cfg, h, temp, sal)


def state_from_profile(cfg: Config, thickness: float, temperature, bulk_salinity) -> np.ndarray:
    """State vector (layer contents, thickness, zero budgets) of ice in phase equilibrium.

    Ice at its melting point is ice: a fresh layer (bulk salinity 0) at 0 degC is solid ice at
    0 degC (its enthalpy -rho L), not water.  A layer warmer than the melting point of ice of its
    bulk salinity (the liquidus temperature) cannot be ice and is an :class:`InputError`.

    Parameters
    ----------
    cfg : Config
        Supplies the material properties.
    thickness : float
        Ice thickness. [m]
    temperature, bulk_salinity : array_like, one value per layer (top first)
        [degC], [g kg-1]
    """
    temperature = np.asarray(temperature, dtype=float)
    bulk_salinity = np.asarray(bulk_salinity, dtype=float)
    n = temperature.size
    pr = cfg.properties
    melting = liquidus_temperature(np.maximum(bulk_salinity, 0.0))
    warm = temperature > melting + 1e-9
    if warm.any():
        k = int(np.flatnonzero(warm)[0])
        raise InputError(
            f"initial state: layer {k + 1} at {temperature[k]:.3f} degC is warmer than the melting point "
            f"{melting[k]:.3f} degC of ice with bulk salinity {bulk_salinity[k]:g} g/kg: it cannot be ice")
    hv, _ = state_enthalpy(temperature, bulk_salinity, pr.ice_density, pr.ice_specific_heat,
                           pr.brine_specific_heat, pr.latent_heat)
    fresh = (bulk_salinity <= 0.0) & (temperature >= 0.0)
    hv = np.where(fresh, -pr.ice_density * pr.latent_heat, hv)  # fresh ice at its melting point
    dz = thickness / n
    y = np.zeros(K.state_size(n))
    v = K.view(y, n)
    v.enthalpy_content[:] = hv * dz
    v.salt_content[:] = pr.ice_density * bulk_salinity / 1000.0 * dz
    v.thickness[...] = thickness
    v.set_slot("snow_thickness", cfg.initial.snow_thickness)
    _init_mixed_layer(cfg, y, n)
    return y


def open_water_state(cfg: Config) -> np.ndarray:
    """State vector of open water (thickness 0, no snow, zero budgets)."""
    n = cfg.grid.layers
    y = np.zeros(K.state_size(n))
    _init_mixed_layer(cfg, y, n)
    return y


def _init_mixed_layer(cfg: Config, y: np.ndarray, n: int) -> None:
    """A mixed layer of ``[ocean] mixed_layer_depth`` at ``[ocean] salinity`` and its freezing point."""
    d = cfg.ocean.mixed_layer_depth
    if d <= 0.0:
        return
    v = K.view(y, n)
    w = SEAWATER_DENSITY * d
    v.set_slot("mixed_layer_mass", w)
    v.set_slot("mixed_layer_salt", w * cfg.ocean.salinity / 1000.0)
    v.set_slot("mixed_layer_enthalpy", cfg.properties.brine_specific_heat * w * ocean_freezing_temperature(cfg))


#: Bulk conductivity used to place the initial linear temperature profile when the conductivity
#: depends on the state [W m-1 K-1]: a representative value for cold first-year sea ice (measured
#: 2.09-2.14 on first-year cores by Pringle, Trodahl & Haskell 2006, JGR 111, C05020; rounded).
INITIAL_PROFILE_CONDUCTIVITY = 2.0


def _steady_surface_temperature(cfg: Config, air: float) -> float:
    """Surface temperature of a linear profile in balance with the linear surface flux."""
    tf = ocean_freezing_temperature(cfg)
    k = INITIAL_PROFILE_CONDUCTIVITY if cfg.properties.conductivity_model != "constant" else \
        cfg.properties.ice_conductivity
    r_ice = cfg.initial.ice_thickness / k
    if cfg.initial.snow_thickness > 0:
        r_ice += cfg.initial.snow_thickness / snow_conductivity(cfg)
    hc = cfg.surface.heat_transfer_coefficient
    # flux (air -> base) through 1/H + R; surface temperature T_a + (T_f - T_a)/(1 + H R) ...
    ts = air + (tf - air) * (1.0 / hc) / (1.0 / hc + r_ice)
    return min(ts, tf)


def run_period(cfg: Config, forcing: xr.Dataset, source: str = "forcing") -> tuple[np.datetime64, np.datetime64]:
    """Start and end of the run: ``[run]`` start/end or the forcing file's span."""
    t = forcing.variables["time"].values
    start = cfg.run.start_time if cfg.run.start else t[0]
    end = cfg.run.end_time if cfg.run.end else t[-1]
    if start < t[0] or end > t[-1]:
        raise InputError(
            f"{source}: the forcing covers {str(t[0])[:19]} to {str(t[-1])[:19]} but the run needs "
            f"{str(start)[:19]} to {str(end)[:19]} ([run] start/end)")
    if not end > start:
        raise InputError(f"{source}: [run] end must be after start")
    return start, end


def output_times(start: np.datetime64, end: np.datetime64, interval_s: float) -> np.ndarray:
    """Output times from start to end every interval (the end is always included)."""
    step = np.timedelta64(int(round(interval_s * 1e9)), "ns")
    n = int((end - start) // step)
    times = start + step * np.arange(n + 1)
    if times[-1] < end:
        times = np.append(times, end)
    return times.astype("datetime64[ns]")


def _cumulative_integral(ft: np.ndarray, fv: np.ndarray, t: np.ndarray) -> np.ndarray:
    """Exact integral of the piecewise-linear interpolant of (ft, fv) from ft[0] to t."""
    knots = np.concatenate([[0.0], np.cumsum(0.5 * (fv[1:] + fv[:-1]) * np.diff(ft))])
    i = np.clip(np.searchsorted(ft, t, side="right") - 1, 0, len(ft) - 2)
    v = np.interp(t, ft, fv)
    return knots[i] + 0.5 * (fv[i] + v) * (t - ft[i])


def _interval_mean(ft, fv, t):
    c = _cumulative_integral(ft, fv, t)
    out = np.full(t.shape, np.nan)
    out[1:] = np.diff(c) / np.diff(t)
    return out


#: Origin of the kernel's time axis.  A fixed epoch (not the run start) makes a run that
#: restarts from an output time see exactly the same floating-point times as the run done
#: in one go, so a restarted run is bitwise identical.
TIME_EPOCH = np.datetime64("1970-01-01T00:00:00", "ns")

#: Pieces a run with a progress callback is cut into (one kernel call each).
PROGRESS_PIECES = 100


def _seconds(times) -> np.ndarray:
    """Seconds since :data:`TIME_EPOCH` as float64."""
    return ((np.asarray(times).astype("datetime64[ns]") - TIME_EPOCH) / np.timedelta64(1, "s")).astype(float)


def _forcing_arrays(members: Sequence[Member], start: np.datetime64):
    """Common forcing time axis (seconds since the epoch) and the per-member forcing array
    ``(members, kernel.NFORCING, times)``; variables a member's forcing lacks are NaN."""
    # Dataset.variables, not Dataset[name]: no DataArray is built for each look-up
    axes = [m.forcing.variables["time"].values.astype("datetime64[ns]") for m in members]
    same = all(a.shape == axes[0].shape and np.array_equal(a, axes[0]) for a in axes)
    common = axes[0] if same else np.unique(np.concatenate(axes))
    ft = _seconds(common)
    forc = np.full((len(members), K.NFORCING, ft.size), np.nan)
    for i, (m, own_axis) in enumerate(zip(members, axes)):
        own = ft if same else _seconds(own_axis)
        variables = m.forcing.variables
        for v, name in enumerate(K.FORCING_NAMES):
            if name in variables:
                values = variables[name].values.astype(float)
                forc[i, v] = values if same else np.interp(ft, own, values)
    return ft, forc


def simulate(members: Sequence[Member], *, initial_states: np.ndarray | None = None,
             profiles: Sequence[InitialProfile | None] | None = None,
             progress: Callable[[int, int], None] | None = None,
             source: str = "forcing") -> RawResult:
    """Run a batch of members through the kernel and collect raw arrays.

    All members share the run period and output interval of the first member.
    """
    if not members:
        raise InputError("no members to run")
    cfg0 = members[0].config
    n = cfg0.grid.layers
    for m in members:
        if m.config.grid.layers != n:
            raise InputError("all members of a batch must have the same [grid] layers")
    start, end = run_period(cfg0, members[0].forcing, source)
    for m in members[1:]:
        run_period(cfg0, m.forcing, source)
    interval = cfg0.output.interval_seconds
    times = output_times(start, end, interval)
    tsec = _seconds(times)
    for m in members:
        if m.config.ocean.mixed_layer_depth > 0 and "ocean_temperature" in m.forcing:
            raise InputError(f"{source}: the forcing has an ocean_temperature column and [ocean] mixed_layer_depth "
                             f"is set; use one of the two (the mixed layer computes its own temperature)")
    ft, forc = _forcing_arrays(members, start)
    fa = forc[:, K.F.AIR]
    fts = forc[:, K.F.TSURF]
    fq = forc[:, K.F.QOCEAN]
    nm = len(members)
    schemes = [resolve_surface_scheme(m.config, m.forcing) for m in members]
    pars = np.ascontiguousarray(np.stack([parameter_vector(m.config, sch) for m, sch in zip(members, schemes)]))
    ys = np.empty((nm, K.state_size(n)))
    for i, m in enumerate(members):
        if initial_states is not None:
            ys[i] = initial_states[i]
            continue
        prof = profiles[i] if profiles is not None else None
        air0 = float(np.interp(tsec[0], ft, fa[i]))
        if m.config.surface.scheme == "prescribed":
            if not np.isfinite(fts[i]).all():
                raise InputError(f"{source}: [surface] scheme = 'prescribed' needs a 'surface_temperature' column")
            ts0 = float(np.interp(tsec[0], ft, fts[i]))
            period = (ft >= tsec[0]) & (ft <= tsec[-1])
            warm = np.flatnonzero(period & (fts[i] > SURFACE_MELTING_POINT))
            if warm.size:
                j = int(warm[0])
                first = str(TIME_EPOCH + np.timedelta64(int(round(ft[j] * 1e9)), "ns"))[:16]
                warnings.warn(f"{source}: the prescribed surface_temperature is above the ice's melting point "
                              f"({float(fts[i][j]):g} degC at {first}, max {float(fts[i][period].max()):g} degC); "
                              f"the surface is held at {SURFACE_MELTING_POINT:g} degC and the excess energy "
                              f"melts it", IceColumnWarning, stacklevel=2)
        else:
            ts0 = _steady_surface_temperature(m.config, air0)
        ys[i] = initial_state(m.config, ts0, prof)
    nt = times.size
    rec = K.new_records(nm, nt, n, ys.shape[1])
    K.record(ys, tsec, 0, n, pars, ft, forc, rec)
    # a batch spreads its members over threads (each runs its whole period on one thread); the
    # period is cut into pieces only to report progress
    parallel = nm > 1
    pieces = min(nt - 1, PROGRESS_PIECES) if progress is not None else 1
    edges = np.unique(np.linspace(0, nt - 1, pieces + 1).round().astype(int)) if pieces > 1 else (0, nt - 1)
    for i0, i1 in zip(edges[:-1], edges[1:]):
        K.run(ys, tsec, int(i0), int(i1), n, pars, ft, forc, rec, parallel)
        if rec.status.any():
            bad = int(np.flatnonzero(rec.status)[0])
            it = int(rec.fail[bad])
            raise IceColumnError(
                f"solver failed for member {bad} between {str(times[it - 1])[:19]} and "
                f"{str(times[it])[:19]} ({K.STATUS_MESSAGES.get(int(rec.status[bad]), 'unknown status')}); "
                f"try a smaller [solver] max_step or rtol")
        if progress is not None:
            progress(int(i1), nt - 1)
    air_mean = np.stack([_interval_mean(ft, fa[i], tsec) for i in range(nm)])
    fq_source = ["forcing column ocean_heat_flux" if np.isfinite(fq[i]).all() else "configuration [ocean] heat_flux"
                 for i in range(nm)]
    return RawResult(times=times, layers=n, state=rec.state, temperature=rec.temp, liquid_fraction=rec.phi,
                     brine_salinity=rec.sbr, bulk_salinity=rec.sal, surface_temperature=rec.tsurf,
                     air_temperature_mean=air_mean,
                     ocean_heat_flux_source=fq_source, configs=[m.config for m in members],
                     forcings=[m.forcing for m in members], counters=rec.counters,
                     extra={"surface_schemes": schemes, "rayleigh_number": rec.ra, "surface_melt_energy": rec.melt,
                            "snow_thickness": rec.snow})


def run(forcing: xr.Dataset, config: Config | None = None, *, progress=None,
        profile: InitialProfile | None = None, initial_state_vector: np.ndarray | None = None) -> xr.Dataset:
    """Run one column and return the result as a CF ``xarray.Dataset``.

    Parameters
    ----------
    forcing : xarray.Dataset
        From :func:`icecolumn.read_forcing` (``time``, ``air_temperature`` [degC], ...).
    config : Config, optional
        Defaults to :func:`icecolumn.default_config`.

    Returns
    -------
    xarray.Dataset
        The same Dataset :func:`icecolumn.write_netcdf` writes to disk.
    """
    from .output import to_dataset

    cfg = config if config is not None else default_config()
    init = None if initial_state_vector is None else initial_state_vector[None, :]
    raw = simulate([Member(cfg, forcing)], initial_states=init,
                   profiles=[profile] if profile is not None else None, progress=progress,
                   source=str(forcing.attrs.get("source_file", "forcing")))
    return to_dataset(raw)


def run_ensemble(members: Sequence[Member], *, progress=None,
                 profiles: Sequence[InitialProfile | None] | None = None) -> xr.Dataset:
    """Run several columns as one batch; the Dataset has a ``member`` dimension.

    ``profiles`` optionally gives each member a measured initial profile.
    """
    from .output import to_dataset

    raw = simulate(members, progress=progress, profiles=profiles)
    return to_dataset(raw, keep_member=True)


#: Settings that may differ between a run and the run it restarts from.
RESTART_FREE_KEYS = ("run.start", "run.end", "forcing.columns")


def restart_state(previous: xr.Dataset, config: Config, source: str = "restart file"):
    """Last state of a previous single-column output, to continue it.

    Parameters
    ----------
    previous : xarray.Dataset
        An icecolumn output (``layer_state`` and the ``icecolumn_config`` attribute).
    config : Config
        The configuration of the continuation; it must equal the previous run's except
        for ``[run] start`` and ``end`` (an :class:`InputError` lists the keys that differ).

    Returns
    -------
    state : ndarray
        The float64 prognostic state vector at the last output time.
    time : numpy.datetime64
        That time; the continuation starts there.
    """
    from .config import config_from_toml_text

    if "layer_state" not in previous.variables or "icecolumn_config" not in previous.attrs:
        raise InputError(f"{source}: not an icecolumn output file with restart data (layer_state, icecolumn_config)")
    if "member" in previous["layer_state"].dims:
        raise InputError(f"{source}: restart from an ensemble file is not supported; use a single-column output")
    before = config_from_toml_text(previous.attrs["icecolumn_config"], source=f"{source} (icecolumn_config)").to_dict()
    now = config.to_dict()
    differ = []
    for sec, keys in now.items():
        for key, value in keys.items():
            if f"{sec}.{key}" in RESTART_FREE_KEYS:
                continue
            old = before.get(sec, {}).get(key)
            if old != value:
                differ.append(f"[{sec}] {key} (file {old!r}, now {value!r})")
    if differ:
        raise InputError(f"{source}: the restart file was made with a different configuration: " + "; ".join(differ))
    state = np.asarray(previous["layer_state"].transpose("time", "state").values[-1], dtype=np.float64)
    n = config.grid.layers
    if state.size != K.state_size(n):
        raise InputError(f"{source}: restart state has {state.size} values, expected {K.state_size(n)}")
    return state, np.datetime64(previous["time"].values[-1], "ns")


def run_restart(forcing: xr.Dataset, config: Config, previous: xr.Dataset, *, progress=None,
                source: str = "restart file") -> xr.Dataset:
    """Continue a previous run from its last output time (same configuration).

    The continuation's first time is the previous file's last time, and cumulative budget
    terms go on from their values there.  With ``[solver] output_times = step_ends`` a run split
    in two this way is bitwise identical to the run done in one go when the split time is one of
    the one-go run's output times; with interpolated records (the default) the one-go run's
    record there is an interpolation within a step, so the two agree to the integration error.
    """
    state, t0 = restart_state(previous, config, source)
    cfg = config.replace("run", start=str(np.datetime64(t0, "s")))
    return run(forcing, cfg, progress=progress, initial_state_vector=state)
