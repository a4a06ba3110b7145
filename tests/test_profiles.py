"""Initial state from thermistor and ice-core files (icecolumn/profiles.py).

The example files in forcing_samples/ are INVENTED (scripts/make_history.py); the counts
checked below follow from how that script builds them.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import icecolumn as ic
from icecolumn import model
from icecolumn.errors import InputError
from icecolumn.forecast import initial_profile, run_forecast
from icecolumn.profiles import first_year_salinity, read_core, read_thermistor

SAMPLES = Path(__file__).resolve().parent.parent / "forcing_samples"
THERMISTOR = SAMPLES / "thermistor_example.csv"
CORE = SAMPLES / "core_example.csv"
HISTORY = SAMPLES / "station_history.csv"


def test_thermistor_keeps_in_ice_readings_and_counts_the_rest():
    # invented file: sensors at -0.10, -0.05 (snow), 0.00..0.60 every 0.05 (13, ice), 0.65, 0.70 (water)
    r = read_thermistor(THERMISTOR, 0.62)
    assert r.depth.size == 13 and r.in_snow == 2 and r.in_water == 2
    assert r.depth[0] == 0.0 and r.depth[-1] == pytest.approx(0.60)
    assert np.all(np.diff(r.depth) > 0)
    assert r.temperature[0] == pytest.approx(-18.0)
    # a thinner ice thickness moves sensors from the ice into the water
    thin = read_thermistor(THERMISTOR, 0.30)
    assert thin.depth.size == 7 and thin.in_water == 8 and thin.in_snow == 2
    assert "13 thermistor readings in the ice used" in r.summary()


def test_thermistor_without_reading_in_the_ice_is_an_input_error(tmp_path):
    p = tmp_path / "t.csv"
    p.write_text("depth,temperature\n-0.1,-20\n-0.05,-19\n0.9,-1.8\n")
    with pytest.raises(InputError, match="no thermistor reading inside the ice"):
        read_thermistor(p, 0.5)


def test_thermistor_bad_number_names_the_line(tmp_path):
    p = tmp_path / "t.csv"
    p.write_text("# comment\ndepth,temperature\n0.1,-10\n0.2,abc\n")
    with pytest.raises(InputError, match="line 4: column 'temperature'"):
        read_thermistor(p, 0.5)


def test_thermistor_picks_the_latest_time_at_or_before(tmp_path):
    p = tmp_path / "t.csv"
    p.write_text("time,depth,temperature\n2027-01-01T00:00,0.1,-10\n2027-01-01T00:00,0.2,-8\n"
                 "2027-01-09T00:00,0.1,-12\n2027-01-09T00:00,0.2,-9\n2027-01-11T00:00,0.1,-30\n")
    r = read_thermistor(p, 0.5, at="2027-01-10T00:00")
    assert list(r.temperature) == [-12.0, -9.0]


def test_core_mid_depths_and_checks(tmp_path):
    c = read_core(CORE, 0.62)
    # invented core: 6 sections 0-0.1, ..., 0.5-0.62
    assert c.depth.size == 6
    assert c.depth[0] == pytest.approx(0.05) and c.depth[-1] == pytest.approx(0.56)
    assert c.salinity[0] == pytest.approx(9.8)
    p = tmp_path / "c.csv"
    p.write_text("depth_top,depth_bottom,salinity\n0,0.2,8\n0.1,0.3,6\n")
    with pytest.raises(InputError, match="overlaps"):
        read_core(p)
    p.write_text("depth_top,depth_bottom,salinity\n0,0.2,60\n")
    with pytest.raises(InputError, match="outside 0..45"):
        read_core(p)


def test_first_year_salinity_cox_weeks():
    # Cox & Weeks (1974), J. Glaciol. 13(67): S = 14.24 - 19.39 h (h <= 0.4 m), 7.88 - 1.59 h (h > 0.4 m)
    assert first_year_salinity(0.2) == pytest.approx(14.24 - 19.39 * 0.2)
    assert first_year_salinity(1.0) == pytest.approx(7.88 - 1.59)
    assert first_year_salinity(0.62) == pytest.approx(7.88 - 1.59 * 0.62)


def test_default_profile_is_uniform_first_year_salinity_and_model_temperature():
    prof, notes = initial_profile(0.62)
    assert prof.temperature is None
    assert np.all(prof.salinity == pytest.approx(first_year_salinity(0.62)))
    assert any("Cox & Weeks (1974)" in n for n in notes)


def test_forecast_starts_from_the_thermistor_profile():
    hist = ic.read_forcing(HISTORY)
    cfg = ic.default_config().replace("grid", layers=12).replace("output", interval="1D")
    therm = read_thermistor(THERMISTOR, 0.62)
    core = read_core(CORE, 0.62)
    prof, _ = initial_profile(0.62, therm, core)
    ds = run_forecast(hist, "2027-01-10T00:00", ice_thickness=0.62, snow_thickness=0.15, profile=prof,
                      until="2027-01-20T00:00", members=2, perturb=False, config=cfg, variables="all")
    z = ds["depth"].isel(member=0, time=0).values
    tf = model.ocean_freezing_temperature(cfg)
    expected_t = np.minimum(np.interp(z, therm.depth, therm.temperature), tf)
    expected_s = np.interp(z, core.depth, core.salinity)
    got_t = ds["temperature"].isel(member=0, time=0).values
    got_s = ds["bulk_salinity"].isel(member=0, time=0).values
    assert np.allclose(got_t, expected_t, atol=1e-6)
    assert np.allclose(got_s, expected_s, atol=1e-9)
    # and it differs from the model's default linear start
    plain = run_forecast(hist, "2027-01-10T00:00", ice_thickness=0.62, snow_thickness=0.15,
                         until="2027-01-20T00:00", members=1, perturb=False, config=cfg, variables="all")
    assert np.max(np.abs(plain["temperature"].isel(member=0, time=0).values - got_t)) > 0.5
