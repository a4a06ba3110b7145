"""The right-hand side of the method-of-lines system and its Jacobian, assembled from the processes.

Contract (what the stepper uses):

* :func:`stage_rates` ``(y, n, par, fv, fw, f, ws, a_in, af)`` fills ``f`` with ``dy/dt`` for
  every state component (layer contents, thickness, budget slots) at the basal velocity of the
  state, and returns the surface melt rate (``a_in < 0``: computed; else the held rate);
* :func:`rhs` the same at a given basal velocity ``r`` (the Newton stages carry ``r`` as an
  unknown);
* :func:`jacobian` the block-tridiagonal part and the two border columns (thickness and basal
  velocity) of ``I - a dt df/dy``;
* :func:`error_norm` the scaled RMS norm of a change of the layer contents and thickness.

Each process module adds its face fluxes, budget terms and Jacobian entries
(:mod:`.top`, :mod:`.snowice`, :mod:`.transport`, :mod:`.gravity_drainage`, :mod:`.base`,
:mod:`.flushing`, :mod:`.mixedlayer`); the order of the calls below fixes the order of the
floating-point sums.  Because every layer's tendency is a difference of face fluxes and the
budget slots integrate the boundary fluxes with the same stage weights, energy and salt budgets
close to round-off.
"""
from __future__ import annotations

import numpy as np

from .._jit import jit
from ..phase import invert_enthalpy_guess_scalar
from ..properties import conductivity_scalar
from .base import add_base_budgets, add_base_dh_column, add_base_dr_column, add_base_fluxes, base_blocks, \
    basal_velocity_of_state
from .flushing import add_flushing, add_flushing_dh_column, flushing_blocks
from .gravity_drainage import add_drainage_dh_column, add_drainage_sinks, add_return_flow_faces, brine_exchange, \
    drainage_blocks
from .layout import NSLOT, P
from .mixedlayer import add_mixed_layer
from .snowice import add_snow_ice, add_snow_ice_drainage, add_snow_ice_drainage_dh_column, \
    snow_ice_drainage_blocks
from .top import add_top_budgets, add_top_dh_column, add_top_fluxes, top_flux_blocks, top_melt_blocks, top_state
from .transport import divergence, interior_face_fluxes, transport_blocks, transport_dh_faces, transport_dr_faces, \
    upwind_weights


@jit
def intensive_state(y, n, par, ws):
    """Temperature, liquid fraction, brine salinity and conductivity of each layer, and the
    temperature derivatives w.r.t. the contents, into the workspace.  The layer's previous
    temperature (NaN at the start of an output interval) is the inversion's first guess."""
    rho = par[P.RHO]
    cs = par[P.CS]
    cl = par[P.CL]
    lat = par[P.L]
    model = int(par[P.KMODEL])
    kice = par[P.KICE]
    h = y[2 * n]
    dz = h / n
    temp = ws.temp
    for k in range(n):
        hv = y[k] / dz
        s = 1000.0 * y[n + k] / (rho * dz)
        t, p, b, dth, dts = invert_enthalpy_guess_scalar(hv, s, rho, cs, cl, lat, temp[k])
        temp[k] = t
        ws.phi[k] = p
        ws.sbr[k] = b
        ws.dtde[k] = dth / dz
        ws.dtdm[k] = dts * 1000.0 / (rho * dz)
        ws.kc[k] = conductivity_scalar(model, t, p, s, kice)


@jit
def rhs(y, r, n, par, fv, fw, f, ws, want_cells, a_in, af, fresh_flow):
    """Right-hand side for cells (f[0:2n]), thickness (f[2n]) and budget slots at basal velocity ``r``.

    ``a_in`` >= 0 is the surface melt rate to use (the implicit stages take the rate of the
    step's start, which keeps the Newton system smooth; conservation is unaffected), a negative
    value computes it here.  ``af`` >= 0 is the rate of snow-ice formation at the top [m s-1]
    (also held over a step); the top of the ice moves down at ``a - af``.  If ``want_cells`` the
    intensive arrays are (re)computed first.  If ``fresh_flow`` the drainage flow (Rayleigh
    numbers, channel and return fluxes) and the upwind weights of the grid advection are computed
    from the state, else those in the workspace are used (frozen transport coefficients: what
    the Jacobian differentiates).  ``fw`` is the heat flux
    into the ice base; with a mixed layer the forcing's ocean heat flux enters the mixed layer
    from below instead.
    Returns the surface temperature, the derivative of the surface flux w.r.t. the top
    temperature, the surface melt rate and the conductive part of the surface flux.
    """
    if want_cells:
        intensive_state(y, n, par, ws)
    temp = ws.temp
    kc = ws.kc
    f0, df0, ts, melt, fsnow, a, used, pen = top_state(y, n, par, fv, temp[0], temp[1], kc[0], a_in)
    anet = a - af
    for i in range(2 * n + 1 + NSLOT):
        f[i] = 0.0
    s_top = add_top_fluxes(f, y, n, f0, used, a)
    add_snow_ice(f, n, par, af)
    fe = ws.sc[1]
    fm = ws.sc[2]
    if fresh_flow:
        upwind_weights(y, r, anet, n, ws.beta)
    interior_face_fluxes(y, r, anet, n, kc, temp, ws.beta, fe, fm)
    drain = int(par[P.DRAIN]) != 0
    if drain:
        if fresh_flow:
            brine_exchange(y, n, par, ws.phi, ws.sbr, ws.wflux, ws.qsink, ws.ra)
        add_return_flow_faces(n, par, ws.wflux, temp, ws.sbr, fe, fm)
    divergence(fe, fm, n, f, np.bool_(True))
    sm = add_base_fluxes(f, y, r, n, par, fw)
    f[2 * n] = r - anet
    snowmelt = add_top_budgets(f, y, n, par, fv, f0, used, s_top, a, af, fsnow, melt)
    add_base_budgets(f, n, par, r, fw, sm)
    if drain:
        add_drainage_sinks(f, n, par, ws.wflux, ws.qsink, temp, ws.sbr)
    if par[P.FLUSH] > 0.0 and a > 0.0:
        add_flushing(n, par, a, temp, ws.phi, ws.sbr, f)
    if par[P.SITAU] > 0.0:
        add_snow_ice_drainage(f, y, n, par, ws.phi, temp, ws.sbr, ws.dtde, ws.dtdm)
    if par[P.MLD] > 0.0:
        add_mixed_layer(f, y, n, par, fv, r, anet, af, sm, s_top, snowmelt)
    return ts, df0, a, f0 - pen


@jit
def stage_rates(y, n, par, fv, fw, f, ws, a_in, af):
    """:func:`rhs` at the basal velocity of the state itself (an explicit or converged stage).
    Returns the surface melt rate."""
    r = basal_velocity_of_state(y, n, par, fw)
    _ts, _df0, a, _g0 = rhs(y, r, n, par, fv, fw, f, ws, True, a_in, af, True)
    return a


@jit
def dh_column(y, r, a, amelt, n, par, g0, ws, df0, col):
    """d f_cells / d h at fixed layer contents, basal velocity ``r``, net top velocity ``a`` and
    surface melt rate ``amelt`` (the snow-ice source does not depend on h); ``g0`` and ``df0``
    the conductive surface flux and its derivative from :func:`rhs`."""
    h = y[2 * n]
    ih = 1.0 / h
    dtdh = ws.sc[0]
    for k in range(n):
        dtdh[k] = -(ws.dtde[k] * y[k] + ws.dtdm[k] * y[n + k]) * ih  # intensive state thins with h
    ge = ws.sc[3]
    gm = ws.sc[4]
    transport_dh_faces(y, r, a, n, ws.temp, dtdh, ws.kc, ws.beta, ge, gm)
    divergence(ge, gm, n, col, np.bool_(False))
    add_top_dh_column(col, y, n, g0, ws.kc, df0, dtdh, amelt, ws.temp, par[P.TMELT])
    add_base_dh_column(col, y, r, n)
    if int(par[P.DRAIN]) != 0:
        add_drainage_dh_column(col, n, par, ws.wflux, ws.qsink, ws.temp, ws.phi, ws.sbr, dtdh, h)
    if par[P.FLUSH] > 0.0 and amelt > 0.0:
        add_flushing_dh_column(col, n, par, amelt, ws.phi, ws.temp, ws.sbr, dtdh, h)
    if par[P.SITAU] > 0.0:
        add_snow_ice_drainage_dh_column(col, y, n, par, ws.phi, ws.temp, ws.sbr, ws.dtde, ws.dtdm)


@jit
def dr_column(y, r, a, n, par, ws, col):
    """d f_cells / d r (the rhs is piecewise linear in r); ``a`` the net downward velocity of the top."""
    ge = ws.sc[3]
    gm = ws.sc[4]
    transport_dr_faces(y, r, a, n, ws.beta, ge, gm)
    divergence(ge, gm, n, col, np.bool_(False))
    add_base_dr_column(col, y, r, n, par)


@jit
def jacobian(y, r, a, amelt, n, df0, a_dt, par, ws):
    """Blocks of A = I - a dt d f_cells / d cells (2x2 per layer: [e, m]) into ``ws.lo``,
    ``ws.di``, ``ws.up``; ``a`` is the net downward velocity of the top, ``amelt`` its
    surface-melt part."""
    lo = ws.lo
    di = ws.di
    up = ws.up
    h = y[2 * n]
    dz = h / n
    for k in range(n):
        for p in range(4):
            lo[k, p] = 0.0
            di[k, p] = 0.0
            up[k, p] = 0.0
    top_flux_blocks(di, up, df0, ws.dtde, ws.dtdm, ws.temp, par[P.TMELT])
    transport_blocks(y, r, a, n, ws.dtde, ws.dtdm, ws.kc, ws.beta, lo, di, up)
    base_blocks(di, r, n, dz)
    top_melt_blocks(di, amelt, dz)
    if int(par[P.DRAIN]) != 0:
        drainage_blocks(n, dz, par, ws.phi, ws.temp, ws.dtde, ws.dtdm, ws.wflux, di, up)
    if par[P.FLUSH] > 0.0 and amelt > 0.0:
        flushing_blocks(n, dz, par, amelt, ws.phi, ws.temp, ws.dtde, ws.dtdm, lo, di)
    if par[P.SITAU] > 0.0:
        snow_ice_drainage_blocks(y, n, par, ws.phi, ws.temp, ws.sbr, ws.dtde, ws.dtdm, di)
    for k in range(n):
        for p in range(4):
            lo[k, p] = -a_dt * lo[k, p]
            di[k, p] = -a_dt * di[k, p]
            up[k, p] = -a_dt * up[k, p]
        di[k, 0] += 1.0
        di[k, 3] += 1.0


@jit
def error_norm(vec, y, n, par):
    """RMS norm of a change of (cells, h) in units of the tolerance."""
    rho = par[P.RHO]
    rtol = par[P.RTOL]
    h = y[2 * n]
    dz = h / n
    se = rtol * rho * par[P.L] * dz
    sm = rtol * rho * (par[P.SW] + 1.0) / 1000.0 * dz
    sh = rtol * (h if h > 0.01 else 0.01)
    acc = 0.0
    for k in range(n):
        a = vec[k] / se
        b = vec[n + k] / sm
        acc += a * a + b * b
    c = vec[2 * n] / sh
    acc += c * c
    return np.sqrt(acc / (2 * n + 1))
