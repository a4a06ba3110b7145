"""``icecolumn ensemble``: run an ensemble spec into one NetCDF file with a member dimension."""
from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import numpy as np
import typer

from .cli_common import ColumnOpt, OverwriteOpt, compile_notice, progress_bar
from .config import parse_assignments, parse_column_map
from .output import CAUTION
from .summary import EnsembleSummary, ensemble_summary
from .textfile import check_new_output, output_path
from .texttable import text_table
from .timeutil import format_time

__all__ = ["COMMANDS", "format_ensemble_summary"]

#: Most members listed one by one in the summary (the rest are summarised).
SUMMARY_ROWS = 40


def format_ensemble_summary(s: EnsembleSummary, path: Path) -> str:
    """The text ``icecolumn ensemble`` prints after a run."""
    n = len(s.names)
    rows = [[s.names[i], f"{s.thickness_end[i]:.3f}", f"{s.salt_released[i]:.3f}"] for i in range(min(n, SUMMARY_ROWS))]
    table = text_table([("member", ""), ("end thickness", "m"), ("salt released", "kg m-2")], rows)
    lines = [f"ensemble:       {n} members, {format_time(s.start, 'm')} to {format_time(s.end, 'm')}",
             f"output:         {path}", "", table.rstrip("\n")]
    if n > SUMMARY_ROWS:
        lines.append(f"... {n - SUMMARY_ROWS} more members")
    h = s.thickness_end
    if n > 1 and np.isfinite(h).any():
        lines.append(f"end thickness min / median / max: {np.nanmin(h):.3f} / {np.nanmedian(h):.3f} / "
                     f"{np.nanmax(h):.3f} m")
    lines += ["", CAUTION]
    return "\n".join(lines)


def ensemble_command(
    spec: Annotated[Path, typer.Argument(metavar="SPEC.toml", help="Ensemble spec (TOML): base config, "
                                         "forcing, [[member]] tables and/or a [sweep].", show_default=False)],
    output: Annotated[Optional[Path], typer.Option("-o", "--output",
                                                   help="Output NetCDF file (or a folder for it) [default: "
                                                        "<spec stem>.nc].")] = None,
    overwrite: OverwriteOpt = False,
    assignments: Annotated[Optional[list[str]], typer.Option("--set", metavar="SECTION.KEY=VALUE",
                                                             help="Override one setting of the base "
                                                                  "configuration (repeatable; members and sweeps "
                                                                  "still change settings on top).")] = None,
    columns: ColumnOpt = None,
    workers: Annotated[Optional[int], typer.Option("--workers", min=1, help="Local worker processes (with "
                                                   "--dask: LocalCluster workers).")] = None,
    scheduler: Annotated[Optional[str], typer.Option("--scheduler", metavar="ADDRESS",
                                                     help="dask scheduler address, e.g. tcp://host:8786.")] = None,
    use_dask: Annotated[bool, typer.Option("--dask", help="Run on dask.distributed (a LocalCluster unless "
                                           "--scheduler is given).")] = False,
    batch_size: Annotated[int, typer.Option("--batch-size", min=1, help="Members per batch.")] = 256,
) -> None:
    """Run an ensemble of columns and write one NetCDF file with a member dimension."""
    from .ensemble import load_spec, plan_batches
    from .output_io import open_output

    out = output_path(output, f"{spec.stem}.nc")
    check_new_output(out, overwrite)
    ens = load_spec(spec, overrides=parse_assignments(assignments),
                    column_map=parse_column_map(",".join(columns or []), "--column"))
    # the kernels the run calls: threaded for batches of several columns, serial for a batch of
    # one and for the short run that lists the variables of [output] variables
    kernels = {len(b) > 1 for b in plan_batches(ens.members, batch_size)} | ({False} if ens.variables else set())
    compile_notice(*kernels)
    with progress_bar(batch=None) as bar:
        ens.run_to_file(out, overwrite=overwrite, batch_size=batch_size, workers=workers,
                        scheduler=scheduler, use_dask=use_dask, progress=bar)
    with open_output(out, load=False) as ds:
        summary = ensemble_summary(ds)
    typer.echo(format_ensemble_summary(summary, out))


#: Command name -> function, registered by :mod:`icecolumn.cli`.
COMMANDS = {"ensemble": ensemble_command}
