"""The run summary under a measured snow-depth series (issue 11, defect 1): how much snow-ice the
record implies, and a warning when flooding needs more snow than the series shows.

Forcings are INVENTED: constant -20 degC air over 0.30 m of ice (the case of the issue).
"""
from __future__ import annotations

import numpy as np
import pytest
from typer.testing import CliRunner

import icecolumn as ic
from icecolumn.cli import app
from icecolumn.forcing import forcing_from_arrays
from icecolumn.summary import measured_snow_check, run_summary

START = np.datetime64("2027-01-01T00:00")


def _forcing(days, snow=None):
    t = START + np.arange(days * 24 + 1) * np.timedelta64(1, "h")
    extra = {} if snow is None else {"snow_thickness": snow(t)}
    return forcing_from_arrays(t, np.full(t.size, -20.0), **extra)


def _cfg(snow):
    return ic.default_config().replace("initial", ice_thickness=0.30, snow_thickness=snow).replace("grid", layers=12)


def test_measured_series_reports_the_snow_ice_it_implies():
    f = _forcing(10, lambda t: np.full(t.size, 0.20))
    ds = ic.run(f, _cfg(0.20))
    s = run_summary(ds, f)
    assert s.measured_snow is not None
    assert s.measured_snow.snow_ice == pytest.approx(float(ds["snow_ice_growth"][-1]))
    assert s.measured_snow.snow_ice > 0.1  # the constant series keeps flooding (3.5x the prognostic case)
    assert s.measured_snow.initial == pytest.approx(0.20) and s.measured_snow.increases == 0.0
    assert s.warnings == []  # 0.18 m of snow-ice from 0.20 m of snow: the series can supply it
    assert "implies" in s.measured_snow.note()


def test_flooding_beyond_the_snow_the_series_shows_is_warned():
    f = _forcing(20, lambda t: np.full(t.size, 0.30))
    ds = ic.run(f, _cfg(0.30))
    s = run_summary(ds, f)
    assert s.measured_snow.snow_ice > 0.30
    assert len(s.warnings) == 1 and "more than the 0.300 m of snow the series shows" in s.warnings[0]


def test_prognostic_snow_has_no_measured_series_check():
    f = _forcing(10)
    ds = ic.run(f, _cfg(0.20))
    s = run_summary(ds, f)
    assert s.measured_snow is None and s.warnings == []
    assert run_summary(ds).measured_snow is None


def test_increases_sum_every_rise_of_the_series():
    # 0.10 -> 0.20 -> 0.15 -> 0.25 m over four days: rises of 0.10 and 0.10 m
    knots = np.array([0.10, 0.20, 0.15, 0.25, 0.25])

    def series(t):
        days = (t - START) / np.timedelta64(1, "D")
        return np.interp(days, np.arange(5.0), knots)

    f = _forcing(4, series)
    ds = ic.run(f, _cfg(0.10))
    m = measured_snow_check(ds, f)
    assert m.initial == pytest.approx(0.10)
    assert m.increases == pytest.approx(0.20)
    assert m.supply == pytest.approx(0.30)


def test_cli_run_prints_the_measured_snow_line_and_the_warning(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    t = START + np.arange(20 * 24 + 1) * np.timedelta64(1, "h")
    rows = ["time,air_temperature,snow_thickness"] + [f"{str(x)[:16]}Z,-20.0,0.30" for x in t]
    (tmp_path / "f.csv").write_text("# INVENTED forcing\n" + "\n".join(rows) + "\n")
    (tmp_path / "c.toml").write_text("[initial]\nice_thickness = 0.30\nsnow_thickness = 0.30\n\n[grid]\nlayers = 12\n")
    r = CliRunner().invoke(app, ["run", "f.csv", "-c", "c.toml", "-o", "out.nc"])
    assert r.exit_code == 0, (r.stdout, r.stderr)
    assert "measured snow:  the measured snow_thickness series implies" in r.stdout
    warn = [ln for ln in r.stdout.splitlines() if ln.startswith("warning: flooding under the measured")]
    assert len(warn) == 1
