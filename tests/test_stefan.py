"""Fresh-water growth against the Neumann (one-phase Stefan) solution, and exact basal balances.

Reference: one-phase Stefan problem, Carslaw & Jaeger (1959, Conduction of Heat in Solids,
pp. 287-288; as quoted in Crank 1984, Free and Moving Boundary Problems, p. 103):
h = 2 lambda sqrt(kappa t), lambda exp(lambda^2) erf(lambda) = St / sqrt(pi), St = c dT / L,
kappa = k / (rho c).  With k = 2.2, rho = 917, c = 2100, L = 334000, dT = 10 K:
lambda = 0.175491 and h(30 d) = 0.6040 m (derived from that transcendental equation; recomputed here).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import brentq
from scipy.special import erf

import icecolumn as ic
from icecolumn import kernel as K
from icecolumn.forcing import forcing_from_arrays

K_ICE, RHO, C_ICE, LAT, DT = 2.2, 917.0, 2100.0, 334000.0, 10.0
KAPPA = K_ICE / (RHO * C_ICE)
DAY = 86400.0


def neumann_lambda(stefan: float) -> float:
    return brentq(lambda x: x * np.exp(x * x) * erf(x) - stefan / np.sqrt(np.pi), 1e-8, 3.0, xtol=1e-15)


LAMBDA = neumann_lambda(C_ICE * DT / LAT)


def neumann_thickness(days):
    return 2.0 * LAMBDA * np.sqrt(KAPPA * np.asarray(days) * DAY)


def fresh_config(ice_thickness: float, heat_flux: float = 0.0, **sections):
    overrides = {
        "ocean": {"salinity": 0.0, "heat_flux": heat_flux},
        "initial": {"bulk_salinity": 0.0, "ice_thickness": ice_thickness},
        "surface": {"scheme": "prescribed"},
        "properties": {"conductivity_model": "constant", "ice_conductivity": K_ICE, "ice_density": RHO,
                       "ice_specific_heat": C_ICE, "latent_heat": LAT},
        "output": {"interval": "1D"},
    }
    for name, values in sections.items():
        overrides.setdefault(name, {}).update(values)
    return ic.load_config(None, overrides)


def constant_forcing(days: int, surface_temperature: float, air_temperature: float | None = None):
    start = np.datetime64("2026-01-01T00:00")
    t = start + np.arange(days * 24 + 1) * np.timedelta64(1, "h")
    air = surface_temperature if air_temperature is None else air_temperature
    return forcing_from_arrays(t, np.full(t.size, air), surface_temperature=np.full(t.size, surface_temperature))


STEFAN_FORCING = constant_forcing(29, -DT)  # day 1 -> day 30 after the Neumann origin


def stefan_run(layers=None, rtol=None):
    cfg = fresh_config(float(neumann_thickness(1.0)))
    if layers is not None:
        cfg = cfg.replace("grid", layers=layers)
    if rtol is not None:
        cfg = cfg.replace("solver", rtol=rtol)
    return ic.run(STEFAN_FORCING, cfg)


@pytest.fixture(scope="module")
def default_run():
    return stefan_run()


def test_neumann_lambda():
    # Derived from Carslaw & Jaeger (1959, pp. 287-288) by solving the transcendental equation above:
    # lambda = 0.175491, h(30 d) = 0.6040 m
    assert LAMBDA == pytest.approx(0.175491, abs=1e-6)
    assert float(neumann_thickness(30.0)) == pytest.approx(0.6040, abs=5e-5)


def test_thickness_at_day_30(default_run):
    h = default_run["ice_thickness"].values
    assert default_run.sizes["time"] == 30
    exact = float(neumann_thickness(30.0))
    rel = h[-1] / exact - 1.0
    print(f"\nStefan: h(30 d) = {h[-1]:.6f} m, exact {exact:.6f} m, rel. error {rel:+.2e} "
          f"({ic.default_config().grid.layers} layers)")
    assert abs(rel) <= 5e-3


def test_growth_exponent(default_run):
    h = default_run["ice_thickness"].values
    days = np.arange(h.size) + 1.0  # time since the Neumann origin
    n = np.polyfit(np.log(days[1:]), np.log(h[1:]), 1)[0]  # days 2..30
    print(f"\nStefan: fitted exponent n = {n:.5f}")
    assert abs(n / 0.5 - 1.0) <= 5e-3


def test_uses_default_layer_count(default_run):
    assert default_run.sizes["layer"] == ic.default_config().grid.layers


def _erf_profile_run(layers, rtol):
    """Start from the exact Neumann state at day 1 (erf profile) and run to day 30."""
    from icecolumn.model import InitialProfile

    h1 = float(neumann_thickness(1.0))
    z = np.linspace(0.0, h1, 401)
    temp = -DT + DT * erf(z / (2.0 * np.sqrt(KAPPA * DAY))) / erf(LAMBDA)
    cfg = fresh_config(h1).replace("grid", layers=layers).replace("solver", rtol=rtol)
    ds = ic.run(STEFAN_FORCING, cfg, profile=InitialProfile(depth=z, temperature=temp))
    return ds["ice_thickness"].values[-1]


def test_second_order_in_layers():
    # error of h(30 d) against the exact Neumann thickness (Carslaw & Jaeger 1959, as quoted by
    # Crank 1984) with a tight tolerance, so that the layer error dominates: the one-sided
    # second-order closures at both boundaries, the exact Stefan jump and central grid advection
    # make it second order (measured: order 2.0 from 16 to 32 layers, 2.5 from 32 to 64)
    exact = float(neumann_thickness(30.0))
    layers = np.array([16, 32, 64])
    err = np.array([abs(_erf_profile_run(int(n), 1e-9) / exact - 1.0) for n in layers])
    order = -np.polyfit(np.log(layers), np.log(err), 1)[0]
    print(f"\nStefan errors at {layers.tolist()} layers: {err.tolist()}; fitted order {order:.2f}")
    assert order >= 1.9
    assert err[0] < 2e-5


def test_six_layers_reach_a_tenth_of_a_percent():
    # at the default tolerance, 6 layers already give the exact thickness to 0.1 % (measured 0.004 %)
    exact = float(neumann_thickness(30.0))
    err6 = abs(_erf_profile_run(6, ic.default_config().solver.rtol) / exact - 1.0)
    assert err6 < 1e-3


def test_grid_and_tolerance_convergence(default_run):
    # the default run (40 layers, linear initial profile) changes little with 2x layers or rtol/10
    n0 = ic.default_config().grid.layers
    rtol0 = ic.default_config().solver.rtol
    h_n = default_run["ice_thickness"].values[-1]
    h_2n = stefan_run(layers=2 * n0)["ice_thickness"].values[-1]
    h_tight = stefan_run(rtol=rtol0 / 10)["ice_thickness"].values[-1]
    assert abs(h_2n / h_n - 1) < 1e-4
    assert abs(h_tight / h_n - 1) < 1e-4


def test_steady_linear_profile_holds_thickness():
    # basal balance: k dT / h = F_w -> h = 2.2 * 10 / 20 = 1.1 m stays put (exact steady state)
    fw = 20.0
    h0 = K_ICE * DT / fw
    ds = ic.run(constant_forcing(60, -DT), fresh_config(h0, heat_flux=fw))
    h = ds["ice_thickness"].values
    assert h.size == 61
    drift = np.max(np.abs(h / h0 - 1.0))
    print(f"\nsteady profile: max |h/h0 - 1| over 60 days = {drift:.2e}")
    assert drift <= 1e-4


def test_isothermal_ice_melts_at_ocean_heat_flux_rate():
    # isothermal fresh ice at 0 degC under a 0 degC surface: no conduction, so the base melts at
    # F_w / (rho L) (the Stefan condition with no conductive flux; common practice, no source).
    # Ice at its melting point built from the configuration is solid ice at 0 degC (it used to
    # start as water); 30 W m-2 for 30 days melts F t / (rho L) = 0.2539 m within 0.5 %.
    fw, h0, days = 30.0, 1.2, 30
    cfg = fresh_config(h0, heat_flux=fw)
    ds = ic.run(constant_forcing(days, 0.0), cfg)
    assert float(ds["liquid_fraction"].isel(time=0).max()) == 0.0
    dh = h0 - float(ds["interface_depth"].values[-1])
    expected = fw * days * DAY / (RHO * LAT)
    rel = dh / expected - 1.0
    print(f"\nisothermal melt: dh = {dh:.6f} m, expected {expected:.6f} m, rel. error {rel:+.2e}")
    assert expected == pytest.approx(0.2539, abs=1e-4)
    assert abs(rel) <= 5e-3


def test_initial_ice_warmer_than_its_melting_point_is_an_error():
    from icecolumn.errors import InputError
    from icecolumn.model import InitialProfile

    cfg = fresh_config(0.5).replace("ocean", salinity=34.0).replace("initial", bulk_salinity=5.0)
    z = np.array([0.0, 0.5])
    warm = InitialProfile(depth=z, temperature=np.array([-5.0, -0.1]))  # -0.1 > T_L(5 g/kg) = -0.27
    with pytest.raises(InputError, match="warmer than the melting point"):
        ic.run(constant_forcing(1, -5.0), cfg, profile=warm)


def test_prescribed_surface_above_melting_point_is_a_warning():
    from icecolumn.errors import IceColumnWarning

    with pytest.warns(IceColumnWarning, match="above the ice's melting point"):
        ic.run(constant_forcing(1, 2.0), fresh_config(0.5))
