"""Tests of icecolumn.forcing: the CSV reader, the array constructor, the invented sample."""

from __future__ import annotations

import datetime as dt
import hashlib
import time
import warnings
from pathlib import Path

import numpy as np
import pytest

import icecolumn as ic
from icecolumn.errors import InputError
from icecolumn.forcing import VARIABLES, ForcingWarning, forcing_from_arrays, read_forcing

SAMPLE = Path(__file__).resolve().parent.parent / "forcing_samples" / "station_winter.csv"

GOOD = """\
# Test station (invented), hourly
# second comment
time,air_temperature,wind_dir,ocean_heat_flux
2026-10-01T00:00,-5.0,3.1,2.0
2026-10-01T01:00,-5.5,2.9,2.5
2026-10-01T02:00,-6.25,,3.0
"""


def write(tmp_path: Path, text: str, name: str = "forcing.csv") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def error_of(path: Path, **kwargs) -> str:
    with pytest.raises(InputError) as info:
        read_forcing(path, **kwargs)
    message = str(info.value)
    assert "\n" not in message, message
    assert message.startswith(f"{path}: "), message
    return message


def simple(rows: list[str], header: str = "time,air_temperature") -> str:
    return "\n".join([header, *rows]) + "\n"


# ---------------------------------------------------------------- good files


def test_reads_good_file(tmp_path):
    path = write(tmp_path, GOOD)
    ds = read_forcing(path)
    assert ds["time"].dtype == np.dtype("datetime64[ns]")
    np.testing.assert_array_equal(
        ds["time"].values, np.array(["2026-10-01T00:00", "2026-10-01T01:00", "2026-10-01T02:00"], "datetime64[ns]")
    )
    np.testing.assert_array_equal(ds["air_temperature"].values, [-5.0, -5.5, -6.25])
    np.testing.assert_array_equal(ds["ocean_heat_flux"].values, [2.0, 2.5, 3.0])
    assert ds["air_temperature"].dtype == np.float64
    assert ds["air_temperature"].attrs["units"] == "degC"
    assert ds["ocean_heat_flux"].attrs["units"] == "W m-2"
    assert ds["air_temperature"].attrs["long_name"]
    assert "surface_temperature" not in ds
    # the ignored column may have empty cells, even in the last row: it is not read
    assert "wind_dir" not in ds
    assert ds.attrs["ignored_columns"] == "wind_dir"
    assert ds.attrs["gaps_filled"] == 0 and ds.attrs["longest_gap_filled"] == 0.0
    assert ds.attrs["title"] == "Test station (invented), hourly"
    assert ds.attrs["source_file"] == str(path)


def test_sha256_of_file_bytes(tmp_path):
    path = write(tmp_path, GOOD)
    assert read_forcing(path).attrs["sha256"] == hashlib.sha256(path.read_bytes()).hexdigest()


def test_path_given_as_text(tmp_path):
    path = write(tmp_path, GOOD)
    assert read_forcing(str(path)).attrs["source_file"] == str(path)


def test_no_comment_gives_empty_title_and_crlf_and_blank_lines(tmp_path):
    text = "time,air_temperature\r\n2026-10-01T00:00,-5\r\n\r\n2026-10-01T01:00,-6\r\n"
    ds = read_forcing(write(tmp_path, text))
    assert ds.attrs["title"] == ""
    assert ds.attrs["ignored_columns"] == ""
    np.testing.assert_array_equal(ds["air_temperature"].values, [-5.0, -6.0])


def test_offset_conversion_can_make_a_duplicate(tmp_path):
    # 00:00-01:00 is 01:00 UTC, the same instant as the row before
    rows = ["2026-10-01T00:30Z,-5", "2026-10-01T01:00Z,-6", "2026-10-01T00:00-01:00,-7"]
    path = write(tmp_path, simple(rows))
    assert error_of(path) == f"{path}: line 4: duplicate time 2026-10-01T01:00:00Z (also on line 3)"


def test_offsets_to_utc_strictly_increasing(tmp_path):
    rows = ["2026-10-01T02:00+02:00,-5", "2026-10-01T01:00Z,-6", "2026-10-01T00:00-02:00,-7", "2026-10-01 03:00,-8"]
    ds = read_forcing(write(tmp_path, simple(rows)))
    expected = np.array(
        ["2026-10-01T00:00", "2026-10-01T01:00", "2026-10-01T02:00", "2026-10-01T03:00"], "datetime64[ns]"
    )
    np.testing.assert_array_equal(ds["time"].values, expected)


def test_column_map(tmp_path):
    text = "Date,Tair_C,Tsfc\n2026-10-01T00:00,-5,-7\n2026-10-01T01:00,-6,-8\n"
    path = write(tmp_path, text)
    ds = read_forcing(path, column_map={"time": "Date", "air_temperature": "Tair_C", "surface_temperature": "Tsfc"})
    np.testing.assert_array_equal(ds["air_temperature"].values, [-5.0, -6.0])
    np.testing.assert_array_equal(ds["surface_temperature"].values, [-7.0, -8.0])
    assert ds.attrs["ignored_columns"] == ""


def test_column_map_replaces_canonical_column(tmp_path):
    text = "time,air_temperature,Tair_qc\n2026-10-01T00:00,-5,-4\n2026-10-01T01:00,-6,-5\n"
    ds = read_forcing(write(tmp_path, text), column_map={"air_temperature": "Tair_qc"})
    np.testing.assert_array_equal(ds["air_temperature"].values, [-4.0, -5.0])
    assert ds.attrs["ignored_columns"] == "air_temperature"


def test_quoted_fields(tmp_path):
    text = 'time,air_temperature,note\n2026-10-01T00:00,"-5","a, b"\n2026-10-01T01:00,-6,c\n'
    ds = read_forcing(write(tmp_path, text))
    np.testing.assert_array_equal(ds["air_temperature"].values, [-5.0, -6.0])


# ---------------------------------------------------------------- errors


def test_missing_file(tmp_path):
    assert error_of(tmp_path / "none.csv") == f"{tmp_path / 'none.csv'}: file not found"


def test_empty_file(tmp_path):
    assert error_of(write(tmp_path, "")).endswith(": file is empty")


def test_only_comments(tmp_path):
    assert "no header row" in error_of(write(tmp_path, "# just a comment\n"))


def test_header_only(tmp_path):
    message = error_of(write(tmp_path, "# title\ntime,air_temperature\n"))
    assert "no data rows" in message and "line 2" in message


def test_single_row(tmp_path):
    message = error_of(write(tmp_path, simple(["2026-10-01T00:00,-5"])))
    assert "only 1 data row; at least 2 are needed" in message


def test_no_air_temperature_column_lists_columns(tmp_path):
    message = error_of(write(tmp_path, "# c\ntime,Tair\n2026-10-01T00:00,-5\n2026-10-01T01:00,-5\n"))
    assert "line 2: no 'air_temperature' column; columns found: 'time', 'Tair'" in message


def test_no_time_column(tmp_path):
    message = error_of(write(tmp_path, "date,air_temperature\n2026-10-01T00:00,-5\n2026-10-01T01:00,-5\n"))
    assert "line 1: no 'time' column; columns found: 'date', 'air_temperature'" in message


def test_column_map_to_missing_column(tmp_path):
    path = write(tmp_path, GOOD)
    message = error_of(path, column_map={"air_temperature": "Tair_C"})
    assert "line 3: column_map names column 'Tair_C' for 'air_temperature'" in message
    assert "columns found: 'time', 'air_temperature', 'wind_dir', 'ocean_heat_flux'" in message


def test_column_map_unknown_variable(tmp_path):
    message = error_of(write(tmp_path, GOOD), column_map={"wind": "wind_dir"})
    assert "column_map: unknown variable 'wind'" in message


def test_column_map_same_column_twice(tmp_path):
    message = error_of(write(tmp_path, GOOD), column_map={"surface_temperature": "air_temperature"})
    assert "'air_temperature' is used for both" in message


def test_non_numeric_value_names_physical_line(tmp_path):
    rows = [f"2026-10-01T{h:02d}:00,-5" for h in range(10)]
    rows[5] = "2026-10-01T05:00,abc"
    # 2 comment lines + header: data row k (0-based) is on physical line 4 + k
    text = "# a\n# b\n" + simple(rows)
    path = write(tmp_path, text)
    assert error_of(path) == f"{path}: line 9: column 'air_temperature': 'abc' is not a number"


def test_bad_time_text(tmp_path):
    path = write(tmp_path, simple(["2026-10-01T00:00,-5", "2026-13-01T01:00,-5", "2026-10-01T02:00,-5"]))
    message = error_of(path)
    assert message.startswith(f"{path}: line 3: column 'time': '2026-13-01T01:00'")


def test_garbage_time_text(tmp_path):
    path = write(tmp_path, simple(["2026-10-01T00:00,-5", "01/10/2026 01:00,-5"]))
    assert "line 3: column 'time': '01/10/2026 01:00' is not a time" in error_of(path)


def test_times_not_increasing(tmp_path):
    path = write(tmp_path, simple(["2026-10-01T00:00,-5", "2026-10-01T02:00,-5", "2026-10-01T01:00,-5"]))
    message = error_of(path)
    assert "line 4: time 2026-10-01T01:00:00Z is not after 2026-10-01T02:00:00Z on line 3" in message


def test_duplicate_time(tmp_path):
    path = write(tmp_path, simple(["2026-10-01T00:00,-5", "2026-10-01T01:00,-5", "2026-10-01T03:00+02:00,-5"]))
    message = error_of(path)
    assert "line 4: duplicate time 2026-10-01T01:00:00Z (also on line 3)" in message


def test_empty_cell_short_gap_is_interpolated_with_a_warning(tmp_path):
    # an empty cell was an error before gap filling; a short gap is now filled linearly
    path = write(tmp_path, simple(["2026-10-01T00:00,-5", "2026-10-01T01:00,", "2026-10-01T02:00,-7"]))
    with pytest.warns(ForcingWarning, match="filled 1 gap by linear interpolation"):
        ds = read_forcing(path)
    np.testing.assert_allclose(ds["air_temperature"].values, [-5.0, -6.0, -7.0])
    assert ds.attrs["gaps_filled"] == 1


def test_empty_cell_gap_longer_than_max_gap(tmp_path):
    path = write(tmp_path, simple(["2026-10-01T00:00,-5", "2026-10-01T01:00,", "2026-10-01T02:00,-5"]))
    message = error_of(path, max_gap="1h")
    assert message.startswith(f"{path}: line 3: column 'air_temperature': no value from 2026-10-01T00:00:00Z")
    assert "to 2026-10-01T02:00:00Z (line 4): a gap of 2h, longer than max_gap = 1h" in message


def test_empty_time_cell(tmp_path):
    path = write(tmp_path, simple(["2026-10-01T00:00,-5", " ,-5"]))
    assert error_of(path) == f"{path}: line 3: column 'time' is empty"


def test_wrong_number_of_fields(tmp_path):
    path = write(tmp_path, simple(["2026-10-01T00:00,-5", "2026-10-01T01:00,-5,7"]))
    assert "line 3: expected 2 fields as in the header (line 1), found 3" in error_of(path)


def test_kelvin_hint(tmp_path):
    path = write(tmp_path, simple(["2026-10-01T00:00,268.1", "2026-10-01T01:00,268.0"]))
    message = error_of(path)
    assert message == (
        f"{path}: line 2: column 'air_temperature': 268.1 degC is outside -90..50 degC (is the file in kelvin? "
        "declare the unit in the header: 'air_temperature [K]')"
    )


def test_out_of_range_without_kelvin_hint(tmp_path):
    path = write(tmp_path, simple(["2026-10-01T00:00,-5", "2026-10-01T01:00,-99"]))
    message = error_of(path)
    assert "line 3: column 'air_temperature': -99 degC is outside -90..50 degC" in message
    assert "kelvin" not in message


def test_surface_temperature_range(tmp_path):
    text = "time,air_temperature,surface_temperature\n2026-10-01T00:00,-5,-6\n2026-10-01T01:00,-5,60\n"
    message = error_of(write(tmp_path, text))
    assert "line 3: column 'surface_temperature': 60 degC is outside -90..50 degC" in message


def test_ocean_heat_flux_range(tmp_path):
    text = "time,air_temperature,ocean_heat_flux\n2026-10-01T00:00,-5,2\n2026-10-01T01:00,-5,-60\n"
    message = error_of(write(tmp_path, text))
    assert "line 3: column 'ocean_heat_flux': -60 W m-2 is outside -50..500 W m-2" in message


def test_mapped_column_named_in_message(tmp_path):
    text = "time,T\n2026-10-01T00:00,-5\n2026-10-01T01:00,x\n"
    message = error_of(write(tmp_path, text), column_map={"air_temperature": "T"})
    assert "line 3: column 'T': 'x' is not a number" in message


@pytest.mark.parametrize("bad", ["nan", "inf", "-inf", "NaN", "1e999"])
def test_non_finite(tmp_path, bad):
    path = write(tmp_path, simple(["2026-10-01T00:00,-5", f"2026-10-01T01:00,{bad}"]))
    assert "line 3: column 'air_temperature':" in error_of(path)
    assert "not a finite number" in error_of(path)


def test_not_utf8(tmp_path):
    path = tmp_path / "forcing.csv"
    path.write_bytes(b"time,air_temperature\n2026-10-01T00:00,-5\n2026-10-01T01:00,-5\xff\n")
    assert error_of(path) == f"{path}: line 3: not UTF-8 text"


# ---------------------------------------------------------------- arrays


def test_forcing_from_arrays_matches_reader(tmp_path):
    ds_file = read_forcing(write(tmp_path, GOOD))
    ds = forcing_from_arrays(
        ["2026-10-01T00:00", "2026-10-01T01:00", "2026-10-01T02:00"],
        [-5.0, -5.5, -6.25],
        ocean_heat_flux=[2.0, 2.5, 3.0],
    )
    assert ds.attrs["source_file"] == "<arrays>"
    assert set(ds.attrs) == set(ds_file.attrs)
    np.testing.assert_array_equal(ds["time"].values, ds_file["time"].values)
    for var in ("air_temperature", "ocean_heat_flux"):
        np.testing.assert_array_equal(ds[var].values, ds_file[var].values)
        assert ds[var].attrs == ds_file[var].attrs


def test_forcing_from_arrays_datetime_inputs():
    t64 = np.array(["2026-10-01T00", "2026-10-01T06"], dtype="datetime64[h]")
    ds = forcing_from_arrays(t64, np.array([-10, -12]), surface_temperature=None)
    assert ds["time"].dtype == np.dtype("datetime64[ns]")
    assert "surface_temperature" not in ds
    aware = [dt.datetime(2026, 10, 1, 2, tzinfo=dt.timezone(dt.timedelta(hours=2))),
             dt.datetime(2026, 10, 1, 3, tzinfo=dt.timezone.utc)]
    ds = forcing_from_arrays(aware, [-1.0, -2.0])
    np.testing.assert_array_equal(
        ds["time"].values, np.array(["2026-10-01T00:00", "2026-10-01T03:00"], "datetime64[ns]")
    )


def test_forcing_from_arrays_digest_depends_on_values():
    a = forcing_from_arrays(["2026-10-01T00:00", "2026-10-01T01:00"], [-5.0, -6.0])
    b = forcing_from_arrays(["2026-10-01T00:00", "2026-10-01T01:00"], [-5.0, -6.1])
    assert len(a.attrs["sha256"]) == 64 and a.attrs["sha256"] != b.attrs["sha256"]


@pytest.mark.parametrize(
    "kwargs, fragment",
    [
        ({"time": ["2026-10-01T01:00", "2026-10-01T00:00"], "air_temperature": [-1, -2]},
         "<arrays>: index 1: time 2026-10-01T00:00:00Z is not after"),
        ({"time": ["2026-10-01T00:00", "2026-10-01T01:00"], "air_temperature": [-1, 300.0]},
         "<arrays>: index 1: column 'air_temperature': 300 degC is outside -90..50 degC (is the file in kelvin?)"),
        ({"time": ["2026-10-01T00:00", "2026-10-01T01:00"], "air_temperature": [-1, np.nan]},
         "<arrays>: index 1: column 'air_temperature': nan is not a finite number"),
        ({"time": ["2026-10-01T00:00", "bad"], "air_temperature": [-1, -2]}, "<arrays>: index 1: time: 'bad'"),
        ({"time": ["2026-10-01T00:00"], "air_temperature": [-1]}, "<arrays>: only 1 data row"),
        ({"time": ["2026-10-01T00:00", "2026-10-01T01:00"], "air_temperature": [-1]},
         "<arrays>: air_temperature: expected 2 values"),
        ({"time": ["2026-10-01T00:00", "2026-10-01T01:00"], "air_temperature": [-1, -2], "wind": [1, 2]},
         "<arrays>: unknown variable 'wind'"),
        ({"time": ["2026-10-01T00:00", "2026-10-01T01:00"], "air_temperature": ["a", "b"]},
         "<arrays>: air_temperature: values are not numbers"),
        ({"time": [1.0, 2.0], "air_temperature": [-1, -2]}, "<arrays>: time: expected datetime64"),
    ],
)
def test_forcing_from_arrays_errors(kwargs, fragment):
    with pytest.raises(InputError) as info:
        forcing_from_arrays(**kwargs)
    assert fragment in str(info.value) and "\n" not in str(info.value)


def test_variables_table_consistent():
    assert VARIABLES["air_temperature"]["required"]
    for var, spec in VARIABLES.items():
        assert spec["attrs"]["units"] in {"degC", "W m-2", "m s-1", "%", "1", "m", "kg m-2 s-1"}, var
        lo, hi = spec["range"]
        assert lo < hi


# ---------------------------------------------------------------- the invented sample


def test_sample_winter():
    start = time.perf_counter()
    ds = read_forcing(SAMPLE)
    elapsed = time.perf_counter() - start
    assert elapsed < 1.0  # performance requirement of the reader (our own target)
    assert "INVENTED" in ds.attrs["title"]
    t = ds["time"].values
    # hourly, 2026-10-01T00 .. 2027-05-31T23 UTC (design of the invented sample)
    assert t[0] == np.datetime64("2026-10-01T00:00", "ns")
    assert t[-1] == np.datetime64("2027-05-31T23:00", "ns")
    assert np.all(np.diff(t) == np.timedelta64(1, "h"))
    temp = ds["air_temperature"].values
    # freezing degree days: daily-mean air temperature below 0 degC, summed.
    days = t.astype("datetime64[D]")
    _, index = np.unique(days, return_inverse=True)
    daily = np.bincount(index, weights=temp) / np.bincount(index)
    fdd = np.sum(np.clip(0.0 - daily, 0.0, None))
    # design target of the invented sample, not an outside source
    assert 4500.0 <= fdd <= 5500.0
    # design target of the invented sample, not an outside source
    assert -45.0 <= temp.min() <= -35.0
    # design target of the invented sample, not an outside source: no thaw
    assert temp.max() < 0.0
    # one decimal place, as written by scripts/make_samples.py
    np.testing.assert_allclose(temp, np.round(temp, 1), atol=1e-9)
    assert SAMPLE.stat().st_size < 200_000


def test_packaged_sample_is_identical_to_forcing_samples():
    """icecolumn/samples holds a byte-identical copy of the bundled sample (for installed demos)."""
    from pathlib import Path

    root = Path(__file__).resolve().parent.parent
    a = (root / "forcing_samples" / "station_winter.csv").read_bytes()
    b = (root / "icecolumn" / "samples" / "station_winter.csv").read_bytes()
    assert a == b


# ---------------------------------------------------------------- station variables and gaps

HOURS = [f"2026-10-01T{h:02d}:00Z" for h in range(24)]


def table(header: str, cells: list[str]) -> str:
    """Hourly rows from 2026-10-01T00Z with the given cells after the time."""
    return simple([f"{t},{c}" for t, c in zip(HOURS, cells)], header)


def test_station_variables_read_in_their_units(tmp_path):
    header = ("time,air_temperature,wind_speed,relative_humidity,shortwave_down,longwave_down,"
              "cloud_fraction,snow_thickness,snowfall,ocean_heat_flux,surface_temperature")
    cells = ["-10,5.5,85,0,210,0.8,0.12,1e-5,3,-12", "-11,6.0,90,12,220,0.4,0.13,0,4,-13"]
    ds = read_forcing(write(tmp_path, table(header, cells)))
    np.testing.assert_array_equal(ds["wind_speed"].values, [5.5, 6.0])
    np.testing.assert_array_equal(ds["relative_humidity"].values, [85.0, 90.0])
    np.testing.assert_array_equal(ds["cloud_fraction"].values, [0.8, 0.4])
    np.testing.assert_array_equal(ds["snowfall"].values, [1e-5, 0.0])
    assert ds["relative_humidity"].attrs["units"] == "%"
    assert "liquid water" in ds["relative_humidity"].attrs["long_name"]
    assert ds["cloud_fraction"].attrs["units"] == "1"
    assert ds["snow_thickness"].attrs["units"] == "m"
    assert ds["snowfall"].attrs["units"] == "kg m-2 s-1"
    assert ds.attrs["ignored_columns"] == ""


def test_negative_wind_names_the_line(tmp_path):
    path = write(tmp_path, table("time,air_temperature,wind_speed", ["-5,3", "-5,-0.5", "-5,2"]))
    assert error_of(path) == f"{path}: line 3: column 'wind_speed': -0.5 m s-1 is outside 0..120 m s-1"


@pytest.mark.parametrize("var", ["shortwave_down", "longwave_down", "snow_thickness", "snowfall"])
def test_negative_non_negative_variables(tmp_path, var):
    path = write(tmp_path, table(f"time,air_temperature,{var}", ["-5,0", "-5,0", "-5,-1"]))
    assert error_of(path).startswith(f"{path}: line 4: column '{var}': -1 ")


def test_relative_humidity_103_clipped_with_warning(tmp_path):
    path = write(tmp_path, table("time,air_temperature,relative_humidity", ["-5,99", "-5,103", "-5,104.5"]))
    with pytest.warns(ForcingWarning) as record:
        ds = read_forcing(path)
    np.testing.assert_array_equal(ds["relative_humidity"].values, [99.0, 100.0, 100.0])
    message = str(record[0].message)
    assert "2 values between 100 and 105 % clipped to 100 % (first on line 3: 103 %)" in message


def test_relative_humidity_106_is_an_error(tmp_path):
    path = write(tmp_path, table("time,air_temperature,relative_humidity", ["-5,99", "-5,106"]))
    message = error_of(path)
    assert message.startswith(f"{path}: line 3: column 'relative_humidity': 106 % is outside 0..105 %")


def test_relative_humidity_negative_is_an_error(tmp_path):
    path = write(tmp_path, table("time,air_temperature,relative_humidity", ["-5,-1", "-5,50"]))
    assert error_of(path).startswith(f"{path}: line 2: column 'relative_humidity': -1 % is outside")


def test_cloud_fraction_above_one_is_an_error(tmp_path):
    path = write(tmp_path, table("time,air_temperature,cloud_fraction", ["-5,0.5", "-5,0.9", "-5,1.2"]))
    assert error_of(path) == f"{path}: line 4: column 'cloud_fraction': 1.2 is outside 0..1"


def test_gap_within_max_gap_is_linear_with_count(tmp_path):
    # air: 3 empty cells between -4 (00Z) and -8 (04Z); wind: 1 empty cell between 2 and 4
    cells = ["-4,2", ",", ",4", ",5", "-8,6", "-9,7"]
    path = write(tmp_path, table("time,air_temperature,wind_speed", cells))
    with pytest.warns(ForcingWarning, match=r"filled 2 gaps by linear interpolation in time \(longest 4h") as rec:
        ds = read_forcing(path)
    assert len([w for w in rec if issubclass(w.category, ForcingWarning)]) == 1
    np.testing.assert_allclose(ds["air_temperature"].values, [-4, -5, -6, -7, -8, -9])
    np.testing.assert_allclose(ds["wind_speed"].values, [2, 3, 4, 5, 6, 7])
    assert ds.attrs["gaps_filled"] == 2
    assert ds.attrs["longest_gap_filled"] == 4 * 3600.0


def test_gap_longer_than_max_gap_names_column_and_period(tmp_path):
    cells = ["-4,2"] + [",3"] * 7 + ["-8,6"]
    path = write(tmp_path, table("time,air_temperature,wind_speed", cells))
    assert error_of(path) == (
        f"{path}: line 3: column 'air_temperature': no value from 2026-10-01T00:00:00Z (line 2) to "
        f"2026-10-01T08:00:00Z (line 10): a gap of 8h, longer than max_gap = 6h"
    )
    with pytest.warns(ForcingWarning):
        ds = read_forcing(path, max_gap="8h")
    np.testing.assert_allclose(ds["air_temperature"].values, np.linspace(-4, -8, 9))
    with pytest.warns(ForcingWarning):
        assert read_forcing(path, max_gap=8 * 3600).attrs["gaps_filled"] == 1


def test_missing_rows_within_max_gap_warn_and_keep_rows(tmp_path):
    rows = [f"{t},-5" for t in HOURS[:4]] + [f"{t},-5" for t in HOURS[7:12]]  # 03Z -> 07Z: 4 h step
    path = write(tmp_path, simple(rows))
    with pytest.warns(ForcingWarning, match="filled 1 gap .*longest 4h, 2026-10-01T03:00:00Z to 2026-10-01T07:00:00Z"):
        ds = read_forcing(path)
    assert ds.sizes["time"] == 9 and ds.attrs["gaps_filled"] == 1


def test_missing_rows_longer_than_max_gap(tmp_path):
    rows = [f"{t},-5" for t in HOURS[:4]] + [f"{t},-5" for t in HOURS[12:16]]  # 03Z -> 12Z
    path = write(tmp_path, simple(rows))
    message = error_of(path)
    assert message == (
        f"{path}: line 5: no rows from 2026-10-01T03:00:00Z to 2026-10-01T12:00:00Z (line 6) in any column: "
        "a gap of 9h, longer than max_gap = 6h (median step 1h)"
    )


def test_max_gap_zero_fills_nothing(tmp_path):
    path = write(tmp_path, table("time,air_temperature", ["-5", "", "-5"]))
    assert "longer than max_gap = 0s" in error_of(path, max_gap=0)


@pytest.mark.parametrize("bad", ["6 parsecs", -1.0, float("nan"), True, None])
def test_bad_max_gap(tmp_path, bad):
    path = write(tmp_path, GOOD)
    assert "max_gap" in error_of(path, max_gap=bad)


@pytest.mark.parametrize("cells, where", [([",1", "-5,2", "-5,3"], "start"), (["-5,1", "-5,2", ",3"], "end")])
def test_gap_at_the_edge_cannot_be_interpolated(tmp_path, cells, where):
    path = write(tmp_path, table("time,air_temperature,wind_speed", cells))
    message = error_of(path)
    assert "column 'air_temperature' is empty" in message and where in message
    assert "a gap can only be filled between two values" in message


def test_optional_column_entirely_empty_is_left_out(tmp_path):
    path = write(tmp_path, table("time,air_temperature,wind_speed", ["-5,", "-6,", "-7,"]))
    with pytest.warns(ForcingWarning, match="column 'wind_speed' has no values; left out"):
        ds = read_forcing(path)
    assert "wind_speed" not in ds


def test_nan_text_is_not_a_gap(tmp_path):
    path = write(tmp_path, table("time,air_temperature,wind_speed", ["-5,1", "-5,nan", "-5,3"]))
    assert "line 3: column 'wind_speed': nan is not a finite number" in error_of(path)


def test_year_outside_datetime64_range(tmp_path):
    path = write(tmp_path, simple(["2026-10-01T00:00,-5", "9999-10-01T01:00,-5"]))
    assert "line 3: column 'time': '9999-10-01T01:00': year outside the supported" in error_of(path)


def test_forcing_from_arrays_accepts_station_variables():
    ds = forcing_from_arrays(["2026-10-01T00:00", "2026-10-01T01:00"], [-5.0, -6.0], wind_speed=[1.0, 2.0])
    np.testing.assert_array_equal(ds["wind_speed"].values, [1.0, 2.0])
    with pytest.raises(InputError, match=r"<arrays>: index 1: column 'wind_speed': -2 m s-1 is outside"):
        forcing_from_arrays(["2026-10-01T00:00", "2026-10-01T01:00"], [-5.0, -6.0], wind_speed=[1.0, -2.0])
    with pytest.raises(InputError, match="nan is not a finite number"):  # no gap filling for arrays
        forcing_from_arrays(["2026-10-01T00:00", "2026-10-01T01:00"], [-5.0, np.nan])


def test_column_mapping_from_the_configuration(tmp_path):
    from icecolumn.cli import main

    csv = tmp_path / "station.csv"
    csv.write_text("time,Tair_C,WS\n2026-11-01T00:00Z,-10.0,3.0\n2026-11-01T01:00Z,-11.0,4.0\n"
                   "2026-11-01T02:00Z,-12.0,5.0\n")  # invented
    cfg = tmp_path / "c.toml"
    cfg.write_text('[forcing]\ncolumns = "air_temperature = Tair_C,wind_speed=WS"\n[output]\ninterval = "1h"\n')
    loaded = ic.load_config(cfg)
    assert loaded.forcing.columns == "air_temperature=Tair_C, wind_speed=WS"
    assert loaded.forcing.column_map() == {"air_temperature": "Tair_C", "wind_speed": "WS"}
    out = tmp_path / "r.nc"
    assert main(["run", str(csv), "-c", str(cfg), "-o", str(out)]) == 0
    import xarray as xr

    with xr.open_dataset(out) as ds:
        assert ds.sizes["time"] == 3
    # the command line adds to and overrides the configuration's mapping
    assert main(["check", str(csv), "-c", str(cfg), "--column", "wind_speed=WS"]) == 0
    # a malformed mapping in the configuration is one clear error naming the key
    bad = tmp_path / "bad.toml"
    bad.write_text('[forcing]\ncolumns = "air_temperature"\n')
    with pytest.raises(InputError, match=r"\[forcing\] columns = 'air_temperature': 'air_temperature' is not of"):
        ic.load_config(bad)
    # a mapping to a column the file lacks: one line, exit 2, no output
    wrong = tmp_path / "wrong.toml"
    wrong.write_text('[forcing]\ncolumns = "air_temperature=T_air"\n')
    out2 = tmp_path / "r2.nc"
    assert main(["run", str(csv), "-c", str(wrong), "-o", str(out2)]) == 2 and not out2.exists()


# ---------------------------------------------------------------- units declared in the header


def test_header_units_are_converted_like_netcdf(tmp_path):
    header = ("time,air_temperature [K],relative_humidity [1],snowfall [mm h-1],snow_thickness [cm],"
              "cloud_fraction [%],wind_speed")
    cells = ["253.15,0.85,3.6,12,50,4", "263.15,0.9,0,13.5,100,5"]
    ds = read_forcing(write(tmp_path, table(header, cells)))
    # 0 degC = 273.15 K (common practice, no source); mm h-1 of water = kg m-2 per 3600 s
    np.testing.assert_allclose(ds["air_temperature"].values, [-20.0, -10.0], atol=1e-12)
    np.testing.assert_allclose(ds["relative_humidity"].values, [85.0, 90.0])
    np.testing.assert_allclose(ds["snowfall"].values, [1e-3, 0.0])
    np.testing.assert_allclose(ds["snow_thickness"].values, [0.12, 0.135])
    np.testing.assert_allclose(ds["cloud_fraction"].values, [0.5, 1.0])
    np.testing.assert_array_equal(ds["wind_speed"].values, [4.0, 5.0])
    assert ds["air_temperature"].attrs["units"] == "degC"
    assert "air_temperature=air_temperature [K]" in ds.attrs["source_columns"]


def test_header_units_use_the_netcdf_table():
    from icecolumn.forcing import NETCDF_UNITS, UNITS, unit_conversion

    assert NETCDF_UNITS is UNITS  # one conversion table for both readers
    assert unit_conversion("air_temperature", "  K ") == (1.0, -273.15)
    # degF -> degC: (F - 32) * 5/9 (common practice, no source): 212 degF is 100 degC, 32 degF is 0 degC
    scale, offset = unit_conversion("air_temperature", "degF")
    assert 212.0 * scale + offset == pytest.approx(100.0) and 32.0 * scale + offset == pytest.approx(0.0, abs=1e-12)
    assert unit_conversion("air_temperature", "furlongs") is None


def test_fahrenheit_header_is_converted(tmp_path):
    ds = read_forcing(write(tmp_path, table("time,air_temperature [degF]", ["-4", "14"])))
    np.testing.assert_allclose(ds["air_temperature"].values, [-20.0, -10.0])


def test_unknown_header_unit_is_one_line(tmp_path):
    path = write(tmp_path, table("time,air_temperature [F]", ["25", "26"]))
    assert error_of(path) == (f"{path}: line 1: column 'air_temperature [F]': unit [F] is not known for "
                              "air_temperature; declare one of [K], [degC], [degF] (no unit: degC)")


def test_column_map_to_a_column_with_a_unit(tmp_path):
    path = write(tmp_path, table("time,Tair [K]", ["253.15", "263.15"]))
    for theirs in ("Tair", "Tair [K]"):
        ds = read_forcing(path, column_map={"air_temperature": theirs})
        np.testing.assert_allclose(ds["air_temperature"].values, [-20.0, -10.0], atol=1e-12)


def test_same_column_with_and_without_unit(tmp_path):
    path = write(tmp_path, table("time,air_temperature,air_temperature [K]", ["-5,268", "-5,268"]))
    assert "line 1: column 'air_temperature' appears twice" in error_of(path)


def test_relative_humidity_fraction_without_unit_is_flagged(tmp_path):
    path = write(tmp_path, table("time,air_temperature,relative_humidity", ["-5,0.85", "-5,", "-5,0.97"]))
    message = error_of(path)
    assert message.startswith(f"{path}: line 1: column 'relative_humidity': every value is between 0 and 1 "
                              "(largest 0.97)")
    assert "'relative_humidity [1]'" in message
    ds = read_forcing(write(tmp_path, table("time,air_temperature,relative_humidity [%]", ["-5,0.85", "-5,0.97"]),
                            "percent.csv"))  # declared: taken as it is
    np.testing.assert_array_equal(ds["relative_humidity"].values, [0.85, 0.97])


def test_fahrenheit_looking_temperature_is_warned(tmp_path):
    path = write(tmp_path, table("time,air_temperature", ["25", "28", "19", "30"]))
    with pytest.warns(ForcingWarning) as record:
        read_forcing(path)
    message = str(record[0].message)
    assert message.startswith(f"{path}: column 'air_temperature': 75 % of the values are above +20 degC")
    assert "Fahrenheit" in message and "'air_temperature [degF]'" in message
    with warnings.catch_warnings():
        warnings.simplefilter("error", ForcingWarning)
        read_forcing(write(tmp_path, table("time,air_temperature [degC]", ["25", "28", "19", "30"]), "c.csv"))
        read_forcing(write(tmp_path, table("time,air_temperature", ["-5", "28", "19", "-30"]), "cold.csv"))


def test_fahrenheit_out_of_range_gets_a_hint(tmp_path):
    path = write(tmp_path, table("time,air_temperature", ["25", "61"]))
    assert error_of(path) == (f"{path}: line 3: column 'air_temperature': 61 degC is outside -90..50 degC (is the "
                              "file in Fahrenheit? declare the unit in the header: 'air_temperature [degF]')")


@pytest.mark.parametrize("text, fragment", [
    ("time;air_temperature\n2026-10-01T00:00;-5,5\n", "line 1: the header has one column 'time;air_temperature' "
                                                         "(fields must be separated by commas; this line seems to use "
                                                         "semicolons)"),
    ("time\tair_temperature\n2026-10-01T00:00\t-5.5\n", "seems to use tabs"),
    ("time,air_temperature\n2026-10-01T00:00,-5,5\n2026-10-01T01:00,-6,0\n",
     "line 2: expected 2 fields as in the header (line 1), found 3 (decimal commas? write numbers with a decimal "
     "point"),
    ('time,air_temperature\n2026-10-01T00:00,"-5,5"\n2026-10-01T01:00,"-6,0"\n',
     "line 2: column 'air_temperature': '-5,5' is not a number (a decimal comma? write numbers with a decimal point, "
     "e.g. -5.5)"),
])
def test_separator_and_decimal_comma_hints(tmp_path, text, fragment):
    assert fragment in error_of(write(tmp_path, text))


# ---------------------------------------------------------------- repeating on the calendar


def _hourly_year(start: str, days: int):
    t = np.datetime64(start, "ns") + np.arange(days * 24) * np.timedelta64(1, "h")
    doy = (t - t[0]) / np.timedelta64(1, "D")
    return forcing_from_arrays(t, -10.0 - 10.0 * np.sin(2 * np.pi * doy / days) + 0.01 * (np.arange(t.size) % 24))


def test_repeat_keeps_the_calendar_and_adds_a_leap_day():
    from icecolumn.forcing import repeat_forcing

    f = _hourly_year("2026-09-15T00:00", 365)  # 15 Sep 2026 .. 14 Sep 2027: no 29 February
    r = repeat_forcing(f, 3)
    t = r["time"].values
    assert t[0] == np.datetime64("2026-09-15T00:00") and t[-1] == np.datetime64("2029-09-14T23:00")
    assert np.all(np.diff(t) == np.timedelta64(1, "h"))  # no gap, no overlap
    a = r["air_temperature"]
    for year in (2028, 2029):  # every repetition on the same calendar dates
        for when in ("01-01T00:00", "03-01T05:00", "09-14T23:00", "02-28T12:00"):
            assert float(a.sel(time=f"{year}-{when}")) == float(a.sel(time=f"2027-{when}"))
    # 2028 is a leap year (Gregorian rule, common practice, no source): its 29 February is a copy of 28 February
    leap = a.sel(time=slice("2028-02-29T00:00", "2028-02-29T23:00")).values
    np.testing.assert_array_equal(leap, a.sel(time=slice("2027-02-28T00:00", "2027-02-28T23:00")).values)
    assert t.size == 3 * 365 * 24 + 24
    assert r.attrs["repeat_mode"].startswith("calendar: each repetition 1 calendar year after the one before")
    assert "24 rows added as 29 February" in r.attrs["repeat_mode"]


def test_repeat_leaves_out_29_february_in_a_common_year():
    from icecolumn.forcing import repeat_forcing

    f = _hourly_year("2027-09-15T00:00", 366)  # 15 Sep 2027 .. 14 Sep 2028 holds 29 Feb 2028
    r = repeat_forcing(f, 2)
    t = r["time"].values
    assert t[-1] == np.datetime64("2029-09-14T23:00") and np.all(np.diff(t) == np.timedelta64(1, "h"))
    in_feb_2029 = t.astype("datetime64[M]") == np.datetime64("2029-02", "M")
    assert t[in_feb_2029][-1] == np.datetime64("2029-02-28T23:00")  # 2029 has no 29 February
    assert float(r["air_temperature"].sel(time="2029-03-01T00:00")) == float(
        f["air_temperature"].sel(time="2028-03-01T00:00"))
    assert "24 rows of 29 February left out" in r.attrs["repeat_mode"]


def test_repeat_of_a_part_year_is_end_to_end_with_a_warning():
    from icecolumn.forcing import repeat_forcing

    t = np.datetime64("2026-11-01T00:00", "ns") + np.arange(48) * np.timedelta64(1, "h")
    f = forcing_from_arrays(t, np.full(t.size, -15.0))
    with pytest.warns(ForcingWarning, match="does not cover whole calendar years"):
        r = repeat_forcing(f, 3)
    assert r["time"].values[-1] - r["time"].values[0] == np.timedelta64(3 * 48 - 1, "h")
    assert r.attrs["repeat_mode"].startswith("end to end: period 2 days")
    with warnings.catch_warnings():
        warnings.simplefilter("error", ForcingWarning)
        assert repeat_forcing(f, 1).attrs["repeated"] == 1
