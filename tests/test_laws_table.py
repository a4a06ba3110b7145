"""Tests of the growth-law comparison table, its text/CSV output and the fit."""

import csv
import os

import numpy as np
import pytest
import xarray as xr

from icecolumn import growth_laws as gl
from icecolumn.errors import InputError
from icecolumn.laws import fit_observations, format_laws_table, laws_table, write_laws_csv

LAW_NAMES = ["stefan", "lebedev", "anderson", "zubov"]


@pytest.fixture
def cold_forcing():
    """Constant -20 degC, hourly, 100 full days from 2024-01-01T00:00 UTC."""
    t = np.datetime64("2024-01-01T00:00", "ns") + np.arange(24 * 100 + 1) * np.timedelta64(1, "h")
    return t, np.full(t.size, -20.0)


def test_table_shape_and_time(cold_forcing):
    ds = laws_table(*cold_forcing)
    assert ds.sizes["time"] == 101  # start row + 100 day ends
    assert ds["time"].values[0] == np.datetime64("2024-01-01T00:00", "ns")
    assert ds["time"].values[-1] == np.datetime64("2024-04-10T00:00", "ns")
    assert np.all(np.diff(ds["time"].values) == np.timedelta64(1, "D"))
    for name in LAW_NAMES:
        assert ds[name].attrs["units"] == "m"
        assert ds[name].attrs["long_name"]
        assert f"fdd_{name}" in ds
        assert ds[f"fdd_{name}"].attrs["units"] == "K day"
    assert "fdd" not in ds and "model" not in ds


def test_table_per_law_bases_hand_values(cold_forcing):
    ds = laws_table(*cold_forcing)
    # each law's own base: Stefan at the freezing point -1.8 degC (caller's
    # default), Lebedev 0 degC, Anderson -1.8 degC (from memory), Zubov 0 degC.
    # 100 days at -20 degC: 100*18.2 = 1820 and 100*20 = 2000 K day.
    assert ds["fdd_stefan"].values[-1] == pytest.approx(1820.0, rel=1e-12)
    assert ds["fdd_anderson"].values[-1] == pytest.approx(1820.0, rel=1e-12)
    assert ds["fdd_lebedev"].values[-1] == pytest.approx(2000.0, rel=1e-12)
    assert ds["fdd_zubov"].values[-1] == pytest.approx(2000.0, rel=1e-12)
    # Stefan (1891), k=2.2, rho=917, L=334e3 (common practice, no source):
    #   sqrt(1.24122e-3 * 1820) = sqrt(2.25903) = 1.503 m
    assert round(float(ds["stefan"].values[-1]), 3) == 1.503
    # Lebedev (1938): 1.33 * 2000^0.58 = 1.33 * 10^(0.58*3.30103) = 1.33 * 82.148 = 109.3 cm
    assert round(float(ds["lebedev"].values[-1]) * 100, 1) == 109.3
    # Anderson (1961), J. Glaciol. 3(30): (-5.1 + sqrt(26.01 + 6.7*4*1820)) / 2
    #   = (-5.1 + 220.91) / 2 = 107.9 cm
    assert round(float(ds["anderson"].values[-1]) * 100, 1) == 107.9
    # Zubov (1945): (-50 + sqrt(2500 + 32*2000)) / 2 = (-50 + 257.88) / 2 = 103.9 cm
    assert round(float(ds["zubov"].values[-1]) * 100, 1) == 103.9
    assert ds.attrs["base_temperature_stefan_degC"] == -1.8
    assert ds.attrs["base_temperature_lebedev_degC"] == 0.0
    assert ds.attrs["base_temperature_anderson_degC"] == -1.8
    assert ds.attrs["base_temperature_zubov_degC"] == 0.0


def test_table_matches_law_functions(cold_forcing):
    ds = laws_table(*cold_forcing, base=-1.8)
    assert "fdd" in ds and "fdd_stefan" not in ds
    np.testing.assert_allclose(ds["fdd"].values, 18.2 * np.arange(101), rtol=1e-12, atol=1e-9)
    for name in LAW_NAMES:
        np.testing.assert_allclose(ds[name].values, gl.LAWS[name](ds["fdd"].values),
                                   rtol=1e-12)
        assert ds.attrs[f"base_temperature_{name}_degC"] == -1.8


def test_stefan_form_recorded(cold_forcing):
    plain = laws_table(*cold_forcing)
    assert "plain Stefan" in plain.attrs["stefan_form"]
    assert "35-50 %" in plain.attrs["stefan_form"]
    res = laws_table(*cold_forcing, surface_coefficient=20.0)
    assert res.attrs["stefan_form"] == (
        "Stefan with surface transfer: Stefan's law with the surface resistance 1/H of the linear surface "
        "coefficient H = 20 W m-2 K-1")
    np.testing.assert_allclose(
        res["stefan"].values,
        gl.stefan(res["fdd_stefan"].values, surface_coefficient=20.0), rtol=1e-12)
    assert np.all(res["stefan"].values[1:] < plain["stefan"].values[1:])


def test_initial_thickness_offset(cold_forcing):
    h0 = 0.25
    ds = laws_table(*cold_forcing, initial_thickness=h0)
    for name in LAW_NAMES:
        h = ds[name].values
        assert h[0] == pytest.approx(h0, rel=1e-12), name
        assert np.all(np.diff(h) > 0), name
        fdd = ds[f"fdd_{name}"].values
        np.testing.assert_allclose(
            h, gl.LAWS[name](fdd + gl.fdd_for_thickness(name, h0)), rtol=1e-12)
    assert ds.attrs["initial_thickness_m"] == h0


def test_start_trims_forcing(cold_forcing):
    ds = laws_table(*cold_forcing, base=0.0, start="2024-01-11T00:00")
    assert ds["time"].values[0] == np.datetime64("2024-01-11T00:00", "ns")
    assert ds.sizes["time"] == 91
    assert ds["fdd"].values[0] == 0.0
    assert ds["fdd"].values[-1] == pytest.approx(90 * 20.0)
    with pytest.raises(InputError):
        laws_table(*cold_forcing, start="2023-12-01")


def test_model_and_ratios(cold_forcing):
    t, temp = cold_forcing
    mt = t[: 24 * 50 + 1]  # model covers the first 50 days only
    mh = 0.05 + 0.01 * np.arange(mt.size) / 24.0
    ds = laws_table(t, temp, model_time=mt, model_thickness=mh)
    model = ds["model"].values
    np.testing.assert_allclose(model[:51], 0.05 + 0.01 * np.arange(51), rtol=1e-12)
    assert np.all(np.isnan(model[51:]))
    assert ds["model"].attrs["units"] == "m"
    for name in LAW_NAMES:
        r = ds[f"ratio_{name}"].values
        assert np.isnan(r[0])  # law thickness 0 at the start
        np.testing.assert_allclose(r[1:51], model[1:51] / ds[name].values[1:51], rtol=1e-12)
        assert ds[f"ratio_{name}"].attrs["units"] == "1"
    with pytest.raises(InputError):
        laws_table(t, temp, model_time=mt)


def _read_csv(path):
    with open(path, newline="") as fh:
        rows = list(csv.reader(fh))
    return rows[0], rows[1:]


def test_csv_round_trip(tmp_path, cold_forcing):
    t, temp = cold_forcing
    mt = t[: 24 * 50 + 1]
    ds = laws_table(t, temp, base=-1.8, initial_thickness=0.1,
                    model_time=mt, model_thickness=np.linspace(0.1, 0.8, mt.size))
    path = tmp_path / "laws.csv"
    write_laws_csv(ds, path)
    header, rows = _read_csv(path)
    assert header == ["time", "fdd", "stefan", "lebedev", "anderson", "zubov", "model"]
    assert len(rows) == ds.sizes["time"]
    assert rows[0][0] == "2024-01-01T00:00:00Z"
    assert rows[-1][0] == "2024-04-10T00:00:00Z"
    for j, name in enumerate(header[1:], start=1):
        col = np.array([float(r[j]) if r[j] else np.nan for r in rows])
        np.testing.assert_allclose(col, ds[name].values, rtol=1e-15, equal_nan=True)
    assert os.listdir(tmp_path) == ["laws.csv"]  # no temporary file left


def test_csv_per_law_columns(tmp_path, cold_forcing):
    ds = laws_table(*cold_forcing)
    path = tmp_path / "laws.csv"
    write_laws_csv(ds, path)
    header, rows = _read_csv(path)
    assert header == ["time", "fdd_stefan", "fdd_lebedev", "fdd_anderson", "fdd_zubov",
                      "stefan", "lebedev", "anderson", "zubov"]
    assert float(rows[-1][1]) == pytest.approx(1820.0)
    assert float(rows[-1][2]) == pytest.approx(2000.0)
    with pytest.raises(InputError):
        write_laws_csv(ds, tmp_path / "missing_dir" / "laws.csv")


def _data_lines(text):
    lines = [ln for ln in text.splitlines() if not ln.startswith("#")]
    return lines[0], lines[3:]  # header, units, rule, then rows


def test_weekly_format_rows(cold_forcing):
    ds = laws_table(*cold_forcing, model_time=cold_forcing[0],
                    model_thickness=np.linspace(0, 1, cold_forcing[0].size))
    text = format_laws_table(ds, every="week")
    header, rows = _data_lines(text)
    # rows at day 0, 7, ..., 98 (15) plus the last row at day 100
    assert len(rows) == 1 + 100 // 7 + 1
    for col in ["time", "fdd_stefan", "stefan", "lebedev", "anderson", "zubov",
                "model", "ratio_zubov"]:
        assert col in header.split()
    assert rows[1].startswith("2024-01-08T00:00Z")
    # aligned columns: every row is as long as the header
    assert len({len(r) for r in rows}) == 1
    # values printed are the table's
    fields = rows[-1].split()
    assert float(fields[header.split().index("stefan")]) == pytest.approx(
        float(ds["stefan"].values[-1]), abs=5e-4)


def test_monthly_format_rows(cold_forcing):
    ds = laws_table(*cold_forcing, base=0.0)
    _, rows = _data_lines(format_laws_table(ds, every="month"))
    # 2024-01-01 (start), 02-01, 03-01, 04-01, and the last row 04-10
    assert [r.split()[0] for r in rows] == [
        "2024-01-01T00:00Z", "2024-02-01T00:00Z", "2024-03-01T00:00Z",
        "2024-04-01T00:00Z", "2024-04-10T00:00Z"]
    with pytest.raises(InputError):
        format_laws_table(ds, every="fortnight")


def test_fit_observations_noiseless():
    theta = np.linspace(20, 3500, 30)
    res = fit_observations(theta, 0.02 * theta**0.55)
    assert res["a"] == pytest.approx(0.02, rel=1e-6)
    assert res["b"] == pytest.approx(0.55, rel=1e-6)
    assert res["rmse"] < 1e-8


def test_fit_observations_noisy():
    rng = np.random.default_rng(42)
    theta = np.linspace(20, 3500, 40)
    h = 0.02 * theta**0.55 + rng.normal(0, 0.03, theta.size)
    res = fit_observations(theta, h)
    for key in ("a", "b", "sigma_a", "sigma_b", "corr", "rmse"):
        assert np.isfinite(res[key]), key
    assert res["sigma_a"] > 0 and res["sigma_b"] > 0
    assert -1.0 <= res["corr"] <= 1.0
    assert res["corr"] < 0  # a and b trade off against each other
    assert abs(res["b"] - 0.55) < 4 * res["sigma_b"]
    assert 0.015 < res["rmse"] < 0.05


def test_sample_winter_model_within_25_percent_of_empirical_laws(sample_forcing, sample_run):
    """Acceptance: end-of-winter model thickness within +-25 % of the mean of Lebedev (1938),
    Anderson (1961) and Zubov (1945), each at its own base temperature and started from the
    run's initial thickness (formulas as implemented in growth_laws, sources there)."""
    h = sample_run["ice_thickness"].values
    table = laws_table(sample_forcing["time"].values, sample_forcing["air_temperature"].values,
                       initial_thickness=float(h[0]), model_time=sample_run["time"].values,
                       model_thickness=h)
    ends = {law: float(table[law].values[-1]) for law in ("lebedev", "anderson", "zubov")}
    mean = np.mean(list(ends.values()))
    ratios = {law: h[-1] / v for law, v in ends.items()}
    print(f"model {h[-1]:.3f} m; laws {ends}; ratio to mean {h[-1] / mean:.3f}; ratios {ratios}")
    assert 0.75 <= h[-1] / mean <= 1.25


# --------------------------------------------------------------------------- the run's base and conductivity


def _run(cfg, temperature, liquid_fraction, scheme="linear"):
    """A minimal one-column output: three daily times, len(temperature) layers (same profile each time)."""
    t = np.datetime64("2024-01-01T00:00", "ns") + np.arange(3) * np.timedelta64(1, "D")
    n = len(temperature)
    prof = lambda v: (("time", "layer"), np.tile(np.asarray(v, float), (3, 1)))  # noqa: E731
    return xr.Dataset({"ice_thickness": ("time", [0.3, 0.32, 0.34]),
                       "air_temperature": ("time", [np.nan, -20.0, -20.0]),
                       "temperature": prof(temperature), "liquid_fraction": prof(liquid_fraction),
                       "bulk_salinity": prof([4.0] * n)},
                      coords={"time": t, "layer": np.arange(1, n + 1)},
                      attrs={"icecolumn_config": cfg.to_toml(), "surface_scheme": scheme, "icecolumn_version": "x"})


def test_stefan_base_is_the_runs_freezing_point():
    import gsw

    from icecolumn.config import default_config
    from icecolumn.laws import laws_for_run

    cfg = default_config().replace("initial", bulk_salinity=5.0).replace("ocean", salinity=6.0)
    run = _run(cfg, [-10.0, -2.0], [0.0, 0.1])
    t = np.datetime64("2024-01-01T00:00", "ns") + np.arange(24 * 2 + 1) * np.timedelta64(1, "h")
    table, coeff = laws_for_run(t, np.full(t.size, -20.0), run, "run.nc")
    fp = table.attrs["base_temperature_stefan_degC"]
    # TEOS-10 freezing temperature of 6 g/kg water at the surface, air-free (IOC, SCOR & IAPSO 2010,
    # via gsw.CT_freezing): about -0.32 degC, far from the -1.8 degC of 34 g/kg sea water
    assert fp == pytest.approx(float(gsw.CT_freezing(6.0, 0.0, 0.0)), abs=0.03)
    assert fp > -0.4 and "[ocean] salinity 6 g/kg" in table.attrs["base_source_stefan"]
    # the empirical laws keep their published bases (module references of icecolumn.growth_laws)
    assert table.attrs["base_temperature_lebedev_degC"] == 0.0
    assert table.attrs["base_temperature_anderson_degC"] == -1.8
    assert table.attrs["base_temperature_zubov_degC"] == 0.0
    for name in ("lebedev", "anderson", "zubov"):
        assert table.attrs[f"base_source_{name}"] == "the law's published base"
    assert coeff == cfg.surface.heat_transfer_coefficient
    text = format_laws_table(table)
    assert f"#   stefan    Stefan with surface transfer; base {fp:.2f} degC, the freezing point of the run's water" \
        in text
    assert "#   anderson  Anderson (1961); base -1.8 degC, the law's published base" in text
    # one day at -20 degC: fp - (-20) = 20 + fp freezing degree days below the run's freezing point
    assert table["fdd_stefan"].values[1] == pytest.approx(20.0 + fp, rel=1e-9)


def test_stefan_base_without_a_run_is_the_configurations():
    from icecolumn.config import default_config
    from icecolumn.laws import laws_for_run
    from icecolumn.phase import liquidus_temperature

    t = np.datetime64("2024-01-01T00:00", "ns") + np.arange(25) * np.timedelta64(1, "h")
    cfg = default_config().replace("initial", bulk_salinity=5.0).replace("ocean", salinity=6.0)
    table, _ = laws_for_run(t, np.full(t.size, -20.0), config=cfg)
    assert table.attrs["base_temperature_stefan_degC"] == pytest.approx(float(liquidus_temperature(6.0)))
    assert "the configuration's water" in table.attrs["base_source_stefan"]
    assert table.attrs["stefan_conductivity_W_m-1_K-1"] == 2.2  # no run: common practice, no source
    const = cfg.replace("properties", conductivity_model="constant", ice_conductivity=1.9)
    table, _ = laws_for_run(t, np.full(t.size, -20.0), config=const)
    assert table.attrs["stefan_conductivity_W_m-1_K-1"] == 1.9
    common, _ = laws_for_run(t, np.full(t.size, -20.0), config=cfg, base=-1.0)
    assert all(common.attrs[f"base_temperature_{n}_degC"] == -1.0 for n in LAW_NAMES)


def test_stefan_conductivity_is_the_runs_series_mean():
    from icecolumn.config import default_config
    from icecolumn.laws import run_conductivity, stefan_inputs

    cfg = default_config().replace("properties", conductivity_model="parallel_yen1991")
    # one layer of pure ice at -10 degC: Yen et al. (1991) via Eicken (2003, p. 55), 2.320 W m-1 K-1
    assert run_conductivity(_run(cfg, [-10.0], [0.0]), cfg) == pytest.approx(2.320, abs=5e-4)
    # two equal layers conduct in series: the harmonic mean of their conductivities (common practice,
    # no source); k_i(-10) = 2.3199, brine k_b(-2) = 0.4184 (1.25 - 0.06 + 0.00056) (Eicken 2003, p. 55)
    k1 = 1.16 * (1.91 + 8.66e-3 * 10 + 2.97e-5 * 100)
    k2 = 0.5 * 0.4184 * (1.25 - 0.06 + 0.00056) + 0.5 * 1.16 * (1.91 + 8.66e-3 * 2 + 2.97e-5 * 4)
    run = _run(cfg, [-10.0, -2.0], [0.0, 0.5])
    assert run_conductivity(run, cfg) == pytest.approx(2.0 / (1.0 / k1 + 1.0 / k2), rel=1e-9)
    inputs = stefan_inputs(run, "run.nc")
    assert inputs.conductivity == pytest.approx(2.0 / (1.0 / k1 + 1.0 / k2), rel=1e-9)
    assert "harmonic mean over the layers" in inputs.conductivity_note
    constant = cfg.replace("properties", conductivity_model="constant", ice_conductivity=1.7)
    assert run_conductivity(_run(constant, [-10.0, -2.0], [0.0, 0.5]), constant) == pytest.approx(1.7)


def test_stefan_labels_say_which_form():
    from icecolumn.laws import STEFAN_LABELS

    t = np.datetime64("2024-01-01T00:00", "ns") + np.arange(49) * np.timedelta64(1, "h")
    plain = laws_table(t, np.full(t.size, -20.0))
    transfer = laws_table(t, np.full(t.size, -20.0), surface_coefficient=10.0)
    assert plain["stefan"].attrs["label"] == STEFAN_LABELS["plain"] == "Stefan, surface = air"
    assert transfer["stefan"].attrs["label"] == STEFAN_LABELS["transfer"] == "Stefan with surface transfer"
    assert "Stefan, surface = air; base -1.8 degC" in format_laws_table(plain)
    assert "Stefan with surface transfer; base -1.8 degC" in format_laws_table(transfer)
