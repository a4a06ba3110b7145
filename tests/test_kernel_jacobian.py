"""The kernel's assembled Newton Jacobian against finite differences of its right-hand side, and
manufactured profiles through the right-hand side (icecolumn/kernel/tendency.py).

The Jacobian is exact by design except for documented omissions (a quasi-Newton method): the
dependence of the conductivity on the state, and the dependence of the transport coefficients
(the drainage flow on the Rayleigh numbers, the upwind weights of the grid advection on the salt
profile) on the state.  The exact parts are checked with a constant conductivity and with the
transport coefficients held at their values of the base state (``fresh_flow=False``); the
omitted conductivity term is checked to be small.  Regimes: growth, melt at both boundaries, gravity
drainage, flooding (snow-ice), the brine exchange of snow-ice, thin new ice just formed from open water, and the surface energy
balance.
"""
from __future__ import annotations

import numpy as np
import pytest

import icecolumn as ic
from icecolumn import kernel as K
from icecolumn.kernel.base import basal_velocity, basal_velocity_of_state
from icecolumn.kernel.layout import B, F, NFORCING, P
from icecolumn.kernel.openwater import form_new_ice, new_ice_heat
from icecolumn.kernel.snowice import flooding_rate
from icecolumn.kernel.tendency import dh_column, dr_column, jacobian, rhs
from icecolumn.kernel.workspace import new_workspace
from icecolumn.model import open_water_state, state_from_profile
from icecolumn.phase import liquidus_temperature

N = 12


def _cfg(**sections):
    cfg = ic.default_config().replace("grid", layers=N).replace("drainage", scheme="none").replace(
        "properties", conductivity_model="constant")
    for name, changes in sections.items():
        cfg = cfg.replace(name, **changes)
    return cfg


def _forcing(air, **more):
    fv = np.full(NFORCING, np.nan)
    fv[F.AIR] = air
    for key, value in more.items():
        fv[getattr(F, key)] = value
    return fv


def _profile_state(cfg, h, t_top, salinity, snow=0.0):
    tf = float(liquidus_temperature(cfg.ocean.salinity))
    z = (np.arange(N) + 0.5) / N
    temp = t_top + (tf - t_top) * z
    sal = np.broadcast_to(np.asarray(salinity, dtype=float), (N,))
    y = state_from_profile(cfg, h, temp, sal)
    K.view(y, N).set_slot("snow_thickness", snow)
    return y


def _regimes():
    out = {}
    cfg = _cfg(surface={"scheme": "linear"})
    out["growth"] = (cfg, "linear", _profile_state(cfg, 0.5, -15.0, 8.0), _forcing(-25.0), 2.0, 0.0)
    cfg = _cfg(surface={"scheme": "linear"}, ocean={"heat_flux": 60.0})
    out["melt"] = (cfg, "linear", _profile_state(cfg, 1.0, -0.6, 3.0), _forcing(6.0), 60.0, 0.0)
    cfg = _cfg(surface={"scheme": "linear"}, drainage={"scheme": "griewank_notz2013"})
    sal = np.linspace(6.0, 30.0, N)
    out["drainage"] = (cfg, "linear", _profile_state(cfg, 0.3, -12.0, sal), _forcing(-20.0), 2.0, 0.0)
    cfg = _cfg(surface={"scheme": "linear"})
    y = _profile_state(cfg, 0.3, -8.0, 6.0, snow=0.3)
    out["flooding"] = (cfg, "linear", y, _forcing(-15.0), 2.0, None)
    # snow-ice brine exchange: the top 0.11 m (4.4 layers) is snow-ice, cold mush whose liquid
    # fraction spans the C1 ramp of the percolation gate and above it
    cfg = _cfg(surface={"scheme": "linear"})
    y = _profile_state(cfg, 0.3, -9.0, np.linspace(4.0, 14.0, N))
    K.view(y, N).set_slot("snow_ice_growth", 0.11)
    out["snow_ice_drainage"] = (cfg, "linear", y, _forcing(-15.0), 2.0, 0.0)
    cfg = _cfg(surface={"scheme": "linear"})
    par = K.parameter_row(cfg, "linear")
    y = open_water_state(cfg)
    K.view(y, N).set_slot("frazil_heat", -new_ice_heat(par))
    form_new_ice(y, N, par)
    out["new_ice"] = (cfg, "linear", y, _forcing(-20.0), 2.0, 0.0)
    cfg = _cfg(surface={"scheme": "energy_balance"})
    fv = _forcing(-18.0, SW=150.0, LW=200.0, WIND=6.0, RH=85.0)
    out["energy_balance"] = (cfg, "energy_balance", _profile_state(cfg, 0.8, -10.0, 6.0), fv, 2.0, 0.0)
    return out


REGIMES = _regimes()


def _setup(name):
    cfg, scheme, y, fv, fw, af = REGIMES[name]
    par = K.parameter_row(cfg, scheme)
    if af is None:
        af = flooding_rate(y, N, par, fv, 3600.0)
        assert af > 0.0  # the regime does flood
    return cfg, par, y.copy(), fv, fw, af


def _eval(y, r, par, fv, fw, af, a_in, fresh_flow=True, held=None):
    ws = new_workspace(N, y.size)
    if held is not None:
        ws.wflux[:] = held.wflux
        ws.qsink[:] = held.qsink
        ws.ra[:] = held.ra
        ws.beta[:] = held.beta
    f = np.zeros(y.size)
    ts, df0, a, g0 = rhs(y, r, N, par, fv, fw, f, ws, True, a_in, af, fresh_flow)
    return f, ws, df0, a, g0


def _dense(lo, di, up):
    """Dense 2N x 2N matrix (rows e_0..e_{N-1}, m_0..m_{N-1}) from the 2x2 block rows."""
    J = np.zeros((2 * N, 2 * N))
    for k in range(N):
        for blocks, kk in ((lo, k - 1), (di, k), (up, k + 1)):
            if 0 <= kk < N:
                b = blocks[k]
                J[k, kk], J[k, N + kk] = b[0], b[1]
                J[N + k, kk], J[N + k, N + kk] = b[2], b[3]
    return J


def _assembled(y, par, fv, fw, af):
    r = basal_velocity_of_state(y, N, par, fw)
    f, ws, df0, amelt, g0 = _eval(y, r, par, fv, fw, af, -1.0)
    # with a_dt = -1 the assembled matrix is I - (-1) J = I + J
    jacobian(y, r, amelt - af, amelt, N, df0, -1.0, par, ws)
    J = _dense(ws.lo, ws.di, ws.up) - np.eye(2 * N)
    col_h = np.zeros(y.size)
    dh_column(y, r, amelt - af, amelt, N, par, g0, ws, df0, col_h)
    col_r = np.zeros(2 * N)
    dr_column(y, r, amelt - af, N, par, ws, col_r)
    return r, amelt, ws, J, col_h[:2 * N], col_r


def _finite_differences(y, r, par, fv, fw, af, amelt, held):
    """Central differences of the cell tendencies w.r.t. the cells, h (fixed contents) and r."""
    fresh = held is None
    J = np.zeros((2 * N, 2 * N))
    for i in range(2 * N):
        d = 1e-6 * max(abs(y[i]), 1e-3 * np.abs(y[i // N * N:(i // N + 1) * N]).max(), 1e-12)
        yp, ym = y.copy(), y.copy()
        yp[i] += d
        ym[i] -= d
        fp = _eval(yp, r, par, fv, fw, af, amelt, fresh, held)[0]
        fm = _eval(ym, r, par, fv, fw, af, amelt, fresh, held)[0]
        J[:, i] = (fp[:2 * N] - fm[:2 * N]) / (2 * d)
    h = y[2 * N]
    d = 1e-6 * h
    yp, ym = y.copy(), y.copy()
    yp[2 * N] += d
    ym[2 * N] -= d
    col_h = (_eval(yp, r, par, fv, fw, af, amelt, fresh, held)[0][:2 * N]
             - _eval(ym, r, par, fv, fw, af, amelt, fresh, held)[0][:2 * N]) / (2 * d)
    d = 1e-6 * max(abs(r), 1e-9)
    col_r = (_eval(y, r + d, par, fv, fw, af, amelt, fresh, held)[0][:2 * N]
             - _eval(y, r - d, par, fv, fw, af, amelt, fresh, held)[0][:2 * N]) / (2 * d)
    return J, col_h, col_r


def _rel(a, b):
    """Largest entry difference relative to the largest entry of its row block (e or m rows)."""
    out = 0.0
    for rows in (slice(0, N), slice(N, 2 * N)):
        scale = max(np.abs(b[rows]).max(), 1e-300)
        out = max(out, np.abs(a[rows] - b[rows]).max() / scale)
    return out


@pytest.mark.parametrize("name", sorted(REGIMES))
def test_jacobian_matches_finite_differences(name):
    cfg, par, y, fv, fw, af = _setup(name)
    r, amelt, ws, J, col_h, col_r = _assembled(y, par, fv, fw, af)
    if name == "melt":
        assert amelt > 0.0 and r < 0.0  # both boundaries melt
    if name == "drainage":
        assert ws.wflux[N] > 0.0  # brine drains
    if name == "snow_ice_drainage":
        lo, hi = par[P.DPHIC], par[P.DPHIC] + par[P.DPHIW]
        phi = ws.phi[:5]
        assert par[P.SITAU] > 0.0 and ((phi > lo) & (phi < hi)).any() and (phi >= hi).any(), phi
        assert ws.sbr[:5].min() > par[P.SW]  # the exchange runs in every snow-ice layer
        assert _eval(y, r, par, fv, fw, af, amelt)[0][2 * N + 1 + B.S_SIDRAIN] > 0.0
    J_fd, col_h_fd, col_r_fd = _finite_differences(y, r, par, fv, fw, af, amelt, ws)
    # central differences with relative steps of 1e-6 agree to about 1e-9 here
    assert _rel(J, J_fd) < 1e-7, name
    assert _rel(col_h, col_h_fd) < 1e-7, name
    assert _rel(col_r, col_r_fd) < 1e-7, name


@pytest.mark.parametrize("name", ["growth", "melt", "drainage", "new_ice"])
def test_basal_velocity_derivatives(name):
    cfg, par, y, fv, fw, af = _setup(name)
    r, amelt, ws, *_ = _assembled(y, par, fv, fw, af)
    hd, *deriv = basal_velocity(y, N, par, fw, ws.temp[N - 1], ws.temp[N - 2], ws.kc[N - 1], ws.dtde[N - 1],
                                ws.dtdm[N - 1], ws.dtde[N - 2], ws.dtdm[N - 2])
    assert hd == r
    got = []
    for i in (N - 1, 2 * N - 1, N - 2, 2 * N - 2, 2 * N):
        d = 1e-6 * abs(y[i])
        yp, ym = y.copy(), y.copy()
        yp[i] += d
        ym[i] -= d
        got.append((basal_velocity_of_state(yp, N, par, fw) - basal_velocity_of_state(ym, N, par, fw)) / (2 * d))
    np.testing.assert_allclose(deriv, got, rtol=1e-5, atol=1e-7 * np.abs(got).max())


def test_conductivity_dependence_left_out_is_small():
    # the quasi-Newton Jacobian leaves out dk/dT; with the state-dependent default conductivity
    # (parallel mixture of Yen et al. 1991 pure ice and brine) the cell blocks still agree with
    # finite differences to a few per cent, so Newton converges fast
    cfg, par, y, fv, fw, af = _setup("growth")
    cfg = cfg.replace("properties", conductivity_model="parallel_yen1991")
    par = K.parameter_row(cfg, "linear")
    r, amelt, ws, J, *_ = _assembled(y, par, fv, fw, af)
    J_fd = _finite_differences(y, r, par, fv, fw, af, amelt, ws)[0]
    err = _rel(J, J_fd)
    assert 1e-6 < err < 0.01  # not exact (the term is really left out), but small (5e-4 measured)


# --------------------------------------------------------------------------- manufactured profiles
def test_manufactured_quadratic_profile_interior_divergence():
    # fresh solid ice with a quadratic temperature T = a + b z + c z^2 (cell averages): the
    # discrete conduction divergence of every interior layer equals the exact integral
    # k (T'(z_bottom) - T'(z_top)) = 2 c k dz (centred differences of cell averages are exact
    # for a quadratic; common practice, no source)
    cfg = _cfg(surface={"scheme": "linear"}, initial={"bulk_salinity": 0.0}, ocean={"salinity": 0.0})
    par = K.parameter_row(cfg, "linear")
    pr = cfg.properties
    h = 1.0
    dz = h / N
    a, b, c = -20.0, 30.0, -12.0
    top, bot = np.arange(N) * dz, (np.arange(N) + 1) * dz
    tbar = a + b * (top + bot) / 2 + c * (bot ** 3 - top ** 3) / (3 * dz)  # exact cell averages
    y = np.zeros(K.state_size(N))
    v = K.view(y, N)
    v.enthalpy_content[:] = pr.ice_density * (pr.ice_specific_heat * tbar - pr.latent_heat) * dz
    v.thickness[...] = h
    f, ws, *_ = _eval(y, 0.0, par, _forcing(-20.0), 0.0, 0.0, 0.0)
    np.testing.assert_allclose(ws.temp, tbar, rtol=1e-13, atol=1e-12)
    exact = 2.0 * c * pr.ice_conductivity * dz
    np.testing.assert_allclose(f[1:N - 1], exact, rtol=1e-10)


def test_manufactured_uniform_field_under_grid_motion():
    # a uniform field stays uniform when the grid stretches with the ice: every interior layer
    # gains q (r - a)/N of enthalpy and salt content per second, and h grows at r - a
    cfg = _cfg(surface={"scheme": "linear"})
    par = K.parameter_row(cfg, "linear")
    y = _profile_state(cfg, 0.4, -5.0, 6.0)
    v = K.view(y, N)
    v.enthalpy_content[:] = v.enthalpy_content.mean()
    v.salt_content[:] = v.salt_content.mean()
    r, a_melt = 2e-7, 0.0
    f, ws, *_ = _eval(y, r, par, _forcing(-5.0), 0.0, 0.0, a_melt)
    dz = 0.4 / N
    qe = v.enthalpy_content[0] / dz
    qm = v.salt_content[0] / dz
    np.testing.assert_allclose(f[1:N - 1], qe * (r - a_melt) / N, rtol=1e-9)
    np.testing.assert_allclose(f[N + 1:2 * N - 1], qm * (r - a_melt) / N, rtol=1e-9)
    assert f[2 * N] == pytest.approx(r - a_melt, rel=1e-15)
    assert f[2 * N + 1 + B.H_GROW] == r


def test_snow_ice_exchange_derivatives_on_their_own():
    # the exchange's terms are small beside conduction in the whole-matrix check above, so check
    # them isolated: (with exchange) - (without) of the assembled Jacobian and of the dh column
    # against the same difference of central finite differences
    cfg, par, y, fv, fw, af = _setup("snow_ice_drainage")
    off = par.copy()
    off[P.SITAU] = 0.0
    r, amelt, ws, J_on, col_h_on, _ = _assembled(y, par, fv, fw, af)
    J_off, col_h_off = _assembled(y, off, fv, fw, af)[3:5]
    fd_on = _finite_differences(y, r, par, fv, fw, af, amelt, ws)
    fd_off = _finite_differences(y, r, off, fv, fw, af, amelt, ws)
    dJ, dJ_fd = J_on - J_off, fd_on[0] - fd_off[0]
    e, m = slice(0, N), slice(N, 2 * N)
    for rows in (e, m):  # each of the four sub-blocks on its own scale (their units differ)
        for cols in (e, m):
            got, want = dJ[rows, cols], dJ_fd[rows, cols]
            assert np.abs(want).max() > 0.0
            assert np.abs(got - want).max() < 1e-5 * np.abs(want).max()
    dc, dc_fd = col_h_on - col_h_off, fd_on[1] - fd_off[1]
    for rows in (e, m):
        assert np.abs(dc_fd[rows]).max() > 0.0
        assert np.abs(dc[rows] - dc_fd[rows]).max() < 1e-5 * np.abs(dc_fd[rows]).max()
