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
                          seed=7, config=cfg, variables="all")


def test_one_member_unperturbed_equals_the_deterministic_run_bitwise(history, cfg):
    fm = F.build_forecast_members(history, START, ice_thickness=0.62, snow_thickness=0.15, until=UNTIL,
                                  members=1, perturb=False, config=cfg)
    ens = F.run_forecast(history, START, ice_thickness=0.62, snow_thickness=0.15, until=UNTIL, members=1,
                         perturb=False, config=cfg, variables="all")
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
    # every season weighs the same (issue 11, defect 6a): the three seasons with two members
    # give each of them half the weight of a single member
    season_weight = {y: fm.weight[fm.analog_year == y].sum() for y in years}
    assert np.allclose(list(season_weight.values()), 1.0 / n)
    assert fm.weight[0] == pytest.approx(0.5 / n) and fm.weight[5] == pytest.approx(1.0 / n)
    assert fm.weight.sum() == pytest.approx(1.0)
    assert "3 with 2 members" in fm.mapping and f"every season weighs 1/{n}" in fm.mapping
    assert F.effective_samples(fm.weight, fm.analog_year) == pytest.approx(n)
    # Kish's n_eff of the unweighted members would be lower (2 of 11 seasons counted twice)
    assert F.effective_samples(np.ones(n + 3), fm.analog_year) < n
    assert list(ensemble["analog_year"].values) == years[:8]
    assert ensemble.attrs["forecast_effective_samples"] == pytest.approx(8)


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
    # the load-bearing thickness has percentiles too, never above ice_thickness's
    lb = ensemble["load_bearing_thickness_percentile"].values
    assert np.all(lb <= ensemble["ice_thickness_percentile"].values + 1e-12)


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
    h = ensemble["load_bearing_thickness"].sel(time="2027-03-01").values
    mid = float(np.median(h))
    e = F.exceedance(ensemble, mid, "2027-03-01")
    assert e["variable"] == "load_bearing_thickness"
    assert e["p_reached"] == pytest.approx(np.mean(h >= mid))  # 8 members of 8 seasons: equal weights
    assert e["effective_samples"] == pytest.approx(8)
    assert "conditional on the model" in e["note"] and "effective independent weather samples" in e["note"]
    # the load-bearing thickness excludes the porous bottom, so it is the stricter test
    hi = ensemble["ice_thickness"].sel(time="2027-03-01").values
    assert np.all(h <= hi) and np.any(h < hi)
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
    table = out[out.index("ice thickness (season-weighted percentiles; 6 effective weather samples):"):].splitlines()
    assert table[1].split() == ["date", "median", "5", "%", "95", "%", "load-bearing", "median"]
    assert table[2].split() == ["UTC", "m", "m", "m", "m"]
    assert "P(load-bearing ice reaches 0.9 m by 2027-03-01)" in out and "of 6 members" in out
    assert "effective weather samples 6" in out
    assert "load_bearing_thickness" in out and "liquid fraction of at most 0.2" in out
    assert "set aside 2 in the snow and 2 in the water" in out
    assert (folder / "fc.nc").is_file() and (folder / "fc_fan.png").stat().st_size > 10_000
    ds = xr.load_dataset(folder / "fc.nc")
    assert ds.sizes["member"] == 6 and list(ds["percentile"].values) == [5, 25, 50, 75, 95]
    assert ds.attrs["forecast_threshold_variable"] == "load_bearing_thickness"
    assert ds.attrs["forecast_threshold_m"] == 0.9 and ds.attrs["forecast_probability_effective_samples"] == 6
    ex = F.exceedance(ds, 0.9, "2027-03-01")
    assert ds.attrs["forecast_probability_reached"] == pytest.approx(ex["p_reached"])
    assert ic.CAUTION in ds.attrs["forecast_probability_note"]
    # only the forecast's time series by default (issue 15, item 7): no profiles, no restart state
    assert "temperature" not in ds and "layer_state" not in ds and "layer" not in ds.dims
    assert set(F.FORECAST_VARIABLES) <= set(ds.data_vars)
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


# --------------------------------------------------------------------------- snow (issue 11, defect 1)


def _constant_history(air=-20.0, snowfall=None, first="2020-09-01T00:00", last="2026-06-30T23:00"):
    """An INVENTED history: constant air temperature every hour (six seasons)."""
    t = np.arange(np.datetime64(first), np.datetime64(last) + np.timedelta64(1, "h"), np.timedelta64(1, "h"))
    extra = {} if snowfall is None else {"snowfall": np.full(t.size, snowfall)}
    return forcing_from_arrays(t, np.full(t.size, air), **extra)


def test_forecast_snow_is_prognostic_and_floods_like_a_plain_run():
    """0.30 m ice under 0.20 m snow at -20 degC for 10 days (the case of issue 11, defect 1).

    Hand value (the hydrostatic snow-ice argument of Leppaeranta 1983, Geophysica 19, from
    memory; icecolumn.buoyancy): flooding stops when the freeboard is back at zero, so the
    snow-ice formed is d = -f' rho_w / (rho_w - rho_i + rho_s), f' the initial freeboard
    raised by the congelation growth g until flooding stops, f' = f_0 + g (1 - rho_i/rho_w)
    (growth after that only lifts the ice further; common practice, no source).
    """
    from icecolumn.buoyancy import flooding_thickness_scalar, freeboard_scalar
    from icecolumn.constants import SEAWATER_DENSITY

    hist = _constant_history(snowfall=0.0)  # the analog seasons' snowfall: none
    cfg = ic.default_config()
    start, until = "2027-01-01T00:00", "2027-01-11T00:00"
    fc = F.run_forecast(hist, start, ice_thickness=0.30, snow_thickness=0.20, until=until, members=1,
                        perturb=False, config=cfg)
    fm = F.build_forecast_members(hist, start, ice_thickness=0.30, snow_thickness=0.20, until=until, members=1,
                                  perturb=False, config=cfg)
    assert "snow_thickness" not in fm.members[0].forcing  # never a measured depth series
    plain_cfg = cfg.replace("initial", ice_thickness=0.30, snow_thickness=0.20).replace(
        "run", start=start, end=until)
    plain = ic.run(_constant_history(first=start, last=until), plain_cfg)  # prognostic snow, no snowfall
    si_fc = float(fc["snow_ice_growth"].isel(member=0)[-1])
    si_run = float(plain["snow_ice_growth"][-1])
    assert si_fc == pytest.approx(si_run, rel=0.10)
    # the snow that flooded is gone from the snow layer
    snow_end = float(fc["snow_thickness"].isel(member=0)[-1])
    assert snow_end == pytest.approx(0.20 - si_fc, abs=1e-6)
    # hydrostatic hand value, corrected for the congelation growth until flooding stops
    rho_i, rho_s, rho_w = cfg.properties.ice_density, cfg.snow.density, SEAWATER_DENSITY
    f0 = freeboard_scalar(0.30, 0.20, rho_i, rho_s)
    assert f0 < 0
    si = plain["snow_ice_growth"].values
    stop = int(np.flatnonzero(si < si[-1] - 1e-6)[-1]) + 1  # first output after the last flooding
    g = float(plain["congelation_growth"].values[stop])
    hand = flooding_thickness_scalar(f0 + g * (1.0 - rho_i / rho_w), rho_i, rho_s)
    assert si_fc == pytest.approx(hand, rel=0.10)
    # bracketed by no growth and by the whole 10 days of growth
    g10 = float(plain["congelation_growth"].values[-1])
    assert flooding_thickness_scalar(f0 + g10 * (1.0 - rho_i / rho_w), rho_i, rho_s) < si_fc
    assert si_fc < flooding_thickness_scalar(f0, rho_i, rho_s)
    print(f"\nsnow-ice: forecast {si_fc:.4f} m, prognostic run {si_run:.4f} m, hand {hand:.4f} m "
          f"(growth {g:.4f} m until flooding stops; no-growth {flooding_thickness_scalar(f0, rho_i, rho_s):.4f} m)")


def test_future_snowfall_is_a_rate_around_the_analog_or_climatology(history, cfg):
    # the invented history has no snowfall: members get the climatological rate x their factor
    fm = F.build_forecast_members(history, START, ice_thickness=0.62, snow_thickness=0.15, until=UNTIL,
                                  members=6, seed=3, config=cfg)
    rate0 = F.CLIMATE_SNOW_DEPTH_RATE * cfg.snow.density / (30 * 86400.0)
    for i, m in enumerate(fm.members):
        sf = m.forcing["snowfall"].values
        assert np.allclose(sf, rate0 * fm.values["snowfall_factor"][i])
        assert fm.values["snowfall_rate"][i] == pytest.approx(sf.mean())
    assert np.ptp(fm.values["snowfall_factor"]) > 0
    # given a rate (0: no future snow)
    none = F.build_forecast_members(history, START, ice_thickness=0.62, until=UNTIL, members=2, config=cfg,
                                    snowfall_rate=0.0)
    assert all(np.all(m.forcing["snowfall"].values == 0.0) for m in none.members)
    with pytest.raises(InputError, match="snowfall rate"):
        F.build_forecast_members(history, START, ice_thickness=0.62, until=UNTIL, config=cfg, snowfall_rate=-1.0)
    # a history with snowfall: the analog season's, shifted like the air temperature
    t = history["time"].values
    fall = np.where((t.astype("datetime64[D]").astype(int) % 9) == 0, 2e-5, 0.0)  # invented snow days
    hist = history.assign(snowfall=("time", fall, {"units": "kg m-2 s-1"}))
    fm2 = F.build_forecast_members(hist, START, ice_thickness=0.62, until=UNTIL, members=2, seed=3, config=cfg)
    f = fm2.members[1].forcing
    shift = np.datetime64("2027-01-10") - np.datetime64("2017-01-10")
    tt = f["time"].values[:300]
    expected = hist["snowfall"].sel(time=tt - shift).values * fm2.values["snowfall_factor"][1]
    assert np.allclose(f["snowfall"].values[:300], expected)
    assert "analog season's snowfall" in fm2.snowfall_source
    with pytest.raises(InputError, match="has a snowfall column"):
        F.build_forecast_members(hist, START, ice_thickness=0.62, until=UNTIL, config=cfg, snowfall_rate=0.0)


def test_snow_grows_with_snowfall_in_the_run(ensemble):
    snow = ensemble["snow_thickness"].values  # (member, time); 0.62 m ice: no flooding
    assert np.all(ensemble["snow_ice_growth"].values[:, -1] == 0.0)
    rate = ensemble["member_snowfall_rate"].values
    days = (ensemble.time.values[-1] - ensemble.time.values[0]) / np.timedelta64(1, "s")
    rho_s = ic.default_config().snow.density
    # nothing melts at these temperatures: the snow gains exactly the snowfall
    np.testing.assert_allclose(snow[:, -1] - snow[:, 0], rate * days / rho_s, rtol=1e-3)


# --------------------------------------------------------------------------- perturbations (defect 6b, 6c)


@pytest.mark.parametrize("key", list(F.PERTURBATIONS))
def test_every_perturbation_is_centred_on_the_configured_value(key):
    spec = F.PERTURBATIONS[key]
    base = {"initial.ice_thickness": 0.62, "initial.snow_thickness": 0.15, "ocean.heat_flux": 2.0,
            "snow.conductivity": 0.31, "surface.heat_transfer_coefficient": 10.0}[key]
    v = F._draw(spec, base, np.random.default_rng(5), 40_000)
    # the median at the configured value (sampling error of a median of 40000 is < 1 %)
    assert np.median(v) == pytest.approx(base, rel=0.01)
    if spec["distribution"] == "lognormal":
        assert np.mean(np.log(v / base)) == pytest.approx(0.0, abs=0.01)


def test_snow_depth_spread_has_the_published_coefficient_of_variation():
    # CV of snow depth on sea ice about 0.5, independent of ice thickness (Huang et al. 2026,
    # The Cryosphere 20, 2825; abstract)
    spec = F.PERTURBATIONS["initial.snow_thickness"]
    v = F._draw(spec, 0.20, np.random.default_rng(6), 40_000)
    assert np.std(v) / np.mean(v) == pytest.approx(0.5, abs=0.02)
    assert np.std(v) > 0.08  # far more than the 3 cm of before for 20 cm of snow
    assert np.all(F._draw(spec, 0.0, np.random.default_rng(6), 10) == 0.0)  # no snow stays no snow


def test_sturm_snow_conductivity_perturbation_is_what_the_run_uses(history, cfg):
    """Issue 15, item 4: with sturm1997 the perturbed value must reach the kernel."""
    from icecolumn.kernel import P, parameter_row
    from icecolumn.properties import snow_conductivity_sturm1997

    sturm = cfg.replace("snow", conductivity_model="sturm1997")
    fm = F.build_forecast_members(history, START, ice_thickness=0.62, snow_thickness=0.15, until=UNTIL,
                                  members=12, seed=4, config=sturm)
    k = fm.values["snow.conductivity"]
    assert np.ptp(k) > 0.02
    k0 = float(snow_conductivity_sturm1997(sturm.snow.density))
    assert np.median(k) == pytest.approx(k0, rel=0.3)
    for m, ki in zip(fm.members, k):
        assert m.config.snow.conductivity_model == "constant"
        assert parameter_row(m.config, "linear")[P.KSNOW] == ki
    assert any("sturm1997" in n for n in fm.notes)
    # unperturbed: the configuration as it is
    same = F.build_forecast_members(history, START, ice_thickness=0.62, until=UNTIL, members=1, config=sturm,
                                    perturb=False)
    assert same.members[0].config.snow == sturm.snow
    assert same.values["snow.conductivity"][0] == pytest.approx(k0)


def test_weighted_percentile():
    rng = np.random.default_rng(2)
    x = rng.normal(size=(9, 4))
    q = F.PERCENTILES
    assert np.allclose(F.weighted_percentile(x, np.ones(9), q), np.percentile(x, q, axis=0, method="linear"))
    # by hand: values 0, 1, 2 with weights 1/4, 1/4, 1/2 sit at the plotting positions 0, 0.4, 1
    v = F.weighted_percentile(np.array([2.0, 0.0, 1.0]), np.array([0.5, 0.25, 0.25]), [0, 40, 50, 100])
    assert np.allclose(v, [0.0, 1.0, 1.0 + 0.1 / 0.6, 2.0])
    y = x.copy()
    y[3, 1] = np.nan
    out = F.weighted_percentile(y, np.ones(9), q)
    assert np.isnan(out[:, 1]).all() and np.isfinite(out[:, [0, 2, 3]]).all()


def test_unequal_members_per_season_are_weighted_in_probabilities(history, cfg):
    """12 members on 11 seasons: the season with two members counts once (defect 6a)."""
    ds = F.run_forecast(history, START, ice_thickness=0.62, snow_thickness=0.15, until="2027-01-20T00:00",
                        members=12, seed=1, config=cfg.replace("grid", layers=6))
    w = ds["member_weight"].values
    assert w[0] == w[11] == pytest.approx(1 / 22) and w[1] == pytest.approx(1 / 11)
    # an event that only the two members of the first season reach has probability 1/11, not 2/12
    lb = ds["load_bearing_thickness"].sel(time="2027-01-20").values
    fake = ds.copy()
    bumped = lb.copy()
    bumped[[0, 11]] = 5.0
    fake["load_bearing_thickness"] = ds["load_bearing_thickness"].copy(
        data=np.where(ds["time"].values[None, :] == np.datetime64("2027-01-20"), bumped[:, None],
                      ds["load_bearing_thickness"].values))
    e = F.exceedance(fake, 4.0, "2027-01-20")
    assert e["p_reached"] == pytest.approx(1 / 11) and e["members_reached"] == 2
    assert e["effective_samples"] == pytest.approx(11)


# --------------------------------------------------------------------------- output size (issue 15, item 7)


def test_batches_and_variable_selection(history, cfg):
    kw = dict(ice_thickness=0.62, snow_thickness=0.15, until="2027-01-25T00:00", members=5, seed=9, config=cfg)
    one = F.run_forecast(history, START, batch_size=5, variables="all", **kw)
    split = F.run_forecast(history, START, batch_size=2, variables="all", **kw)
    for name in one.data_vars:
        assert np.array_equal(one[name].values, split[name].values, equal_nan=True), name
    assert "layer_state" in one and "temperature" in one
    small = F.run_forecast(history, START, batch_size=2, **kw)
    assert set(small.data_vars) >= set(F.FORECAST_VARIABLES)
    assert "temperature" not in small and "layer" not in small.dims
    assert np.array_equal(small["ice_thickness"].values, one["ice_thickness"].values)
    more = F.run_forecast(history, START, variables="temperature,bulk_salinity", **kw)
    assert "temperature" in more and "bulk_salinity" in more and "layer_state" not in more
    with pytest.raises(InputError, match="unknown variable 'temprature'"):
        F.run_forecast(history, START, variables=["temprature"], **kw)


def test_cli_forecast_variables_option(folder):
    base = ("forecast", HISTORY, "--start", START, "--until", "2027-01-20T00:00", "--ice-thickness", 0.62,
            "--members", 2, "-c", "fast.toml")
    _one_line_error(_invoke(*base, "--variables", "nosuch", "-o", "a.nc"), "unknown variable 'nosuch'")
    r = _invoke(*base, "--variables", "all", "-o", "b.nc")
    assert r.exit_code == 0, (r.stdout, r.stderr)
    with xr.open_dataset(folder / "b.nc") as ds:
        assert "layer_state" in ds and "temperature" in ds


def test_cli_forecast_thickness_in_centimetres_gets_a_hint(folder):
    base = ("forecast", HISTORY, "--start", START, "--until", UNTIL, "-c", "fast.toml")
    _one_line_error(_invoke(*base, "--ice-thickness", 62), "give 0.62")


# --------------------------------------------------------------------------- demo from an installed package


DEMO_SAMPLES = ("station_winter.csv", "station_history.csv", "thermistor_example.csv", "core_example.csv",
                "drillholes.csv")


def test_packaged_samples_are_the_repository_samples():
    """`demo --forecast` needs these inside the package (icecolumn/samples), identical to forcing_samples/."""
    try:
        import tomllib
    except ModuleNotFoundError:  # Python 3.10
        import tomli as tomllib

    pkg = Path(ic.__file__).resolve().parent / "samples"
    for name in DEMO_SAMPLES:
        assert (pkg / name).read_bytes() == (SAMPLES / name).read_bytes(), name
    meta = tomllib.loads((SAMPLES.parent / "pyproject.toml").read_text())
    data = meta["tool"]["setuptools"]["package-data"]["icecolumn"]
    assert "samples/*.csv" in data


def test_demo_finds_the_packaged_samples_without_the_repository(tmp_path, monkeypatch):
    """An installed (non-editable) package has no forcing_samples/ beside it: the copies in the
    package are used (checked by hiding the repository's folder)."""
    from icecolumn import demo

    monkeypatch.chdir(tmp_path)
    monkeypatch.setattr(demo, "_REPOSITORY_SAMPLES", tmp_path / "no_such_folder")
    for name in DEMO_SAMPLES:
        p = demo.sample_file(name)
        assert p.parent.name == "samples" and p.parent.parent.name == "icecolumn", p
    with pytest.raises(InputError, match="was not found"):
        demo.sample_file("nosuch.csv")
