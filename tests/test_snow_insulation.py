"""Snow insulates as physics says: the quasi-steady growth law with snow and surface resistance.

Derivation (quasi-steady, linear profiles, no ocean heat flux): the heat conducted from the
base at T_f through ice (h / k_i), snow (h_s / k_s) and the air-surface resistance (1 / H) to
the air at T_a freezes new ice,

    rho L dh/dt = (T_f - T_a) / (h / k_i + h_s / k_s + 1 / H).

Multiplying out and integrating from h0 with theta = int (T_f - T_a) dt gives

    h^2 - h0^2 + 2 k_i R (h - h0) = 2 k_i theta / (rho L),   R = h_s / k_s + 1 / H,

i.e. h^2 + 2 k_i (h_s/k_s + 1/H) h = 2 k_i theta / (rho L) for h0 = 0 (Stefan's law with
thermal resistances in series; common textbook result, e.g. the lake-ice form of Ashton in
Britannica "Ice in lakes and rivers").
"""
import numpy as np
import pytest

import icecolumn as ic
from icecolumn.forcing import forcing_from_arrays

K_I, RHO, LAT, H_TR = 2.03, 917.0, 334000.0, 10.0


def _law(theta_s, h0, hs, ks):
    r = hs / ks + 1.0 / H_TR
    b = 2.0 * K_I * r
    c = -(h0 * h0 + b * h0 + 2.0 * K_I * theta_s / (RHO * LAT))
    return (-b + np.sqrt(b * b - 4.0 * c)) / 2.0


@pytest.mark.parametrize("hs", [0.0, 0.1, 0.3])
def test_winter_with_constant_snow_follows_quasi_steady_law(hs):
    days = 150
    t = np.datetime64("2026-11-01", "ns") + np.arange(days * 24 + 1) * np.timedelta64(1, "h")
    air = -25.0 + 5.0 * np.sin(np.arange(t.size) / 200.0)  # invented test forcing
    forcing = forcing_from_arrays(t, air)
    cfg = (ic.default_config()
           .replace("initial", ice_thickness=0.05, bulk_salinity=0.0, snow_thickness=hs)
           .replace("ocean", salinity=0.0, heat_flux=0.0)
           .replace("surface", scheme="linear", heat_transfer_coefficient=H_TR)
           .replace("properties", conductivity_model="constant", ice_conductivity=K_I, latent_heat=LAT,
                    ice_density=RHO).replace("snow", conductivity=0.31, flooding="none")
           .replace("drainage", scheme="none").replace("output", interval="1D"))
    # flooding is off: the law has no snow-ice (0.3 m of snow on 5 cm of ice floods at once)
    ds = ic.run(forcing, cfg)
    theta = np.sum(0.5 * (air[1:] + air[:-1]) * -1.0) * 3600.0  # T_f = 0 for fresh water
    expected = _law(theta, 0.05, hs, 0.31)
    got = float(ds.ice_thickness.values[-1])
    print(f"snow {hs} m: model {got:.3f} m, quasi-steady law {expected:.3f} m")
    assert abs(got / expected - 1.0) <= 0.15
