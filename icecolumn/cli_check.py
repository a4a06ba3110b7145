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

from .errors import InputError
from .forcing import ForcingWarning, _duration_text, read_forcing
from .growth_laws import freezing_degree_days
from .timeutil import format_time

__all__ = ["register", "check_forcing", "format_check"]


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
    days = (t[-1] - t[0]) / np.timedelta64(1, "s") / 86400.0
    lines = [f"file:        {ds.attrs.get('source_file', '')}"]
    if ds.attrs.get("title"):
        lines.append(f"title:       {ds.attrs['title']}")
    lines += [
        f"period:      {format_time(t[0])} to {format_time(t[-1])} ({days:.2f} days, {t.size} times)",
        f"time step:   median {_duration_text(float(np.median(steps)))}, min {_duration_text(float(steps.min()))}, "
        f"max {_duration_text(float(steps.max()))}",
        "variables:",
    ]
    width = max(len(str(v)) for v in ds.data_vars)
    for var in ds.data_vars:
        values = np.asarray(ds[var].values, dtype=float)
        unit = ds[var].attrs.get("units", "")
        lines.append(f"  {str(var):<{width}}  [{unit}]  min {values.min():.4g}  mean {values.mean():.4g}  "
                     f"max {values.max():.4g}")
    if ds.attrs.get("source_columns"):
        lines.append(f"read from:   {ds.attrs['source_columns']}")
    if ds.attrs.get("ignored_columns"):
        lines.append(f"ignored:     {ds.attrs['ignored_columns']}")
    count = int(ds.attrs.get("gaps_filled", 0))
    longest = float(ds.attrs.get("longest_gap_filled", 0.0))
    lines.append(f"gaps filled: {count}" + (f" (longest {_duration_text(longest)})" if count else ""))
    _, fdd = freezing_degree_days(t, ds["air_temperature"].values, base=0.0)
    lines.append(f"freezing degree days (base 0 degC): {float(fdd[-1]):.1f} K day")
    lines += [f"warning: {m}" for m in messages]
    return "\n".join(lines)


def register(app: typer.Typer) -> None:
    """Add the ``check`` command to the application."""

    @app.command("check")
    def check_command(
        forcing: Annotated[Path, typer.Argument(metavar="FORCING", help="Forcing CSV or CF NetCDF file.",
                                                show_default=False)],
        columns: Annotated[Optional[list[str]], typer.Option("--column", metavar="OURS=THEIRS",
                                                             help="Read our variable from another column or "
                                                                  "NetCDF variable (repeatable).")] = None,
        max_gap: Annotated[Optional[str], typer.Option("--max-gap", metavar="DURATION",
                                                       help="Longest gap filled by linear interpolation "
                                                            "[default: [forcing] max_gap of --config, or 6h].")]
        = None,
        config: Annotated[Optional[Path], typer.Option("-c", "--config", help="Configuration TOML file "
                                                       "(for [forcing] max_gap and columns).")] = None,
    ) -> None:
        """Check a forcing file and print its period, step, variables, gaps and freezing degree days."""
        from .cli import _column_map
        from .config import load_config

        cfg = load_config(config)
        if max_gap is None:
            max_gap = cfg.forcing.max_gap_seconds
        elif config is not None:
            raise InputError("check: give --max-gap or --config, not both")
        ds, messages = check_forcing(forcing, _column_map(columns, cfg), max_gap)
        typer.echo(format_check(ds, messages))
