"""icecolumn: a one-dimensional mushy-layer sea-ice column model with brine drainage.

Public API::

    import icecolumn as ic
    forcing = ic.read_forcing("forcing_samples/station_winter.csv")
    cfg = ic.load_config("my.toml")          # or ic.default_config()
    ds = ic.run(forcing, cfg)                # xarray.Dataset, identical to the file
    ic.write_netcdf(ds, "run.nc")

A model estimate is not a measurement: drill and measure; follow local ice-safety rules.
"""
from ._version import __version__
from .config import Config, default_config, load_config
from .errors import IceColumnError, InputError
from .forcing import read_forcing
from .model import Member, run, run_ensemble
from .output import CAUTION, to_dataset, write_netcdf

__all__ = ["__version__", "Config", "default_config", "load_config", "IceColumnError", "InputError",
           "read_forcing", "run", "run_ensemble", "Member", "to_dataset", "write_netcdf", "CAUTION"]
