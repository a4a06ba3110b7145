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
