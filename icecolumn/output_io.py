"""Reading icecolumn output files back: open, check, pick one column.

The command line, plotting and restarts read runs through these functions, so every
reader gives the same one-line errors (:class:`~icecolumn.errors.InputError`) for a
missing file, a file that is not NetCDF, or a NetCDF file that is not icecolumn output.
Writing is in :mod:`icecolumn.output` (:func:`~icecolumn.output.write_netcdf`).
"""
from __future__ import annotations

import os
from collections.abc import Iterable
from pathlib import Path

import numpy as np
import xarray as xr

from .errors import InputError

__all__ = ["check_output_dataset", "open_output", "first_member"]


def check_output_dataset(ds: xr.Dataset, source: str = "file.nc", require: Iterable[str] = ()) -> xr.Dataset:
    """Raise :class:`InputError` unless ``ds`` is icecolumn output holding ``require``.

    Returns ``ds`` unchanged so the call can be chained.
    """
    if not isinstance(ds, xr.Dataset):
        raise InputError(f"{source}: expected an xarray Dataset, got {type(ds).__name__}")
    if "icecolumn_version" not in ds.attrs:
        raise InputError(f"{source}: not an icecolumn output file (no icecolumn_version attribute)")
    if "time" not in ds.variables:
        raise InputError(f"{source}: no time coordinate")
    if not np.issubdtype(ds["time"].dtype, np.datetime64):
        raise InputError(
            f"{source}: time coordinate is not decoded to dates (dtype {ds['time'].dtype})"
        )
    if ds.sizes["time"] < 1:
        raise InputError(f"{source}: time coordinate is empty")
    missing = [name for name in require if name not in ds.variables]
    if missing:
        raise InputError(f"{source}: missing variable(s) {', '.join(missing)}")
    if "depth_bounds" in ds.variables:
        db = ds["depth_bounds"]
        if "nv" not in db.dims or db.sizes["nv"] != 2:
            raise InputError(
                f"{source}: depth_bounds must have a dimension nv of size 2, got {db.dims}"
            )
    return ds


def open_output(path: str | os.PathLike, require: Iterable[str] = (), load: bool = True) -> xr.Dataset:
    """Open an icecolumn output file and check it (``encoding["source"]`` is the path).

    With ``load`` (the default) the whole file is read into memory and closed; without,
    the Dataset reads lazily and the caller closes it (``with open_output(p, load=False) as
    ds: ...``), for files too large to hold.

    Raises :class:`InputError` if the file is missing, cannot be read as NetCDF
    or is not icecolumn output with the ``require`` variables.
    """
    path = Path(path)
    if not path.is_file():
        raise InputError(f"{path}: file not found")
    try:
        if load:
            with xr.open_dataset(path) as src:
                ds = src.load()
        else:
            ds = xr.open_dataset(path)
    except Exception as exc:  # netCDF4/h5py/xarray raise many kinds
        msg = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise InputError(f"{path}: cannot read as NetCDF ({msg})") from None
    ds.encoding["source"] = str(path)
    try:
        return check_output_dataset(ds, source=str(path), require=require)
    except InputError:
        ds.close()
        raise


def first_member(ds: xr.Dataset) -> xr.Dataset:
    """The Dataset of one column: member 0 of an ensemble, or ``ds`` itself."""
    return ds.isel(member=0) if "member" in ds.dims else ds
