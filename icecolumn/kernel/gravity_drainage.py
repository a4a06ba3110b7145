"""Gravity drainage in the column: brine out through channels, sea water back up through the mush.

Brine leaves layer ``k`` through channels straight to the ocean at a volume flux ``q_k >= 0``
from the scheme (:mod:`icecolumn.drainage`); the same volume returns as an upward flow through
every interface below (``W_j = sum_{k<j} q_k``), entering the base as sea water at ``S_w`` and its
freezing temperature.  Salt and enthalpy cross interfaces upwind (the layer below supplies the
brine).  Net salt to the ocean is brine out minus sea water in.
"""
from __future__ import annotations

from .._jit import jit
from ..constants import GRAVITY
from ..drainage import onset_ramp_scalar, permeability_scalar, rayleigh_coefficient_scalar, rayleigh_number_scalar
from ..phase import brine_salinity_derivative_scalar, liquidus_temperature_scalar
from .layout import B, P


@jit
def brine_exchange(y, n, par, phi, sbr, wflux, qsink, ra):
    """Brine exchange of the gravity-drainage scheme.

    Fills ``ra`` (local mush Rayleigh number of each layer), ``qsink`` (volume flux of brine
    leaving each layer through channels to the ocean [m s-1]) and ``wflux`` (upward return flow
    through interface j, j = 0..n, [m s-1]; wflux[n] enters from the ocean and equals the total
    drained volume flux).
    """
    code = int(par[P.DRAIN])
    h = y[2 * n]
    dz = h / n
    for j in range(n + 1):
        wflux[j] = 0.0
    for k in range(n):
        qsink[k] = 0.0
        ra[k] = 0.0
    if code == 0:
        return
    law = int(par[P.DPERM])
    avg = int(par[P.DAVG])
    phic = par[P.DPHIC]
    phiw = par[P.DPHIW]
    sw = par[P.SW]
    coef = rayleigh_coefficient_scalar(par[P.DBETA], par[P.DKAPPA], par[P.DMU], GRAVITY)
    # effective permeability between each layer and the base, from the bottom up
    pmin = 1e300
    inv_sum = 0.0
    zero = False
    for k in range(n - 1, -1, -1):
        pk = permeability_scalar(law, phi[k], phic, phiw)
        if pk <= 0.0:
            zero = True
        if avg == 0:
            if pk < pmin:
                pmin = pk
            pe = pmin
        else:
            if not zero:
                inv_sum += 1.0 / pk
            pe = 0.0 if zero else (n - k) / inv_sum
        height = h - (k + 0.5) * dz
        ra[k] = rayleigh_number_scalar(coef, sbr[k], sw, pe, height)
    alpha = par[P.DALPHA]
    rac = par[P.DRAC]
    eps = par[P.DRAMP]
    if code == 1:
        # Griewank & Notz (2013): brine mass flux alpha (Ra - Ra_c)+ dz from each layer
        acc = 0.0
        for k in range(n):
            q = alpha * onset_ramp_scalar(ra[k] - rac, eps) * dz / par[P.RHO]
            qsink[k] = q
            acc += q
            wflux[k + 1] = acc
    else:
        # Rees Jones & Worster (2014) form: upwelling velocity alpha (kappa / h) (Ra - Ra_c)+
        # through the base of each layer, made monotonic downward (running maximum)
        scale = alpha * par[P.DKAPPA] / h
        wmax = 0.0
        for k in range(n):
            wk = scale * onset_ramp_scalar(ra[k] - rac, eps)
            if wk > wmax:
                wmax = wk
            wflux[k + 1] = wmax
            qsink[k] = wflux[k + 1] - wflux[k]


@jit
def add_return_flow_faces(n, par, wflux, temp, sbr, fe, fm):
    """Upward return flow through the interior faces carries the brine of the layer below (its
    enthalpy at the layer's temperature)."""
    rho = par[P.RHO]
    rcl = rho * par[P.CL]
    cw = rho / 1000.0
    for j in range(1, n):
        fm[j] -= wflux[j] * cw * sbr[j]
        fe[j] -= wflux[j] * rcl * temp[j]


@jit
def add_drainage_sinks(f, n, par, wflux, qsink, temp, sbr):
    """Sea water entering at the base, brine leaving each layer through channels, budget slots."""
    rho = par[P.RHO]
    rcl = rho * par[P.CL]
    cw = rho / 1000.0
    mw = rho * par[P.SW] / 1000.0
    tf = liquidus_temperature_scalar(par[P.SW])
    nb = 2 * n + 1
    win = wflux[n]
    f[2 * n - 1] += win * mw
    f[n - 1] += win * rcl * tf
    sout = 0.0
    eout = 0.0
    for k in range(n):
        qs = qsink[k] * cw * sbr[k]
        qe = qsink[k] * rcl * temp[k]
        f[n + k] -= qs
        f[k] -= qe
        sout += qs
        eout += qe
    f[nb + B.S_DRAIN] = sout - win * mw
    f[nb + B.E_DRAIN] = win * rcl * tf - eout
    f[nb + B.V_DRAIN] = win


@jit
def brine_content_derivatives(phi, temp, dtde, dtdm, dz, cw):
    """d(rho S_br / 1000)/d(e, m) of one layer: through the liquidus in mush, S_br = S if liquid."""
    if phi >= 1.0:
        return 0.0, 1.0 / dz
    g = cw * brine_salinity_derivative_scalar(temp)
    return g * dtde, g * dtdm


@jit
def drainage_blocks(n, dz, par, phi, temp, dtde, dtdm, wflux, di, up):
    """Local part of the drainage Jacobian: the exchange of each layer with the layer below at
    the current return flow (the dependence of the flow on the Rayleigh numbers of every layer
    above is left out)."""
    rho = par[P.RHO]
    rcl = rho * par[P.CL]
    cw = rho / 1000.0
    for j in range(n):
        wj = wflux[j + 1]  # total outflow of layer j (to the layer above and to channels)
        if wj <= 0.0:
            continue
        cse, csm = brine_content_derivatives(phi[j], temp[j], dtde[j], dtdm[j], dz, cw)
        di[j, 2] -= wj * cse
        di[j, 3] -= wj * csm
        di[j, 0] -= wj * rcl * dtde[j]
        di[j, 1] -= wj * rcl * dtdm[j]
        if j + 1 < n:
            jb = j + 1
            bse, bsm = brine_content_derivatives(phi[jb], temp[jb], dtde[jb], dtdm[jb], dz, cw)
            up[j, 2] += wj * bse
            up[j, 3] += wj * bsm
            up[j, 0] += wj * rcl * dtde[jb]
            up[j, 1] += wj * rcl * dtdm[jb]


@jit
def brine_content_dh(phi, temp, dtdh, sbr, h, cw):
    """d(rho S_br / 1000)/dh of one layer at fixed contents (through its temperature in mush;
    a liquid layer's brine is its bulk salinity, which thins as 1/h)."""
    if phi >= 1.0:
        return -cw * sbr / h
    return cw * brine_salinity_derivative_scalar(temp) * dtdh


@jit
def add_drainage_dh_column(col, n, par, wflux, qsink, temp, phi, sbr, dtdh, h):
    """d f / d h at fixed contents of the drainage exchange at its current flow (the flow's own
    dependence on the state is left out, as in :func:`drainage_blocks`)."""
    rho = par[P.RHO]
    rcl = rho * par[P.CL]
    cw = rho / 1000.0
    for k in range(n):
        dc = brine_content_dh(phi[k], temp[k], dtdh[k], sbr[k], h, cw)
        dt = dtdh[k]
        # return flow: face k+1 (below layer k) carries -W_{k+1} c_{k+1} upward into layer k, face k
        # carries -W_k c_k out of it: layer k gains W_{k+1} c_{k+1} - W_k c_k (interior faces only)
        if k >= 1:
            col[n + k] -= wflux[k] * dc
            col[k] -= wflux[k] * rcl * dt
            col[n + k - 1] += wflux[k] * dc
            col[k - 1] += wflux[k] * rcl * dt
        col[n + k] -= qsink[k] * dc
        col[k] -= qsink[k] * rcl * dt
