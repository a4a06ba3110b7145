"""Rate forcing (snowfall, radiation, fluxes) enters each step as its integral, so results do not
depend on the output interval or the step (issue: hourly snowfall sampled at the stage times of
6-hour steps lost 15 % of the snow)."""
from __future__ import annotations

import numpy as np
import pytest

import icecolumn as ic
from icecolumn.forcing import forcing_from_arrays
from icecolumn.kernel.inputs import interval_mean

HOUR = np.timedelta64(1, "h")


def _spiky_forcing(days=40):
    # invented: steady cold air, hourly snowfall in one-hour bursts every 7 hours (so that a step
    # rarely sees a burst at its stage times), a diurnal shortwave cycle
    t = np.datetime64("2027-02-01T00:00", "ns") + np.arange(days * 24 + 1) * HOUR
    hours = np.arange(t.size)
    snowfall = np.where(hours % 7 == 3, 2.0e-4, 0.0)  # kg m-2 s-1 water equivalent (0.72 mm per burst)
    sw = np.maximum(0.0, 250.0 * np.sin(2 * np.pi * (hours % 24 - 6) / 24.0))
    return forcing_from_arrays(t, np.full(t.size, -15.0), snowfall=snowfall, shortwave_down=sw,
                               cloud_fraction=np.full(t.size, 0.5), wind_speed=np.full(t.size, 5.0))


def test_interval_mean_is_the_exact_integral():
    ft = np.array([0.0, 1.0, 2.0, 3.0])
    fv = np.array([0.0, 2.0, 2.0, 0.0])
    assert interval_mean(ft, fv, 0.0, 3.0, 0) == pytest.approx(4.0 / 3.0, rel=1e-15)  # trapezoids by hand
    assert interval_mean(ft, fv, 0.5, 1.5, 0) == pytest.approx(1.75, rel=1e-15)
    assert interval_mean(ft, fv, -1.0, 0.5, 0) == pytest.approx(0.25 / 1.5, rel=1e-15)  # constant before
    assert interval_mean(ft, fv, 2.5, 5.0, 0) == pytest.approx(0.25 / 2.5, rel=1e-15)  # and after


@pytest.mark.parametrize("interval", ["1h", "3h", "6h", "1D"])
def test_results_do_not_depend_on_the_output_interval(interval):
    f = _spiky_forcing()
    cfg = (ic.default_config().replace("initial", ice_thickness=0.3, snow_thickness=0.0)
           .replace("snow", flooding="none").replace("output", interval=interval))
    ds = ic.run(f, cfg)
    ref = ic.run(f, cfg.replace("output", interval="1h").replace("solver", max_step="1h"))
    # the snow that fell is the forcing's integral, whatever the interval
    fallen = float(np.sum(0.5 * (f.snowfall.values[1:] + f.snowfall.values[:-1])) * 3600.0)
    snow = float(ds.snow_thickness[-1]) * cfg.snow.density
    assert snow == pytest.approx(fallen, rel=1e-9)
    assert float(ds.snow_thickness[-1]) == pytest.approx(float(ref.snow_thickness[-1]), rel=0.01)
    assert float(ds.ice_thickness[-1]) == pytest.approx(float(ref.ice_thickness[-1]), rel=0.01)
