"""Phase relations of icecolumn.phase: liquidus, brine fraction, enthalpy and its inverse.

Outside references are named beside each check.  The model's liquid fraction is a mass
fraction; under the model's equal ice and brine densities it is also the volume fraction
(icecolumn/constants.py), which is how it is compared with brine *volume* fractions below.
"""

from __future__ import annotations

import gsw
import numpy as np
import pytest
from hypothesis import example, given, settings
from hypothesis import strategies as st

from icecolumn.phase import (
    BRINE_SALINITY_LIMIT,
    brine_salinity,
    enthalpy,
    invert_enthalpy,
    invert_enthalpy_scalar,
    liquidus_temperature,
    state_enthalpy,
)

RHO, C_S, C_L, LAT = 917.0, 2100.0, 3990.0, 334000.0  # model defaults (icecolumn/constants.py)


def assur_cubic(t):
    """Assur (1958) phase-equilibrium cubic for standard sea ice, S_br [g/kg] at T [degC].

    Coefficients from memory as quoted in the secondary literature (not checked
    against Assur 1958 itself).
    """
    return -1.20 - 21.8 * t - 0.919 * t**2 - 0.0178 * t**3


def frankenstein_garner(s, t):
    """Brine volume fraction of Frankenstein & Garner (1967, J. Glaciol. 6(48)), formula from memory."""
    return s * (49.185 / np.abs(t) + 0.532) / 1000.0


# ------------------------------------------------------------------------------- liquidus


def test_liquidus_matches_teos10_freezing_point():
    # TEOS-10 (IOC, SCOR & IAPSO 2010) via gsw.t_freezing(SA, p=0, saturation_fraction=0): air-free.
    sa = np.linspace(0.0, 40.0, 801)
    err = np.abs(liquidus_temperature(sa) - gsw.t_freezing(sa, 0.0, 0.0))
    assert err.max() <= 0.05, f"max |T_L - gsw.t_freezing| = {err.max():.4f} K at SA = {sa[err.argmax()]}"


def test_brine_salinity_matches_assur_cubic():
    # Assur (1958) cubic, coefficients from memory as quoted in the secondary literature.
    t = np.linspace(-4.0, -20.0, 321)
    rel = np.abs(brine_salinity(t) / assur_cubic(t) - 1.0)
    assert rel.max() <= 0.03, f"max relative difference {rel.max():.4f} at T = {t[rel.argmax()]}"


def test_brine_salinity_monotonic_and_bounded_to_minus_60():
    # physical requirement (colder brine is saltier; no salt beyond saturation): common practice, no source
    t = np.linspace(-1e-4, -60.0, 60001)  # decreasing temperature
    s = brine_salinity(t)
    assert np.all(np.diff(s) > 0.0)
    assert s.max() < 330.0
    assert BRINE_SALINITY_LIMIT < 330.0
    assert brine_salinity(0.0) == 0.0
    assert brine_salinity(1.0) == 0.0


def test_liquidus_is_inverse_of_brine_salinity():
    t = -np.geomspace(1e-3, 60.0, 5001)
    back = liquidus_temperature(brine_salinity(t))
    assert np.max(np.abs(back - t)) <= 1e-10
    s = np.linspace(0.01, 270.0, 5001)
    assert np.max(np.abs(brine_salinity(liquidus_temperature(s)) - s)) <= 1e-10 * 270.0


# ------------------------------------------------------------------------------- enthalpy


def _rel_scale(h):
    return np.maximum(np.abs(h), RHO * LAT * 1e-3)


@settings(max_examples=400, deadline=None)
@given(t=st.floats(-50.0, 0.0, allow_nan=False), s=st.floats(0.0, 40.0, allow_nan=False))
@example(t=-6.905159632222793e-233, s=9.473739126373927e-236)  # found by hypothesis in CI: T and S -> 0
def test_enthalpy_round_trip(t, s):
    h, phi = state_enthalpy(t, s)
    t2, phi2, sbr2 = invert_enthalpy(h, s)
    h2 = enthalpy(t2, phi2)
    assert abs(h2 - h) <= 1e-9 * _rel_scale(h), (t, s, float(h), float(h2))
    if 0.0 < phi < 1.0:  # mushy cell: the temperature is recovered too
        assert abs(t2 - t) <= 1e-9 * (1.0 + abs(t)), (t, s, float(t2))
        assert abs(phi2 - phi) <= 1e-9, (t, s, float(phi), float(phi2))
        assert abs(phi2 * sbr2 - s) <= 1e-9 * max(s, 1.0)


@pytest.mark.parametrize("t, s", [(-0.5, 5.0), (-2.0, 10.0), (-5.0, 5.0), (-10.0, 34.0), (-25.0, 8.0),
                                  (-1.0, 0.5)])
def test_inverse_derivatives_match_finite_differences(t, s):
    h, phi = state_enthalpy(t, s)
    assert 0.0 < phi < 1.0
    _, _, _, dtdh, dtds = invert_enthalpy_scalar(float(h), s, RHO, C_S, C_L, LAT)
    dh = 1e-6 * RHO * LAT
    ds = 1e-6 * s
    tp = invert_enthalpy_scalar(float(h) + dh, s, RHO, C_S, C_L, LAT)[0]
    tm = invert_enthalpy_scalar(float(h) - dh, s, RHO, C_S, C_L, LAT)[0]
    fd_h = (tp - tm) / (2 * dh)
    tp = invert_enthalpy_scalar(float(h), s + ds, RHO, C_S, C_L, LAT)[0]
    tm = invert_enthalpy_scalar(float(h), s - ds, RHO, C_S, C_L, LAT)[0]
    fd_s = (tp - tm) / (2 * ds)
    assert dtdh == pytest.approx(fd_h, rel=1e-5)
    assert dtds == pytest.approx(fd_s, rel=1e-5)
    assert dtdh > 0.0 and dtds < 0.0  # more heat -> warmer; more salt at fixed H -> colder


def test_inverse_derivatives_fresh_and_liquid_closed_forms():
    # fresh solid ice: T = (H/rho + L)/c_s, so dT/dH = 1/(rho c_s); liquid: dT/dH = 1/(rho c_l)
    h_ice = RHO * (C_S * -5.0 - LAT)
    t, phi, sbr, dtdh, dtds = invert_enthalpy_scalar(h_ice, 0.0, RHO, C_S, C_L, LAT)
    assert t == pytest.approx(-5.0, abs=1e-12) and phi == 0.0
    assert dtdh == pytest.approx(1.0 / (RHO * C_S), rel=1e-12)
    h_liq = RHO * C_L * 1.0
    t, phi, sbr, dtdh, dtds = invert_enthalpy_scalar(h_liq, 0.0, RHO, C_S, C_L, LAT)
    assert t == pytest.approx(1.0, rel=1e-12) and phi == 1.0
    assert dtdh == pytest.approx(1.0 / (RHO * C_L), rel=1e-12)


def test_rule_of_fives():
    # Golden, Ackley & Lytle (1998, Science 282): columnar sea ice is permeable above about
    # 5 % brine volume, i.e. at about -5 degC for 5 g/kg.  The model's liquid fraction is a
    # mass fraction, equal to the volume fraction under its equal densities.
    _, phi = state_enthalpy(-5.0, 5.0)
    assert abs(float(phi) - 0.05) <= 0.01, float(phi)


@pytest.mark.parametrize("t_lo, t_hi, bound", [(-10.0, -2.0, 0.10), (-20.0, -10.0, 0.30)])
@pytest.mark.parametrize("s", [2.0, 5.0, 10.0])
def test_liquid_fraction_vs_frankenstein_garner(s, t_lo, t_hi, bound):
    # Frankenstein & Garner (1967, J. Glaciol. 6(48)), formula from memory.  The empirical
    # formula includes the effect of precipitated salts below about -8 degC, which a brine-only
    # liquidus does not model.  The model's phi is a mass fraction (equal densities in the
    # prognostic equations); F&G give a true volume fraction, so convert with the real brine
    # and ice densities first (phase.brine_volume_fraction).
    from icecolumn.phase import brine_volume_fraction

    t = np.linspace(t_hi, t_lo, 81)
    _, phi_mass = state_enthalpy(t, s)
    phi = brine_volume_fraction(phi_mass, brine_salinity(t))
    rel = np.abs(phi / frankenstein_garner(s, t) - 1.0)
    assert rel.max() <= bound, (f"S = {s}: max |phi/v_b - 1| = {rel.max():.3f} at T = {t[rel.argmax()]:.2f} degC "
                                f"(phi = {phi[rel.argmax()]:.5f}, v_b = {frankenstein_garner(s, t[rel.argmax()]):.5f})")


def test_enthalpy_by_hand_at_minus5_S5():
    # Hand arithmetic with the model's own S_br(-5 degC) (a linear-liquidus value with a solid
    # reference state would not be comparable): H = rho[(phi c_l +
    # (1 - phi) c_s) T - (1 - phi) L], phi = S / S_br.
    sbr = float(brine_salinity(-5.0))
    assert sbr == pytest.approx(85.62, abs=0.01)  # value of the project's fitted liquidus
    phi = 5.0 / sbr
    by_hand = 917.0 * ((phi * 3990.0 + (1 - phi) * 2100.0) * -5.0 - (1 - phi) * 334000.0)
    h, phi_model = state_enthalpy(-5.0, 5.0)
    assert float(phi_model) == pytest.approx(phi, rel=1e-12)
    assert float(h) == pytest.approx(by_hand, rel=1e-12)
    # with S_br = 85.62: phi = 0.058398, H = -298.53 MJ m-3 (worked on paper)
    assert float(h) == pytest.approx(-298.53e6, rel=2e-5)
    # fresh ice at -5 degC: rho (c_s T - L) = 917 (-10500 - 334000) = -315.9065 MJ m-3
    assert float(state_enthalpy(-5.0, 0.0)[0]) == pytest.approx(-315.9065e6, rel=1e-12)


def test_equilibrium_limits():
    # sea water above its freezing point is liquid; cold fresh ice is solid
    h, phi = state_enthalpy(-1.0, 34.0)
    assert float(phi) == 1.0 and float(h) == pytest.approx(RHO * C_L * -1.0)
    assert float(state_enthalpy(-1.0, 0.0)[1]) == 0.0
