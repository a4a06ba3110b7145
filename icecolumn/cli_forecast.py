"""``icecolumn forecast`` and ``icecolumn calibrate`` (registered by :mod:`icecolumn.cli`)."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Annotated, Optional

import typer

import icecolumn

from .errors import InputError

__all__ = ["register", "forecast_command", "calibrate_command"]


def _check_output(out: Path, overwrite: bool) -> None:
    if out.exists() and not overwrite:
        raise InputError(f"{out}: file exists; use --overwrite to replace it")
    folder = out.parent if str(out.parent) else Path(".")
    if not folder.is_dir():
        raise InputError(f"{out}: folder {folder} does not exist")


def _thickness(value: Optional[float], option: str) -> Optional[float]:
    if value is None:
        return None
    if not math.isfinite(value) or value < 0:
        raise InputError(f"{option}: {value:g} m must be a finite number >= 0")
    if value > 10.0:
        raise InputError(f"{option}: {value:g} m is not a plausible thickness (more than 10 m)")
    return value


def forecast_command(
    history: Annotated[Path, typer.Option("--history", help="Station history CSV (time, air_temperature).")],
    start: Annotated[str, typer.Option("--start", help="Forecast start (ISO 8601, UTC).")],
    ice_thickness: Annotated[float, typer.Option("--ice-thickness", help="Measured ice thickness at the start [m].")],
    snow_thickness: Annotated[float, typer.Option("--snow-thickness", help="Measured snow thickness [m].")] = 0.0,
    profile: Annotated[Optional[Path], typer.Option("--profile", help="Thermistor CSV (depth, temperature).")]
    = None,
    salinity: Annotated[Optional[Path], typer.Option("--salinity", help="Ice-core CSV (depth_top, depth_bottom, "
                                                     "salinity).")] = None,
    weather: Annotated[Optional[Path], typer.Option("--weather", help="Weather forecast CSV (time, "
                                                    "air_temperature).")] = None,
    until: Annotated[Optional[str], typer.Option("--until", help="Forecast end [default: 31 May].")] = None,
    members: Annotated[int, typer.Option("--members", help="Ensemble members.")] = 100,
    seed: Annotated[int, typer.Option("--seed", help="Random seed of the perturbations.")] = 0,
    config: Annotated[Optional[Path], typer.Option("-c", "--config", help="Configuration TOML file.")] = None,
    output: Annotated[Optional[Path], typer.Option("-o", "--output", help="Output NetCDF file.")] = None,
    overwrite: Annotated[bool, typer.Option("--overwrite", help="Replace an existing output file.")] = False,
    threshold: Annotated[Optional[float], typer.Option("--threshold", help="Thickness of interest [m].")] = None,
    by: Annotated[Optional[str], typer.Option("--by", help="Date for the threshold probability.")] = None,
    obs: Annotated[Optional[Path], typer.Option("--obs", help="Drill holes (time, ice_thickness) to draw.")] = None,
    no_perturb: Annotated[bool, typer.Option("--no-perturb", help="Analog years only, no parameter "
                                             "perturbations.")] = False,
) -> None:
    """Ensemble forecast of ice thickness from analog years of the station history."""
    from .cli import ProgressBar
    from .forecast import exceedance, run_forecast, summary_table
    from .observations import read_observations
    from .plotting_forecast import plot_forecast_file
    from .profiles import initial_profile, read_core, read_thermistor
    from .timeutil import parse_time

    _thickness(ice_thickness, "--ice-thickness")
    _thickness(snow_thickness, "--snow-thickness")
    if (threshold is None) != (by is None):
        raise InputError("--threshold and --by go together (e.g. --threshold 1.2 --by 2027-03-15)")
    if threshold is not None and not (math.isfinite(threshold) and threshold > 0):
        raise InputError(f"--threshold: {threshold:g} m must be a positive number")
    if members < 1:
        raise InputError(f"--members: {members} must be at least 1")
    t0 = parse_time(start)
    out = output if output is not None else Path(f"forecast_{str(t0)[:10]}.nc")
    _check_output(out, overwrite)
    cfg = icecolumn.load_config(config) if config is not None else icecolumn.default_config()
    hist = icecolumn.read_forcing(history, cfg.forcing.column_map(), max_gap=cfg.forcing.max_gap_seconds)
    therm = read_thermistor(profile, ice_thickness, at=t0) if profile is not None else None
    core = read_core(salinity, ice_thickness, at=t0) if salinity is not None else None
    prof, notes = initial_profile(ice_thickness, therm, core)
    wx = (icecolumn.read_forcing(weather, cfg.forcing.column_map(), max_gap=cfg.forcing.max_gap_seconds)
          if weather is not None else None)
    drill = read_observations(obs) if obs is not None else None
    if by is not None:
        bt = parse_time(by)
        if bt <= t0:
            raise InputError(f"--by: {by} must be after the start {start}")
    bar = ProgressBar()
    try:
        ds = run_forecast(hist, t0, ice_thickness=ice_thickness, snow_thickness=snow_thickness, profile=prof,
                          weather=wx, until=until, members=members, seed=seed, config=cfg,
                          perturb=not no_perturb, progress=bar)
    finally:
        bar.close()
    ds.attrs["forecast_initial_state"] = " | ".join(notes)
    ex = exceedance(ds, threshold, by) if threshold is not None else None
    icecolumn.write_netcdf(ds, out, overwrite=overwrite)
    folder = out.parent if str(out.parent) else Path(".")
    figs = plot_forecast_file(ds, folder, obs=drill, threshold=threshold, by=by, stem=out.stem)
    n = ds.sizes["member"]
    lines = [f"forecast from {str(t0)[:16]}Z, {n} members ({ds.attrs['forecast_member_mapping']})",
             *(f"initial state: {s}" for s in notes), "", "ice thickness:", summary_table(ds)]
    if ex is not None:
        k = round(ex["p_reached"] * n)
        lines += ["", f"P(ice reaches {ex['threshold']:g} m by {ex['by'][:10]}) = {ex['p_reached']:.2f} "
                      f"({k} of {n} members); P(still thinner) = {ex['p_thinner']:.2f}",
                  "these fractions are conditional on the model and on the analog history"]
    lines += ["", f"output: {out}", *(f"figure: {f}" for f in figs), "", icecolumn.CAUTION]
    typer.echo("\n".join(lines))


def calibrate_command(
    forcing: Annotated[Path, typer.Argument(metavar="FORCING", help="Forcing CSV of the calibration winter.",
                                            show_default=False)],
    obs: Annotated[Path, typer.Option("--obs", help="Observed thickness CSV (time, ice_thickness).")],
    config: Annotated[Optional[Path], typer.Option("-c", "--config", help="Configuration TOML file.")] = None,
    output: Annotated[Optional[Path], typer.Option("-o", "--output", help="Fitted configuration TOML.")] = None,
    fit: Annotated[Optional[str], typer.Option("--fit", help="One more parameter to fit besides "
                                               "ocean.heat_flux (surface.heat_transfer_coefficient or "
                                               "snow.conductivity).")] = None,
    dataset: Annotated[Optional[Path], typer.Option("--dataset", help="Also write the calibration NetCDF.")] = None,
    overwrite: Annotated[bool, typer.Option("--overwrite", help="Replace existing output files.")] = False,
) -> None:
    """Fit the ocean heat flux (and one more parameter) to drill-hole thickness."""
    from .calibrate import calibrate, format_calibration, write_fitted_config
    from .observations import read_observations
    from .plotting_forecast import plot_forecast_file

    out = output if output is not None else Path(f"{forcing.stem}_fitted.toml")
    _check_output(out, overwrite)
    if dataset is not None:
        _check_output(dataset, overwrite)
    extra = None
    if fit is not None and fit != "ocean.heat_flux":
        extra = fit
    cfg = icecolumn.load_config(config) if config is not None else icecolumn.default_config()
    data = icecolumn.read_forcing(forcing, cfg.forcing.column_map(), max_gap=cfg.forcing.max_gap_seconds)
    ob = read_observations(obs)
    result = calibrate(data, ob, cfg, extra=extra)
    write_fitted_config(result, out, overwrite=overwrite)
    lines = [format_calibration(result), f"fitted configuration: {out}"]
    if dataset is not None:
        icecolumn.write_netcdf(result.dataset, dataset, overwrite=overwrite)
        folder = dataset.parent if str(dataset.parent) else Path(".")
        figs = plot_forecast_file(result.dataset, folder, stem=dataset.stem)
        lines += [f"calibration data: {dataset}", *(f"figure: {f}" for f in figs)]
    typer.echo("\n".join(lines))


def register(app: typer.Typer) -> None:
    """Add the forecast and calibrate commands to the ``icecolumn`` app."""
    app.command("forecast")(forecast_command)
    app.command("calibrate")(calibrate_command)
