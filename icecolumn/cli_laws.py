"""``icecolumn laws``: the classical growth laws on a forcing file or a run, with the run."""
from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import numpy as np
import typer

import icecolumn

from .cli_common import ColumnOpt, ObsOpt, OverwriteOpt, SetOpt, column_map, model_config
from .errors import InputError
from .forcing import is_netcdf
from .laws import (RUN_VARIABLES, air_from_run, fit_table_to_observations, format_laws_table, laws_for_run,
                   write_laws_csv)
from .observations import read_observations
from .output_io import first_member, open_output
from .textfile import check_new_output

__all__ = ["COMMANDS", "format_fit"]


def open_run(path: Path):
    """One column of a run output for the comparison (member 0 of an ensemble)."""
    return first_member(open_output(path, require=RUN_VARIABLES))


def format_fit(fit: dict, obs_path: Path) -> str:
    """The lines printed for a power law fitted to observations."""
    return "\n".join([
        f"# power law h = a theta^b fitted to {fit['count']} observations in {obs_path}",
        f"# theta: freezing degree days below {fit['base_temperature']:g} degC at the observation times",
        f"a = {fit['a']:.4g} +/- {fit['sigma_a']:.2g} m (K day)^-b",
        f"b = {fit['b']:.4g} +/- {fit['sigma_b']:.2g}",
        f"correlation(a, b) = {fit['corr']:.2f}, rmse = {fit['rmse']:.3f} m",
    ])


def laws_command(
    input_path: Annotated[Path, typer.Argument(metavar="INPUT", help="Forcing file or run output NetCDF.",
                                               show_default=False)],
    run_path: Annotated[Optional[Path], typer.Option("--run", help="Run output to compare with.")] = None,
    csv_path: Annotated[Optional[Path], typer.Option("--csv", help="Also write the daily table as CSV.")] = None,
    overwrite: OverwriteOpt = False,
    base: Annotated[Optional[float], typer.Option("--base", help="One base temperature for every law [degC] "
                                                  "(default: Stefan's law the freezing point of the run's water, "
                                                  "or of [ocean] salinity of the configuration without a run; "
                                                  "the empirical laws their published bases).")] = None,
    every: Annotated[str, typer.Option("--every", help="Table rows: week or month.")] = "week",
    obs_path: ObsOpt = None,
    config: Annotated[Optional[Path], typer.Option("-c", "--config", help="Configuration TOML file "
                                                   "(for [forcing] columns and max_gap, and without a run "
                                                   "[ocean] salinity and [properties] for Stefan's law).")] = None,
    assignments: SetOpt = None,
    columns: ColumnOpt = None,
) -> None:
    """Compare the classical growth laws (and a model run) driven by air temperature."""
    if every not in ("week", "month"):
        raise InputError(f"--every: expected 'week' or 'month', got {every!r}")
    if csv_path is not None:
        check_new_output(csv_path, overwrite)
    cfg = model_config(config, assignments)
    run = None
    if is_netcdf(input_path):
        if run_path is not None:
            raise InputError(f"{input_path}: is a run output already; --run is for a forcing INPUT")
        run, run_path = open_run(input_path), input_path
        air_time, air_temp = air_from_run(run)
        header = [f"# air temperature: interval means from the run output {input_path}"]
    else:
        forcing = icecolumn.read_forcing(input_path, column_map(cfg, columns), max_gap=cfg.forcing.max_gap_seconds)
        air_time, air_temp = forcing["time"].values, forcing["air_temperature"].values
        header = [f"# air temperature: forcing file {input_path}"]
        if run_path is not None:
            run = open_run(run_path)
    table, _ = laws_for_run(air_time, air_temp, run, str(run_path), base, config=cfg)
    if run is not None:
        header.append(f"# model: ice_thickness of {run_path}, started from its initial thickness; Stefan's law "
                      "takes the run's configuration and profiles")
    fit = None
    if obs_path is not None:  # read and fit before printing anything
        t = table["time"].values
        first = run["time"].values[0] if run is not None else t[0]
        last = np.minimum(run["time"].values[-1], t[-1]) if run is not None else t[-1]
        fit = format_fit(fit_table_to_observations(table, read_observations(obs_path, period=(first, last))),
                         obs_path)
    typer.echo("\n".join(header))
    typer.echo(format_laws_table(table, every), nl=False)
    if fit is not None:
        typer.echo(fit)
    if csv_path is not None:
        write_laws_csv(table, csv_path, overwrite=overwrite)
        typer.echo(f"table written to {csv_path}")


#: Command name -> function, registered by :mod:`icecolumn.cli`.
COMMANDS = {"laws": laws_command}
