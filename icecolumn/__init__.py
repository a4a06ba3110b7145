"""icecolumn: a one-dimensional mushy-layer sea-ice column model with brine drainage.

Public API::

    import icecolumn as ic
    forcing = ic.read_forcing("forcing_samples/station_winter.csv")
    cfg = ic.load_config("my.toml")          # or ic.default_config()
    ds = ic.run(forcing, cfg)                # xarray.Dataset, identical to the file
    ic.write_netcdf(ds, "run.nc")

A model estimate is not a measurement: drill and measure; follow local ice-safety rules.

The names are imported on first use (PEP 562), so that ``import icecolumn.kernel`` needs only
numpy and numba (the install compiles the kernel with nothing else).
"""
from __future__ import annotations

import importlib

from ._version import __version__

#: Public name -> module that defines it.
_API = {
    "Config": ".config", "default_config": ".config", "load_config": ".config",
    "IceColumnError": ".errors", "InputError": ".errors",
    "read_forcing": ".forcing", "forcing_from_arrays": ".forcing",
    "Member": ".model", "InitialProfile": ".model", "run": ".model", "run_ensemble": ".model",
    "CAUTION": ".output", "to_dataset": ".output", "write_netcdf": ".output",
}

__all__ = ["__version__", *_API]


def __getattr__(name: str):
    if name in _API:
        value = getattr(importlib.import_module(_API[name], __name__), name)
        globals()[name] = value
        return value
    try:  # a submodule, e.g. icecolumn.phase
        return importlib.import_module(f".{name}", __name__)
    except ModuleNotFoundError:
        raise AttributeError(f"module 'icecolumn' has no attribute {name!r}") from None


def __dir__():
    return sorted(set(globals()) | set(__all__))
