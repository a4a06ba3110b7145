"""Thermal conductivity of pure ice, brine and sea ice (icecolumn.properties)."""

from __future__ import annotations

import numpy as np
import pytest

from icecolumn.properties import brine_conductivity, conductivity, pure_ice_conductivity


def test_pure_ice_conductivity_yen1991():
    # Yen et al. (1991) as given by Eicken (2003, in Thomas & Dieckmann, Sea Ice, p. 55):
    # k_i = 1.16 (1.91 - 8.66e-3 T + 2.97e-5 T^2); evaluates to 2.216 (0 degC), 2.320 (-10 degC).
    assert float(pure_ice_conductivity(0.0)) == pytest.approx(2.216, abs=5e-4)
    assert float(pure_ice_conductivity(-10.0)) == pytest.approx(2.320, abs=5e-4)


def test_brine_conductivity_yen1991():
    # Yen et al. (1991) via Eicken (2003, p. 55): k_b = 0.4184 (1.25 + 0.030 T + 0.00014 T^2);
    # 0.523 at 0 degC, 0.403 at -10 degC.
    assert float(brine_conductivity(0.0)) == pytest.approx(0.523, abs=5e-4)
    assert float(brine_conductivity(-10.0)) == pytest.approx(0.403, abs=5e-4)


@pytest.mark.parametrize("t", [-0.5, -5.0, -10.0, -30.0])
def test_parallel_mixture_limits(t):
    ki = float(pure_ice_conductivity(t))
    kb = float(brine_conductivity(t))
    assert float(conductivity(t, 0.0, 0.0, model="parallel_yen1991")) == pytest.approx(ki, rel=1e-14)
    assert float(conductivity(t, 1.0, 0.0, model="parallel_yen1991")) == pytest.approx(kb, rel=1e-14)
    # in between: the liquid-fraction weighted mean (parallel mixing)
    assert float(conductivity(t, 0.25, 0.0, model="parallel_yen1991")) == pytest.approx(0.25 * kb + 0.75 * ki,
                                                                                         rel=1e-14)


def test_untersteiner_form():
    # k = k_i + beta S / T (Untersteiner 1964, as used by Maykut & Untersteiner 1971), with
    # beta = 0.13 W m-1 per g/kg (from memory; 0.1172 is also quoted) and k_i = 2.03:
    # S = 5, T = -5 -> 2.03 - 0.13 = 1.900.
    k = float(conductivity(-5.0, 0.05, 5.0, model="untersteiner1964", constant_value=2.03))
    assert k == pytest.approx(1.900, abs=5e-4)


def test_untersteiner_bounded_near_melting_point():
    # the form is singular as T -> 0; the model floors it at the brine conductivity
    t = np.array([-1e-3, -0.01, -0.1])
    k = conductivity(t, 0.5, 10.0, model="untersteiner1964", constant_value=2.03)
    assert np.all(k >= brine_conductivity(t) - 1e-15)
    assert np.all(np.isfinite(k))


def test_constant_model():
    assert float(conductivity(-7.0, 0.3, 6.0, model="constant", constant_value=2.2)) == 2.2


def test_pringle2007_against_measured_first_year_conductivity():
    # Pringle, Trodahl & Haskell (2006, JGR 111, C05020): first-year cores 2.14 +- 0.11 (surface)
    # and 2.09 +- 0.11 W m-1 K-1 (45-55 cm), consistent with effective-medium predictions; in situ
    # below 0.5 m 2.26 +- 0.07 and 2.29 +- 0.07 (Pringle 2004, PhD thesis); typical cold first-year
    # ice of 4-6 g/kg at -5 to -20 degC falls within two standard deviations of them, while the
    # Untersteiner form (beta 0.13, from memory) is lower
    from icecolumn.properties import conductivity

    for s_, t in ((5.0, -5.0), (5.0, -10.0), (4.0, -15.0), (6.0, -20.0)):
        k = float(conductivity(t, 0.0, s_, model="pringle2007"))
        assert 2.09 - 2 * 0.11 <= k <= 2.29 + 2 * 0.07, (s_, t, k)
        ku = float(conductivity(t, 0.0, s_, model="untersteiner1964"))
        assert ku < k
    # the formula itself (coefficients from memory): 2.11 - 0.011 T + 0.09 S / T
    assert float(conductivity(-5.0, 0.0, 5.0, model="pringle2007")) == pytest.approx(2.075, abs=1e-12)
    # fresh ice has no brine term; warm salty mush is bounded by the brine's conductivity
    assert float(conductivity(-2.0, 0.0, 0.0, model="pringle2007")) == pytest.approx(2.132, abs=1e-12)
    assert float(conductivity(-1.86, 0.95, 33.0, model="pringle2007")) >= 0.4184 * (1.25 - 0.030 * 1.86)
