"""Forecast ensembles from analog years (icecolumn/forecast.py) and the forecast command.

The history, drill holes and thermistor files are INVENTED (scripts/make_history.py).
Runs are kept short: 12 layers, daily output, a few members.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
import xarray as xr
from typer.testing import CliRunner

import icecolumn as ic
from icecolumn import forecast as F
from icecolumn.cli import app
from icecolumn.errors import InputError
from icecolumn.forcing import forcing_from_arrays

SAMPLES = Path(__file__).resolve().parent.parent / "forcing_samples"
HISTORY = SAMPLES / "station_history.csv"
START = "2027-01-10T00:00"
UNTIL = "2027-03-10T00:00"
FAST = '[output]\ninterval = "1D"\n\n[grid]\nlayers = 12\n'
runner = CliRunner()


@pytest.fixture(scope="module")
def history():
    return ic.read_forcing(HISTORY)


@pytest.fixture(scope="module")
def cfg():
    return ic.default_config().replace("grid", layers=12).replace("output", interval="1D")


@pytest.fixture(scope="module")
def ensemble(history, cfg):
    return F.run_forecast(history, START, ice_thickness=0.62, snow_thickness=0.15, until=UNTIL, members=8,
                          seed=7, config=cfg)


def test_one_member_unperturbed_equals_the_deterministic_run_bitwise(history, cfg):
    fm = F.build_forecast_members(history, START, ice_thickness=0.62, snow_thickness=0.15, until=UNTIL,
                                  members=1, perturb=False, config=cfg)
    ens = F.run_forecast(history, START, ice_thickness=0.62, snow_thickness=0.15, until=UNTIL, members=1,
                         perturb=False, config=cfg)
    det = ic.run(fm.members[0].forcing, fm.members[0].config)
    for name in ("ice_thickness", "temperature", "bulk_salinity", "salt_flux", "layer_state"):
        a = ens[name].isel(member=0).values
        b = det[name].values
        assert a.shape == b.shape
        assert np.array_equal(a, b, equal_nan=True), name
    assert float(det["ice_thickness"][-1]) > 0.8  # it did grow (about two months of winter)


def test_members_map_onto_analog_years_and_draws(ensemble, history):
    years = [y for y, _ in F.analog_years(history, START, UNTIL)]
    assert years == list(range(2016, 2027))  # invented history: 2015-09 .. 2026-06
    n = len(years)
    fm = F.build_forecast_members(history, START, ice_thickness=0.62, until=UNTIL, members=n + 3, seed=1)
    assert list(fm.analog_year) == years + years[:3]
    assert list(fm.draw) == [0] * n + [1] * 3
    assert "ceil(members / years)" in fm.mapping
    assert list(ensemble["analog_year"].values) == years[:8]


def test_analog_forcing_is_the_history_shifted(history, cfg):
    fm = F.build_forecast_members(history, START, ice_thickness=0.62, until=UNTIL, members=2, perturb=False,
                                  config=cfg)
    f = fm.members[1].forcing  # analog year 2017
    assert fm.analog_year[1] == 2017
    t = f["time"].values[:500]
    shift = np.datetime64("2027-01-10") - np.datetime64("2017-01-10")
    expected = history["air_temperature"].sel(time=t - shift).values
    assert np.array_equal(f["air_temperature"].values[:500], expected)


def test_leap_day_and_turn_of_the_year():
    assert F._same_date_in(2025, np.datetime64("2028-02-29T06:00", "ns")) == np.datetime64("2025-02-28T06:00", "ns")
    assert F._same_date_in(2024, np.datetime64("2028-02-29T06:00", "ns")) == np.datetime64("2024-02-29T06:00", "ns")
    # a window across the new year: 1 Dec .. 1 Feb; the first invented winter (2015-16) counts
    t = np.arange(np.datetime64("2015-09-01T00:00"), np.datetime64("2021-07-01T00:00"), np.timedelta64(6, "h"))
    hist = forcing_from_arrays(t, np.full(t.size, -10.0))  # invented constant history
    years = [y for y, _ in F.analog_years(hist, "2026-12-01T00:00", "2027-02-01T00:00")]
    assert years == [2015, 2016, 2017, 2018, 2019, 2020]


def test_weather_forecast_then_linear_blend(history, cfg):
    t = np.datetime64(START) + np.arange(0, 73) * np.timedelta64(1, "h")  # 3 days, constant -5 degC
    wx = forcing_from_arrays(t, np.full(t.size, -5.0))
    fm = F.build_forecast_members(history, START, ice_thickness=0.62, until=UNTIL, members=1, perturb=False,
                                  config=cfg, weather=wx)
    plain = F.build_forecast_members(history, START, ice_thickness=0.62, until=UNTIL, members=1, perturb=False,
                                     config=cfg)
    a = fm.members[0].forcing["air_temperature"].values
    b = plain.members[0].forcing["air_temperature"].values
    assert np.all(a[:73] == -5.0)
    end = 72  # index of the weather's last time
    offset = -5.0 - b[end]
    assert a[end + 24] == pytest.approx(b[end + 24] + 0.5 * offset)  # halfway through the 2-day blend
    assert np.array_equal(a[end + 48:], b[end + 48:])


def test_percentiles_ordered_and_linear_method(ensemble):
    for name in F.PERCENTILE_VARIABLES:
        p = ensemble[f"{name}_percentile"].values
        ok = np.isfinite(p).all(axis=0)
        assert ok.sum() >= ensemble.sizes["time"] - 1
        assert np.all(np.diff(p[:, ok], axis=0) >= 0), name
    h = ensemble["ice_thickness"].values
    assert np.allclose(ensemble["ice_thickness_percentile"].sel(percentile=50.0).values, np.median(h, axis=0))
    assert np.allclose(ensemble["ice_thickness_percentile"].sel(percentile=5.0).values,
                       np.percentile(h, 5, axis=0, method="linear"))
    assert ensemble.attrs["caution"] == ic.CAUTION
    assert ensemble.attrs["forecast_seed"] == 7
    # perturbed: members really differ, within the documented ranges
    q = ensemble["member_ocean_heat_flux"].values
    q0 = ic.default_config().ocean.heat_flux  # the ensemble is centred on the configured value
    spec = F.PERTURBATIONS["ocean.heat_flux"]
    assert np.all((q >= max(q0 + spec["low"], 0.0)) & (q <= q0 + spec["high"])) and np.ptp(q) > 0
    assert np.all(ensemble["member_initial_snow_thickness"].values >= 0.0)


def test_every_member_budget_closes(ensemble):
    names = [c for c in ensemble.data_vars if c.startswith("energy_input_")]
    for m in range(ensemble.sizes["member"]):
        ds = ensemble.isel(member=m)
        content = ds["enthalpy_content"].values
        res = np.abs(content - content[0] - ds["energy_input"].values)
        scale = np.concatenate([[0.0], np.cumsum(sum(np.abs(np.diff(ds[n].values)) for n in names))])
        assert np.all(scale[1:] > 0)
        assert np.all(res[1:] <= 1e-9 * scale[1:]), m
        salt = ds["salt_content"].values
        sres = np.abs(salt - salt[0] - (ds["salt_entrained"].values - ds["salt_released"].values))
        sscale = np.concatenate([[0.0], np.cumsum(np.abs(np.diff(ds["salt_entrained"].values))
                                                  + np.abs(np.diff(ds["salt_released"].values)))])
        assert np.all(sres[1:] <= 1e-9 * sscale[1:]), m


def test_same_seed_same_file(history, cfg, tmp_path):
    kw = dict(ice_thickness=0.62, snow_thickness=0.15, until="2027-02-01T00:00", members=4, config=cfg)
    paths = []
    for i, seed in enumerate((11, 11, 12)):
        ds = F.run_forecast(history, START, seed=seed, **kw)
        paths.append(ic.write_netcdf(ds, tmp_path / f"f{i}.nc"))
    a, b, c = (xr.load_dataset(p) for p in paths)
    for name in a.data_vars:
        assert np.array_equal(a[name].values, b[name].values, equal_nan=True), name
    skip = {"history"}
    assert {k: v for k, v in a.attrs.items() if k not in skip} == {k: v for k, v in b.attrs.items() if k not in skip}
    assert not np.array_equal(a["member_ocean_heat_flux"].values, c["member_ocean_heat_flux"].values)


def test_exceedance(ensemble):
    low = F.exceedance(ensemble, 0.5, "2027-02-01")
    assert low["p_reached"] == 1.0 and low["p_thinner"] == 0.0 and low["members"] == 8
    high = F.exceedance(ensemble, 5.0, "2027-02-01")
    assert high["p_reached"] == 0.0 and high["p_thinner"] == 1.0
    h = ensemble["ice_thickness"].sel(time="2027-03-01").values
    mid = float(np.median(h))
    e = F.exceedance(ensemble, mid, "2027-03-01")
    assert e["p_reached"] == pytest.approx(np.mean(h >= mid))
    assert "conditional on the model" in e["note"]
    with pytest.raises(InputError, match="outside the forecast"):
        F.exceedance(ensemble, 1.0, "2027-06-01")


def test_too_few_seasons_and_start_inside_record(history, cfg):
    short = history.sel(time=slice("2021-09-01", None))  # invented record: 5 seasons 2022..2026, cut to 4
    short = short.sel(time=slice("2022-09-01", None))
    with pytest.raises(InputError, match=r"history has 4 seasons covering 01-10 \.\. 03-10, at least 5 needed"):
        F.build_forecast_members(short, START, ice_thickness=0.6, until=UNTIL, config=cfg)
    with pytest.raises(InputError, match="must be after the end of the record"):
        F.build_forecast_members(history, "2026-01-10T00:00", ice_thickness=0.6, until="2026-03-01", config=cfg)
    for bad in (-0.1, 12.0):
        with pytest.raises(InputError):
            F.build_forecast_members(history, START, ice_thickness=bad, until=UNTIL, config=cfg)


# --------------------------------------------------------------------------- command line


@pytest.fixture
def folder(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "fast.toml").write_text(FAST)
    return tmp_path


def _invoke(*args):
    return runner.invoke(app, [str(a) for a in args])


def _one_line_error(result, fragment):
    assert result.exit_code == 2, (result.stdout, result.stderr)
    lines = [ln for ln in result.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("icecolumn: error:"), result.stderr
    assert fragment in lines[0], lines[0]
    assert "Traceback" not in result.stderr


def test_cli_forecast_prints_table_probability_caution_and_writes_files(folder):
    r = _invoke("forecast", HISTORY, "--start", START, "--ice-thickness", 0.62, "--snow-thickness",
                0.15, "--thermistor", SAMPLES / "thermistor_example.csv", "--core", SAMPLES / "core_example.csv",
                "--until", UNTIL, "--members", 6, "--seed", 2, "-c", "fast.toml", "-o", "fc.nc",
                "--threshold", 0.9, "--by", "2027-03-01", "--obs", SAMPLES / "drillholes.csv")
    assert r.exit_code == 0, (r.stdout, r.stderr)
    out = r.stdout
    assert ic.CAUTION in out
    table = out[out.index("ice thickness:"):].splitlines()
    assert table[1].split() == ["date", "median", "5", "%", "95", "%"] and table[2].split() == ["UTC", "m", "m", "m"]
    assert "P(ice reaches 0.9 m by 2027-03-01)" in out and "of 6 members" in out
    assert "set aside 2 in the snow and 2 in the water" in out
    assert (folder / "fc.nc").is_file() and (folder / "fc_fan.png").stat().st_size > 10_000
    ds = xr.load_dataset(folder / "fc.nc")
    assert ds.sizes["member"] == 6 and list(ds["percentile"].values) == [5, 25, 50, 75, 95]
    # refuses to overwrite, before running
    before = (folder / "fc.nc").read_bytes()
    r2 = _invoke("forecast", HISTORY, "--start", START, "--ice-thickness", 0.62, "-o", "fc.nc")
    _one_line_error(r2, "file exists; use --overwrite")
    assert (folder / "fc.nc").read_bytes() == before


def test_cli_forecast_bad_inputs(folder):
    base = ("forecast", HISTORY, "--start", START, "--until", UNTIL, "-c", "fast.toml")
    _one_line_error(_invoke(*base, "--ice-thickness", -0.2), "--ice-thickness")
    _one_line_error(_invoke(*base, "--ice-thickness", 11), "more than 10 m")
    _one_line_error(_invoke(*base, "--ice-thickness", 0.6, "--set", "grid.layerz=3"), "did you mean 'layers'")
    _one_line_error(_invoke(*base, "--ice-thickness", 0.6, "--column", "air_temperature=nosuch"), "'nosuch'")
    therm = folder / "therm.csv"
    therm.write_text("depth,temperature\n-0.2,-25\n1.5,-1.8\n")
    _one_line_error(_invoke(*base, "--ice-thickness", 0.6, "--thermistor", therm), "no thermistor reading inside the ice")
    short = folder / "short.csv"
    lines = HISTORY.read_text().splitlines()
    keep = [ln for ln in lines if ln.startswith("#") or ln.startswith("time") or ln[:4] in ("2024", "2025", "2026")]
    short.write_text("\n".join(keep) + "\n")
    _one_line_error(_invoke("forecast", short, "--start", START, "--until", UNTIL,
                            "--ice-thickness", 0.6), "at least 5 needed")
    assert not any(folder.glob("*.nc"))


@pytest.mark.slow
def test_demo_forecast_variant(tmp_path):
    """`icecolumn demo --forecast` runs the bundled (invented) history forecast and writes its files."""
    import xarray as xr

    from icecolumn.cli import main

    out = tmp_path / "demo"
    assert main(["demo", "-o", str(out), "--forecast"]) == 0
    assert (out / "forecast_fan.png").stat().st_size > 0
    with xr.open_dataset(out / "forecast.nc") as ds:
        assert ds.sizes["member"] == 40
        p = ds["ice_thickness_percentile"].values
        assert np.all(np.diff(p[:, 1:], axis=0) >= 0)
        assert ds.attrs["caution"] == ic.CAUTION


def test_future_snowfall_is_perturbed(ensemble):
    # snow depth grows linearly from the measured depth at each member's drawn rate, within the
    # documented range (Warren et al. 1999 for the scale of the range; see forecast.py)
    rate = ensemble["member_snow_accumulation_per_30_days"].values
    spec = F.SNOWFALL_PERTURBATION
    assert np.all((rate >= spec["low"]) & (rate <= spec["high"])) and np.ptp(rate) > 0
    snow = ensemble["snow_thickness"].values  # (member, time)
    days = (ensemble.time.values[-1] - ensemble.time.values[0]) / np.timedelta64(1, "D")
    np.testing.assert_allclose(snow[:, -1] - snow[:, 0], rate * days / 30.0, rtol=1e-9, atol=1e-12)
