"""``icecolumn check FORCING``: validate a forcing file and summarise it before a run.

Prints the period, the time step, each variable with its units and range, the
gaps filled, the freezing degree days over the file (0 degC base) and any
warnings (lines starting ``warning:``).  A file that cannot be used is an
:class:`~icecolumn.errors.InputError`, which the application prints as one line
with exit code 2.
"""

from __future__ import annotations

import warnings
from pathlib import Path
from typing import Annotated, Optional

import numpy as np
import typer

from .cli_common import ColumnOpt, ForcingArg, column_map
from .config import load_config
from .constants import SECONDS_PER_DAY
from .errors import InputError
from .forcing import ForcingWarning, read_forcing
from .growth_laws import freezing_degree_days
from .texttable import text_table
from .timeutil import format_duration, format_time

__all__ = ["COMMANDS", "check_forcing", "format_check"]


def check_forcing(path: str | Path, column_map=None, max_gap: str | float = "6h"):
    """Read a forcing file, recording warnings instead of showing them.

    Returns
    -------
    forcing : xarray.Dataset
        As :func:`icecolumn.read_forcing`.
    messages : list of str
        The :class:`~icecolumn.forcing.ForcingWarning` messages, in order.
    """
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", ForcingWarning)
        ds = read_forcing(path, column_map, max_gap=max_gap)
    messages = []
    for w in caught:
        if issubclass(w.category, ForcingWarning):
            messages.append(str(w.message))
        else:  # not ours: show it as Python would
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
    return ds, messages


def format_check(ds, messages: list[str]) -> str:
    """The text printed by ``icecolumn check``."""
    t = ds["time"].values.astype("datetime64[ns]")
    steps = np.diff(t.astype("int64")) / 1e9
    days = (t[-1] - t[0]) / np.timedelta64(1, "s") / SECONDS_PER_DAY
    lines = [f"file:        {ds.attrs.get('source_file', '')}"]
    if ds.attrs.get("title"):
        lines.append(f"title:       {ds.attrs['title']}")
    lines += [
        f"period:      {format_time(t[0])} to {format_time(t[-1])} ({days:.2f} days, {t.size} times)",
        f"time step:   median {format_duration(float(np.median(steps)))}, min {format_duration(float(steps.min()))}, "
        f"max {format_duration(float(steps.max()))}",
        "variables:",
    ]
    rows = []
    for var in ds.data_vars:
        values = np.asarray(ds[var].values, dtype=float)
        rows.append([str(var), ds[var].attrs.get("units", ""), f"{values.min():.4g}", f"{values.mean():.4g}",
                     f"{values.max():.4g}"])
    table = text_table([("variable", ""), ("units", ""), ("min", ""), ("mean", ""), ("max", "")], rows)
    lines += ["  " + line for line in table.rstrip("\n").split("\n")]
    if ds.attrs.get("source_columns"):
        lines.append(f"read from:   {ds.attrs['source_columns']}")
    if ds.attrs.get("ignored_columns"):
        lines.append(f"ignored:     {ds.attrs['ignored_columns']}")
    count = int(ds.attrs.get("gaps_filled", 0))
    longest = float(ds.attrs.get("longest_gap_filled", 0.0))
    lines.append(f"gaps filled: {count}" + (f" (longest {format_duration(longest)})" if count else ""))
    _, fdd = freezing_degree_days(t, ds["air_temperature"].values, base=0.0)
    lines.append(f"freezing degree days (base 0 degC): {float(fdd[-1]):.1f} K day")
    lines += [f"warning: {m}" for m in messages]
    return "\n".join(lines)


def check_command(
    forcing: ForcingArg,
    columns: ColumnOpt = None,
    max_gap: Annotated[Optional[str], typer.Option("--max-gap", metavar="DURATION",
                                                   help="Longest gap filled by linear interpolation "
                                                        "[default: [forcing] max_gap of --config, or 6h].")] = None,
    config: Annotated[Optional[Path], typer.Option("-c", "--config", help="Configuration TOML file "
                                                   "(for [forcing] max_gap and columns).")] = None,
) -> None:
    """Check a forcing file and print its period, step, variables, gaps and freezing degree days."""
    cfg = load_config(config)
    if max_gap is None:
        gap: str | float = cfg.forcing.max_gap_seconds
    elif config is not None:
        raise InputError("check: give --max-gap or --config, not both")
    else:
        gap = max_gap
    ds, messages = check_forcing(forcing, column_map(cfg, columns), gap)
    typer.echo(format_check(ds, messages))


#: Command name -> function, registered by :mod:`icecolumn.cli`.
COMMANDS = {"check": check_command}
