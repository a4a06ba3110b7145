"""``icecolumn plot``: the figures of a run, forecast or calibration file."""
from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import typer

from .cli_common import CoreOpt, ObsOpt, OverwriteOpt, ThermistorOpt, echo_files, folder_of
from .errors import InputError
from .laws import RUN_VARIABLES, air_from_run, laws_for_run
from .observations import read_observations
from .output_io import check_output_dataset, first_member, open_output
from .profiles import read_profile_points

__all__ = ["COMMANDS", "planned_figures"]


def planned_figures(ds, folder: Path, fmt: str, stem: str) -> list[Path]:
    """The figure files ``plot`` writes for ``ds``: the fan chart of a forecast
    (``<stem>_fan.<fmt>``), the figure of a calibration (``<stem>_calibration.<fmt>``), or the
    run figures (:data:`icecolumn.plotting.FIGURE_NAMES`, ``<name>.<fmt>``)."""
    from . import plotting_forecast
    from .plotting import FIGURE_NAMES

    fmt = str(fmt).lower().lstrip(".")
    if plotting_forecast.is_forecast(ds):
        return [folder / f"{stem}_fan.{fmt}"]
    if plotting_forecast.is_calibration(ds):
        return [folder / f"{stem}_calibration.{fmt}"]
    return [folder / f"{name}.{fmt}" for name in FIGURE_NAMES]


def _refuse_existing(paths: list[Path], overwrite: bool) -> None:
    """One line naming the first existing figure unless ``overwrite`` (before anything is drawn)."""
    if overwrite:
        return
    for path in paths:
        if path.exists():
            raise InputError(f"{path}: file exists; use --overwrite to replace it")


def plot_command(
    output_file: Annotated[Path, typer.Argument(metavar="OUT.nc", help="Run, forecast or calibration NetCDF file.",
                                                show_default=False)],
    outdir: Annotated[Optional[Path], typer.Option("-o", "--output-dir",
                                                   help="Folder for the figures [default: the file's "
                                                        "folder].")] = None,
    obs_path: ObsOpt = None,
    fmt: Annotated[str, typer.Option("--format", help="Figure format: png, pdf or svg.")] = "png",
    profiles: Annotated[Optional[str], typer.Option("--profiles", metavar="DATE,DATE",
                                                    help="Dates of the profile figure, comma-separated.")]
    = None,
    thermistor: ThermistorOpt = None,
    core: CoreOpt = None,
    overwrite: OverwriteOpt = False,
) -> None:
    """Draw the thickness, section, salt and profile figures of a run (or a forecast's fan chart)."""
    from . import plotting_forecast
    from .plotting import FORMATS, OUTPUT_VARIABLES, plot_run

    if fmt.lower().lstrip(".") not in FORMATS:
        raise InputError(f"--format: {fmt!r} is not one of {', '.join(FORMATS)}")
    ds = open_output(output_file)  # a forecast or calibration file has other variables
    folder = outdir if outdir is not None else folder_of(output_file)
    if folder.exists() and not folder.is_dir():
        raise InputError(f"{folder}: exists and is not a folder")
    _refuse_existing(planned_figures(ds, folder, fmt, output_file.stem), overwrite)
    if plotting_forecast.is_forecast(ds) or plotting_forecast.is_calibration(ds):
        obs = None
        if obs_path is not None and "time" in ds.coords:
            obs = read_observations(obs_path, period=(ds["time"].values[0], ds["time"].values[-1]))
        files = plotting_forecast.plot_forecast_file(ds, folder, fmt=fmt, obs=obs, stem=output_file.stem)
        echo_files("figures written:", files)
        return
    check_output_dataset(ds, str(output_file), (*OUTPUT_VARIABLES, *RUN_VARIABLES))
    single = first_member(ds)
    air_time, air_temp = air_from_run(single)
    table, _ = laws_for_run(air_time, air_temp, single, str(output_file))
    obs = None
    if obs_path is not None:
        t = ds["time"].values
        obs = read_observations(obs_path, period=(t[0], t[-1]))
    dates = None
    if profiles is not None:
        dates = [d.strip() for d in profiles.split(",") if d.strip()]
        if not dates:
            raise InputError("--profiles: no dates given (e.g. --profiles 2027-01-15,2027-03-01)")
    points_t = read_profile_points(thermistor, "thermistor") if thermistor is not None else None
    points_c = read_profile_points(core, "core") if core is not None else None
    files = plot_run(ds, folder, fmt=fmt, laws=table, obs=obs, profiles=dates, thermistor=points_t, core=points_c,
                     overwrite=overwrite)
    echo_files("figures written:", files)


#: Command name -> function, registered by :mod:`icecolumn.cli`.
COMMANDS = {"plot": plot_command}
