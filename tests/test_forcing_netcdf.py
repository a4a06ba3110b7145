"""Tests of the CF NetCDF forcing reader (files written by the tests themselves)."""

from __future__ import annotations

import hashlib
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

from icecolumn.errors import InputError
from icecolumn.forcing import CF_STANDARD_NAMES, NETCDF_UNITS, VARIABLES, ForcingWarning, read_forcing

TIMES = np.array("2026-10-01T00:00", dtype="datetime64[ns]") + np.arange(6) * np.timedelta64(1, "h")
TAIR_K = np.array([268.15, 267.65, 266.0, 265.15, 264.9, 263.15])


def write_nc(path: Path, variables: dict, *, time=TIMES, fmt: str = "NETCDF4", attrs=None) -> Path:
    """Write a Dataset: ``variables`` maps file name -> (values, attrs)."""
    ds = xr.Dataset({k: ("time", np.asarray(v, dtype=float), a) for k, (v, a) in variables.items()},
                    coords={"time": ("time", time, {"standard_name": "time"})}, attrs=attrs or {})
    ds.to_netcdf(path, format=fmt)
    return path


def air(units="K", values=TAIR_K, name="standard_name", std="air_temperature"):
    return values, {name: std, "units": units}


def error_of(path: Path, **kwargs) -> str:
    with pytest.raises(InputError) as info:
        read_forcing(path, **kwargs)
    message = str(info.value)
    assert "\n" not in message and message.startswith(f"{path}: "), message
    return message


def test_kelvin_read_back_in_degc_exactly(tmp_path):
    path = write_nc(tmp_path / "f.nc", {"ta": air()}, attrs={"title": "test station"})
    ds = read_forcing(path)
    # T[degC] = T[K] - 273.15 (definition of the Celsius scale, common practice, no source)
    np.testing.assert_array_equal(ds["air_temperature"].values, TAIR_K - 273.15)
    np.testing.assert_array_equal(ds["time"].values, TIMES)
    assert ds["air_temperature"].attrs["units"] == "degC"
    assert ds.attrs["source_file"] == str(path)
    assert ds.attrs["sha256"] == hashlib.sha256(path.read_bytes()).hexdigest()
    assert ds.attrs["title"] == "test station"
    assert ds.attrs["source_columns"] == "time=time,air_temperature=ta"


def test_same_layout_as_csv_reader(tmp_path):
    csv = tmp_path / "f.csv"
    csv.write_text("time,air_temperature\n" + "".join(
        f"{np.datetime_as_string(t, unit='m')}Z,{float(v) - 273.15!r}\n" for t, v in zip(TIMES, TAIR_K)))
    a = read_forcing(csv)
    b = read_forcing(write_nc(tmp_path / "f.nc", {"ta": air()}))
    assert set(a.attrs) == set(b.attrs)
    assert a["air_temperature"].attrs == b["air_temperature"].attrs
    assert a["time"].attrs == b["time"].attrs and a["time"].dtype == b["time"].dtype
    np.testing.assert_allclose(a["air_temperature"].values, b["air_temperature"].values, rtol=0, atol=1e-12)


def test_netcdf3_signature_without_suffix(tmp_path):
    path = write_nc(tmp_path / "forcing.data", {"ta": air("degC", -TAIR_K / 100)}, fmt="NETCDF3_CLASSIC")
    np.testing.assert_array_equal(read_forcing(path)["air_temperature"].values, -TAIR_K / 100)


def test_all_variables_and_unit_conversions(tmp_path):
    n = TIMES.size
    variables = {
        "ta": air("Celsius", np.full(n, -10.0)),
        "ts": (np.full(n, 260.15), {"standard_name": "sea_ice_surface_temperature", "units": "K"}),
        "ws": (np.full(n, 4.0), {"standard_name": "wind_speed", "units": "m/s"}),
        "rh": (np.full(n, 0.9), {"standard_name": "relative_humidity", "units": "1"}),
        "sw": (np.full(n, 5.0), {"standard_name": "surface_downwelling_shortwave_flux_in_air", "units": "W m-2"}),
        "lw": (np.full(n, 200.0), {"standard_name": "surface_downwelling_longwave_flux_in_air", "units": "W/m2"}),
        "cc": (np.full(n, 75.0), {"standard_name": "cloud_area_fraction", "units": "%"}),
        "sd": (np.full(n, 12.0), {"standard_name": "surface_snow_thickness", "units": "cm"}),
        "sf": (np.full(n, 0.36), {"standard_name": "snowfall_flux", "units": "mm h-1"}),
        "fw": (np.full(n, 3.0), {"standard_name": "upward_sea_ice_basal_heat_flux", "units": "W m-2"}),
        "other": (np.zeros(n), {"units": "1"}),
    }
    ds = read_forcing(write_nc(tmp_path / "f.nc", variables))
    expected = {"air_temperature": -10.0, "surface_temperature": -13.0, "wind_speed": 4.0,
                "relative_humidity": 90.0, "shortwave_down": 5.0, "longwave_down": 200.0,
                "cloud_fraction": 0.75, "snow_thickness": 0.12, "snowfall": 1e-4, "ocean_heat_flux": 3.0}
    for var, value in expected.items():
        np.testing.assert_allclose(ds[var].values, value, rtol=1e-12, err_msg=var)
        assert ds[var].attrs["units"] == VARIABLES[var]["attrs"]["units"]
    assert ds.attrs["ignored_columns"] == "other"


def test_missing_standard_name_is_named(tmp_path):
    path = write_nc(tmp_path / "f.nc", {"ta": air(std="temperature")})
    message = error_of(path)
    assert "no variable with standard_name 'air_temperature' for air_temperature" in message
    assert "variables found: 'ta', 'time'" in message


def test_wrong_units_names_variable_and_units(tmp_path):
    path = write_nc(tmp_path / "f.nc", {"ta": air("furlongs")})
    message = error_of(path)
    assert "variable 'ta' (air_temperature): units 'furlongs' are not known for air_temperature" in message
    assert "'K'" in message


def test_missing_units_attribute(tmp_path):
    path = write_nc(tmp_path / "f.nc", {"ta": (TAIR_K, {"standard_name": "air_temperature"})})
    assert "variable 'ta' (air_temperature) has no units attribute" in error_of(path)


def test_column_map_for_netcdf(tmp_path):
    path = write_nc(tmp_path / "f.nc", {"t2m": (TAIR_K, {"units": "K"}),
                                        "wind": (np.arange(6.0), {"units": "m s-1"})})
    assert "no variable with standard_name 'air_temperature'" in error_of(path)
    ds = read_forcing(path, column_map={"air_temperature": "t2m", "wind_speed": "wind"})
    np.testing.assert_array_equal(ds["air_temperature"].values, TAIR_K - 273.15)
    np.testing.assert_array_equal(ds["wind_speed"].values, np.arange(6.0))
    assert "column_map names variable 'nope'" in error_of(path, column_map={"air_temperature": "nope"})
    assert "unknown variable 'wind'" in error_of(path, column_map={"wind": "wind"})


def test_two_candidates_ask_for_a_column_map(tmp_path):
    path = write_nc(tmp_path / "f.nc", {"ta": air(), "ta2": air()})
    message = error_of(path)
    assert "'ta', 'ta2' all have standard_name 'air_temperature'" in message and "column_map" in message


def test_out_of_range_after_conversion_names_variable(tmp_path):
    path = write_nc(tmp_path / "f.nc", {"ta": air("degC", TAIR_K)})  # kelvin values labelled degC
    message = error_of(path)
    assert "time index 0: variable 'ta' (air_temperature): 268.15 degC is outside -90..50 degC" in message
    assert "kelvin" in message


def test_fill_values_are_gaps(tmp_path):
    values = TAIR_K.copy()
    values[2] = np.nan  # written as the _FillValue
    path = write_nc(tmp_path / "f.nc", {"ta": air(values=values)})
    with pytest.warns(ForcingWarning, match="filled 1 gap"):
        ds = read_forcing(path)
    np.testing.assert_allclose(ds["air_temperature"].values[2], (TAIR_K[1] + TAIR_K[3]) / 2 - 273.15)
    assert "longer than max_gap = 1h" in error_of(path, max_gap="1h")


def test_time_must_be_one_dimensional(tmp_path):
    ds = xr.Dataset({"ta": (("x", "y"), np.full((2, 3), 260.0), {"standard_name": "air_temperature", "units": "K"}),
                     "time": (("x", "y"), np.zeros((2, 3)), {"standard_name": "time",
                                                            "units": "hours since 2026-10-01"})})
    path = tmp_path / "f.nc"
    ds.to_netcdf(path)
    assert "time variable 'time' must have one dimension" in error_of(path)


def test_extra_dimension_of_length_one_is_squeezed(tmp_path):
    ds = xr.Dataset({"ta": (("time", "station"), TAIR_K[:, None], {"standard_name": "air_temperature",
                                                                  "units": "K"})},
                    coords={"time": TIMES})
    path = tmp_path / "f.nc"
    ds.to_netcdf(path)
    np.testing.assert_array_equal(read_forcing(path)["air_temperature"].values, TAIR_K - 273.15)


def test_duplicate_netcdf_times(tmp_path):
    times = TIMES.copy()
    times[3] = times[2]
    path = write_nc(tmp_path / "f.nc", {"ta": air()}, time=times)
    assert "time index 3: duplicate time 2026-10-01T02:00:00Z (also on time index 2)" in error_of(path)


def test_not_a_netcdf_file(tmp_path):
    path = tmp_path / "f.nc"
    path.write_text("time,air_temperature\n")
    assert "not a readable NetCDF file" in error_of(path)


def test_tables_cover_every_variable():
    assert set(CF_STANDARD_NAMES) == {"time", *VARIABLES}
    assert set(NETCDF_UNITS) == set(VARIABLES)
    assert "K" in NETCDF_UNITS["air_temperature"] and "furlongs" not in NETCDF_UNITS["air_temperature"]
