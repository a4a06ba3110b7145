"""``icecolumn forecast``: an ensemble forecast of ice thickness from a station history."""
from __future__ import annotations

import math
from pathlib import Path
from typing import Annotated, Optional

import typer

import icecolumn

from .cli_common import (ColumnOpt, ConfigOpt, CoreOpt, ObsOpt, OutputOpt, OverwriteOpt, SetOpt, ThermistorOpt,
                         column_map, folder_of, model_config, progress_bar)
from .errors import InputError
from .output import CAUTION
from .textfile import check_new_output, output_path
from .timeutil import format_time, parse_time

__all__ = ["COMMANDS", "forecast_command"]


def forecast_command(
    history: Annotated[Path, typer.Argument(metavar="FORCING", show_default=False,
                                            help="Station history: a forcing file (time, air_temperature) "
                                                 "covering past winters.")],
    start: Annotated[str, typer.Option("--start", help="Forecast start (ISO 8601, UTC).")],
    ice_thickness: Annotated[float, typer.Option("--ice-thickness", help="Measured ice thickness at the start [m].")],
    snow_thickness: Annotated[float, typer.Option("--snow-thickness", help="Measured snow thickness [m].")] = 0.0,
    thermistor: ThermistorOpt = None,
    core: CoreOpt = None,
    weather: Annotated[Optional[Path], typer.Option("--weather", help="Weather forecast: a forcing file (time, "
                                                    "air_temperature).")] = None,
    until: Annotated[Optional[str], typer.Option("--until", help="Forecast end [default: 31 May].")] = None,
    members: Annotated[int, typer.Option("--members", help="Ensemble members.")] = 100,
    seed: Annotated[int, typer.Option("--seed", help="Random seed of the perturbations.")] = 0,
    config: ConfigOpt = None,
    assignments: SetOpt = None,
    columns: ColumnOpt = None,
    output: OutputOpt = None,
    overwrite: OverwriteOpt = False,
    threshold: Annotated[Optional[float], typer.Option("--threshold", help="Thickness of interest [m].")] = None,
    by: Annotated[Optional[str], typer.Option("--by", help="Date for the threshold probability.")] = None,
    obs: ObsOpt = None,
    no_perturb: Annotated[bool, typer.Option("--no-perturb", help="Analog years only, no parameter "
                                             "perturbations.")] = False,
    snowfall_rate: Annotated[Optional[float], typer.Option(
        "--snowfall-rate", help="Future snowfall when the history has no snowfall column [kg m-2 s-1 water "
                                "equivalent; default: 3 cm of snow per 30 days at [snow] density; 0 for "
                                "none]. A history with a snowfall column gives its own.")] = None,
    variables: Annotated[Optional[str], typer.Option(
        "--variables", metavar="NAME,...|all",
        help="Keep these output variables too (comma-separated), or 'all' (profiles, budgets and restart "
             "state; about 1.5 MB per member). By default a forecast keeps the thickness, snow, "
             "temperature and salt time series and the percentiles.")] = None,
) -> None:
    """Ensemble forecast of ice thickness from analog years of the station history."""
    from .forecast import add_exceedance, check_thickness, exceedance, initial_profile, run_forecast, summary_table
    from .observations import read_observations
    from .plotting_forecast import plot_forecast_file
    from .profiles import read_core, read_thermistor

    check_thickness(ice_thickness, "--ice-thickness")
    check_thickness(snow_thickness, "--snow-thickness")
    if (threshold is None) != (by is None):
        raise InputError("--threshold and --by go together (e.g. --threshold 1.2 --by 2027-03-15)")
    if threshold is not None and not (math.isfinite(threshold) and threshold > 0):
        raise InputError(f"--threshold: {threshold:g} m must be a positive number")
    if members < 1:
        raise InputError(f"--members: {members} must be at least 1")
    t0 = parse_time(start)
    out = output_path(output, f"forecast_{str(t0)[:10]}.nc")
    check_new_output(out, overwrite)
    cfg = model_config(config, assignments)
    names = column_map(cfg, columns)
    hist = icecolumn.read_forcing(history, names, max_gap=cfg.forcing.max_gap_seconds)
    therm = read_thermistor(thermistor, ice_thickness, at=t0) if thermistor is not None else None
    sections = read_core(core, ice_thickness, at=t0) if core is not None else None
    prof, notes = initial_profile(ice_thickness, therm, sections)
    wx = icecolumn.read_forcing(weather, names, max_gap=cfg.forcing.max_gap_seconds) if weather is not None else None
    drill = read_observations(obs) if obs is not None else None
    if by is not None and parse_time(by) <= t0:
        raise InputError(f"--by: {by} must be after the start {start}")
    with progress_bar() as bar:
        ds = run_forecast(hist, t0, ice_thickness=ice_thickness, snow_thickness=snow_thickness, profile=prof,
                          weather=wx, until=until, members=members, seed=seed, config=cfg,
                          perturb=not no_perturb, progress=bar, snowfall_rate=snowfall_rate, variables=variables)
    ds.attrs["forecast_initial_state"] = " | ".join(notes)
    ex = exceedance(ds, threshold, by) if threshold is not None else None
    if ex is not None:
        add_exceedance(ds, ex)
    icecolumn.write_netcdf(ds, out, overwrite=overwrite)
    figs = plot_forecast_file(ds, folder_of(out), obs=drill, threshold=threshold, by=by, stem=out.stem)
    n = ds.sizes["member"]
    n_eff = ds.attrs["forecast_effective_samples"]
    lines = [f"forecast from {format_time(t0, 'm')}, {n} members ({ds.attrs['forecast_member_mapping']})",
             *(f"initial state: {s}" for s in notes), f"snow: {ds.attrs['forecast_snowfall']} (prognostic)", "",
             f"ice thickness (season-weighted percentiles; {n_eff:.3g} effective weather samples):",
             summary_table(ds).rstrip("\n")]
    if ex is not None:
        lf = cfg.output.load_bearing_liquid_fraction
        lines += ["", f"P(load-bearing ice reaches {ex['threshold']:g} m by {ex['by'][:10]}) = {ex['p_reached']:.2f} "
                      f"({ex['members_reached']} of {n} members); P(still thinner) = {ex['p_thinner']:.2f} "
                      f"({ex['members_thinner']} of {n}); effective weather samples {ex['effective_samples']:.3g}",
                  f"load-bearing: the model's load_bearing_thickness, ice with a liquid fraction of at most {lf:g} "
                  "([output] load_bearing_liquid_fraction), without the weak porous bottom",
                  "the fractions are season-weighted (every analog season counts the same) and rest on "
                  f"{ex['effective_samples']:.3g} independent weather samples (the analog seasons; Kish effective "
                  "size of the season weights); they are conditional on the model and on the analog history"]
    lines += ["", f"output: {out}", *(f"figure: {f}" for f in figs), "", CAUTION]
    typer.echo("\n".join(lines))


#: Command name -> function, registered by :mod:`icecolumn.cli`.
COMMANDS = {"forecast": forecast_command}
