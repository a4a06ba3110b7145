"""``icecolumn demo``: the bundled (invented) sample winter, with its table and figures."""
from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from .cli_common import OverwriteOpt, SetOpt, echo_files, model_config, progress_bar
from .cli_run import format_run_summary
from .demo import run_demo, sample_file
from .summary import run_summary

__all__ = ["COMMANDS"]


def demo_command(
    outdir: Annotated[Path, typer.Option("-o", "--output-dir", help="Folder for the demo files.")]
    = Path("icecolumn_demo"),
    overwrite: OverwriteOpt = False,
    assignments: SetOpt = None,
    forecast: Annotated[bool, typer.Option("--forecast", help="Also run a forecast from the bundled (invented) "
                                           "station history, drill hole, thermistor and core.")] = False,
) -> None:
    """Run the bundled sample winter (default configuration), with the growth-law table and figures."""
    cfg = model_config(None, assignments)
    with progress_bar(batch=False) as bar:  # one column: the serial kernel
        demo = run_demo(outdir, overwrite=overwrite, config=cfg, progress=bar, forecast=forecast)
    typer.echo(format_run_summary(run_summary(demo.run), demo.files[0]))
    echo_files("files written:", demo.files)
    if forecast:
        from .cli_forecast import forecast_command

        typer.echo("\nforecast demo (invented station history; 40 members to keep the demo short):")
        forecast_command(history=sample_file("station_history.csv"), start="2027-01-10T00:00",
                         ice_thickness=0.62, snow_thickness=0.15,
                         thermistor=sample_file("thermistor_example.csv"),
                         core=sample_file("core_example.csv"), members=40, seed=1,
                         output=Path(outdir) / "forecast.nc", overwrite=overwrite, threshold=1.2, by="2027-03-15",
                         obs=sample_file("drillholes.csv"), assignments=assignments)


#: Command name -> function, registered by :mod:`icecolumn.cli`.
COMMANDS = {"demo": demo_command}
