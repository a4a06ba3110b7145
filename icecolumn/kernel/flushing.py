"""Flushing: surface melt water percolating down through permeable ice displaces brine.

A fraction of the surface melt water percolates down through the ice when every layer is
permeable, displacing brine volume for volume (upwind, from above); fresh melt water (0 degC,
H = 0, S = 0) enters at the top and brine leaves at the base.  The structure follows the flushing
parameterisations that route a fraction of surface melt through permeable ice (e.g.
Vancoppenolle et al. 2007, JGR 112; from memory); the fraction is this project's setting
(``[drainage] flushing_fraction``).
"""
from __future__ import annotations

from .._jit import jit
from ..drainage import percolation_gate_scalar
from .gravity_drainage import brine_content_derivatives, brine_content_dh
from .layout import B, P


@jit
def flushing_velocity(n, par, a, phi):
    """Downward volume flux of percolating melt water [m s-1] at surface melt rate ``a``
    [m s-1]: the flushing fraction of the melt, gated by the least permeable layer."""
    phimin = 1.0
    for k in range(n):
        if phi[k] < phimin:
            phimin = phi[k]
    gate = percolation_gate_scalar(phimin, par[P.DPHIC], par[P.DPHIW])
    return par[P.FLUSH] * a * gate


@jit
def add_flushing(n, par, a, temp, phi, sbr, f):
    """Flushing fluxes of surface melt rate ``a`` [m s-1] into ``f`` (layers and budget slots)."""
    w = flushing_velocity(n, par, a, phi)  # downward volume flux [m s-1]
    if w <= 0.0:
        return
    rho = par[P.RHO]
    cw = rho / 1000.0
    rcl = rho * par[P.CL]
    for j in range(1, n):
        us = w * cw * sbr[j - 1]
        ue = w * rcl * temp[j - 1]
        f[n + j - 1] -= us
        f[n + j] += us
        f[j - 1] -= ue
        f[j] += ue
    s_out = w * cw * sbr[n - 1]
    e_out = w * rcl * temp[n - 1]
    f[2 * n - 1] -= s_out
    f[n - 1] -= e_out
    nb = 2 * n + 1
    f[nb + B.S_FLUSH] = s_out
    f[nb + B.E_FLUSH] = -e_out


@jit
def flushing_blocks(n, dz, par, a, phi, temp, dtde, dtdm, lo, di):
    """Jacobian of the flushing flow at its current velocity (its gate, which depends on the
    least permeable layer, is held): each layer loses brine to the layer below (the bottom one to
    the ocean) and gains the brine of the layer above."""
    w = flushing_velocity(n, par, a, phi)
    if w <= 0.0:
        return
    rho = par[P.RHO]
    rcl = rho * par[P.CL]
    cw = rho / 1000.0
    for k in range(n):
        cse, csm = brine_content_derivatives(phi[k], temp[k], dtde[k], dtdm[k], dz, cw)
        de = w * rcl * dtde[k]
        dm = w * rcl * dtdm[k]
        di[k, 0] -= de
        di[k, 1] -= dm
        di[k, 2] -= w * cse
        di[k, 3] -= w * csm
        if k + 1 < n:
            lo[k + 1, 0] += de
            lo[k + 1, 1] += dm
            lo[k + 1, 2] += w * cse
            lo[k + 1, 3] += w * csm


@jit
def add_flushing_dh_column(col, n, par, a, phi, temp, sbr, dtdh, h):
    """d f / d h at fixed contents of the flushing flow at its current velocity."""
    w = flushing_velocity(n, par, a, phi)
    if w <= 0.0:
        return
    rho = par[P.RHO]
    rcl = rho * par[P.CL]
    cw = rho / 1000.0
    for k in range(n):
        dc = brine_content_dh(phi[k], temp[k], dtdh[k], sbr[k], h, cw)
        col[n + k] -= w * dc
        col[k] -= w * rcl * dtdh[k]
        if k + 1 < n:
            col[n + k + 1] += w * dc
            col[k + 1] += w * rcl * dtdh[k]
