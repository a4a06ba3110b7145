"""The [station] section: validated, and written as global attributes of every NetCDF file."""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

import icecolumn as ic
from icecolumn.config import config_from_toml_text, default_config
from icecolumn.errors import InputError
from icecolumn.forcing import forcing_from_arrays

STATION = '[station]\nname = "Fjordvik test station (invented)"\nlatitude = 70.25\nlongitude = -20.5\n'
EXPECTED = {"station_name": "Fjordvik test station (invented)", "geospatial_lat_min": 70.25,
            "geospatial_lat_max": 70.25, "geospatial_lat_units": "degrees_north", "geospatial_lon_min": -20.5,
            "geospatial_lon_max": -20.5, "geospatial_lon_units": "degrees_east"}


def short_forcing(days: int = 2):
    t = np.datetime64("2027-01-01T00:00") + np.arange(days * 24 + 1) * np.timedelta64(1, "h")
    return forcing_from_arrays(t, np.full(t.size, -20.0))


def station_config():
    return config_from_toml_text(STATION + '[output]\ninterval = "1D"\n[grid]\nlayers = 6\n', "st.toml")


def test_station_section_is_optional_and_round_trips():
    cfg = default_config()
    assert cfg.station.name is None and cfg.station.attributes() == {}
    st = station_config()
    assert st.station.attributes() == EXPECTED
    assert config_from_toml_text(st.to_toml()) == st
    only_name = config_from_toml_text('[station]\nname = "  Hut  "\n')
    assert only_name.station.attributes() == {"station_name": "Hut"}


@pytest.mark.parametrize("text, fragment", [
    ("[station]\nlatitude = 91\n", "[station] latitude = 91.0: must be at most 90"),
    ("[station]\nlongitude = -181\n", "[station] longitude = -181.0: must be at least -180"),
    ("[station]\nname = 3\n", "[station] name: expected a text, got 3"),
    ('[station]\nname = "a\\nb"\n', "must be one line"),
    ('[station]\nname = "   "\n', "must be one line of 1 to 200 characters"),
    ("[station]\nheight = 3\n", "unknown key 'height' in [station]"),
])
def test_bad_station_settings_are_one_line(text, fragment):
    with pytest.raises(InputError) as info:
        config_from_toml_text(text, "st.toml")
    assert fragment in str(info.value) and "\n" not in str(info.value)


def test_run_file_carries_the_station(tmp_path):
    ds = ic.run(short_forcing(), station_config())
    for k, v in EXPECTED.items():
        assert ds.attrs[k] == v
    ic.write_netcdf(ds, tmp_path / "run.nc")
    with xr.open_dataset(tmp_path / "run.nc") as back:
        assert {k: back.attrs[k] for k in EXPECTED} == EXPECTED
    plain = ic.run(short_forcing(), default_config().replace("output", interval="1D"))
    assert not any(k in plain.attrs for k in EXPECTED)


def test_ensemble_file_carries_the_station(tmp_path):
    from icecolumn.ensemble import run_members_to_file
    from icecolumn.model import Member

    cfg = station_config()
    members = [Member(cfg, short_forcing()), Member(cfg.replace("ocean", heat_flux=5.0), short_forcing())]
    path = run_members_to_file(members, tmp_path / "ens.nc", batch_size=1)
    with xr.open_dataset(path) as back:
        assert {k: back.attrs[k] for k in EXPECTED} == EXPECTED


def test_buoy_budget_file_carries_the_station():
    from icecolumn.buoy_io import budget_dataset

    record = xr.Dataset({"temperature": (("time", "sensor"), np.zeros((2, 2)))},
                        attrs={"source_file": "b.csv", "gaps": ""})
    iface = xr.Dataset({"ice_bottom": ("time", [0.5, 0.5])})
    budget = xr.Dataset({"ocean_heat_flux": ("window", [3.0])}, attrs={"budget_window_s": 864000.0})
    ds = budget_dataset(record, iface, budget, station=station_config().station)
    assert {k: ds.attrs[k] for k in EXPECTED} == EXPECTED and ds.attrs["budget_window_s"] == 864000.0
    assert "station_name" not in budget_dataset(record, iface, budget).attrs
