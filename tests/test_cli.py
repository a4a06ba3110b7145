"""Tests of the ``icecolumn`` command-line interface."""

from __future__ import annotations

import csv
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import xarray as xr
from typer.testing import CliRunner

import icecolumn
from icecolumn.cli import app

REPO = Path(__file__).resolve().parent.parent
FAST_CONFIG = '[output]\ninterval = "1D"\n\n[grid]\nlayers = 10\n'
LAW_NAMES = ("stefan", "lebedev", "anderson", "zubov")

runner = CliRunner()


def write_forcing(path: Path, days: int = 10, temperature: float = -20.0, start: str = "2027-01-01T00:00") -> Path:
    times = np.datetime64(start) + np.arange(days * 24 + 1) * np.timedelta64(1, "h")
    lines = ["time,air_temperature"] + [f"{t}Z,{temperature:.2f}" for t in times]
    path.write_text("\n".join(lines) + "\n")
    return path


@pytest.fixture
def folder(tmp_path, monkeypatch):
    """A clean working folder holding a forcing file and a fast configuration."""
    monkeypatch.chdir(tmp_path)
    write_forcing(tmp_path / "forcing.csv")
    (tmp_path / "fast.toml").write_text(FAST_CONFIG)
    return tmp_path


@pytest.fixture(scope="module")
def run_file(tmp_path_factory):
    """One finished run (written by the CLI) shared by the read-only tests."""
    d = tmp_path_factory.mktemp("shared")
    write_forcing(d / "forcing.csv")
    (d / "fast.toml").write_text(FAST_CONFIG)
    out = d / "run.nc"
    result = runner.invoke(app, ["run", str(d / "forcing.csv"), "-c", str(d / "fast.toml"), "-o", str(out)])
    assert result.exit_code == 0, result.output
    return out


def invoke(*args):
    return runner.invoke(app, [str(a) for a in args])


def assert_one_line_error(result, *fragments):
    """Exit code 2, exactly one 'icecolumn: error:' line on stderr, no traceback."""
    assert result.exit_code == 2, (result.stdout, result.stderr)
    lines = result.stderr.splitlines()
    assert len(lines) == 1, result.stderr
    assert lines[0].startswith("icecolumn: error: ")
    assert "Traceback" not in result.output
    for fragment in fragments:
        assert fragment.lower() in lines[0].lower(), lines[0]
    return lines[0]


def leftovers(folder: Path) -> list[str]:
    """NetCDF or temporary files in the folder."""
    return sorted(p.name for p in folder.iterdir() if p.suffix in (".nc", ".tmp") or p.name.startswith("."))


# --------------------------------------------------------------------------- run


def test_run_writes_netcdf_and_summary(folder):
    result = invoke("run", "forcing.csv", "-c", "fast.toml")
    assert result.exit_code == 0, result.output
    out = folder / "forcing.nc"  # default name: forcing stem in the current folder
    with xr.open_dataset(out) as ds:
        assert ds.sizes["time"] == 11
        assert ds.sizes["layer"] == 10
        h = ds["ice_thickness"].values
        assert h[-1] > h[0]
    text = result.stdout
    assert "2027-01-01T00:00Z to 2027-01-11T00:00Z" in text
    assert f"end {h[-1]:.3f} m" in text
    assert f"maximum {h.max():.3f} m on 2027-01-11" in text
    assert "salt released:" in text and "kg m-2 s-1" in text
    assert str(out.name) in text
    assert icecolumn.CAUTION in text
    assert leftovers(folder) == ["forcing.nc"]


def test_run_twice_is_bitwise_identical(folder):
    for name in ("a.nc", "b.nc"):
        result = invoke("run", "forcing.csv", "-c", "fast.toml", "-o", name)
        assert result.exit_code == 0, result.output
    with xr.open_dataset("a.nc") as a, xr.open_dataset("b.nc") as b:
        assert set(a.data_vars) == set(b.data_vars)
        assert len(a.data_vars) > 10
        for name in a.data_vars:
            assert np.array_equal(a[name].values, b[name].values, equal_nan=a[name].dtype.kind == "f"), name


def test_run_set_and_column_options(folder):
    (folder / "other.csv").write_text(
        (folder / "forcing.csv").read_text().replace("air_temperature", "Tair", 1))
    result = invoke("run", "other.csv", "-c", "fast.toml", "--column", "air_temperature=Tair",
                    "--set", "grid.layers=12", "--set", "initial.ice_thickness=0.1")
    assert result.exit_code == 0, result.output
    with xr.open_dataset("other.nc") as ds:
        assert ds.sizes["layer"] == 12
        assert float(ds["interface_depth"].values[0]) == pytest.approx(0.1)


def test_existing_output_is_refused_and_kept(folder):
    out = folder / "forcing.nc"
    out.write_bytes(b"precious")
    result = invoke("run", "forcing.csv", "-c", "fast.toml")
    assert_one_line_error(result, "forcing.nc", "--overwrite")
    assert out.read_bytes() == b"precious"
    assert leftovers(folder) == ["forcing.nc"]


def test_existing_output_is_refused_before_running(folder, monkeypatch):
    (folder / "forcing.nc").write_bytes(b"x")
    calls = []
    monkeypatch.setattr(icecolumn, "run", lambda *a, **k: calls.append(1))
    result = invoke("run", "forcing.csv")
    assert result.exit_code == 2
    assert calls == []


BAD_FORCING = {
    "empty": ("", ["empty"]),
    "no_air_column": ("time,temp\n2027-01-01T00:00Z,-20\n2027-01-01T01:00Z,-20\n", ["air_temperature"]),
    "not_a_number": ("time,air_temperature\n2027-01-01T00:00Z,-20\n2027-01-01T01:00Z,cold\n", ["line 3", "cold"]),
    "not_increasing": ("time,air_temperature\n2027-01-01T00:00Z,-20\n2027-01-01T02:00Z,-20\n"
                       "2027-01-01T01:00Z,-20\n", ["line 4", "increasing"]),
    "empty_cell": ("time,air_temperature\n2027-01-01T00:00Z,-20\n2027-01-01T01:00Z,\n", ["line 3", "empty"]),
    "kelvin": ("time,air_temperature\n2027-01-01T00:00Z,253.15\n2027-01-01T01:00Z,253.15\n", ["line 2", "kelvin"]),
}


@pytest.mark.parametrize("case", sorted(BAD_FORCING))
def test_bad_forcing_gives_one_line(folder, case):
    text, fragments = BAD_FORCING[case]
    (folder / "bad.csv").write_text(text)
    result = invoke("run", "bad.csv", "-c", "fast.toml")
    assert_one_line_error(result, "bad.csv", *fragments)
    assert leftovers(folder) == []


def test_missing_forcing_file(folder):
    result = invoke("run", "nothere.csv")
    assert_one_line_error(result, "nothere.csv", "not found")
    assert leftovers(folder) == []


BAD_CONFIG = {
    "unknown_key": ('[grid]\nlayer = 10\n', ["layer", "did you mean 'layers'"]),
    "too_few_layers": ('[grid]\nlayers = 2\n', ["layers", "at least 3"]),
    "too_thin": ('[initial]\nice_thickness = 0.005\n', ["ice_thickness", "at least 0.01"]),
}


@pytest.mark.parametrize("case", sorted(BAD_CONFIG))
def test_bad_config_gives_one_line(folder, case):
    text, fragments = BAD_CONFIG[case]
    (folder / "bad.toml").write_text(text)
    result = invoke("run", "forcing.csv", "-c", "bad.toml")
    assert_one_line_error(result, "bad.toml", *fragments)
    assert leftovers(folder) == []


def test_bad_override_and_column_map(folder):
    assert_one_line_error(invoke("run", "forcing.csv", "--set", "grid.layerz=10"), "did you mean 'layers'")
    assert_one_line_error(invoke("run", "forcing.csv", "--column", "air_temperature"), "ours=theirs")
    assert leftovers(folder) == []


def test_usage_error_is_one_line(folder):
    assert_one_line_error(invoke("run", "forcing.csv", "--no-such-option"), "no-such-option")
    assert_one_line_error(invoke("frobnicate"), "frobnicate")


def test_unexpected_error_is_one_line_unless_debug(folder, monkeypatch):
    def boom(*args, **kwargs):
        raise ZeroDivisionError("boom")

    monkeypatch.setattr(icecolumn, "read_forcing", boom)
    result = invoke("run", "forcing.csv")
    assert result.exit_code == 1
    assert result.stderr.splitlines() == [
        "icecolumn: internal error: ZeroDivisionError: boom (run with --debug for details)"]
    result = invoke("--debug", "run", "forcing.csv")
    assert isinstance(result.exception, ZeroDivisionError)


def test_debug_shows_traceback_in_subprocess(folder):
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    cmd = [sys.executable, "-m", "icecolumn"]
    plain = subprocess.run(cmd + ["run", "nothere.csv"], capture_output=True, text=True, env=env)
    assert plain.returncode == 2
    assert plain.stderr == "icecolumn: error: nothere.csv: file not found\n"
    assert plain.stdout == ""
    debug = subprocess.run(cmd + ["--debug", "run", "nothere.csv"], capture_output=True, text=True, env=env)
    assert debug.returncode != 0
    assert "Traceback" in debug.stderr and "InputError" in debug.stderr


def test_version():
    result = invoke("--version")
    assert result.exit_code == 0
    assert result.stdout.strip() == f"icecolumn {icecolumn.__version__}"


def test_progress_bar_draws_on_a_terminal_only(monkeypatch):
    import io

    from icecolumn.cli_common import progress_bar

    for name in ("FORCE_COLOR", "TTY_COMPATIBLE", "TTY_INTERACTIVE"):  # rich would trust these over isatty()
        monkeypatch.delenv(name, raising=False)

    class Terminal(io.StringIO):
        def isatty(self):
            return True

    for terminal in (True, False):
        stream = Terminal() if terminal else io.StringIO()
        monkeypatch.setattr(sys, "stderr", stream)
        with progress_bar(batch=None) as bar:  # no compile notice: the bar only
            for i in range(1, 101):
                bar(i, 100)
        text = stream.getvalue()
        if terminal:
            assert "100%" in text
        else:
            assert text == ""


# --------------------------------------------------------------------------- config


def test_config_prints_loadable_toml(folder):
    result = invoke("config", "-c", "fast.toml", "--set", "ocean.heat_flux=5")
    assert result.exit_code == 0, result.output
    cfg = icecolumn.config.config_from_toml_text(result.stdout)
    assert cfg.grid.layers == 10 and cfg.output.interval == "1D" and cfg.ocean.heat_flux == 5.0
    defaults = invoke("config", "--defaults")
    assert icecolumn.config.config_from_toml_text(defaults.stdout) == icecolumn.default_config()
    table = invoke("config", "--markdown")
    assert "`[grid] layers`" in table.stdout


# --------------------------------------------------------------------------- laws


def test_laws_on_forcing_prints_table(folder):
    result = invoke("laws", "forcing.csv", "--every", "week")
    assert result.exit_code == 0, result.output
    header = [line for line in result.stdout.splitlines() if line.startswith("time")][0].split()
    for name in LAW_NAMES:
        assert name in header
    assert "model" not in header
    assert "2027-01-08T00:00Z" in result.stdout


def test_laws_csv_columns(folder):
    result = invoke("laws", "forcing.csv", "--csv", "table.csv", "--base", "0")
    assert result.exit_code == 0, result.output
    with open(folder / "table.csv", newline="") as fh:
        rows = list(csv.DictReader(fh))
    assert list(rows[0]) == ["time", "fdd", *LAW_NAMES]
    assert float(rows[0]["fdd"]) == 0.0
    assert float(rows[-1]["fdd"]) == pytest.approx(200.0)  # 10 days at 20 K below 0 degC


def test_laws_csv_is_kept_without_overwrite_and_columns_are_mapped(folder):
    (folder / "table.csv").write_text("keep")
    assert_one_line_error(invoke("laws", "forcing.csv", "--csv", "table.csv"), "table.csv", "--overwrite")
    assert (folder / "table.csv").read_text() == "keep"
    (folder / "other.csv").write_text((folder / "forcing.csv").read_text().replace("air_temperature", "Tair", 1))
    result = invoke("laws", "other.csv", "--column", "air_temperature=Tair", "--csv", "table.csv", "--overwrite")
    assert result.exit_code == 0, result.output
    assert (folder / "table.csv").read_text().startswith("time,fdd_stefan,")


def test_laws_on_run_includes_model_and_surface_coefficient(run_file):
    result = invoke("laws", run_file)
    assert result.exit_code == 0, result.output
    header = [line for line in result.stdout.splitlines() if line.startswith("time")][0].split()
    assert "model" in header and "ratio_stefan" in header
    from icecolumn.config import default_config

    h_tr = default_config().surface.heat_transfer_coefficient  # the run used the default
    assert f"H = {h_tr:g} W m-2 K-1" in result.stdout
    with xr.open_dataset(run_file) as ds:
        h0 = float(ds["ice_thickness"].values[0])
    assert f"# initial thickness: {h0:g} m" in result.stdout


def test_laws_with_observations_fits_power_law(folder, run_file):
    (folder / "obs.csv").write_text("time,ice_thickness\n2027-01-03T00:00Z,0.12\n2027-01-05T00:00Z,0.19\n"
                                    "2027-01-07T00:00Z,0.25\n2027-01-09T00:00Z,0.30\n")
    result = invoke("laws", "forcing.csv", "--run", run_file, "--obs", "obs.csv")
    assert result.exit_code == 0, result.output
    a_line = [line for line in result.stdout.splitlines() if line.startswith("a = ")][0]
    b_line = [line for line in result.stdout.splitlines() if line.startswith("b = ")][0]
    assert "+/-" in a_line and "+/-" in b_line
    assert 0.3 < float(b_line.split()[2]) < 1.0


def test_laws_empty_observations(folder):
    (folder / "obs.csv").write_text("")
    result = invoke("laws", "forcing.csv", "--obs", "obs.csv")
    assert_one_line_error(result, "obs.csv", "empty")
    assert result.stdout == ""


def test_laws_observations_outside_period(folder):
    (folder / "obs.csv").write_text("time,ice_thickness\n2027-01-03T00:00Z,0.12\n2027-03-01T00:00Z,0.9\n")
    result = invoke("laws", "forcing.csv", "--obs", "obs.csv")
    assert_one_line_error(result, "obs.csv", "line 3", "outside")


# --------------------------------------------------------------------------- plot


def test_plot_writes_four_pngs(tmp_path, run_file):
    out = tmp_path / "figs"
    result = invoke("plot", run_file, "-o", out, "--profiles", "2027-01-03,2027-01-09")
    assert result.exit_code == 0, result.output
    pngs = sorted(p.name for p in out.glob("*.png"))
    assert pngs == ["profiles.png", "salt.png", "sections.png", "thickness.png"]
    for p in out.glob("*.png"):
        assert p.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
        assert str(p) in result.stdout


def test_plot_foreign_netcdf(tmp_path):
    other = tmp_path / "other.nc"
    xr.Dataset({"a": ("x", np.arange(3.0))}).to_netcdf(other)
    result = invoke("plot", other, "-o", tmp_path / "figs")
    assert_one_line_error(result, "other.nc", "not an icecolumn output")
    assert not (tmp_path / "figs").exists()


# --------------------------------------------------------------------------- demo


@pytest.mark.slow
def test_demo_writes_run_table_and_figures(tmp_path):
    out = tmp_path / "demo"
    result = invoke("demo", "-o", out)
    assert result.exit_code == 0, result.output
    names = sorted(p.name for p in out.iterdir())
    assert names == ["laws.csv", "profiles.png", "salt.png", "sections.png", "station_winter.nc", "thickness.png"]
    assert icecolumn.CAUTION in result.stdout
    with open(out / "laws.csv", newline="") as fh:
        assert "model" in next(csv.reader(fh))
    before = (out / "station_winter.nc").read_bytes()
    again = invoke("demo", "-o", out)
    assert_one_line_error(again, "station_winter.nc", "--overwrite")
    assert (out / "station_winter.nc").read_bytes() == before


def test_laws_stefan_base_follows_the_configured_salinity(folder):
    from icecolumn.phase import liquidus_temperature

    result = invoke("laws", "forcing.csv", "--set", "ocean.salinity=6", "--set", "initial.bulk_salinity=5")
    assert result.exit_code == 0, result.output
    fp = float(liquidus_temperature(6.0))
    assert f"stefan    Stefan, surface = air; base {fp:.2f} degC" in result.stdout
    assert "anderson  Anderson (1961); base -1.8 degC, the law's published base" in result.stdout
