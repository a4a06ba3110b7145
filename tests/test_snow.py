"""Snow: Sturm et al. (1997) conductivity, snowfall accumulation, snow melts before the ice."""
import numpy as np
import pytest
import xarray as xr

import icecolumn as ic
from icecolumn.properties import snow_conductivity_sturm1997


def test_sturm_1997_check_values():
    # Sturm et al. (1997, J. Glaciol. 43(143), 26-41) quadratic fit (coefficients from memory),
    # evaluated by hand: rho = 0.30 -> 0.126, 0.33 -> 0.157, 0.40 -> 0.251 W m-1 K-1; below
    # 0.156 g cm-3 the linear branch 0.023 + 0.234 rho (0.10 -> 0.0464)
    got = snow_conductivity_sturm1997([300.0, 330.0, 400.0, 100.0])
    np.testing.assert_allclose(got, [0.126, 0.157, 0.251, 0.0464], atol=6e-4)


def _forcing(days, air, **more):
    t = np.datetime64("2027-01-01", "ns") + np.arange(24 * days + 1) * np.timedelta64(1, "h")
    data = {"air_temperature": ("time", np.broadcast_to(air, t.size).astype(float))}
    data.update({k: ("time", np.broadcast_to(v, t.size).astype(float)) for k, v in more.items()})
    return xr.Dataset(data, coords={"time": t}, attrs={"source_file": "<invented test forcing>"})


def test_snowfall_accumulates_at_the_snow_density():
    rate = 0.02 * 300.0 / (10 * 86400.0)  # 2 cm of snow every 10 days at 300 kg m-3 [kg m-2 s-1]
    cfg = ic.default_config().replace("grid", layers=10).replace("output", interval="1D")
    ds = ic.run(_forcing(30, -20.0, snowfall=rate), cfg)
    np.testing.assert_allclose(ds.snow_thickness.values[-1], 0.06, rtol=1e-9)
    bare = ic.run(_forcing(30, -20.0), cfg)
    assert ds.ice_thickness.values[-1] < bare.ice_thickness.values[-1]  # snow insulates


def test_snow_melts_before_the_ice():
    days = 4
    hr = np.arange(24 * days + 1) % 24
    f = _forcing(days, 3.0, shortwave_down=np.maximum(0.0, 500.0 * np.sin(np.pi * hr / 24)),
                 cloud_fraction=0.7, wind_speed=5.0, relative_humidity=95.0)
    cfg = (ic.default_config().replace("grid", layers=10).replace("output", interval="1h")
           .replace("initial", ice_thickness=1.0, bulk_salinity=5.0, snow_thickness=0.1))
    ds = ic.run(f, cfg)
    snow = ds.snow_thickness.values
    melt = ds.surface_melt.values
    assert snow[-1] < snow[0] and np.all(np.diff(snow) <= 1e-15)  # melting snow
    covered = snow > 0.01
    assert np.all(melt[covered] == 0.0)  # no ice melts while at least 1 cm of snow is left
    assert snow.min() >= 0.0
