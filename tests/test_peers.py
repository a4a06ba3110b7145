"""The equal-accuracy peers of scripts/peers/ converge to the exact Neumann thickness, and the
harness returns its documented keys (quick ladders; no wall-clock assertions).

Reference: one-phase Stefan (Neumann) problem, Carslaw & Jaeger (1959, Conduction of Heat in
Solids, pp. 287-288; as quoted by Crank 1984, Free and Moving Boundary Problems, p. 103):
h = 2 lambda sqrt(kappa t), lambda exp(lambda^2) erf(lambda) = St / sqrt(pi).
"""
from __future__ import annotations

import math
import sys
from pathlib import Path

import numpy as np
import pytest

PEERS = Path(__file__).resolve().parent.parent / "scripts" / "peers"
sys.path.insert(0, str(PEERS))

import compare  # noqa: E402
import explicit_enthalpy  # noqa: E402
import icecolumn_side  # noqa: E402
import mol_bdf  # noqa: E402
import problems  # noqa: E402

PROB = problems.Neumann()


def test_neumann_constant_and_thickness():
    # St = c dT / L = 2100 * 10 / 334000 depends only on c_s, L and dT; lambda = 0.175491 (derived
    # from Carslaw & Jaeger 1959, pp. 287-288, the value tests/test_stefan.py checks for the same St)
    assert PROB.stefan == pytest.approx(2100.0 * 10.0 / 334000.0, rel=1e-12)
    assert PROB.lam == pytest.approx(0.175491, abs=1e-6)
    # the exact profile is T_s at the surface and 0 degC at the front
    h = float(PROB.thickness(PROB.t_start))
    assert PROB.temperature(0.0, PROB.t_start) == pytest.approx(PROB.surface_temperature)
    assert PROB.temperature(h * (1 - 1e-9), PROB.t_start) == pytest.approx(0.0, abs=1e-6)


def test_explicit_enthalpy_converges_to_neumann():
    errs = [PROB.error(explicit_enthalpy.solve_p1(n, prob=PROB)["h"]) for n in (12, 25, 50)]
    print(f"\nexplicit enthalpy P1 errors at 12/25/50 cells: {errs}")
    assert errs[0] > errs[1] > errs[2]
    assert errs[1] < 1e-2 and errs[2] < 1e-3


@pytest.mark.parametrize("method", mol_bdf.METHODS)
def test_front_fixing_converges_second_order(method):
    errs = [PROB.error(mol_bdf.solve_p1(m, 1e-9, method, PROB)["h"]) for m in (5, 10, 20)]
    orders = [math.log2(errs[i] / errs[i + 1]) for i in range(2)]
    print(f"\nfront fixing ({method}) P1 errors at 5/10/20 intervals: {errs}, orders {orders}")
    assert errs[1] < 1e-3
    # second-order central differences (textbook property, common practice, no source)
    assert min(orders) > 1.7


def test_icecolumn_side_converges_to_neumann():
    case = icecolumn_side.P1Case(PROB)
    # with a tight tolerance the layer error dominates and falls with refinement (second order)
    errs = [PROB.error(case.run(n, 1e-9)["h"]) for n in (4, 8, 16)]
    print(f"\nicecolumn P1 errors at 4/8/16 layers ({case.initial_profile} start): {errs}")
    assert errs[0] > errs[1] > errs[2]
    assert errs[0] < 1e-3


def test_linear_liquidus_inversion_round_trip():
    mat = problems.materials()
    gamma = problems.LIQUIDUS_SLOPE
    temp = np.array([-20.0, -10.0, -5.0, -2.5, -1.9, -1.836, -1.0, 2.0])
    sal = np.full(temp.size, 34.0)
    h, phi = problems.mush_enthalpy(temp, sal, mat, gamma)
    t_back, phi_back = problems.invert_linear_liquidus(h, sal, mat, gamma)
    np.testing.assert_allclose(t_back, temp, rtol=1e-10, atol=1e-10)
    np.testing.assert_allclose(phi_back, phi, rtol=1e-10, atol=1e-12)
    # on the liquidus T = -Gamma S / phi (linear liquidus, S = phi S_br)
    assert phi[0] == pytest.approx(gamma * 34.0 / 20.0, rel=1e-12)
    # fresh ice: liquid fraction 1 + H / (rho L) at 0 degC, solid below
    t_f, phi_f = problems.invert_linear_liquidus(np.array([-0.5 * mat.rho * mat.latent, -mat.rho * (mat.latent + 10 * mat.c_s)]),
                                                 np.zeros(2), mat, gamma)
    np.testing.assert_allclose(phi_f, [0.5, 0.0], atol=1e-12)
    np.testing.assert_allclose(t_f, [0.0, -10.0], atol=1e-9)


def test_p2_peers_agree_and_bottom_stays_liquid():
    prob = problems.Mushy()
    ex = explicit_enthalpy.solve_p2(25, prob=prob)
    mol = mol_bdf.solve_p2(25, 1e-7, "LSODA", prob)
    # the same fixed-grid semi-discretisation; they differ by the explicit time error only
    assert prob.error(ex["h"], mol["h"]) < 1e-3
    assert ex["bottom_liquid_fraction"] > 0.9999 and mol["bottom_liquid_fraction"] > 0.9999
    # the solid-equivalent thickness grows every day (the surface keeps extracting heat)
    assert np.all(np.diff(mol["h"]) > 0)


def test_harness_quick_keys():
    res = compare.measure(quick=True)
    for key in ("peer_ratio_explicit", "peer_ratio_bdf"):
        assert res[key] is None or (math.isfinite(res[key]) and res[key] > 0), key
    assert res["peer_ratio_bdf_method"] in (None, *mol_bdf.METHODS)
    for key in ("order_explicit", "order_bdf", "order_icecolumn"):
        assert isinstance(res[key], float) and math.isfinite(res[key]), key
    # icecolumn's layer error is second order (fluxes and basal closure second order; the quick
    # ladder is 8/16/32 layers at rtol 1e-9, where the layer error dominates); derived here
    assert res["order_icecolumn"] > 1.7, res["orders"]["icecolumn"]
    assert set(res["time_at_target_s"]) == {"explicit", "solve_ivp_BDF", "solve_ivp_LSODA", "icecolumn"}
    assert res["target_error"] == 1e-3 and res["quick"] is True
    for rows in res["p1"]["runs"].values():
        assert rows and all(r["error"] >= 0 and r["time_s"] > 0 and r["repeats"] >= 1 for r in rows)
    assert res["p2"]["reference"]["self_convergence"]["cells"][-1] == res["p2"]["reference"]["cells"]
    assert "parallel_yen1991" in res["p2"]["icecolumn_nearest_problem"]
