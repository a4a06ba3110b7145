"""``icecolumn calibrate``: fit the ocean heat flux (and one more parameter) to drill holes."""
from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import typer

import icecolumn

from .cli_common import (ColumnOpt, ConfigOpt, ForcingArg, OverwriteOpt, SetOpt, column_map, folder_of,
                         model_config)
from .textfile import check_new_output, output_path

__all__ = ["COMMANDS"]


def calibrate_command(
    forcing: ForcingArg,
    obs: Annotated[Path, typer.Option("--obs", help="Observed (drill-hole) thickness CSV (time, "
                                      "ice_thickness [m]).")],
    config: ConfigOpt = None,
    assignments: SetOpt = None,
    columns: ColumnOpt = None,
    output: Annotated[Optional[Path], typer.Option("-o", "--output", help="Fitted configuration TOML (or a folder "
                                                   "for it) [default: <forcing stem>_fitted.toml].")] = None,
    fit: Annotated[Optional[str], typer.Option("--fit", help="One more parameter to fit besides "
                                               "ocean.heat_flux (surface.heat_transfer_coefficient or "
                                               "snow.conductivity).")] = None,
    dataset: Annotated[Optional[Path], typer.Option("--dataset", help="Also write the calibration NetCDF.")] = None,
    overwrite: OverwriteOpt = False,
    force: Annotated[bool, typer.Option("--force", help="Write the files even when the fit ended on a bound of "
                                        "its parameter (by default that is a warning, no file and exit code 1).")]
    = False,
) -> None:
    """Fit the ocean heat flux (and one more parameter) to drill-hole thickness."""
    from .calibrate import bound_warning, calibrate, format_calibration, write_fitted_config
    from .observations import read_observations
    from .plotting_forecast import plot_forecast_file

    out = output_path(output, f"{forcing.stem}_fitted.toml")
    check_new_output(out, overwrite)
    if dataset is not None:
        check_new_output(dataset, overwrite)
    extra = fit if fit is not None and fit != "ocean.heat_flux" else None
    cfg = model_config(config, assignments)
    data = icecolumn.read_forcing(forcing, column_map(cfg, columns), max_gap=cfg.forcing.max_gap_seconds)
    result = calibrate(data, read_observations(obs), cfg, extra=extra)
    if bound_warning(result) is not None and not force:
        typer.echo(format_calibration(result))
        typer.echo("icecolumn: warning: the fit ended on a bound (see above); no file written (use --force to "
                   "write it)", err=True)
        raise typer.Exit(1)
    write_fitted_config(result, out, overwrite=overwrite)
    lines = [format_calibration(result), f"fitted configuration: {out}"]
    if dataset is not None:
        icecolumn.write_netcdf(result.dataset, dataset, overwrite=overwrite)
        figs = plot_forecast_file(result.dataset, folder_of(dataset), stem=dataset.stem)
        lines += [f"calibration data: {dataset}", *(f"figure: {f}" for f in figs)]
    typer.echo("\n".join(lines))


#: Command name -> function, registered by :mod:`icecolumn.cli`.
COMMANDS = {"calibrate": calibrate_command}
