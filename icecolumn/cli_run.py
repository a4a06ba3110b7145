"""``icecolumn run`` (one column from a forcing file) and ``icecolumn config``."""
from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import typer

import icecolumn

from .brine import format_brine_budget
from .cli_common import ColumnOpt, ConfigOpt, ForcingArg, OverwriteOpt, SetOpt, column_map, model_config, progress_bar
from .config import parameters_markdown
from .errors import InputError
from .output import CAUTION
from .summary import RunSummary, run_summary
from .textfile import check_new_output, output_path
from .timeutil import format_time

__all__ = ["COMMANDS", "format_run_summary"]

#: Most melt-out or new-ice dates listed in the summary.
EVENT_DATES = 5


def _dates(times) -> str:
    text = ", ".join(str(t)[:10] for t in times[:EVENT_DATES])
    return text + (" ..." if len(times) > EVENT_DATES else "")


def format_run_summary(s: RunSummary, path: Path) -> str:
    """The text ``icecolumn run`` prints after a run."""
    ev = s.events
    lines = [
        f"run:            {format_time(s.start, 'm')} to {format_time(s.end, 'm')} ({s.days:.1f} days)",
        f"ice thickness:  start {s.thickness_start:.3f} m, end {s.thickness_end:.3f} m, "
        f"maximum {s.thickness_max:.3f} m on {str(s.thickness_max_time)[:10]}",
    ]
    if ev.snow_ice > 0:
        lines.append(f"snow-ice:       {ev.snow_ice:.3f} m formed by flooding")
    if s.measured_snow is not None:
        lines.append(f"measured snow:  {s.measured_snow.note()}")
    if ev.melt_out:
        lines.append(f"melt-out:       {_dates(ev.melt_out)}")
    if ev.new_ice:
        lines.append(f"new ice:        {_dates(ev.new_ice)}")
    if ev.open_water_days > 0:
        lines.append(f"open water:     {ev.open_water_days:.1f} days")
    lines += [
        f"salt released:  {s.salt_released:.3f} kg m-2",
        f"salt flux:      mean {s.salt_flux_mean:.3g} kg m-2 s-1, maximum {s.salt_flux_max:.3g} kg m-2 s-1",
        f"output:         {path}",
        "",
        "brine budget by month (kg m-2):",
        format_brine_budget(s.brine_by_month).rstrip("\n"),
        "",
        *(f"warning: {w}" for w in s.warnings),
        CAUTION,
    ]
    return "\n".join(lines)


def run_command(
    forcing: ForcingArg,
    config: ConfigOpt = None,
    output: Annotated[Optional[Path], typer.Option("-o", "--output",
                                                   help="Output NetCDF file (or a folder for it) [default: "
                                                        "<forcing stem>.nc].")] = None,
    overwrite: OverwriteOpt = False,
    assignments: SetOpt = None,
    columns: ColumnOpt = None,
    restart_from: Annotated[Optional[Path], typer.Option("--restart-from", metavar="PREVIOUS.nc",
                                                         help="Continue from the last state of a previous "
                                                              "output (same configuration).")] = None,
    repeat: Annotated[int, typer.Option("--repeat", min=1, metavar="N",
                                        help="Run the forcing N times (multi-year runs and spin-up): a file "
                                             "of whole calendar years repeats on the calendar (29 February of "
                                             "a leap year is a copy of 28 February; one the file has is left "
                                             "out of common years); another file end to end.")] = 1,
) -> None:
    """Run the column model on a forcing file and write a NetCDF file."""
    from .forcing import repeat_forcing
    from .model import restart_state, run_restart
    from .output_io import open_output

    out = output_path(output, f"{forcing.stem}.nc")
    check_new_output(out, overwrite)
    cfg = model_config(config, assignments)
    data = icecolumn.read_forcing(forcing, column_map(cfg, columns), max_gap=cfg.forcing.max_gap_seconds)
    if repeat > 1:
        data = repeat_forcing(data, repeat)
    previous = None
    if restart_from is not None:
        if restart_from.resolve() == out.resolve():
            raise InputError(f"{restart_from}: the restart file cannot also be the output file")
        previous = open_output(restart_from)
        restart_state(previous, cfg, str(restart_from))  # check before running
    with progress_bar(batch=False) as bar:  # one column: the serial kernel
        if previous is None:
            ds = icecolumn.run(data, cfg, progress=bar)
        else:
            ds = run_restart(data, cfg, previous, progress=bar, source=str(restart_from))
    icecolumn.write_netcdf(ds, out, overwrite=overwrite)
    typer.echo(format_run_summary(run_summary(ds, data), out))


def config_command(
    defaults: Annotated[bool, typer.Option("--defaults", help="Print the default configuration.")] = False,
    config: ConfigOpt = None,
    assignments: SetOpt = None,
    markdown: Annotated[bool, typer.Option("--markdown", help="Print the table of every setting "
                                           "(Markdown).")] = False,
) -> None:
    """Print the fully resolved configuration as TOML (a start for your own file)."""
    if markdown:
        typer.echo(parameters_markdown(), nl=False)
        return
    if defaults and (config is not None or assignments):
        raise InputError("config: --defaults cannot be combined with --config or --set")
    typer.echo(model_config(config, assignments).to_toml(), nl=False)


#: Command name -> function, registered by :mod:`icecolumn.cli`.
COMMANDS = {"run": run_command, "config": config_command}
