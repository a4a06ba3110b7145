"""Tests of ``icecolumn check FORCING``."""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import xarray as xr
from typer.testing import CliRunner

from icecolumn.cli import app
from icecolumn.growth_laws import freezing_degree_days
from icecolumn.forcing import read_forcing

SAMPLE = Path(__file__).resolve().parent.parent / "forcing_samples" / "station_winter.csv"
runner = CliRunner()


def invoke(*args):
    return runner.invoke(app, [str(a) for a in args])


def one_line_error(result, *fragments) -> str:
    assert result.exit_code == 2, (result.stdout, result.stderr)
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("icecolumn: error: "), result.stderr
    assert "Traceback" not in result.output
    for fragment in fragments:
        assert fragment in lines[0], lines[0]
    return lines[0]


def test_check_sample_prints_period_step_and_fdd():
    result = invoke("check", SAMPLE)
    assert result.exit_code == 0, result.output
    out = result.stdout
    # period and hourly step of the invented sample (its design, forcing_samples/README.md)
    assert "period:      2026-10-01T00:00:00Z to 2027-05-31T23:00:00Z (242.96 days, 5832 times)" in out
    assert "time step:   median 1h, min 1h, max 1h" in out
    assert re.search(r"^  air_temperature\s+degC\s+-?\d", out, re.M)
    assert "gaps filled: 0" in out
    m = re.search(r"freezing degree days \(base 0 degC\): ([0-9.]+) K day", out)
    assert m is not None, out
    ds = read_forcing(SAMPLE)
    _, fdd = freezing_degree_days(ds["time"].values, ds["air_temperature"].values)
    assert float(m.group(1)) == round(float(fdd[-1]), 1)
    # design target of the invented sample, not an outside source
    assert 4500.0 <= float(m.group(1)) <= 5500.0
    assert "warning:" not in out


def test_check_prints_gap_warning(tmp_path):
    path = tmp_path / "f.csv"
    path.write_text("time,air_temperature,wind_speed\n2026-10-01T00:00,-5,1\n2026-10-01T01:00,,2\n"
                    "2026-10-01T02:00,-7,3\n2026-10-01T03:00,-7,3\n")
    result = invoke("check", path)
    assert result.exit_code == 0, result.output
    assert "gaps filled: 1 (longest 2h)" in result.stdout
    assert re.search(r"^warning: .*filled 1 gap by linear interpolation", result.stdout, re.M)
    assert re.search(r"^  wind_speed\s+m s-1\s+1\s+2.25\s+3$", result.stdout, re.M)


def test_check_max_gap_option_and_config(tmp_path):
    path = tmp_path / "f.csv"
    path.write_text("time,air_temperature\n2026-10-01T00:00,-5\n2026-10-01T01:00,\n2026-10-01T02:00,-7\n")
    one_line_error(invoke("check", path, "--max-gap", "1h"), "a gap of 2h, longer than max_gap = 1h")
    cfg = tmp_path / "c.toml"
    cfg.write_text("[forcing]\nmax_gap = '1h'\n")
    one_line_error(invoke("check", path, "-c", cfg), "longer than max_gap = 1h")
    one_line_error(invoke("check", path, "--max-gap", "soon"), "max_gap")


def test_check_column_option(tmp_path):
    path = tmp_path / "f.csv"
    path.write_text("Date,T\n2026-10-01T00:00,-5\n2026-10-01T01:00,-6\n")
    result = invoke("check", path, "--column", "time=Date", "--column", "air_temperature=T")
    assert result.exit_code == 0, result.output
    assert "read from:   time=Date,air_temperature=T" in result.stdout
    one_line_error(invoke("check", path), "no 'time' column")


def test_check_bad_file_one_line(tmp_path):
    path = tmp_path / "bad.csv"
    path.write_text("time,air_temperature,cloud_fraction\n2026-10-01T00:00,-5,0.5\n2026-10-01T01:00,-5,1.2\n")
    one_line_error(invoke("check", path), f"{path}: line 3: column 'cloud_fraction': 1.2 is outside 0..1")
    one_line_error(invoke("check", tmp_path / "missing.csv"), "file not found")


def test_check_netcdf(tmp_path):
    times = np.array("2026-10-01", dtype="datetime64[ns]") + np.arange(48) * np.timedelta64(1, "h")
    ds = xr.Dataset({"ta": ("time", np.full(48, 263.15), {"standard_name": "air_temperature", "units": "K"})},
                    coords={"time": times})
    path = tmp_path / "f.nc"
    ds.to_netcdf(path)
    result = invoke("check", path)
    assert result.exit_code == 0, result.output
    # 47 covered hours at -10 degC: 10 K * 47 h / 24 h = 19.58 K day (definition of freezing degree
    # days, common practice, no source; partial last day counted by its covered fraction)
    assert "freezing degree days (base 0 degC): 19.6 K day" in result.stdout
    assert "period:      2026-10-01T00:00:00Z to 2026-10-02T23:00:00Z (1.96 days, 48 times)" in result.stdout
