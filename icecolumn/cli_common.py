"""What the ``icecolumn`` commands share: option declarations, configuration, progress.

Every command module (``cli_<name>.py``) takes its options from here, so the same file
has the same option name in every command, and every command that runs the model takes
``-c/--config``, ``--set`` and ``--column`` the same way.  Nothing here imports
:mod:`icecolumn.cli`.
"""
from __future__ import annotations

from contextlib import contextmanager
from pathlib import Path
from typing import Annotated, Iterator, Optional

import typer
from rich.console import Console
from rich.progress import BarColumn, Progress, TaskProgressColumn, TextColumn, TimeRemainingColumn

from .config import Config, load_config, parse_assignments, parse_column_map

__all__ = ["ForcingArg", "ConfigOpt", "SetOpt", "ColumnOpt", "OutputOpt", "OverwriteOpt", "ObsOpt",
           "ThermistorOpt", "CoreOpt", "model_config", "column_map", "progress_bar", "folder_of", "echo_files"]

ForcingArg = Annotated[Path, typer.Argument(metavar="FORCING", show_default=False,
                                            help="Forcing file: CSV (time, air_temperature [degC], ...) or CF "
                                                 "NetCDF.")]
ConfigOpt = Annotated[Optional[Path], typer.Option("-c", "--config", help="Configuration TOML file.")]
SetOpt = Annotated[Optional[list[str]], typer.Option("--set", metavar="SECTION.KEY=VALUE",
                                                     help="Override one setting (repeatable).")]
ColumnOpt = Annotated[Optional[list[str]], typer.Option("--column", metavar="OURS=THEIRS",
                                                        help="Read our forcing variable from another column or "
                                                             "NetCDF variable (repeatable; adds to [forcing] "
                                                             "columns).")]
OutputOpt = Annotated[Optional[Path], typer.Option("-o", "--output", help="Output file (or a folder for it).")]
OverwriteOpt = Annotated[bool, typer.Option("--overwrite", help="Replace existing output files.")]
ObsOpt = Annotated[Optional[Path], typer.Option("--obs", help="Observed (drill-hole) thickness CSV (time, "
                                                "ice_thickness [m]).")]
ThermistorOpt = Annotated[Optional[Path], typer.Option("--thermistor", help="Thermistor CSV (time, depth [m], "
                                                       "temperature [degC]).")]
CoreOpt = Annotated[Optional[Path], typer.Option("--core", help="Ice-core CSV (time, depth_top, depth_bottom [m], "
                                                 "salinity [g/kg]).")]


def model_config(config: Path | None, assignments: list[str] | None) -> Config:
    """The configuration file (or the defaults) with the ``--set`` assignments applied."""
    return load_config(config, parse_assignments(assignments))


def column_map(cfg: Config, pairs: list[str] | None) -> dict[str, str]:
    """``[forcing] columns`` of ``cfg`` with the ``--column`` pairs added (they win)."""
    return cfg.forcing.column_map(parse_column_map(",".join(pairs or []), "--column"))


@contextmanager
def progress_bar(description: str = "running") -> Iterator:
    """A ``progress(i, n)`` callback drawing a bar on stderr when it is a terminal (else silent)."""
    console = Console(stderr=True)
    columns = (TextColumn("{task.description}"), BarColumn(), TaskProgressColumn(), TimeRemainingColumn())
    with Progress(*columns, console=console, disable=not console.is_terminal) as bar:
        task = bar.add_task(description, total=None)

        def update(i: int, n: int) -> None:
            bar.update(task, completed=i, total=n)

        yield update


def folder_of(path: Path) -> Path:
    """The folder holding ``path`` (``.`` for a bare file name)."""
    return path.parent if str(path.parent) else Path(".")


def echo_files(title: str, files) -> None:
    """Print ``title`` and one indented line per file."""
    typer.echo(title)
    for p in files:
        typer.echo(f"  {p}")
