"""What the ``icecolumn`` commands share: option declarations, configuration, progress.

Every command module (``cli_<name>.py``) takes its options from here, so the same file
has the same option name in every command, and every command that runs the model takes
``-c/--config``, ``--set`` and ``--column`` the same way.  Nothing here imports
:mod:`icecolumn.cli`.
"""
from __future__ import annotations

import sys
import warnings
from contextlib import contextmanager
from pathlib import Path
from typing import Annotated, Iterator, Optional

import typer
from rich.console import Console
from rich.progress import BarColumn, Progress, TaskProgressColumn, TextColumn, TimeRemainingColumn

from .config import Config, load_config, parse_assignments, parse_column_map

__all__ = ["ForcingArg", "ConfigOpt", "SetOpt", "ColumnOpt", "OutputOpt", "OverwriteOpt", "ObsOpt",
           "ThermistorOpt", "CoreOpt", "model_config", "column_map", "progress_bar", "folder_of", "echo_files",
           "warning_line", "warnings_as_lines", "compile_notice", "COMPILE_NOTICE"]

#: The program name that starts every line written on stderr.
PROG = "icecolumn"

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


#: The line printed on stderr before a run that compiles the numerical kernel first.
COMPILE_NOTICE = (f"{PROG}: compiling the numerical kernel (first use, up to about a minute; later runs start in "
                  "about a second)...")


def compile_notice(*batch: bool) -> bool:
    """Print :data:`COMPILE_NOTICE` on stderr if the run that follows compiles the kernel first
    (:func:`icecolumn.kernel.needs_compile`).  Each ``batch`` names a kernel the run calls:
    ``False`` the serial kernel of one column, ``True`` the threaded kernel of a batch of
    columns (default: the serial one).  Returns whether the line was printed."""
    from . import kernel

    if not any(kernel.needs_compile(batch=b) for b in (batch or (False,))):
        return False
    sys.stderr.write(COMPILE_NOTICE + "\n")
    sys.stderr.flush()
    return True


@contextmanager
def progress_bar(description: str = "running", batch: bool | None = True) -> Iterator:
    """A ``progress(i, n)`` callback drawing a bar on stderr when it is a terminal (else silent).

    First prints :data:`COMPILE_NOTICE` when the run that follows compiles the kernel:
    ``batch`` says which kernel runs (:func:`compile_notice`): the threaded one of a batch of
    columns (forecasts), ``False`` the serial one of a single column, ``None`` no notice (the
    caller has printed it).
    """
    if batch is not None:
        compile_notice(batch)
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


def warning_line(message, category: type[Warning] = UserWarning) -> str:
    """The one line a warning prints on stderr: ``icecolumn: warning: <message>``.

    Warnings of icecolumn (and any other :class:`UserWarning`) show their message only; other
    categories (e.g. a :class:`RuntimeWarning` of numpy) are named before the message.
    """
    text = " ".join(str(message).split())
    if not issubclass(category, UserWarning):
        text = f"{category.__name__}: {text}"
    return f"{PROG}: warning: {text}\n"


def _show_warning(message, category, filename, lineno, file=None, line=None) -> None:
    stream = file if file is not None else sys.stderr
    try:
        stream.write(warning_line(message, category))
    except (OSError, ValueError):  # stderr closed: nothing to be done
        pass


@contextmanager
def warnings_as_lines(debug: bool = False) -> Iterator[None]:
    """While active, every warning prints as one line :func:`warning_line` on stderr instead of
    Python's text with the source line; with ``debug`` Python's own form is kept."""
    if debug:
        yield
        return
    with warnings.catch_warnings():
        warnings.showwarning = _show_warning
        yield
