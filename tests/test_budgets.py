"""Discrete energy and salt budgets of whole-winter runs close to round-off.

The kernel builds every layer tendency and the cumulative budget terms from the same face
fluxes (icecolumn/kernel.py docstring), so the change of content equals the cumulative
boundary input at every output time, whatever the solver tolerance.  The tolerance is
1e-9 of the time integral of the absolute boundary fluxes, estimated from the output's
cumulative components as the sum over output intervals of their absolute changes.
"""

from __future__ import annotations

import numpy as np
import pytest

import icecolumn as ic
from icecolumn.forcing import forcing_from_arrays

ENERGY_COMPONENTS = ("energy_input_surface", "energy_input_ocean", "energy_input_water", "energy_input_drainage",
                     "energy_input_flushing", "energy_input_flooding", "energy_input_melt_out")
SALT_RELEASED_COMPONENTS = ("salt_released_melt", "salt_released_drainage", "salt_released_surface_melt",
                            "salt_released_flushing")


def _present(ds, names):
    found = [n for n in names if n in ds]
    assert len(found) >= 3 or names is SALT_RELEASED_COMPONENTS, found
    return found


def _abs_scale(ds, names):
    """Cumulative sum over intervals of sum_i |d component_i| (0 at the first time)."""
    inc = sum(np.abs(np.diff(ds[n].values)) for n in names)
    return np.concatenate([[0.0], np.cumsum(inc)])


def check_budgets(ds):
    # energy: content change == cumulative input, at every output time
    e_names = _present(ds, ENERGY_COMPONENTS)
    content = ds["enthalpy_content"].values
    e_in = ds["energy_input"].values
    assert e_in[0] == 0.0
    res = np.abs(content - content[0] - e_in)
    scale = _abs_scale(ds, e_names)
    assert scale[-1] > 0
    worst = np.max(res[1:] / np.maximum(scale[1:], 1e-300))
    assert np.all(res[1:] <= 1e-9 * scale[1:]), f"energy budget: worst residual / scale = {worst:.2e}"
    # energy_input is the sum of its components
    parts = sum(ds[n].values for n in e_names)
    assert np.all(np.abs(e_in - parts) <= 1e-12 * np.maximum(scale, 1.0))

    # salt: content change == entrained - released
    s_names = ["salt_entrained", *_present(ds, SALT_RELEASED_COMPONENTS)]
    salt = ds["salt_content"].values
    ent = ds["salt_entrained"].values
    rel = ds["salt_released"].values
    sres = np.abs(salt - salt[0] - (ent - rel))
    sscale = _abs_scale(ds, s_names)
    assert sscale[-1] > 0
    sworst = np.max(sres[1:] / np.maximum(sscale[1:], 1e-300))
    assert np.all(sres[1:] <= 1e-9 * sscale[1:]), f"salt budget: worst residual / scale = {sworst:.2e}"
    # salt_released is the sum of its components
    sparts = sum(ds[n].values for n in SALT_RELEASED_COMPONENTS if n in ds)
    assert np.all(np.abs(rel - sparts) <= 1e-12 * np.maximum(sscale, 1e-3))
    # salt_flux (interval means) integrates to salt_released at the end
    t = (ds["time"].values - ds["time"].values[0]) / np.timedelta64(1, "s")
    flux = ds["salt_flux"].values
    assert np.isnan(flux[0]) and np.all(np.isfinite(flux[1:]))
    total = np.sum(flux[1:] * np.diff(t))
    assert total == pytest.approx(rel[-1], rel=1e-12, abs=1e-12 * sscale[-1])
    return worst, sworst


def test_budgets_sample_winter(sample_run):
    worst, sworst = check_budgets(sample_run)
    print(f"\nsample winter: energy residual/scale {worst:.2e}, salt residual/scale {sworst:.2e}")
    # the run is a real winter: the ice grows and exchanges salt
    assert float(sample_run["ice_thickness"].values[-1]) > 1.0


@pytest.fixture(scope="module")
def warm_spell_forcing(sample_forcing):
    """The sample winter with air at +5 degC for 2 days in the middle of the run."""
    t = sample_forcing["time"].values
    air = sample_forcing["air_temperature"].values.copy()
    mid = t[0] + (t[-1] - t[0]) / 2
    air[(t >= mid) & (t < mid + np.timedelta64(2, "D"))] = 5.0
    return forcing_from_arrays(t, air)


def test_budgets_warm_spell(warm_spell_forcing):
    ds = ic.run(warm_spell_forcing, ic.default_config())
    # the warm spell warms the surface close to (not above) the melting point: measured max
    # -0.66 degC (the near-melting mush at the top has a large effective heat capacity)
    ts_max = float(ds["surface_temperature"].max())
    assert -2.0 < ts_max <= 0.0, ts_max
    worst, sworst = check_budgets(ds)
    print(f"\nwarm spell: energy residual/scale {worst:.2e}, salt residual/scale {sworst:.2e}")


def test_budgets_with_snow(sample_forcing):
    cfg = ic.default_config().replace("initial", snow_thickness=0.2)
    ds = ic.run(sample_forcing, cfg)
    assert float(ds["snow_thickness"].values[0]) == 0.2
    worst, sworst = check_budgets(ds)
    print(f"\nsnow 0.2 m: energy residual/scale {worst:.2e}, salt residual/scale {sworst:.2e}")
