"""``icecolumn ensemble``: run an ensemble spec into one NetCDF file with a member dimension."""
from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import numpy as np
import typer

from .errors import InputError
from .output import CAUTION

#: Most members listed one by one in the summary (the rest are summarised).
SUMMARY_ROWS = 40


def _summary(path: Path, n: int) -> str:
    import xarray as xr

    with xr.open_dataset(path) as ds:
        names = [str(v) for v in ds["member_name"].values]
        h_end = ds["ice_thickness"].isel(time=-1).values if "ice_thickness" in ds else np.full(n, np.nan)
        salt = ds["salt_released"].isel(time=-1).values if "salt_released" in ds else np.full(n, np.nan)
        t = ds["time"].values
    width = max(6, *(len(s) for s in names[:SUMMARY_ROWS]))
    lines = [f"ensemble:       {n} members, {str(t[0])[:16]}Z to {str(t[-1])[:16]}Z",
             f"output:         {path}", "",
             f"{'member':{width}s}  {'end thickness m':>15s}  {'salt released kg m-2':>20s}"]
    for i in range(min(n, SUMMARY_ROWS)):
        lines.append(f"{names[i]:{width}s}  {h_end[i]:15.3f}  {salt[i]:20.3f}")
    if n > SUMMARY_ROWS:
        lines.append(f"... {n - SUMMARY_ROWS} more members")
    if n > 1 and np.isfinite(h_end).any():
        lines.append(f"{'min/median/max':{width}s}  end thickness {np.nanmin(h_end):.3f} / {np.nanmedian(h_end):.3f} / "
                     f"{np.nanmax(h_end):.3f} m")
    lines += ["", CAUTION]
    return "\n".join(lines)


def register(app: typer.Typer) -> None:
    """Add the ``ensemble`` command to ``app``."""
    from .cli import ProgressBar

    @app.command("ensemble")
    def ensemble_command(
        spec: Annotated[Path, typer.Argument(metavar="SPEC.toml", help="Ensemble spec (TOML): base config, "
                                             "forcing, [[member]] tables and/or a [sweep].", show_default=False)],
        output: Annotated[Optional[Path], typer.Option("-o", "--output",
                                                       help="Output NetCDF file [default: <spec stem>.nc].")] = None,
        overwrite: Annotated[bool, typer.Option("--overwrite", help="Replace an existing output file.")] = False,
        workers: Annotated[Optional[int], typer.Option("--workers", min=1, help="Local worker processes (with "
                                                       "--dask: LocalCluster workers).")] = None,
        scheduler: Annotated[Optional[str], typer.Option("--scheduler", metavar="ADDRESS",
                                                         help="dask scheduler address, e.g. tcp://host:8786.")]
        = None,
        use_dask: Annotated[bool, typer.Option("--dask", help="Run on dask.distributed (a LocalCluster unless "
                                               "--scheduler is given).")] = False,
        batch_size: Annotated[int, typer.Option("--batch-size", min=1, help="Members per batch.")] = 256,
    ) -> None:
        """Run an ensemble of columns and write one NetCDF file with a member dimension."""
        from .ensemble import load_spec

        out = output if output is not None else Path(f"{spec.stem}.nc")
        if out.is_dir():
            out = out / f"{spec.stem}.nc"
        if out.exists() and not overwrite:
            raise InputError(f"{out}: file exists; use --overwrite to replace it")
        if not (out.parent if str(out.parent) else Path(".")).is_dir():
            raise InputError(f"{out}: folder {out.parent} does not exist")
        ens = load_spec(spec)
        bar = ProgressBar()
        try:
            ens.run_to_file(out, overwrite=overwrite, batch_size=batch_size, workers=workers,
                            scheduler=scheduler, use_dask=use_dask, progress=bar)
        finally:
            bar.close()
        typer.echo(_summary(out, len(ens.members)))
