"""The demo: the bundled (invented) sample winter run with the default configuration, its
growth-law table and its figures, written into one folder.

The sample files are the repository's ``forcing_samples/`` (also looked for in
``./forcing_samples/``); an installed package carries copies of the sample winter and of the
forecast demo's files (:data:`FORECAST_SAMPLES`) in ``icecolumn/samples/``.
"""
from __future__ import annotations

import importlib.resources
from dataclasses import dataclass
from pathlib import Path

import xarray as xr

from .config import Config, default_config
from .errors import InputError
from .forcing import read_forcing
from .laws import laws_for_run, write_laws_csv
from .model import run
from .output import write_netcdf
from .textfile import check_new_output

__all__ = ["SAMPLE_NAME", "FIGURE_NAMES", "FORECAST_SAMPLES", "FORECAST_FILES", "sample_file", "demo_files",
           "DemoResult", "run_demo"]

#: The sample winter's file name.
SAMPLE_NAME = "station_winter.csv"
#: The figures the demo draws (:func:`icecolumn.plotting.plot_run`).
FIGURE_NAMES = ("thickness", "sections", "salt", "profiles")
#: The (invented) files ``demo --forecast`` reads; copies ship in ``icecolumn/samples/``.
FORECAST_SAMPLES = ("station_history.csv", "thermistor_example.csv", "core_example.csv", "drillholes.csv")
#: The files ``demo --forecast`` writes into the demo folder.
FORECAST_FILES = ("forecast.nc", "forecast_fan.png")
#: The repository's sample folder (absent in an installed package).
_REPOSITORY_SAMPLES = Path(__file__).resolve().parent.parent / "forcing_samples"


def sample_file(name: str = SAMPLE_NAME) -> Path:
    """A bundled sample file: the repository's forcing_samples/, ./forcing_samples/, or the
    copy shipped inside the package (icecolumn/samples/)."""
    here = _REPOSITORY_SAMPLES / name
    cwd = Path.cwd() / "forcing_samples" / name
    for candidate in (here, cwd):
        if candidate.is_file():
            return candidate
    try:
        packaged = importlib.resources.files("icecolumn") / "samples" / name
        if packaged.is_file():
            return Path(str(packaged))
    except (ModuleNotFoundError, FileNotFoundError, NotADirectoryError):
        pass
    raise InputError(f"the bundled sample {name} was not found (looked in {here.parent}, {cwd.parent} and in "
                     "the package folder icecolumn/samples); run from the icecolumn source folder, or run "
                     "'icecolumn run' on your own forcing file")


def demo_files(outdir: Path, fmt: str = "png") -> list[Path]:
    """The files the demo writes: the run, the laws table, then the figures."""
    outdir = Path(outdir)
    return [outdir / f"{Path(SAMPLE_NAME).stem}.nc", outdir / "laws.csv",
            *(outdir / f"{name}.{fmt}" for name in FIGURE_NAMES)]


@dataclass
class DemoResult:
    """What :func:`run_demo` made."""

    run: xr.Dataset
    laws: xr.Dataset
    files: list[Path]  # the run, the laws table, the figures


def run_demo(outdir, overwrite: bool = False, config: Config | None = None, progress=None,
             forecast: bool = False) -> DemoResult:
    """Run the sample winter and write the run, its growth-law table and figures into ``outdir``.

    Every file is checked before anything runs (with ``forecast``, also the
    :data:`FORECAST_FILES` the forecast demo writes afterwards, and its sample files are
    looked up): an existing one is an :class:`InputError` unless ``overwrite``.
    """
    from .plotting import plot_run

    outdir = Path(outdir)
    if outdir.exists() and not outdir.is_dir():
        raise InputError(f"{outdir}: exists and is not a folder")
    planned = demo_files(outdir)
    if forecast:
        for name in FORECAST_SAMPLES:
            sample_file(name)
    if outdir.is_dir():
        for path in [*planned, *(outdir / name for name in FORECAST_FILES if forecast)]:
            check_new_output(path, overwrite)
    outdir.mkdir(parents=True, exist_ok=True)
    forcing = read_forcing(sample_file())
    ds = run(forcing, config if config is not None else default_config(), progress=progress)
    nc = write_netcdf(ds, planned[0], overwrite=overwrite)
    table, _ = laws_for_run(forcing["time"].values, forcing["air_temperature"].values, ds, str(nc))
    write_laws_csv(table, planned[1], overwrite=overwrite)
    ds.encoding["source"] = str(nc)
    figures = plot_run(ds, outdir, laws=table)
    return DemoResult(run=ds, laws=table, files=[nc, planned[1], *figures])
