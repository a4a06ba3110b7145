"""Surface energy balance: published check values and model behaviour in warm and cold spells."""
import numpy as np
import pytest
import xarray as xr

import icecolumn as ic
from scipy.integrate import quad

from icecolumn import surface as S
from icecolumn.surface import longwave_down, net_surface_flux_scalar, saturation_vapour_pressure


@pytest.mark.parametrize("ta,values", [
    (-30.0, (151.6, 157.1, 195.2)),
    (-20.0, (178.1, 184.6, 229.4)),
    (-10.0, (208.0, 215.5, 267.8)),
])
def test_longwave_konig_langlo_augstein_1994(ta, values):
    # Koenig-Langlo & Augstein (1994, Meteorol. Z. 3, 343), L = (0.765 + 0.22 N^3) sigma T^4
    # (formula from memory); values derived by hand from it for N = 0, 0.5, 1, as printed (0.1 W m-2)
    got = longwave_down(np.full(3, ta), np.array([0.0, 0.5, 1.0]))
    np.testing.assert_allclose(got, values, atol=0.06)


def test_saturation_vapour_pressure_magnus():
    # Alduchov & Eskridge (1996) Magnus coefficients (from memory): 6.1094 hPa over water and
    # 6.1121 hPa over ice at 0 degC; at -10 degC ice 2.60 hPa, water 2.86 hPa (computed by hand)
    assert float(saturation_vapour_pressure(0.0)) == pytest.approx(6.1094, rel=1e-12)
    assert float(saturation_vapour_pressure(0.0, over_ice=True)) == pytest.approx(6.1121, rel=1e-12)
    assert float(saturation_vapour_pressure(-10.0, over_ice=True)) == pytest.approx(2.60, abs=0.01)
    assert float(saturation_vapour_pressure(-10.0)) == pytest.approx(2.86, abs=0.01)


def test_net_flux_derivative_and_linearised_coefficient():
    # the derivative matches a finite difference, and its magnitude is the linearised total
    # coefficient: 4 eps sigma T^3 + turbulent ~ 12 W m-2 K-1 at -20 degC, 5 m/s (derived,
    # consistent with the 10-30 W m-2 K-1 of Ashton, Britannica "Ice in lakes and rivers")
    qa = S.air_specific_humidity_scalar(-20.0, np.nan)
    ch = S.transfer_coefficient_scalar(-20.0, -20.0, 5.0, S.ROUGHNESS_LENGTH, 10.0, 2.0, 1)
    nan = np.nan
    f, df = net_surface_flux_scalar(-20.0, -20.0, 0.0, 180.0, 5.0, qa, 0.85, 0.0, ch, nan, nan)
    f2, _ = net_surface_flux_scalar(-20.0 + 1e-4, -20.0, 0.0, 180.0, 5.0, qa, 0.85, 0.0, ch, nan, nan)
    assert df == pytest.approx((f2 - f) / 1e-4, rel=1e-3)
    assert 10.0 < -df < 20.0
    # measured turbulent fluxes replace the bulk ones (and do not depend on T_s)
    g, dg = net_surface_flux_scalar(-20.0, -20.0, 0.0, 180.0, 5.0, qa, 0.85, 0.0, ch, 7.0, -1.0)
    f0, df0 = net_surface_flux_scalar(-20.0, -20.0, 0.0, 180.0, 5.0, qa, 0.85, 0.0, 0.0, nan, nan)
    assert g == pytest.approx(f0 + 6.0, rel=1e-12)
    assert dg == pytest.approx(df0, rel=1e-12)


# --------------------------------------------------------------------------- stability
def _psi_from_phi(phi, zeta):
    """psi(zeta) = int_0^zeta (1 - phi(x)) / x dx (the definition of the integrated functions)."""
    return quad(lambda x: (1.0 - phi(x)) / x, 0.0, zeta, limit=200)[0]


@pytest.mark.parametrize("zeta", [0.05, 0.5, 2.0, 8.0])
def test_stable_psi_grachev2007_integrates_their_phi(zeta):
    # Grachev et al. (2007, Boundary-Layer Meteorol. 124, 315), SHEBA (phi forms from memory):
    # phi_m = 1 + 5 z (1 + z)^(1/3) / (1 + 5/6.5 z), phi_h = 1 + (5 z + 5 z^2) / (1 + 3 z + z^2)
    bm = 5.0 / 6.5
    pm, ph = S.psi_stable_grachev2007(zeta)
    assert pm == pytest.approx(_psi_from_phi(lambda x: 1 + 5 * x * (1 + x) ** (1 / 3) / (1 + bm * x), zeta),
                               rel=1e-8)
    assert ph == pytest.approx(_psi_from_phi(lambda x: 1 + (5 * x + 5 * x * x) / (1 + 3 * x + x * x), zeta),
                               rel=1e-8)


@pytest.mark.parametrize("zeta", [-0.05, -0.5, -2.0])
def test_unstable_psi_paulson1970_integrates_businger_dyer(zeta):
    # Paulson (1970, J. Appl. Meteorol. 9, 857) integrated the Businger-Dyer forms
    # phi_m = (1 - 16 z)^(-1/4), phi_h = (1 - 16 z)^(-1/2) (common practice)
    pm, ph = S.psi_unstable_paulson1970(zeta)
    assert pm == pytest.approx(_psi_from_phi(lambda x: (1 - 16 * x) ** -0.25, zeta), rel=1e-8)
    assert ph == pytest.approx(_psi_from_phi(lambda x: (1 - 16 * x) ** -0.5, zeta), rel=1e-8)


def test_transfer_coefficient_neutral_stable_unstable():
    # neutral: kappa^2 / (ln(z_u/z0) ln(z_t/z0)); with wind and temperature at 10 m and
    # z0 = 2.3e-4 m (Andreas et al. 2010) it is 1.40e-3, within the 1.0-1.5e-3 of Andreas (1987,
    # Boundary-Layer Meteorol. 38, 159) for neutral C_H over snow and sea ice
    z0 = S.ROUGHNESS_LENGTH
    neutral = float(S.transfer_coefficient(-20.0, -20.0, 5.0, z0, 10.0, 10.0, "neutral"))
    assert neutral == pytest.approx(0.16 / np.log(10 / z0) ** 2, rel=1e-12)
    assert neutral == pytest.approx(1.40e-3, abs=0.01e-3)
    # equal potential temperatures: near neutral with the MO scheme too
    t2 = -20.0 - S.DRY_ADIABATIC_LAPSE * 10.0
    assert float(S.transfer_coefficient(-20.0, t2, 5.0, z0, 10.0, 10.0)) == pytest.approx(neutral, rel=1e-6)
    # a 5 K inversion at 3 m/s damps turbulence; a surface 5 K warmer than the air enhances it
    stable = float(S.transfer_coefficient(-25.0, -20.0, 3.0))
    unstable = float(S.transfer_coefficient(-15.0, -20.0, 3.0))
    ref = float(S.transfer_coefficient(-20.0, -20.0, 3.0, stability="neutral"))
    assert stable < 0.8 * ref < ref < unstable
    # SHEBA functions keep some turbulence in strong stability (no critical Richardson number)
    assert float(S.transfer_coefficient(-35.0, -20.0, 1.0)) > 0.05 * ref


@pytest.mark.parametrize("ts", [-30.0, -22.0, -20.0, -18.0, -10.0])
def test_transfer_coefficient_derivative(ts):
    # the implicit-function derivative of C_H with respect to the surface temperature against
    # central differences (air at -20 degC, 3 m/s: stable for a colder surface, unstable for a warmer one)
    args = (-20.0, 3.0, S.ROUGHNESS_LENGTH, 10.0, 2.0, 1)
    ch, dch, _ = S.transfer_coefficient_iterate(ts, *args, 0.0)
    d = 1e-4
    fd = (S.transfer_coefficient_scalar(ts + d, *args) - S.transfer_coefficient_scalar(ts - d, *args)) / (2 * d)
    assert dch == pytest.approx(fd, rel=1e-5, abs=1e-12)


def test_air_humidity_default_is_ice_saturation():
    # without a humidity column the air is saturated over ice below 0 degC (Andreas et al. 2002,
    # JGR 107(C8), 8033: near-surface air over polar sea ice is always near ice saturation); the old
    # default, 90 % over water, is 120 % over ice at -30 degC
    q_ice = S.specific_humidity_scalar(S.saturation_vapour_pressure_scalar(-30.0, True))
    assert S.air_specific_humidity_scalar(-30.0, np.nan) == pytest.approx(q_ice, rel=1e-12)
    old = S.air_specific_humidity_scalar(-30.0, 90.0)
    assert old / q_ice == pytest.approx(1.2, abs=0.02)


def test_four_albedos():
    a = (0.85, 0.75, 0.65, 0.60)
    assert S.albedo_scalar(0.2, -10.0, 0.0, *a) == 0.85
    assert S.albedo_scalar(0.2, 0.0, 0.0, *a) == 0.75
    assert S.albedo_scalar(0.0, -10.0, 0.0, *a) == 0.65
    assert S.albedo_scalar(0.0, 0.0, 0.0, *a) == 0.60
    # melting bare ice with the default ponds: 0.7 * 0.60 + 0.3 * 0.21 = 0.483 (arithmetic; Divine et
    # al. 2015, The Cryosphere 9, 255 measured an area average of 0.44 with 29 % pond cover)
    assert S.albedo_scalar(0.0, 0.0, 0.0, *a, S.POND_FRACTION, S.ALBEDO_POND) == pytest.approx(0.483, abs=1e-12)


def _forcing(days, air, sw=0.0):
    t = np.datetime64("2027-01-01", "ns") + np.arange(24 * days + 1) * np.timedelta64(1, "h")
    n = t.size
    return xr.Dataset({"air_temperature": ("time", np.broadcast_to(air, n).astype(float)),
                       "shortwave_down": ("time", np.full(n, sw)), "cloud_fraction": ("time", np.full(n, 0.5)),
                       "wind_speed": ("time", np.full(n, 5.0)), "relative_humidity": ("time", np.full(n, 90.0))},
                      coords={"time": t}, attrs={"source_file": "<invented test forcing>"})


def _cfg(**init):
    return (ic.default_config().replace("surface", scheme="energy_balance").replace("grid", layers=20)
            .replace("initial", **(init or {"ice_thickness": 0.5})))


def _budget_residual(ds):
    parts = [c for c in ds.data_vars if c.startswith("energy_input_")]
    scale = sum(np.abs(np.diff(ds[c].values)).sum() for c in parts)
    d = ds.enthalpy_content.values - ds.enthalpy_content.values[0] - ds.energy_input.values
    return np.abs(d).max() / scale


def test_warm_spell_and_extreme_cold_run_with_closed_budgets():
    days = 30
    t_hours = np.arange(24 * days + 1)
    air = np.full(t_hours.size, -25.0)
    # +8 C for two days mid-run (invented; with the stability correction a +5 C inversion over the
    # cold surface leaves it just below its melting point, -0.05 C)
    air[(t_hours > 240) & (t_hours < 288)] = 8.0
    warm = ic.run(_forcing(days, air, sw=300.0), _cfg())
    assert np.nanmax(warm.surface_temperature.values) <= 0.0  # never above the melting point
    assert np.nanmax(warm.surface_melt_energy_flux.values) > 0.0  # the warm spell reaches the melting point
    assert _budget_residual(warm) < 1e-9
    cold = ic.run(_forcing(7, -50.0), _cfg())  # -50 C for a week
    assert cold.ice_thickness.values[-1] > cold.ice_thickness.values[0]
    assert _budget_residual(cold) < 1e-9


def test_energy_balance_growth_is_within_the_linear_scheme_range():
    # sanity (common practice, no source): in polar night at -25 C the balance grows ice at a
    # rate comparable with the linear scheme with H = 10-30 W m-2 K-1
    f = _forcing(30, -25.0)
    eb = ic.run(f, _cfg()).ice_thickness.values[-1]
    lin = [ic.run(f, _cfg().replace("surface", scheme="linear", heat_transfer_coefficient=h)).ice_thickness.values[-1]
           for h in (10.0, 30.0)]
    assert 0.9 * lin[0] < eb < 1.1 * lin[1]


def _summer(days, air, peak_shortwave):
    """Invented melt-season test forcing: constant air temperature, a daily shortwave cycle."""
    t = np.datetime64("2027-06-01", "ns") + np.arange(24 * days + 1) * np.timedelta64(1, "h")
    hr = np.arange(t.size) % 24
    one = np.ones(t.size)
    return xr.Dataset({"air_temperature": ("time", air * one),
                       "shortwave_down": ("time", np.maximum(0.0, peak_shortwave * np.sin(np.pi * hr / 24))),
                       "cloud_fraction": ("time", 0.7 * one), "wind_speed": ("time", 5.0 * one),
                       "relative_humidity": ("time", 95.0 * one)},
                      coords={"time": t}, attrs={"source_file": "<invented test forcing>"})


def test_surface_melt_closes_budgets_and_thickness_identity():
    # a warm sunny spell on 1 m ice: the surface melts; energy and salt budgets close, and
    # thickness change = congelation growth - basal melt - surface melt (bookkeeping identity)
    f = _summer(6, air=3.0, peak_shortwave=500.0)
    ds = ic.run(f, _cfg(ice_thickness=1.0, bulk_salinity=5.0))
    h = ds.interface_depth.values
    assert ds.surface_melt.values[-1] > 0.05
    assert np.nanmax(ds.surface_temperature.values) <= 0.0
    ident = (h - h[0]) - (ds.congelation_growth - ds.basal_melt - ds.surface_melt).values
    assert np.abs(ident).max() < 1e-12
    assert _budget_residual(ds) < 1e-9
    salt = ds.salt_content.values - ds.salt_content.values[0] - ds.salt_entrained.values + ds.salt_released.values
    assert np.abs(salt).max() < 1e-9 * ds.salt_content.values[0]
    assert ds.salt_released_surface_melt.values[-1] > 0.0


def test_flushing_desalinates_melting_ice_and_conserves():
    # surface melt water percolating through permeable ice flushes salt (Notz & Worster 2009,
    # JGR 114, C05006: flushing is one of the two processes with measurable net salt loss)
    f = _summer(6, air=2.0, peak_shortwave=400.0)
    base = _cfg(ice_thickness=1.5, bulk_salinity=6.0)
    off = ic.run(f, base.replace("drainage", flushing_fraction=0.0))
    on = ic.run(f, base)
    s_off = float(off.bulk_salinity.isel(time=-1).mean())
    s_on = float(on.bulk_salinity.isel(time=-1).mean())
    assert on.salt_released_flushing.values[-1] > 0.0 and off.salt_released_flushing.values[-1] == 0.0
    assert s_on < s_off - 0.5
    assert _budget_residual(on) < 1e-9
    salt = on.salt_content.values - on.salt_content.values[0] - on.salt_entrained.values + on.salt_released.values
    assert np.abs(salt).max() < 1e-9 * on.salt_content.values[0]
    # impermeable (cold) ice does not flush: no surface melt below 0 degC, and the gate is closed
    cold = ic.run(_forcing(3, -20.0), base)
    assert cold.salt_released_flushing.values[-1] == 0.0


def test_open_water_flux_worked_example():
    from icecolumn.surface import STEFAN_BOLTZMANN, net_water_flux_scalar

    # Worked example (our arithmetic): water and air at 0 degC, saturated air, so the turbulent
    # terms vanish; shortwave 100 W m-2 with the open-ocean albedo 0.06 (Pegau & Paulson 2001,
    # Annals Glaciol. 33, 221; from memory) and longwave 300 W m-2 with emissivity 0.97
    # (common practice, no source): 0.94 * 100 + 0.97 * (300 - sigma 273.15^4) = 78.81 W m-2.
    expected = 0.94 * 100.0 + 0.97 * (300.0 - STEFAN_BOLTZMANN * 273.15 ** 4)
    assert expected == pytest.approx(78.81, abs=0.005)
    q0 = S.air_specific_humidity_scalar(0.0, 100.0)
    nan = np.nan
    assert net_water_flux_scalar(0.0, 0.0, 100.0, 300.0, 5.0, q0, 1.3e-3, nan, nan) == pytest.approx(expected,
                                                                                                    rel=1e-12)
    # sensible heat alone: rho_a c_pa C_H U (T_a - T_w) = 1.3 * 1004 * 1.3e-3 * 5 * 5 = 42.42 W m-2
    # (bulk formula with the constants of icecolumn.surface), at equal air humidity
    warm = net_water_flux_scalar(0.0, 5.0, 0.0, 0.0, 5.0, q0, 1.3e-3, nan, nan)
    cold = net_water_flux_scalar(0.0, 0.0, 0.0, 0.0, 5.0, q0, 1.3e-3, nan, nan)
    assert warm - cold == pytest.approx(1.3 * 1004.0 * 1.3e-3 * 5.0 * 5.0, rel=1e-9)
