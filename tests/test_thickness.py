"""Ice thickness of a mushy column (icecolumn/thickness.py) and its convergence with layers."""
from __future__ import annotations

import numpy as np
import pytest

import icecolumn as ic
from icecolumn.forcing import forcing_from_arrays
from icecolumn.phase import brine_salinity
from icecolumn.thickness import thicknesses


def slush_discounted_thickness(phi, t, s, h, sw, slush=0.5):
    return thicknesses(phi, t, s, h, sw, slush_liquid_fraction=slush)[0]


def load_bearing_thickness(phi, t, s, h, sw, bearing=0.2):
    return thicknesses(phi, t, s, h, sw, load_bearing_liquid_fraction=bearing)[1]


def test_fresh_ice_counts_to_the_interface():
    n = 10
    phi = np.zeros(n)
    t = np.linspace(-10, -0.5, n)
    s = np.zeros(n)
    assert float(slush_discounted_thickness(phi, t, s, 1.3, 0.0)) == pytest.approx(1.3, rel=1e-14)
    assert float(load_bearing_thickness(phi, t, s, 1.3, 0.0)) == pytest.approx(1.3, rel=1e-14)
    assert float(slush_discounted_thickness(phi, t, s, 0.0, 0.0)) == 0.0  # open water


def test_linear_liquid_fraction_ramp_by_hand():
    # phi rises linearly from 0 at the top layer's centre to 1 at the bottom layer's centre
    # (constructed so the bottom half layer is liquid too): with phi_s = 0.5 the slush part
    # (phi from 0.5 to 1 over half the centre-to-centre span L/2) counts 1/2 of its length, and the
    # part with phi <= 0.2 is a fifth of L (hand calculation)
    n = 11
    h = 1.1
    dz = h / n
    phi = np.linspace(0.0, 1.0, n)
    sw = 34.0
    temp = np.full(n, -1.0)
    sal = phi * brine_salinity(temp)
    sal[-1] = sw  # the bottom layer: ocean water
    temp[-1] = float(ic.phase.liquidus_temperature(sw))
    span = (n - 1) * dz
    expected = 0.5 * dz + 0.5 * span + 0.5 * (0.5 * span)  # top half + phi <= 0.5 + slush half-weight
    got = float(slush_discounted_thickness(phi, temp, sal, h, sw, 0.5))
    assert got == pytest.approx(expected, rel=1e-3)
    bearing = float(load_bearing_thickness(phi, temp, sal, h, sw, 0.2))
    assert bearing == pytest.approx(0.5 * dz + 0.2 * span, rel=1e-12)


def _salty_run(layers, heat_flux, drainage):
    t = np.datetime64("2027-01-01", "ns") + np.arange(60 * 24 + 1) * np.timedelta64(1, "h")
    f = forcing_from_arrays(t, np.full(t.size, -20.0), surface_temperature=np.full(t.size, -20.0))  # invented
    cfg = (ic.default_config().replace("grid", layers=layers).replace("drainage", scheme=drainage)
           .replace("ocean", heat_flux=heat_flux).replace("initial", ice_thickness=0.15, bulk_salinity=34.0)
           .replace("surface", scheme="prescribed").replace("output", interval="1D"))
    ds = ic.run(f, cfg)
    return float(ds.ice_thickness[-1]), float(ds.interface_depth[-1])


@pytest.mark.parametrize("heat_flux, drainage", [(0.0, "none"), (2.0, "none"), (2.0, "griewank_notz2013")])
def test_salty_ice_thickness_converges_with_layers(heat_flux, drainage):
    # 60 days under a -20 degC surface from 0.15 m of ice at ocean salinity (invented set-up).
    # Without drainage and without ocean heat the mush ends in a long, nearly liquid tail: the
    # tracked interface keeps moving down as the layers are refined (measured 1.34 -> 1.39 m from
    # 20 to 160 layers), but the ice thickness, which counts that slush by its solid fraction,
    # agrees within 1 cm at 20, 40, 80 and 160 layers
    h = np.array([_salty_run(n, heat_flux, drainage) for n in (20, 40, 80, 160)])
    print(f"\nF_w {heat_flux}, {drainage}: ice_thickness {h[:, 0].round(4)}, interface {h[:, 1].round(4)}")
    assert np.ptp(h[:, 0]) < 0.01
    assert np.all(h[:, 0] <= h[:, 1] + 1e-12)
    if heat_flux > 0:
        # with an ocean heat flux the interface sits where the mush conducts it away: it converges too
        assert np.ptp(h[:, 1]) < 0.01


def test_thicknesses_broadcast_per_member_as_column_by_column():
    # the compiled loop over flattened columns gives, for (members, times, layers) profiles and
    # one slush / load-bearing fraction per member, what each column gives alone (invented profiles)
    rng = np.random.default_rng(7)
    n = 9
    phi = np.sort(rng.uniform(0.0, 1.0, (3, 4, n)), axis=-1)
    temp = np.sort(rng.uniform(-12.0, -1.0, (3, 4, n)), axis=-1)
    sal = phi * brine_salinity(temp)
    h = rng.uniform(0.1, 2.0, (3, 4))
    h[1, 2] = 0.0  # open water
    sw = np.full((3, 4), 33.0)
    slush = np.array([[0.3], [0.5], [0.7]])
    bearing = np.array([[0.1], [0.2], [0.25]])
    ice, lb = thicknesses(phi, temp, sal, h, sw, slush, bearing)
    assert ice.shape == lb.shape == (3, 4)
    for i in range(3):
        for j in range(4):
            one = thicknesses(phi[i, j], temp[i, j], sal[i, j], h[i, j], sw[i, j], slush[i, 0], bearing[i, 0])
            assert float(one[0]) == ice[i, j] and float(one[1]) == lb[i, j]
    assert ice[1, 2] == lb[1, 2] == 0.0
    assert np.all(lb <= ice + 1e-12) and np.all(ice <= h + 1e-12)
