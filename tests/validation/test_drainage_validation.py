"""Validation of brine gravity drainage and snow-ice desalination against published observations.

What each case is (docs/validation_drainage.md has the table and the numbers):

* Naumann et al. (2012, The Cryosphere 6, 729-741): nilas grown in a tank of ~29 g/kg water
  desalinates by about 2.1 g/kg per hour in the first hours, nearly independently of the air
  temperature (values as summarised in the project's issue 11; from memory, not re-read in the
  paper).  **This is the calibration of the flux coefficient alpha = 6e-3 kg m-3 s-1** of the
  griewank_notz2013 default (icecolumn/drainage.py); the test checks that calibration, it is not
  an independent validation.  The near independence of air temperature is not met (strict xfail).
* Nakawo & Sinha (1981, J. Glaciol. 27(96), 315-330) and Cox & Weeks (1988, JGR 93(C10),
  12449-12460): the effective segregation coefficient, hence the salinity of new ice a few cm above
  the base, rises with the growth rate.  Not met by the model (strict xfail with its numbers).
* Cox & Weeks (1974, J. Glaciol. 13(67), 109-120) and Kovacs (1996, CRREL Report 96-7):
  thickness-salinity relations of first-year ice cores, checked on ``ice_bulk_salinity`` (the
  skeletal bottom 5 cm left out, as cores lose it).  Neither Ra_c (published, Griewank & Notz 2013,
  JGR Oceans 118, 3370) nor alpha (Naumann case above) was tuned to these relations; the
  tolerance (1.5 g/kg) is the one the project used before this version.
* Snow-ice salinity: observed snow-ice is a few g/kg (Eicken et al. 1995, JGR 100(C7);
  Jeffries et al. 1997, Ann. Glaciol. 25; Granskog et al. 2004, Ann. Glaciol. 39 -- all from
  memory, pages not checked: Antarctic and Baltic snow-ice mostly 2-8 g/kg).  The snow-ice
  brine-exchange time (2 days) is a model choice; the check is the sample year's snow-ice at the
  end of May within 1-8 g/kg.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import icecolumn as ic
from icecolumn.forcing import forcing_from_arrays

ROOT = Path(__file__).resolve().parents[2]


# --------------------------------------------------------------------------- Naumann et al. 2012
def _nilas_rate(air_temperature):
    """Mean desalination rate [g/kg per hour] of the depth-mean bulk salinity over the first 3 h of
    1 cm nilas (starting at the tank's 29 g/kg) in 29 g/kg water."""
    t = np.datetime64("2027-01-01T00:00") + np.arange(0, 3 * 60 + 1, 10) * np.timedelta64(1, "m")
    f = forcing_from_arrays(t, np.full(t.size, air_temperature))
    cfg = (ic.default_config().replace("output", interval="10min").replace("ocean", salinity=29.0)
           .replace("initial", ice_thickness=0.01, bulk_salinity=29.0))
    ds = ic.run(f, cfg)
    s = ds["bulk_salinity"].mean("layer").values
    hours = (ds.time.values[-1] - ds.time.values[0]) / np.timedelta64(1, "h")
    return float((s[0] - s[-1]) / hours)


@pytest.mark.parametrize("air", [-20.0, -30.0])
def test_naumann2012_nilas_desalination_rate(air):
    # Naumann et al. (2012, The Cryosphere 6, 729): ~2.1 g/kg per hour in the first hours (from
    # memory).  CALIBRATION: alpha = 6e-3 kg m-3 s-1 was chosen on this case; tolerance +-0.6 g/kg/h.
    rate = _nilas_rate(air)
    print(f"air {air} degC: first-3-h desalination {rate:.2f} g/kg per hour (Naumann et al. 2012: ~2.1)")
    assert abs(rate - 2.1) <= 0.6


@pytest.mark.xfail(strict=True, reason="measured: first-3-h rates 1.15, 1.94, 2.26 g/kg/h at -10, -20, -30 degC "
                                       "(ratio -10/-30 = 0.51); Naumann et al. 2012 found the rate nearly "
                                       "independent of air temperature: in the model the colder surface drives "
                                       "a steeper brine-salinity gradient and faster growth")
def test_naumann2012_rate_nearly_independent_of_air_temperature():
    # Naumann et al. (2012, The Cryosphere 6, 729; from memory): nearly independent of air temperature.
    # Accepted as "nearly": the -10 degC rate at least 0.7 of the -30 degC rate (a tolerance of this test).
    warm, cold = _nilas_rate(-10.0), _nilas_rate(-30.0)
    print(f"rates: -10 degC {warm:.2f}, -30 degC {cold:.2f} g/kg/h, ratio {warm / cold:.2f}")
    assert warm >= 0.7 * cold


# --------------------------------------------------------------------------- effective segregation
def keff_nakawo_sinha1981(v):
    """Effective segregation coefficient [1] at growth rate ``v`` [m s-1]: Nakawo & Sinha (1981,
    J. Glaciol. 27(96), 315), k = 0.12 / (0.12 + 0.88 exp(-4.2e4 v)) with v in cm s-1 (from memory)."""
    vc = v * 100.0
    return 0.12 / (0.12 + 0.88 * np.exp(-4.2e4 * vc))


def keff_cox_weeks1988(v):
    """Cox & Weeks (1988, JGR 93(C10), 12449), v in cm s-1 (from memory):
    k = 0.26 / (0.26 + 0.74 exp(-7243 v)) for v > 3.6e-5; 0.8925 + 0.0568 ln v for 2e-6 < v <= 3.6e-5;
    0.12 below."""
    vc = v * 100.0
    if vc > 3.6e-5:
        return 0.26 / (0.26 + 0.74 * np.exp(-7243.0 * vc))
    if vc > 2.0e-6:
        return 0.8925 + 0.0568 * np.log(vc)
    return 0.12


def _new_ice_salinity(air):
    """Growth rate [m s-1] over the last 5 of 20 days from 0.4 m ice, and the bulk salinity 5 cm above
    the base at the end [g/kg]."""
    t = np.datetime64("2027-01-01T00", "h") + np.arange(0, 20 * 24 + 1, 6) * np.timedelta64(1, "h")
    f = forcing_from_arrays(t, np.full(t.size, air))
    cfg = ic.default_config().replace("initial", ice_thickness=0.4, bulk_salinity=6.0)
    ds = ic.run(f, cfg)
    h = ds["interface_depth"].values
    v = (h[-1] - h[-21]) / (5 * 86400.0)
    s = np.interp(h[-1] - 0.05, ds["depth"].values[-1], ds["bulk_salinity"].values[-1])
    return float(v), float(s)


def test_segregation_published_relations_rise():
    # derived in this test from the two published relations: between 0.7 and 1.5 cm/day the new-ice
    # salinity k S_w (S_w = 34 g/kg) rises by 1-2 g/kg
    v1, v2 = 0.007 / 86400.0, 0.015 / 86400.0
    for k in (keff_nakawo_sinha1981, keff_cox_weeks1988):
        d = 34.0 * (k(v2) - k(v1))
        print(k.__name__, f"{34 * k(v1):.2f} -> {34 * k(v2):.2f} g/kg")
        assert 0.8 <= d <= 2.5


@pytest.mark.xfail(strict=True, reason="measured (defaults): 5 cm above the base 12.08, 11.42, 11.10 g/kg at "
                                       "0.49, 0.95, 1.47 cm/day (-8, -15, -25 degC): flat to falling, while "
                                       "Nakawo & Sinha 1981 / Cox & Weeks 1988 give 5.5-7.5 / 7.7-9.2 g/kg "
                                       "rising from 0.7 to 1.5 cm/day; the mush self-regulates to Ra ~ Ra_c whatever "
                                       "the growth rate")
def test_new_ice_salinity_rises_with_growth_rate():
    # Nakawo & Sinha (1981, J. Glaciol. 27, 315) / Cox & Weeks (1988, JGR 93, 12449): k_eff rises with
    # growth rate. Accepted: salinity 5 cm above the base at ~1.5 cm/day exceeds that at ~0.5 cm/day by
    # at least 0.5 g/kg (a tolerance of this test; the relations give 1-2 g/kg).
    slow_v, slow_s = _new_ice_salinity(-8.0)
    fast_v, fast_s = _new_ice_salinity(-25.0)
    print(f"{slow_v * 8.64e6:.2f} cm/day: {slow_s:.2f} g/kg; {fast_v * 8.64e6:.2f} cm/day: {fast_s:.2f} g/kg; "
          f"Cox & Weeks 1988: {34 * keff_cox_weeks1988(slow_v):.2f} -> {34 * keff_cox_weeks1988(fast_v):.2f}")
    assert fast_v > slow_v
    assert fast_s >= slow_s + 0.5


# --------------------------------------------------------------------------- cores vs thickness
def test_core_salinity_vs_cox_weeks1974_kovacs1996(sample_run):
    # Cox & Weeks (1974, J. Glaciol. 13(67), 109-120): S = 7.88 - 1.59 h (h > 0.4 m);
    # Kovacs (1996, CRREL Report 96-7): S = 4.606 + 91.603 / h_cm.  On ice_bulk_salinity (cores).
    # Defaults not tuned to these relations (published Ra_c; alpha from the Naumann case).
    ds = sample_run
    h = ds["ice_thickness"].values
    s = ds["ice_bulk_salinity"].values
    assert "bottom" in ds["ice_bulk_salinity"].attrs["comment"]
    for target in (0.5, 1.0, 1.5):
        i = int(np.argmax(h >= target))
        assert h[i] >= target
        hh = h[i]
        cw = 7.88 - 1.59 * hh
        kv = 4.606 + 91.603 / (100.0 * hh)
        print(f"h = {hh:.3f} m: ice_bulk_salinity {s[i]:.2f}, Cox & Weeks {cw:.2f}, Kovacs {kv:.2f} g/kg")
        assert abs(s[i] - cw) <= 1.5
        assert abs(s[i] - kv) <= 1.5


# --------------------------------------------------------------------------- snow-ice
def _snow_ice_salinity(ds):
    """Mean bulk salinity [g/kg] of the layers above the snow-ice depth (snow-ice formed minus surface
    melt) at each time; NaN without snow-ice."""
    d = ds["snow_ice_growth"].values - ds["surface_melt"].values
    s = ds["bulk_salinity"].values
    z = ds["depth"].values
    out = np.full(d.size, np.nan)
    for i in range(d.size):
        m = z[i] < d[i]
        if m.any():
            out[i] = s[i][m].mean()
    return out


@pytest.fixture(scope="module")
def year_runs():
    f = ic.read_forcing(ROOT / "forcing_samples" / "station_year.csv")
    cfg = ic.load_config(ROOT / "forcing_samples" / "station_year.toml")
    return ic.run(f, cfg), ic.run(f, cfg.replace("snow", snow_ice_drainage_timescale="100000D"))


def test_snow_ice_salinity_sample_year(year_runs):
    # Observed snow-ice bulk salinity a few g/kg (Eicken et al. 1995, JGR 100; Jeffries et al. 1997,
    # Ann. Glaciol. 25; Granskog et al. 2004, Ann. Glaciol. 39; from memory: mostly 2-8 g/kg).
    # Accepted: 1-8 g/kg at the end of May, after most of the sample year's flooding.
    ds, off = year_runs
    i = int(np.argmin(np.abs(ds.time.values - np.datetime64("2027-05-31"))))
    formed = float(ds["snow_ice_growth"].values[i])
    s_on, s_off = _snow_ice_salinity(ds)[i], _snow_ice_salinity(off)[i]
    print(f"31 May: snow-ice {formed:.3f} m, salinity {s_on:.2f} g/kg (exchange off: {s_off:.2f})")
    assert formed > 0.05
    assert 1.0 <= s_on <= 8.0
    assert s_off > 15.0  # without the exchange the slush keeps its sea water: (1 - rho_s/rho) S_w


def test_snow_ice_exchange_budgets_close(year_runs):
    ds, _ = year_runs
    e = ds["enthalpy_content"].values
    res = np.abs(e - e[0] - ds["energy_input"].values)
    scale = np.abs(np.diff(ds["energy_input"].values)).sum()
    s = ds["salt_content"].values
    sres = np.abs(s - s[0] - (ds["salt_entrained"].values - ds["salt_released"].values))
    sscale = np.abs(np.diff(ds["salt_entrained"].values)).sum() + np.abs(np.diff(ds["salt_released"].values)).sum()
    si = ds["salt_released_snow_ice_drainage"].values
    print(f"energy residual {res.max() / scale:.2e}, salt residual {sres.max() / sscale:.2e}, "
          f"salt released from snow-ice {si[-1]:.4f} kg m-2")
    assert res.max() <= 1e-9 * scale
    assert sres.max() <= 1e-9 * sscale
    assert si[-1] > 0.0
    # records inside a step are interpolated (cubic Hermite, [solver] output_times), so a
    # cumulative term may dip by the interpolation error between records (measured 2.8e-11 of 3.1)
    assert np.all(np.diff(si) >= -1e-9 * si[-1])
    assert np.all(si <= ds["salt_released_drainage"].values + 1e-12)
